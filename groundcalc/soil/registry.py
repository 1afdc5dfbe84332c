"""Which Green's function serves which soil model.

A soil model plugs in by registering one builder ``build(soil, ranges, tol)``
that returns an object implementing
:class:`groundcalc.soil.greens.GreensFunction`; the integrators never see
which model it is.
"""

from __future__ import annotations

from collections.abc import Callable

from ..model import Soil
from .greens import DepthRanges, GreensFunction
from .multilayer import multilayer_greens
from .twolayer import two_layer_greens
from .uniform import uniform_greens

__all__ = ["greens_for", "register_greens", "registered_models"]

_BUILDERS: dict[str, Callable[[Soil, DepthRanges, float], GreensFunction]] = {}


def register_greens(model: str, build: Callable[[Soil, DepthRanges, float], GreensFunction]) -> None:
    """Make ``build(soil, ranges, tol)`` the Green's function of soil model ``model``."""
    _BUILDERS[model] = build


def registered_models() -> tuple[str, ...]:
    """Soil models that have a Green's function."""
    return tuple(sorted(_BUILDERS))


def greens_for(soil: Soil, ranges: DepthRanges, tol: float = 1e-9) -> GreensFunction:
    """The Green's function of ``soil`` prepared for segments described by ``ranges``.

    Parameters
    ----------
    soil : Soil
        Soil model; ``soil.model`` selects the implementation.
    ranges : DepthRanges
        Depths and distances the function must serve.
    tol : float
        Relative truncation tolerance of image series.

    Returns
    -------
    GreensFunction
    """
    try:
        build = _BUILDERS[soil.model]
    except KeyError:
        raise ValueError(
            f"no Green's function for soil model {soil.model!r}; known models: {', '.join(registered_models())}"
        ) from None
    return build(soil, ranges, tol)


register_greens("uniform", uniform_greens)
register_greens("two-layer", two_layer_greens)
register_greens("multilayer", multilayer_greens)
