"""(package docstring to be written by its owner)."""
