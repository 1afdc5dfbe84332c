"""PDF of an uncertainty study: the band beside the deterministic value, and the CDF of max touch."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from reportlab.lib.units import mm
from reportlab.platypus import KeepTogether, PageBreak, Paragraph, Spacer

from ..model import Notice
from ..studies.uncertainty import CONFIDENCE, CaseBand, UncertaintyRun
from .charts import Series, line_chart
from .pdf import inputs, soil_fit_section, summary, title_block
from .style import (
    BODY,
    FAIL_COLOUR,
    FIT_COLOUR,
    H1,
    H2,
    MEASURED_COLOUR,
    SMALL,
    UNIFORM_COLOUR,
    NumberedCanvas,
    cautions,
    draft_document,
    references,
    table,
)

__all__ = ["band_rows", "touch_cdf", "write_uncertainty_report"]


def _f(value: float, unit: str) -> str:
    return f"{value:.4g}" if unit == "ohm" else f"{value:,.0f}"


def band_rows(case: CaseBand) -> list[list[str]]:
    """Table rows: quantity, deterministic, P5, P50 with its interval, P95, tolerable value."""
    lim = case.deterministic.limits
    limit = {"max touch": f"{lim.touch_limit_v:,.0f}", "max step": f"{lim.step_limit_v:,.0f}"}
    rows = [
        ["Quantity", "Deterministic", "P5", "P50", f"P50 {100 * CONFIDENCE:.0f} % interval", "P95", "Tolerable"],
    ]
    for b in case.bands:
        lo, hi = b.ci[50.0]
        rows.append(
            [
                f"{b.quantity} [{b.unit}]",
                _f(b.deterministic, b.unit),
                _f(b.p5, b.unit),
                _f(b.p50, b.unit),
                f"{_f(lo, b.unit)} to {_f(hi, b.unit)}",
                _f(b.p95, b.unit),
                limit.get(b.quantity, "-"),
            ]
        )
    return rows


def touch_cdf(case: CaseBand, width: float = 165 * mm, height: float = 70 * mm):
    """Empirical distribution function of max touch, with the tolerable touch voltage and the deterministic value."""
    t = np.sort(case.samples["max_touch_v"])
    n = t.size
    x = np.repeat(t, 2)
    y = np.concatenate([[0.0], np.repeat(np.arange(1, n) / n, 2), [1.0]])
    limits = case.samples["touch_limit_v"]
    lim = float(np.median(limits))
    what = "tolerable touch" if np.ptp(limits) == 0 else "tolerable touch (P50 of the samples)"
    det = case.deterministic.max_touch_v
    lo = min(t.min(), lim, det)
    hi = max(t.max(), lim, det)
    pad = 0.05 * (hi - lo or abs(hi) or 1.0)
    series = [
        Series(x, y, f"max touch, {n} samples", FIT_COLOUR, "line"),
        Series(np.array([lim, lim]), np.array([0.0, 1.0]), f"{what} {lim:,.0f} V", FAIL_COLOUR, "dashed"),
        Series(np.array([det, det]), np.array([0.0, 1.0]), f"deterministic {det:,.0f} V", UNIFORM_COLOUR, "dashed"),
    ]
    return line_chart(
        series,
        width,
        height,
        "Max touch voltage [V]",
        "Fraction of samples at or below",
        xlim=(lo - pad, hi + pad),
        ylim=(0.0, 1.0),
        hlines=[(0.5, "P50", MEASURED_COLOUR)],
    )


def _case_section(case: CaseBand, first: bool) -> list:
    items = [Paragraph(("Uncertainty band" if first else "Band") + f" - {case.name}", H2)]
    items.append(table(band_rows(case), [30 * mm, 24 * mm, 20 * mm, 20 * mm, 34 * mm, 20 * mm, 22 * mm]))
    lines = []
    for e in case.exceedance:
        lines.append(
            f"Probability that the {e.criterion} voltage exceeds its tolerable value: <b>{100 * e.probability:.1f} "
            f"%</b> ({e.count} of {e.samples} samples; {100 * CONFIDENCE:.0f} % Wilson interval "
            f"{100 * e.low:.1f} to {100 * e.high:.1f} %)."
        )
    for crit in ("touch", "step"):
        lim = case.samples[f"{crit}_limit_v"]
        if np.ptp(lim) > 0:
            p5, p95 = np.percentile(lim, [5, 95])
            lines.append(
                f"The tolerable {crit} voltage varies with the sampled inputs (P5 {p5:,.0f} V, P95 {p95:,.0f} V); "
                "each sample is compared with its own limit, the table shows the deterministic one."
            )
    items += [Spacer(1, 3)] + [Paragraph(t, BODY) for t in lines]
    items += [Spacer(1, 4), touch_cdf(case)]
    return [KeepTogether(items)]


def _method(run: UncertaintyRun) -> list:
    text = (
        f"{run.samples} Latin hypercube samples (scipy.stats.qmc.LatinHypercube, seed {run.seed}; the same seed "
        f"repeats the run). {run.method} Geometry solves: {run.solves} in all, {run.deterministic_solves} of them for "
        f"the deterministic case(s); {run.seconds:.1f} s ({run.where}). Percentile intervals are distribution-free "
        "(binomial order statistics, exact for independent samples and conservative for a Latin hypercube); the "
        "exceedance intervals are Wilson score intervals."
    )
    out = [Paragraph("Method", H2), Paragraph(text, BODY)]
    if run.soil is not None:
        lo, hi = run.soil.interval(0.90)
        fitted = np.exp(run.soil.log_mean)
        rows = [["Parameter", "Fitted", "Relative std. error", "90 % interval"]]
        for name, unit, v, s, a, b in zip(
            ("rho1", "rho2", "H"), ("ohm*m", "ohm*m", "m"), fitted, run.soil.log_sd, lo, hi, strict=True
        ):
            rows.append([f"{name} [{unit}]", f"{v:.4g}", f"{100 * s:.1f} %", f"{a:.4g} to {b:.4g}"])
        out += [
            Spacer(1, 3),
            Paragraph(
                "Soil: covariance of the fitted log-parameters from the Jacobian of the log-residuals at the optimum, "
                f"scaled by the residual variance (s = {100 * run.soil.residual_sd:.2g} % with {run.soil.dof} degrees "
                "of freedom); samples from the multivariate Student t distribution, within the bounds of the fit "
                f"({run.soil_clipped} moved onto a bound).",
                BODY,
            ),
            table(rows, [40 * mm, 30 * mm, 40 * mm, 50 * mm]),
        ]
    if run.quantities:
        rows = [["Quantity", "Low", "High", "Unit", "Distribution", "Sheet row"]]
        for q in run.quantities:
            rows.append([q.name, f"{q.low:.4g}", f"{q.high:.4g}", q.unit or "-", q.distribution, str(q.row)])
        out += [
            Spacer(1, 3),
            Paragraph("Ranges of the Uncertainty sheet (normal and lognormal: Low and High are P5 and P95):", BODY),
            table(rows, [50 * mm, 22 * mm, 22 * mm, 18 * mm, 26 * mm, 20 * mm]),
        ]
    return out


def write_uncertainty_report(
    run: UncertaintyRun, path: str | Path, input_name: str, sha256: str, notes: tuple[Notice, ...] = ()
) -> None:
    """Write the PDF of an uncertainty study.

    The first page gives the band of every case beside its deterministic
    value and the empirical distribution of max touch against the limit;
    then the method, the deterministic summary and inputs of the base case.
    """
    base = run.cases[0].deterministic
    doc = draft_document(path, "groundcalc draft uncertainty study", base.design.project.prepared_by or "groundcalc")
    story = title_block(base, input_name, sha256)
    story[0] = Paragraph("Substation grounding study - uncertainty band (draft)", H1)
    for k, case in enumerate(run.cases):
        story += _case_section(case, k == 0)
    story += _method(run)
    warn = list(notes) + list(run.notices)
    if warn:
        story += [Paragraph("Warnings and notes of the study", H2)]
        story += [Paragraph(f"<b>{n.level.capitalize()}:</b> {n.message}", SMALL) for n in warn]
    story += [PageBreak(), Paragraph("Deterministic base case", H1)]
    story += summary(base)
    story += inputs(base)
    story += soil_fit_section(base)
    story += [
        Paragraph(
            "Figures of the deterministic case (maps, profiles, leakage) are in the report of 'groundcalc run'.", SMALL
        )
    ]
    story += cautions()
    story += references()
    doc.build(story, canvasmaker=NumberedCanvas)
