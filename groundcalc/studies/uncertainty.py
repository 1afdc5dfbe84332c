"""Uncertainty band of Rg, GPR, touch and step voltage by Latin hypercube sampling.

Uncertain inputs are the two-layer soil model fitted to Wenner readings (its
linearised covariance, :mod:`groundcalc.soil.fit_uncertainty`) and the ranges
of the Uncertainty sheet (:mod:`groundcalc.io.uncertainty`). One Latin
hypercube over all of them (``scipy.stats.qmc.LatinHypercube``, seeded) gives
the samples.

Only the soil needs a new method-of-moments solve: the geometry solution and
the surface field are computed per volt of GPR and the model is linear in the
grid current, so the fault current, split factor, clearing time, X/R ratio and
surface layer of a sample are applied afterwards at no solve. Samples that
share a soil model share its solve.

The result for each case (the base case and every variant of the Variants
sheet) is the deterministic value beside P5, P50 and P95 of each quantity, a
distribution-free confidence interval of each percentile (sampling error),
and the probability that the touch and step limits are exceeded with its
Wilson interval.
"""

from __future__ import annotations

import logging
import math
import time
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import scipy.stats
from scipy.stats import qmc

from ..analysis import Results, evaluate, resolve_soil, solve_geometry, surface_field
from ..errors import InputError
from ..io.schema import WENNER
from ..io.uncertainty import SOIL_QUANTITIES, UncertainQuantity, base_value
from ..model import Design, Notice, Soil, SurfaceLayer
from ..safety.ieee80 import decrement_factor, grid_current_a
from ..safety.limits import tolerable_limits
from ..soil.fit_uncertainty import FitCovariance, fit_covariance
from .engine import Engine

__all__ = [
    "DEFAULT_SAMPLES",
    "DEFAULT_SEED",
    "Band",
    "CaseBand",
    "Exceedance",
    "PerVolt",
    "UncertaintyRun",
    "percentile_interval",
    "run_uncertainty",
    "solve_per_volt",
    "table_lines",
]

log = logging.getLogger(__name__)

#: Samples drawn unless told otherwise.
DEFAULT_SAMPLES = 64
#: Seed of the Latin hypercube unless told otherwise (stated in every output so runs repeat).
DEFAULT_SEED = 20
#: Percentiles reported.
PERCENTILES = (5.0, 50.0, 95.0)
#: Confidence level of the sampling-error intervals.
CONFIDENCE = 0.95
#: Fewest samples accepted.
MIN_SAMPLES = 4
#: Most samples accepted.
MAX_SAMPLES = 100_000


@dataclass(frozen=True)
class PerVolt:
    """What one geometry solve gives, per volt of GPR."""

    resistance_ohm: float
    touch_per_v: float
    step_per_v: float
    segments: int
    seconds: float


def solve_per_volt(design: Design) -> PerVolt:
    """Solve the geometry in the design's soil and find the worst touch and step per volt of GPR.

    A module-level function so that it can run in a worker process or on a Dask worker.
    """
    t0 = time.perf_counter()
    geometry = solve_geometry(design)
    fld = surface_field(design, geometry)
    sol = geometry.solution
    return PerVolt(
        sol.resistance_ohm,
        fld.touch.voltage_per_gpr,
        fld.step.voltage_per_gpr,
        len(sol.segments),
        time.perf_counter() - t0,
    )


def _per_volt_of(results: Results) -> PerVolt:
    g = results.geometry
    return PerVolt(
        g.solution.resistance_ohm,
        results.field.touch.voltage_per_gpr,
        results.field.step.voltage_per_gpr,
        len(g.solution.segments),
        sum(g.seconds.values()) + results.field.seconds,
    )


