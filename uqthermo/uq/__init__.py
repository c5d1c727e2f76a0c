"""uq layer (see package docstring)."""
