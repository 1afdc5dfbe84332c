"""Soil models: the Green's-function interface and its registry, uniform and two-layer soil
(image series and their tables), N-layer soil (Hankel transforms by a digital linear filter),
the Wenner fits of 1 to 4 layers (soundings) and the covariance of the two-layer fit."""
