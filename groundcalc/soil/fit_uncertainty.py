"""Uncertainty of a two-layer soil model fitted to Wenner readings.

The fit (:func:`groundcalc.soil.wenner.fit_soil`) minimises the sum of
squared log-residuals ``r = log(rho_a model) - log(rho_a measured)`` over
``x = (log rho1, log rho2, log H)``. Linearised about the optimum, the
least-squares estimate has the covariance

    C = s^2 (J^T J)^-1,   s^2 = sum(r^2) / (n - 3),

with J the Jacobian of the log-residuals at the optimum and n the number of
readings. Samples of the soil model are drawn from the multivariate Student t
distribution with n - 3 degrees of freedom, centre x and scale C (the
predictive distribution when the noise level itself is estimated from the n
residuals), and kept within the bounds of the fit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.stats

from ..model import Soil
from .wenner import SoilFit, two_layer_wenner

__all__ = ["FitCovariance", "PARAMETERS", "fit_bounds", "fit_covariance"]

#: The fitted parameters, in the order of the covariance matrix.
PARAMETERS = ("rho1_ohm_m", "rho2_ohm_m", "thickness_m")
#: Relative step of the central differences for the Jacobian (in log parameters).
_STEP = 1e-4


def fit_bounds(spacing_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper bounds of the log-parameters, as used by the fit.

    Resistivities 0.1 to 1e6 ohm*m; H from a hundredth of the shortest
    spacing to ten times the longest (:func:`groundcalc.soil.wenner.fit_soil`).
    """
    a = np.asarray(spacing_m, dtype=float)
    return np.log([0.1, 0.1, 0.01 * a.min()]), np.log([1e6, 1e6, 10.0 * a.max()])


@dataclass(frozen=True)
class FitCovariance:
    """Linearised covariance of the fitted two-layer parameters.

    Attributes
    ----------
    log_mean : numpy.ndarray
        ``(log rho1, log rho2, log H)`` of the fit. [log ohm*m, log ohm*m, log m]
    cov : numpy.ndarray
        3 x 3 covariance of the log-parameters.
    residual_sd : float
        Standard deviation s of the log-residuals (about the relative noise of a reading).
    dof : int
        Degrees of freedom n - 3.
    jacobian : numpy.ndarray
        n x 3 Jacobian of the log-residuals at the optimum.
    lower, upper : numpy.ndarray
        Bounds of the log-parameters (those of the fit).
    at_bound : tuple of str
        Parameters whose fitted value lies on a bound (the linearisation is then doubtful).
    """

    log_mean: np.ndarray
    cov: np.ndarray
    residual_sd: float
    dof: int
    jacobian: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    at_bound: tuple[str, ...]

    @property
    def log_sd(self) -> np.ndarray:
        """Standard errors of the log-parameters (about the relative standard errors)."""
        return np.sqrt(np.clip(np.diag(self.cov), 0.0, None))

    @property
    def correlation(self) -> np.ndarray:
        """Correlation matrix of the log-parameters (zero where a parameter has no spread)."""
        sd = self.log_sd
        with np.errstate(invalid="ignore", divide="ignore"):
            c = self.cov / np.outer(sd, sd)
        c = np.where(np.outer(sd, sd) > 0, c, 0.0)
        np.fill_diagonal(c, 1.0)
        return c

    def interval(self, level: float = 0.90) -> tuple[np.ndarray, np.ndarray]:
        """Two-sided confidence interval of each parameter. [ohm*m, ohm*m, m]

        ``exp(x_i -/+ t_{n-3, (1+level)/2} sd_i)``: the Student t interval
        of a linearised least-squares estimate with estimated noise.
        """
        t = scipy.stats.t.ppf(0.5 + level / 2.0, self.dof)
        return np.exp(self.log_mean - t * self.log_sd), np.exp(self.log_mean + t * self.log_sd)

    def sample(self, u: np.ndarray) -> tuple[np.ndarray, int]:
        """Soil parameters for points ``u`` of the unit cube (four columns).

        Columns 0-2 become standard normal deviates, column 3 the chi-square
        variate of the Student t; together a multivariate t sample with
        ``dof`` degrees of freedom. Values outside the fit's bounds are moved
        onto them.

        Returns
        -------
        params : numpy.ndarray
            Shape (N, 3): rho1, rho2, H. [ohm*m, ohm*m, m]
        clipped : int
            Number of samples moved onto a bound.
        """
        u = np.atleast_2d(np.asarray(u, dtype=float))
        z = scipy.stats.norm.ppf(u[:, :3])
        w = scipy.stats.chi2.ppf(u[:, 3], self.dof) / self.dof
        vals, vecs = np.linalg.eigh(self.cov)
        root = vecs * np.sqrt(np.clip(vals, 0.0, None))
        x = self.log_mean + (z @ root.T) / np.sqrt(w)[:, None]
        inside = np.all((x >= self.lower) & (x <= self.upper), axis=1)
        x = np.clip(x, self.lower, self.upper)
        return np.exp(x), int(np.count_nonzero(~inside))

    def soil(self, params: np.ndarray) -> Soil:
        """One row of :meth:`sample` as a two-layer soil model."""
        r1, r2, h = (float(v) for v in params)
        return Soil("two-layer", r1, h, r2)


def _log_residuals(a: np.ndarray, la: np.ndarray, x: np.ndarray) -> np.ndarray:
    r1, r2, h = np.exp(x)
    return np.log(two_layer_wenner(a, r1, r2, h)) - la


def fit_covariance(fit: SoilFit) -> FitCovariance:
    """Covariance of the fitted two-layer parameters from the Jacobian at the optimum.

    Parameters
    ----------
    fit : SoilFit
        A two-layer fit to at least four readings.

    Returns
    -------
    FitCovariance

    Raises
    ------
    ValueError
        With fewer than four readings: three readings fit three parameters
        exactly and leave nothing to estimate the noise from.

    Notes
    -----
    The Jacobian is taken by central differences of the Wenner series in
    the log-parameters. Where ``J^T J`` is singular (equal layer
    resistivities make H undetermined) the pseudo-inverse is used.

    References
    ----------
    Linearised covariance of a nonlinear least-squares estimate:
    D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its
    Applications*, Wiley, 1988, sec. 2.3 (from memory); the same
    ``s^2 (J^T J)^-1`` is what ``scipy.optimize.curve_fit`` returns as
    ``pcov`` with ``absolute_sigma=False``.
    """
    a = np.asarray(fit.readings.spacing_m, dtype=float)
    la = np.log(np.asarray(fit.readings.apparent_ohm_m, dtype=float))
    n = a.size
    if n < 4:
        raise ValueError("at least four readings are needed to estimate the uncertainty of a three-parameter fit")
    x = np.log([fit.rho1_ohm_m, fit.rho2_ohm_m, fit.thickness_m])
    lo, hi = fit_bounds(a)
    jac = np.empty((n, 3))
    for k in range(3):
        dx = np.zeros(3)
        dx[k] = _STEP
        jac[:, k] = (_log_residuals(a, la, x + dx) - _log_residuals(a, la, x - dx)) / (2.0 * _STEP)
    r = _log_residuals(a, la, x)
    dof = n - 3
    s2 = float(r @ r) / dof
    cov = s2 * np.linalg.pinv(jac.T @ jac, rcond=1e-12, hermitian=True)
    at_bound = tuple(
        name for name, v, b0, b1 in zip(PARAMETERS, x, lo, hi, strict=True) if v <= b0 + 1e-6 or v >= b1 - 1e-6
    )
    return FitCovariance(x, cov, float(np.sqrt(s2)), dof, jac, lo, hi, at_bound)
