"""Report pages for layered soil fits: every fitted curve against the readings, and the chosen profile."""

from __future__ import annotations

import math

import numpy as np
from reportlab.graphics.shapes import Drawing, Line, Rect, String
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.platypus import Paragraph, Spacer

from .charts import Series, line_chart
from .style import BODY, FIT_COLOUR, GRID_LINE, H2, MEASURED_COLOUR, UNIFORM_COLOUR, table

__all__ = ["layered_fit_flowables", "profile_bars"]

#: Line colours of the 1-, 2-, 3- and 4-layer curves.
_CURVE_COLOURS = (UNIFORM_COLOUR, colors.HexColor("#5aae61"), FIT_COLOUR, colors.HexColor("#8e44ad"))


def profile_bars(prof, width: float, height: float) -> Drawing:
    """Bar diagram of resistivity (log scale, across) against depth (down).

    The last layer, which has no bottom, is drawn to 1.5 times the deepest interface.
    """
    d = Drawing(width, height)
    left, right, top, bottom = 22 * mm, 8 * mm, 6 * mm, 12 * mm
    pw, ph = width - left - right, height - top - bottom
    edges = [0.0, *prof.interfaces]
    zmax = max(edges[-1] * 1.5, 1.0)
    edges.append(zmax)
    lo = 10 ** math.floor(math.log10(min(prof.rho)))
    hi = 10 ** math.ceil(math.log10(max(prof.rho)))
    if hi <= lo:
        hi = lo * 10

    def xpos(r):
        return left + pw * (math.log10(r) - math.log10(lo)) / (math.log10(hi) - math.log10(lo))

    def ypos(z):
        return bottom + ph * (1.0 - z / zmax)

    for k, rho in enumerate(prof.rho):
        y0, y1 = ypos(edges[k + 1]), ypos(edges[k])
        d.add(Rect(left, y0, xpos(rho) - left, y1 - y0, fillColor=FIT_COLOUR, strokeColor=colors.white))
        label = f"{rho:.3g} ohm*m" + ("" if k < prof.n - 1 else " (to any depth)")
        d.add(String(min(xpos(rho) + 2, left + pw - 40), (y0 + y1) / 2 - 3, label, fontSize=7))
    d.add(Line(left, bottom, left, bottom + ph, strokeColor=GRID_LINE))
    d.add(Line(left, bottom + ph, left + pw, bottom + ph, strokeColor=GRID_LINE))
    dec = 10 ** np.arange(round(math.log10(lo)), round(math.log10(hi)) + 1)
    for r in dec:
        d.add(String(xpos(r) - 6, bottom - 9, f"{r:g}", fontSize=7))
    for z in edges[:-1]:
        d.add(String(left - 20 * mm + 2, ypos(z) - 3, f"{z:.3g} m", fontSize=7))
    d.add(String(left + pw / 2 - 30, 1, "Resistivity [ohm*m], log scale", fontSize=7))
    return d


def layered_fit_flowables(fit) -> list:
    """The N-layer fits of a :class:`~groundcalc.soil.wenner.SoilFit` (empty without them)."""
    snd = getattr(fit, "layered", None)
    if snd is None:
        return []
    a = np.asarray(fit.readings.spacing_m)
    meas = np.asarray(fit.readings.apparent_ohm_m)
    curve_a = np.geomspace(a.min() * 0.8, a.max() * 1.25, 120)
    series = [Series(a, meas, "measured (Wenner)", MEASURED_COLOUR, "markers")]
    for f in snd.fits:
        series.append(
            Series(
                curve_a,
                f.curve(curve_a),
                f"{f.layers}-layer fit",
                _CURVE_COLOURS[f.layers - 1],
                "line" if f is snd.chosen else "dashed",
            )
        )
    chart = line_chart(
        series, 165 * mm, 70 * mm, "Pin spacing a [m]", "Apparent resistivity [ohm*m]", xlog=True, ylog=True
    )
    rows = [["Layers", "RMS misfit [%]", "AIC", "BIC", "Resistivities [ohm*m]", "Thicknesses [m]"]]
    for f in snd.fits:
        rows.append(
            [
                f"{f.layers}" + (" (chosen)" if f is snd.chosen else ""),
                f"{f.rms_pct:.2f}",
                f"{f.aic:.1f}",
                f"{f.bic:.1f}",
                ", ".join(f"{r:.4g}" for r in f.profile.rho),
                ", ".join(f"{t:.3g}" for t in f.profile.thickness) or "-",
            ]
        )
    text = (
        f"Models of 1 to {max(f.layers for f in snd.fits)} layers fitted to the same readings (Stefanescu "
        f"integral, bounded least squares from several starting points). {snd.summary()} A smaller "
        "information criterion is better; it charges each extra layer for its two parameters, so an extra "
        "layer is chosen only when it lowers the misfit by more than the readings' scatter explains."
    )
    return [
        Paragraph("Layered models", H2),
        Paragraph(text, BODY),
        Spacer(1, 4),
        chart,
        Spacer(1, 4),
        table(rows, [22 * mm, 25 * mm, 18 * mm, 18 * mm, 45 * mm, 35 * mm]),
        Spacer(1, 4),
        Paragraph(f"Chosen profile ({snd.chosen.layers} layer(s)): resistivity against depth", H2),
        profile_bars(snd.chosen.profile, 165 * mm, 55 * mm),
    ]
