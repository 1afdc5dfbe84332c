"""Wenner soundings over N horizontal layers: forward curves and model selection.

The apparent resistivity of a Wenner array of spacing a over layered soil is
the Stefanescu integral

    rho_a(a) = rho_1 + 2 a int_0^inf (T(l) - rho_1) [J0(l a) - J0(2 l a)] dl,

with the resistivity transform of the layers (Koefoed 1979)

    T(l) = rho_1 (1 + R(l) e^{-2 l h_1}) / (1 - R(l) e^{-2 l h_1}),

R the downward reflection coefficient of the first interface from the layer
recursion of :mod:`groundcalc.soil.multilayer`. The integral uses the same
digital linear filter (:mod:`groundcalc.soil.hankel`).

Models of 1, 2, 3 (and 4 when asked) layers are fitted by bounded least
squares on the logarithm of the apparent resistivity from several starting
points, and compared by the Bayesian information criterion
``BIC = m ln(RSS / m) + k ln m`` (Schwarz 1978), m readings, k free
parameters, RSS the sum of squared log residuals. Residuals below 0.1 %
(the repeatability of good earth testers, common practice) are not
distinguished: RSS is floored at ``m (1e-3)^2`` so that exact synthetic data
do not reward extra layers.

References
----------
.. [1] O. Koefoed, *Geosounding Principles 1*, Elsevier, 1979, ch. 3 and 4
   (resistivity transform; Stefanescu integral).
.. [2] G. Schwarz, "Estimating the dimension of a model", Ann. Statist. 6(2),
   461-464, 1978 (BIC); H. Akaike, IEEE Trans. Autom. Control 19(6),
   716-723, 1974 (AIC).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np
import scipy.optimize

from ..model import Soil, WennerReadings
from .hankel import hankel_j0
from .multilayer import Profile, Recursion

__all__ = ["LayerFit", "Sounding", "fit_layers", "resistivity_transform", "soil_of", "wenner_curve"]

#: Residuals below this (relative) are treated as equal.
RESIDUAL_FLOOR = 1e-3
#: Bounds of the fitted resistivities. [ohm*m]
RHO_BOUNDS = (0.1, 1e6)


def resistivity_transform(prof: Profile, lam: np.ndarray) -> np.ndarray:
    """Koefoed's resistivity transform T(l) of the layers. [ohm*m]"""
    if prof.n == 1:
        return np.full(np.shape(lam), prof.rho[0])
    rec = Recursion(prof, lam)
    g = rec.down[0] * rec.e[0]
    return prof.rho[0] * (1.0 + g) / (1.0 - g)


def wenner_curve(spacing_m: np.ndarray, prof: Profile) -> np.ndarray:
    """Apparent resistivity a Wenner array reads over the layers (Stefanescu integral). [ohm*m]"""
    a = np.atleast_1d(np.asarray(spacing_m, dtype=float))
    if prof.n == 1:
        return np.full(a.shape, prof.rho[0])
    r = np.concatenate([a, 2.0 * a])
    rho1 = prof.rho[0]
    h = hankel_j0(lambda lam: resistivity_transform(prof, lam) - rho1, r, at_zero=prof.rho[-1] - rho1)
    n = a.size
    return rho1 + 2.0 * a * (h[:n] - h[n:])


@dataclass(frozen=True)
class LayerFit:
    """One fitted model.

    Attributes
    ----------
    profile : Profile
        Fitted resistivities and thicknesses.
    rms_pct : float
        RMS relative misfit. [%]
    aic, bic : float
        Akaike and Bayesian information criteria (smaller is better).
    parameters : int
        Free parameters (2n - 1).
    starts : int
        Starting points tried.
    """

    profile: Profile
    rms_pct: float
    aic: float
    bic: float
    parameters: int
    starts: int

    @property
    def layers(self) -> int:
        """Number of layers."""
        return self.profile.n

    def curve(self, spacing_m: np.ndarray) -> np.ndarray:
        """Apparent resistivity of the fitted model. [ohm*m]"""
        return wenner_curve(spacing_m, self.profile)


@dataclass(frozen=True)
class Sounding:
    """Models of 1 .. N layers fitted to the same readings, and the preferred one."""

    readings: WennerReadings
    fits: tuple[LayerFit, ...]
    criterion: str = "BIC"

    @property
    def chosen(self) -> LayerFit:
        """The fit with the smallest criterion (fewer layers on a tie)."""
        key = (lambda f: f.bic) if self.criterion == "BIC" else (lambda f: f.aic)
        return min(self.fits, key=lambda f: (round(key(f), 9), f.layers))

    @property
    def soil(self) -> Soil:
        """The chosen model as a :class:`Soil`."""
        return soil_of(self.chosen.profile)

    def summary(self) -> str:
        """One sentence on the choice, for notes and the report."""
        c = self.chosen
        others = ", ".join(f"{f.layers} layer(s) {f.rms_pct:.2g} % / {f.bic:.1f}" for f in self.fits if f is not c)
        return (
            f"{c.layers}-layer model chosen by the Bayesian information criterion (BIC = {c.bic:.1f}, "
            f"RMS misfit {c.rms_pct:.2g} %; other models, RMS misfit / BIC: {others})."
        )


