"""ipywidgets panels for the notebooks (call products, never the command line)."""