def percentile_interval(x: np.ndarray, q: float, level: float = CONFIDENCE) -> tuple[float, float, float]:
    """Sample percentile and its distribution-free confidence interval.

    Parameters
    ----------
    x : array_like
        Samples.
    q : float
        Percentile. [%]
    level : float
        Confidence level of the interval.

    Returns
    -------
    estimate, low, high : float
        ``numpy.percentile(x, q)`` and the order statistics ``x_(j) <= x_(k)``
        with ``P(x_(j) <= xi_q <= x_(k)) >= level`` from the binomial
        distribution of the number of samples below the true percentile
        ``xi_q`` (the smallest or largest sample where the sample is too small
        for the level).

    Notes
    -----
    The interval is exact for independent samples and conservative for a
    Latin hypercube, whose percentile estimates vary less than those of
    independent samples when the output is monotone in the inputs.

    References
    ----------
    W. J. Conover, *Practical Nonparametric Statistics*, 3rd ed., Wiley,
    1999, sec. 3.2 (confidence interval for a quantile), from memory.
    M. D. McKay, R. J. Beckman, W. J. Conover, "A comparison of three methods
    for selecting values of input variables in the analysis of output from a
    computer code", Technometrics 21(2), 1979 (Latin hypercube), from memory.
    """
    s = np.sort(np.asarray(x, dtype=float))
    n = s.size
    p = q / 100.0
    alpha = 1.0 - level
    j = int(scipy.stats.binom.ppf(alpha / 2.0, n, p))  # P(B < j) <= alpha/2 -> x_(j) (1-based) as low end
    k = int(scipy.stats.binom.ppf(1.0 - alpha / 2.0, n, p)) + 1
    j, k = max(j, 1), min(k, n)
    return float(np.percentile(s, q)), float(s[j - 1]), float(s[k - 1])


@dataclass(frozen=True)
class Band:
    """Deterministic value and percentiles of one result quantity.

    ``ci`` maps each percentile to its confidence interval (sampling error).
    """

    quantity: str
    unit: str
    deterministic: float
    p5: float
    p50: float
    p95: float
    ci: dict[float, tuple[float, float]]

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary."""
        return {
            "quantity": self.quantity,
            "unit": self.unit,
            "deterministic": self.deterministic,
            "p5": self.p5,
            "p50": self.p50,
            "p95": self.p95,
            "confidence_intervals": {f"p{q:g}": list(v) for q, v in self.ci.items()},
        }


@dataclass(frozen=True)
class Exceedance:
    """Probability that a computed voltage exceeds its tolerable value."""

    criterion: str
    count: int
    samples: int
    probability: float
    low: float
    high: float

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary."""
        return {
            "criterion": self.criterion,
            "samples_exceeding": self.count,
            "samples": self.samples,
            "probability": self.probability,
            "confidence_interval": [self.low, self.high],
        }


def _exceedance(criterion: str, values: np.ndarray, limits: np.ndarray) -> Exceedance:
    k = int(np.count_nonzero(values > limits))
    n = int(values.size)
    ci = scipy.stats.binomtest(k, n).proportion_ci(CONFIDENCE, method="wilson")
    return Exceedance(criterion, k, n, k / n, float(ci.low), float(ci.high))


