"""Figures (matplotlib, Agg). One module per kind of figure; all use `plots.common`."""
