"""Soil models: the Green's-function interface and its registry, uniform and two-layer soil
(image series and their tables), and the Wenner fit."""