@dataclass
class CaseBand:
    """The band of one case (base case or variant).

    ``samples`` holds one array per column (inputs and results), one value per sample.
    """

    name: str
    bands: list[Band]
    exceedance: list[Exceedance]
    samples: dict[str, np.ndarray]
    deterministic: Results

    def frame(self):
        """The samples as a pandas DataFrame, one row per sample, units in the column names."""
        import pandas as pd

        return pd.DataFrame(self.samples)

    def band(self, quantity: str) -> Band:
        """The band of ``quantity`` (e.g. ``"max touch"``)."""
        return next(b for b in self.bands if b.quantity == quantity)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary (samples as columns)."""
        det = self.deterministic
        return {
            "name": self.name,
            "deterministic": {
                "touch_limit_v": det.limits.touch_limit_v,
                "step_limit_v": det.limits.step_limit_v,
                "passed": det.assessment.passed,
                "governing": det.assessment.governing,
            },
            "bands": [b.to_dict() for b in self.bands],
            "exceedance": [e.to_dict() for e in self.exceedance],
            "samples": {k: [float(v) for v in col] for k, col in self.samples.items()},
        }


@dataclass
class UncertaintyRun:
    """Everything an uncertainty study computed."""

    cases: list[CaseBand]
    samples: int
    seed: int
    quantities: tuple[UncertainQuantity, ...]
    soil: FitCovariance | None
    soil_clipped: int
    solves: int
    deterministic_solves: int
    seconds: float
    notices: tuple[Notice, ...] = ()
    method: str = ""
    where: str = ""
    timings: dict[str, float] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary."""
        soil = None
        if self.soil is not None:
            lo, hi = self.soil.interval(0.90)
            soil = {
                "method": "linearised covariance of the log-parameters, s^2 (J^T J)^-1, at the least-squares optimum",
                "parameters": ["rho1_ohm_m", "rho2_ohm_m", "thickness_m"],
                "fitted": [float(v) for v in np.exp(self.soil.log_mean)],
                "log_covariance": self.soil.cov.tolist(),
                "relative_standard_error": [float(v) for v in self.soil.log_sd],
                "interval_90": [[float(a), float(b)] for a, b in zip(lo, hi, strict=True)],
                "residual_sd": self.soil.residual_sd,
                "degrees_of_freedom": self.soil.dof,
                "samples_on_a_bound": self.soil_clipped,
            }
        return {
            "method": self.method,
            "sampling": "Latin hypercube (scipy.stats.qmc.LatinHypercube)",
            "samples": self.samples,
            "seed": self.seed,
            "confidence_level": CONFIDENCE,
            "soil_uncertainty": soil,
            "uncertain_inputs": [
                {
                    "quantity": q.name,
                    "unit": q.unit,
                    "low": q.low,
                    "high": q.high,
                    "distribution": q.distribution,
                    "row": q.row,
                }
                for q in self.quantities
            ],
            "geometry_solves": self.solves,
            "deterministic_solves": self.deterministic_solves,
            "where": self.where,
            "seconds": self.seconds,
            "timings_s": self.timings,
            "notices": [{"level": n.level, "message": n.message} for n in self.notices],
            "cases": [c.to_dict() for c in self.cases],
        }


def _lhs(dim: int, n: int, seed: int) -> np.ndarray:
    try:
        sampler = qmc.LatinHypercube(d=dim, rng=np.random.default_rng(seed))
    except TypeError:  # scipy < 1.15 names the generator "seed"
        sampler = qmc.LatinHypercube(d=dim, seed=np.random.default_rng(seed))
    return sampler.random(n)


def _scaled(case_value: float | None, base: float | None, sample: float) -> float:
    """A sample for a case: the sample itself, or the case's own value times the sample's ratio to the base."""
    if case_value is None or base is None or case_value == base or base == 0:
        return float(sample)
    return float(case_value * sample / base)


def _apply(case: Design, base: Design, soil_params: np.ndarray | None, fit_params, values: dict[str, float]) -> Design:
    """The case design with one sample applied."""
    soil = case.soil
    if soil_params is not None:
        ratio = soil_params / fit_params
        soil = Soil("two-layer", soil.rho1_ohm_m * ratio[0], soil.thickness_m * ratio[2], soil.rho2_ohm_m * ratio[1])
    vals = {k: _scaled(base_value(case, k), base_value(base, k), v) for k, v in values.items()}
    if any(k in vals for k in SOIL_QUANTITIES):
        rho1 = vals.get("upper resistivity", soil.rho1_ohm_m)
        h1 = vals.get("upper thickness", soil.thickness_m)
        rho2 = vals.get("lower resistivity", soil.rho2_ohm_m)
        if soil.model == "multilayer":
            # the ranges act on the top two layers; the deeper ones are kept (as a variant does)
            layers = list(soil.layers)
            layers[0] = (rho1, h1)
            layers[1] = (rho2, layers[1][1])
            soil = replace(soil, rho1_ohm_m=rho1, thickness_m=h1, rho2_ohm_m=rho2, layers=tuple(layers))
        else:
            soil = Soil(soil.model, rho1, h1, rho2)
    surface = case.surface_layer
    if surface is not None and ("surface layer resistivity" in values or "surface layer thickness" in values):
        surface = SurfaceLayer(
            vals.get("surface layer resistivity", surface.rho_ohm_m),
            vals.get("surface layer thickness", surface.thickness_m),
        )
    f = case.fault
    tf = vals.get("fault duration", f.fault_duration_s)
    fault = replace(
        f,
        fault_current_a=vals.get("fault current", f.fault_current_a),
        split_factor=min(1.0, vals.get("split factor", f.split_factor)),
        x_over_r=vals.get("x/r ratio", f.x_over_r),
        fault_duration_s=tf,
        shock_duration_s=tf if f.shock_duration_s == f.fault_duration_s else f.shock_duration_s,
    )
    return replace(case, soil=soil, surface_layer=surface, fault=fault, variants=())


