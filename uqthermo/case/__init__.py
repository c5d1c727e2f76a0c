"""case layer (see package docstring)."""
