"""Development tools that are not installed with the kit."""