def _soil_key(soil: Soil) -> tuple:
    return (soil.model, soil.rho1_ohm_m, soil.thickness_m, soil.rho2_ohm_m, tuple(soil.layers))


def _evaluate(design: Design, pv: PerVolt) -> dict[str, float]:
    """Results of one sample from its per-volt solution (IEEE Std 80 Eqs. 79 and the I_G definition)."""
    f = design.fault
    df = decrement_factor(f.x_over_r, f.fault_duration_s, f.frequency_hz)
    ig = grid_current_a(f.fault_current_a, f.split_factor, df)
    gpr = ig * pv.resistance_ohm
    lim = tolerable_limits(design.soil, design.surface_layer, f)
    return {
        "rg_ohm": pv.resistance_ohm,
        "grid_current_a": ig,
        "gpr_v": gpr,
        "max_touch_v": pv.touch_per_v * gpr,
        "max_step_v": pv.step_per_v * gpr,
        "touch_limit_v": lim.touch_limit_v,
        "step_limit_v": lim.step_limit_v,
    }


_RESULTS = (("Rg", "rg_ohm", "ohm"), ("GPR", "gpr_v", "V"), ("max touch", "max_touch_v", "V"),
            ("max step", "max_step_v", "V"))  # fmt: skip


def _deterministic(results: Results) -> dict[str, float]:
    return {
        "rg_ohm": results.resistance_ohm,
        "gpr_v": results.gpr_v,
        "max_touch_v": results.max_touch_v,
        "max_step_v": results.max_step_v,
    }


