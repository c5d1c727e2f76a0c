"""thermo layer (see package docstring)."""
