"""Pure computation: no plotting, no widgets, no file formats."""