def soil_of(prof: Profile) -> Soil:
    """Soil model of a profile: uniform, two-layer (image series) or multilayer."""
    if prof.n == 1:
        return Soil("uniform", prof.rho[0])
    if prof.n == 2:
        return Soil("two-layer", prof.rho[0], prof.thickness[0], prof.rho[1])
    layers = tuple(zip(prof.rho, prof.thickness + (None,), strict=True))
    return Soil("multilayer", prof.rho[0], prof.thickness[0], prof.rho[1], layers=layers)


def _criteria(res: np.ndarray, k: int) -> tuple[float, float]:
    m = res.size
    rss = max(float(np.sum(res * res)), m * RESIDUAL_FLOOR**2)
    base = m * math.log(rss / m)
    return base + 2.0 * k, base + k * math.log(m)


def _fit_n(a: np.ndarray, la: np.ndarray, n: int) -> LayerFit:
    meas = np.exp(la)
    if n == 1:
        rho = float(np.exp(la.mean()))
        res = np.full_like(la, math.log(rho)) - la
        aic, bic = _criteria(res, 1)
        return LayerFit(Profile((rho,)), float(100 * np.sqrt(np.mean((rho / meas - 1) ** 2))), aic, bic, 1, 1)
    lo = np.log([RHO_BOUNDS[0]] * n + [0.01 * a.min()] * (n - 1))
    hi = np.log([RHO_BOUNDS[1]] * n + [10.0 * a.max()] * (n - 1))

    def prof(x):
        v = np.exp(x)
        return Profile(tuple(v[:n]), tuple(v[n:]))

    def resid(x):
        return np.log(wenner_curve(a, prof(x))) - la

    order = np.argsort(a)
    first, last = float(meas[order[0]]), float(meas[order[-1]])
    # starting resistivities: the readings at short, middle and long spacings, the same with the
    # contrasts exaggerated, and (two layers) the grid of the classical two-layer fit
    picks = np.quantile(meas[order], np.linspace(0.0, 1.0, n))
    rho_sets = [picks, picks * (picks / np.exp(la.mean())) ** 0.5]
    if n == 2:
        rho_sets.append(np.array([math.sqrt(first * last), last * 3.0 if last > first else last / 3.0]))
    depths = np.geomspace(max(a.min() * 0.5, math.exp(lo[n])), a.max() * 1.5, 3 if n < 4 else 4)
    thick_sets = [np.diff(np.concatenate([[0.0], c])) for c in itertools.combinations(depths, n - 1)]
    starts = [(r, t) for r in rho_sets for t in thick_sets]
    best = None
    for r, t in starts:
        x0 = np.clip(np.log(np.concatenate([r, t])), lo + 1e-9, hi - 1e-9)
        sol = scipy.optimize.least_squares(resid, x0, bounds=(lo, hi), xtol=1e-8, ftol=1e-10, max_nfev=300)
        if best is None or sol.cost < best.cost:
            best = sol
    p = prof(best.x)
    model = wenner_curve(a, p)
    aic, bic = _criteria(np.log(model) - la, 2 * n - 1)
    return LayerFit(p, float(100 * np.sqrt(np.mean((model / meas - 1) ** 2))), aic, bic, 2 * n - 1, len(starts))


def fit_layers(readings: WennerReadings, max_layers: int = 3, criterion: str = "BIC") -> Sounding:
    """Fit 1 .. ``max_layers`` layers to Wenner readings and rank them by an information criterion.

    Parameters
    ----------
    readings : WennerReadings
        The readings; a model with n layers needs at least 2n readings.
    max_layers : int
        Largest number of layers, 1 to 4.
    criterion : str
        ``"BIC"`` (default) or ``"AIC"``.

    Returns
    -------
    Sounding
    """
    if not 1 <= max_layers <= 4:
        raise ValueError("max_layers must be 1 to 4")
    if criterion not in ("BIC", "AIC"):
        raise ValueError("criterion must be BIC or AIC")
    a = np.asarray(readings.spacing_m, dtype=float)
    la = np.log(np.asarray(readings.apparent_ohm_m, dtype=float))
    fits = [_fit_n(a, la, n) for n in range(1, max_layers + 1) if a.size >= 2 * n]
    return Sounding(readings, tuple(fits), criterion)
