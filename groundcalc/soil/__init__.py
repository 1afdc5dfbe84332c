"""Soil models: Green's functions (uniform, two-layer image series and their tables) and the Wenner fit."""
