"""report layer (see package docstring)."""
