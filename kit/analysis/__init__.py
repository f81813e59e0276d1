"""Worst case, temperature, E-series and synthesis."""