def run_uncertainty(
    design: Design,
    quantities: tuple[UncertainQuantity, ...] = (),
    samples: int = DEFAULT_SAMPLES,
    seed: int = DEFAULT_SEED,
    engine: Engine | None = None,
) -> UncertaintyRun:
    """Band of the results of ``design`` (and of each of its variants) over the uncertain inputs.

    Parameters
    ----------
    design : Design
        The design as read; with Model = fitted its Wenner readings give the soil uncertainty.
    quantities : tuple of UncertainQuantity
        Rows of the Uncertainty sheet.
    samples : int
        Number of Latin hypercube samples.
    seed : int
        Seed of the Latin hypercube (same seed, same samples, same band).
    engine : Engine, optional
        Where the soil solves run (default: in this process).

    Returns
    -------
    UncertaintyRun

    Raises
    ------
    InputError
        When there is nothing uncertain, too few samples, or too few Wenner readings.
    """
    t_start = time.perf_counter()
    engine = engine or Engine()
    if not MIN_SAMPLES <= samples <= MAX_SAMPLES:
        raise InputError(
            f"--samples {samples} is out of range", fix=f"Use {MIN_SAMPLES} to {MAX_SAMPLES:,} (64 to 256 is typical)"
        )
    base, fit = resolve_soil(design)
    cov = None
    notices: list[Notice] = []
    if fit is not None and base.soil.model != "two-layer":
        # the covariance is that of the two-layer fit: band and deterministic case both use that model
        chosen = base.soil.model
        base = replace(base, soil=fit.soil)
        design = replace(design, soil=fit.soil)
        notices.append(
            Notice(
                "band-two-layer",
                f"The information criterion prefers a {chosen} soil for the deterministic run, but the soil "
                "uncertainty is taken from the two-layer fit and its covariance; this band and its deterministic "
                "value use that two-layer model.",
            )
        )
    if fit is not None:
        try:
            cov = fit_covariance(fit)
        except ValueError:
            raise InputError(
                f"the soil uncertainty needs at least 4 Wenner readings, the sheet has {len(fit.readings.spacing_m)}",
                sheet=WENNER.name,
                fix="Add readings at more spacings; 6 to 12 spacings are usual",
            ) from None
        if cov.dof < 3:
            notices.append(
                Notice(
                    "few-readings",
                    f"Only {len(fit.readings.spacing_m)} Wenner readings for three soil parameters: the noise is "
                    f"estimated from {cov.dof} degree(s) of freedom, so the soil samples have very heavy tails and "
                    "the band is wide. 6 to 12 spacings are usual.",
                )
            )
        if cov.at_bound:
            notices.append(
                Notice(
                    "fit-at-bound",
                    "The fitted " + ", ".join(cov.at_bound) + " lies on a bound of the fit, where the linearised "
                    "covariance is doubtful; the band may be too narrow.",
                )
            )
    if cov is None and not quantities:
        raise InputError(
            "nothing is uncertain: the soil is not fitted to Wenner readings and no 'Uncertainty' sheet has rows",
            sheet="Uncertainty",
            fix="Add an 'Uncertainty' sheet with rows 'Quantity | Low | High | Distribution' (e.g. 'Fault current "
            "[kA] | 9 | 11 | uniform'), or set Soil Model = fitted with Wenner readings",
        )
    t0 = time.perf_counter()
    if design.variants:
        from .variants import run_variants

        vrun = run_variants(design)
        names, det_results, det_solves = vrun.names, vrun.results, vrun.geometry_solves
    else:
        geometry = solve_geometry(base)  # the soil is fitted once, above
        det = evaluate(base, geometry, surface_field(base, geometry), fit)
        names, det_results, det_solves = ["base case"], [det], 1
    t_det = time.perf_counter() - t0
    cases = [r.design for r in det_results]

    dim = (4 if cov is not None else 0) + len(quantities)
    u = _lhs(dim, samples, seed)
    soil_params, clipped = (None, 0)
    if cov is not None:
        soil_params, clipped = cov.sample(u[:, :4])
        if clipped:
            notices.append(
                Notice(
                    "soil-samples-clipped",
                    f"{clipped} of {samples} soil samples fell outside the bounds of the fit and were moved onto them.",
                    "note" if clipped <= 0.05 * samples else "warning",
                )
            )
    off = 4 if cov is not None else 0
    values = {q.key: q.ppf(u[:, off + j]) for j, q in enumerate(quantities)}
    fit_params = np.array([fit.rho1_ohm_m, fit.rho2_ohm_m, fit.thickness_m]) if fit is not None else None

    sample_designs: list[list[Design]] = []
    cache: dict[tuple, PerVolt] = {}
    for d, r in zip(cases, det_results, strict=True):
        cache.setdefault(_soil_key(d.soil), _per_volt_of(r))
    todo: dict[tuple, Design] = {}
    for d in cases:
        row = []
        for k in range(samples):
            sp = soil_params[k] if soil_params is not None else None
            sd = _apply(d, base, sp, fit_params, {key: float(v[k]) for key, v in values.items()})
            row.append(sd)
            key = _soil_key(sd.soil)
            if key not in cache and key not in todo:
                todo[key] = sd
        sample_designs.append(row)
    t1 = time.perf_counter()
    where = engine.describe(len(todo)) if todo else "no solve beyond the deterministic case(s)"
    log.info("uncertainty: %d samples x %d case(s), %s", samples, len(cases), where)
    solved = engine.map(solve_per_volt, list(todo.values()), "soil samples")
    cache.update(zip(todo.keys(), solved, strict=True))
    t_solve = time.perf_counter() - t1

    out = []
    for name, r, row in zip(names, det_results, sample_designs, strict=True):
        evals = [_evaluate(sd, cache[_soil_key(sd.soil)]) for sd in row]
        cols: dict[str, np.ndarray] = {}
        if soil_params is not None:
            cols["rho1_ohm_m"] = np.array([sd.soil.rho1_ohm_m for sd in row])
            cols["rho2_ohm_m"] = np.array([sd.soil.rho2_ohm_m for sd in row])
            cols["thickness_m"] = np.array([sd.soil.thickness_m for sd in row])
        for q in quantities:
            cols[q.key.replace(" ", "_").replace("/", "_over_")] = np.array(
                [_input_value(sd, q.key) for sd in row], dtype=float
            )
        for key in evals[0]:
            cols[key] = np.array([e[key] for e in evals])
        det = _deterministic(r)
        bands = []
        for label, key, unit in _RESULTS:
            ests = {q: percentile_interval(cols[key], q) for q in PERCENTILES}
            bands.append(
                Band(
                    label,
                    unit,
                    det[key],
                    ests[5.0][0],
                    ests[50.0][0],
                    ests[95.0][0],
                    {q: (e[1], e[2]) for q, e in ests.items()},
                )  # fmt: skip
            )
        exceed = [
            _exceedance("touch", cols["max_touch_v"], cols["touch_limit_v"]),
            _exceedance("step", cols["max_step_v"], cols["step_limit_v"]),
        ]
        out.append(CaseBand(name, bands, exceed, cols, r))
    solves = det_solves + len(todo)
    sources = (
        ["the soil model fitted to the Wenner readings (multivariate Student t of the linearised fit covariance)"]
        if cov is not None
        else []
    ) + (["the ranges on the Uncertainty sheet"] if quantities else [])
    method = (
        "Latin hypercube samples of " + " and of ".join(sources) + "; one method-of-moments solve per distinct soil "
        "model, the fault and surface-layer data applied per volt of GPR (the model is linear in the current)."
    )
    return UncertaintyRun(
        out,
        samples,
        seed,
        tuple(quantities),
        cov,
        clipped,
        solves,
        det_solves,
        time.perf_counter() - t_start,
        tuple(notices),
        method,
        where,
        {"deterministic": t_det, "sample_solves": t_solve},
    )


