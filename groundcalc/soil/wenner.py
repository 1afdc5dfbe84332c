"""Soil models fitted to Wenner four-pin readings.

Readings are converted to apparent resistivity (IEEE Std 81), then a uniform
model and a two-layer model (rho1 over rho2 below depth H) are fitted by least
squares on the logarithm of the apparent resistivity, from several starting
points within bounds.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np
import scipy.optimize

from ..model import Soil, WennerReadings

__all__ = [
    "SoilFit",
    "fit_soil",
    "two_layer_wenner",
    "wenner_apparent_resistivity",
]


def wenner_apparent_resistivity(
    spacing_m: np.ndarray, resistance_ohm: np.ndarray, pin_depth_m: np.ndarray | None = None
) -> np.ndarray:
    """Apparent resistivity of Wenner readings.

    Parameters
    ----------
    spacing_m : array_like
        Pin spacing a. [m]
    resistance_ohm : array_like
        Measured resistance V/I. [ohm]
    pin_depth_m : array_like, optional
        Depth b of the pins; zero or ``None`` for surface pins. [m]

    Returns
    -------
    numpy.ndarray
        ``rho_a = 4 pi a R / (1 + 2a / sqrt(a^2 + 4b^2) - a / sqrt(a^2 + b^2))``,
        which is ``2 pi a R`` for b = 0. [ohm*m]

    References
    ----------
    IEEE Std 81-2012, clause 8.2.3.2 (Wenner arrangement), from memory of
    the clause number; the same expression is in IEEE Std 80-2000, clause 13
    (Eq. (46) in the 2013 edition; both from memory).
    """
    a = np.asarray(spacing_m, dtype=float)
    r = np.asarray(resistance_ohm, dtype=float)
    b = np.zeros_like(a) if pin_depth_m is None else np.nan_to_num(np.asarray(pin_depth_m, dtype=float))
    den = 1.0 + 2.0 * a / np.sqrt(a * a + 4.0 * b * b) - a / np.sqrt(a * a + b * b)
    return 4.0 * np.pi * a * r / den


def two_layer_wenner(
    spacing_m: np.ndarray, rho1_ohm_m: float, rho2_ohm_m: float, thickness_m: float, tol: float = 1e-10
) -> np.ndarray:
    """Apparent resistivity a Wenner array would read over two-layer soil.

    Parameters
    ----------
    spacing_m : array_like
        Pin spacing a. [m]
    rho1_ohm_m, rho2_ohm_m : float
        Upper and lower layer resistivity. [ohm*m]
    thickness_m : float
        Upper layer thickness H. [m]
    tol : float
        Relative truncation tolerance of the series.

    Returns
    -------
    numpy.ndarray
        ``rho_a = rho1 [1 + 4 sum_{n>=1} K^n (1/sqrt(1 + (2nH/a)^2) -
        1/sqrt(4 + (2nH/a)^2))]``. [ohm*m]

    Notes
    -----
    The bracket decreases with n, so the terms after the N-th are bounded by
    ``|K|^(N+1) / (1 - |K|)`` times the N-th bracket; summation stops on
    that bound.

    References
    ----------
    IEEE Std 81-2012, Annex (two-layer interpretation of Wenner readings);
    G. F. Tagg, *Earth Resistances*, 1964, ch. 4.
    """
    a = np.atleast_1d(np.asarray(spacing_m, dtype=float))
    k = (rho2_ohm_m - rho1_ohm_m) / (rho2_ohm_m + rho1_ohm_m)
    ak = abs(k)
    total = np.zeros_like(a)
    if ak == 0.0:
        return np.full_like(a, rho1_ohm_m)
    n0 = 1
    chunk = 256
    while True:
        n = np.arange(n0, n0 + chunk, dtype=float)[:, None]
        x = 2.0 * n * thickness_m / a[None, :]
        br = 1.0 / np.sqrt(1.0 + x * x) - 1.0 / np.sqrt(4.0 + x * x)
        total += np.sum(k**n * br, axis=0)
        last = br[-1]
        bound = ak ** (n0 + chunk) / (1.0 - ak) * last
        if np.all(bound <= tol * np.maximum(np.abs(1.0 + 4.0 * total), 1e-300)) or n0 > 200_000:
            break
        n0 += chunk
    return rho1_ohm_m * (1.0 + 4.0 * total)


@dataclass(frozen=True)
class SoilFit:
    """Uniform and two-layer models fitted to Wenner readings.

    Attributes
    ----------
    readings : WennerReadings
        The readings.
    uniform_ohm_m : float
        Best uniform resistivity (geometric mean of the readings). [ohm*m]
    uniform_misfit_pct : float
        RMS relative misfit of the uniform model. [%]
    rho1_ohm_m, rho2_ohm_m, thickness_m : float
        Best two-layer model. [ohm*m, ohm*m, m]
    misfit_pct : float
        RMS relative misfit of the two-layer model. [%]
    starts : int
        Number of starting points tried.
    """

    readings: WennerReadings
    uniform_ohm_m: float
    uniform_misfit_pct: float
    rho1_ohm_m: float
    rho2_ohm_m: float
    thickness_m: float
    misfit_pct: float
    starts: int
    layered: object | None = None  # groundcalc.soil.sounding.Sounding: fits of 1 .. N layers

    @property
    def soil(self) -> Soil:
        """The fitted two-layer soil model."""
        return Soil("two-layer", self.rho1_ohm_m, self.thickness_m, self.rho2_ohm_m)

    @property
    def chosen_soil(self) -> Soil:
        """The model the information criterion prefers (the two-layer model without N-layer fits).

        One layer gives the uniform fit and two the classical two-layer fit above, so that the
        two-layer image series and its fit stay the path for two layers.
        """
        if self.layered is None:
            return self.soil
        n = self.layered.chosen.layers
        if n == 1:
            return Soil("uniform", self.uniform_ohm_m)
        if n == 2:
            return self.soil
        return self.layered.soil

    def model_ohm_m(self, spacing_m: np.ndarray) -> np.ndarray:
        """Apparent resistivity of the fitted two-layer model. [ohm*m]"""
        return two_layer_wenner(spacing_m, self.rho1_ohm_m, self.rho2_ohm_m, self.thickness_m)

    def table(self) -> list[tuple[float, float, float, float, float]]:
        """Rows (spacing, measured, two-layer model, deviation %, uniform deviation %)."""
        a = self.readings.spacing_m
        meas = self.readings.apparent_ohm_m
        model = self.model_ohm_m(a)
        return [
            (float(x), float(m), float(p), 100.0 * (p / m - 1.0), 100.0 * (self.uniform_ohm_m / m - 1.0))
            for x, m, p in zip(a, meas, model, strict=True)
        ]


def _rms_pct(model: np.ndarray, meas: np.ndarray) -> float:
    return float(100.0 * np.sqrt(np.mean((model / meas - 1.0) ** 2)))


def fit_soil(readings: WennerReadings, max_layers: int | None = None, criterion: str = "BIC") -> SoilFit:
    """Fit uniform and two-layer soil models to Wenner readings.

    Parameters
    ----------
    readings : WennerReadings
        At least three distinct spacings.
    max_layers : int, optional
        Also fit 1 .. ``max_layers`` layers by the Stefanescu integral and
        rank them by the information criterion
        (:func:`groundcalc.soil.sounding.fit_layers`).
    criterion : str
        ``"BIC"`` or ``"AIC"`` for that ranking.

    Returns
    -------
    SoilFit

    Notes
    -----
    Two-layer parameters are fitted in ``(log rho1, log rho2, log H)`` with
    ``scipy.optimize.least_squares`` on ``log(model) - log(measured)``, from
    a grid of starting points (rho1 near the shortest-spacing reading, rho2
    near the longest, H across the spacing range). Bounds: resistivities
    0.1 to 1e6 ohm*m, H from a hundredth of the shortest spacing to ten times
    the longest. The thickness is poorly determined when the two fitted
    resistivities are close; the misfit is reported either way.
    """
    a = np.asarray(readings.spacing_m, dtype=float)
    meas = np.asarray(readings.apparent_ohm_m, dtype=float)
    if a.size < 3:
        raise ValueError("at least three spacings are needed")
    la = np.log(meas)
    uni = float(np.exp(la.mean()))
    uni_mis = _rms_pct(np.full_like(meas, uni), meas)
    low = np.log([0.1, 0.1, 0.01 * a.min()])
    high = np.log([1e6, 1e6, 10.0 * a.max()])

    def resid(x: np.ndarray) -> np.ndarray:
        r1, r2, h = np.exp(x)
        return np.log(two_layer_wenner(a, r1, r2, h, tol=1e-8)) - la

    order = np.argsort(a)
    first, last = meas[order[0]], meas[order[-1]]
    starts = list(
        itertools.product(
            [first, math.sqrt(first * last)],
            [last, last * 3.0 if last > first else last / 3.0],
            np.geomspace(max(a.min() * 0.5, np.exp(low[2])), a.max() * 2.0, 4),
        )
    )
    best = None
    for r1, r2, h in starts:
        x0 = np.clip(np.log([r1, r2, h]), low + 1e-9, high - 1e-9)
        res = scipy.optimize.least_squares(resid, x0, bounds=(low, high), x_scale=1.0, xtol=1e-12, ftol=1e-12)
        if best is None or res.cost < best.cost:
            best = res
    r1, r2, h = (float(v) for v in np.exp(best.x))
    mis = _rms_pct(two_layer_wenner(a, r1, r2, h), meas)
    layered = None
    if max_layers is not None:
        from .sounding import fit_layers

        layered = fit_layers(readings, max_layers, criterion)
    return SoilFit(readings, uni, uni_mis, r1, r2, h, mis, len(starts), layered)