def _input_value(d: Design, key: str) -> float:
    v = base_value(d, key)
    return math.nan if v is None else float(v)


def table_lines(run: UncertaintyRun) -> list[str]:
    """Plain-text band table for the terminal, one block per case."""
    lines = []
    for case in run.cases:
        lines.append(f"{case.name}:")
        lines.append(
            f"  {'Quantity':<12s} {'deterministic':>13s} {'P5':>10s} {'P50':>10s} {'P50 95 % CI':>21s} {'P95':>10s}"
        )
        for b in case.bands:
            spec = ".4g" if b.unit == "ohm" else ",.0f"
            lo, hi = b.ci[50.0]
            ci = f"[{lo:{spec}}, {hi:{spec}}]"
            lines.append(
                f"  {b.quantity + ' [' + b.unit + ']':<12s} {b.deterministic:>13{spec}} {b.p5:>10{spec}} "
                f"{b.p50:>10{spec}} {ci:>21s} {b.p95:>10{spec}}"
            )
        for e in case.exceedance:
            limits = case.deterministic.limits
            lim = limits.touch_limit_v if e.criterion == "touch" else limits.step_limit_v
            lines.append(
                f"  P({e.criterion} > limit) = {100 * e.probability:5.1f} %  ({e.count} of {e.samples} samples; "
                f"95 % CI {100 * e.low:.1f} to {100 * e.high:.1f} %; deterministic limit {lim:,.0f} V)"
            )
    return lines
