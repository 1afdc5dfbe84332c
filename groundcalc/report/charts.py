"""Small line and scatter charts drawn with reportlab graphics (no plotting library).

Axes get "nice" ticks (1-2-5 steps on linear axes, decades with 2 and 5 on
logarithmic ones), labels with units, and an optional legend.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from reportlab.graphics.shapes import Circle, Drawing, Group, Line, PolyLine, Rect, String
from reportlab.lib import colors

__all__ = ["Series", "line_chart", "nice_ticks"]

AXIS = colors.HexColor("#333333")
GRID = colors.HexColor("#d9d9d9")
FONT = "Helvetica"


@dataclass
class Series:
    """One data series.

    Attributes
    ----------
    x, y : sequence of float
        Data.
    label : str
        Legend text.
    colour : reportlab colour
        Line or marker colour.
    style : str
        ``"line"``, ``"markers"`` or ``"dashed"``.
    """

    x: np.ndarray
    y: np.ndarray
    label: str = ""
    colour: object = field(default_factory=lambda: colors.HexColor("#1f4e79"))
    style: str = "line"


def nice_ticks(lo: float, hi: float, log: bool = False, target: int = 6) -> list[float]:
    """Tick positions covering [lo, hi]."""
    if log:
        e0, e1 = math.floor(math.log10(lo) + 1e-9), math.ceil(math.log10(hi) - 1e-9)
        mult = (1, 2, 5) if e1 - e0 <= 3 else (1,)
        ticks = [m * 10.0**e for e in range(e0, e1 + 1) for m in mult]
        return [t for t in ticks if lo * (1 - 1e-9) <= t <= hi * (1 + 1e-9)]
    span = hi - lo
    if span <= 0:
        return [lo]
    raw = span / target
    mag = 10 ** math.floor(math.log10(raw))
    step = min((m * mag for m in (1, 2, 2.5, 5, 10)), key=lambda s: abs(span / s - target))
    start = math.ceil(lo / step - 1e-9) * step
    out = []
    t = start
    while t <= hi + 1e-9 * step:
        out.append(round(t, 12))
        t += step
    return out


def _fmt(v: float) -> str:
    if v == 0:
        return "0"
    if abs(v) >= 1e4:
        return f"{v:,.0f}"
    if abs(v) < 1e-2:
        return f"{v:.3g}"
    return f"{v:g}"


def _bounds(vals: np.ndarray, log: bool) -> tuple[float, float]:
    vals = vals[np.isfinite(vals)]
    if log:
        vals = vals[vals > 0]
        lo, hi = float(vals.min()), float(vals.max())
        return 10 ** math.floor(math.log10(lo) + 1e-9), 10 ** math.ceil(math.log10(hi) - 1e-9)
    lo, hi = float(vals.min()), float(vals.max())
    if hi == lo:
        lo, hi = lo - 0.5, hi + 0.5
    ticks = nice_ticks(lo, hi)
    step = ticks[1] - ticks[0] if len(ticks) > 1 else (hi - lo)
    return math.floor(lo / step + 1e-9) * step, math.ceil(hi / step - 1e-9) * step


def line_chart(
    series: list[Series],
    width: float,
    height: float,
    xlabel: str,
    ylabel: str,
    xlog: bool = False,
    ylog: bool = False,
    xlim: tuple[float, float] | None = None,
    ylim: tuple[float, float] | None = None,
    hlines: list[tuple[float, str, object]] | None = None,
) -> Drawing:
    """A chart of the series with axes, ticks, labels and a legend.

    Parameters
    ----------
    series : list of Series
        Data to draw.
    width, height : float
        Size in points.
    xlabel, ylabel : str
        Axis labels, with units.
    xlog, ylog : bool
        Logarithmic axes.
    xlim, ylim : tuple, optional
        Axis ranges (computed from the data when omitted).
    hlines : list of (value, label, colour), optional
        Horizontal reference lines, labelled at the right end.

    Returns
    -------
    reportlab.graphics.shapes.Drawing
    """
    d = Drawing(width, height)
    left, right, bottom, top = 46.0, 12.0, 30.0, 10.0
    pw, ph = width - left - right, height - bottom - top
    xs = np.concatenate([np.asarray(s.x, float) for s in series])
    ys = np.concatenate([np.asarray(s.y, float) for s in series] + [np.array([h[0] for h in hlines or []])])
    x0, x1 = xlim or _bounds(xs, xlog)
    y0, y1 = ylim or _bounds(ys, ylog)

    def tx(v):
        v = np.asarray(v, float)
        f = (np.log10(v) - math.log10(x0)) / (math.log10(x1) - math.log10(x0)) if xlog else (v - x0) / (x1 - x0)
        return left + pw * f

    def ty(v):
        v = np.asarray(v, float)
        f = (np.log10(v) - math.log10(y0)) / (math.log10(y1) - math.log10(y0)) if ylog else (v - y0) / (y1 - y0)
        return bottom + ph * f

    d.add(Rect(left, bottom, pw, ph, fillColor=None, strokeColor=AXIS, strokeWidth=0.6))
    for t in nice_ticks(x0, x1, xlog):
        x = float(tx(t))
        d.add(Line(x, bottom, x, bottom + ph, strokeColor=GRID, strokeWidth=0.3))
        d.add(Line(x, bottom, x, bottom - 3, strokeColor=AXIS, strokeWidth=0.6))
        d.add(String(x, bottom - 12, _fmt(t), fontName=FONT, fontSize=7, textAnchor="middle"))
    for t in nice_ticks(y0, y1, ylog):
        y = float(ty(t))
        d.add(Line(left, y, left + pw, y, strokeColor=GRID, strokeWidth=0.3))
        d.add(Line(left - 3, y, left, y, strokeColor=AXIS, strokeWidth=0.6))
        d.add(String(left - 5, y - 2.5, _fmt(t), fontName=FONT, fontSize=7, textAnchor="end"))
    d.add(String(left + pw / 2, 4, xlabel, fontName=FONT, fontSize=8, textAnchor="middle"))
    lab = String(0, 0, ylabel, fontName=FONT, fontSize=8, textAnchor="middle")
    g = Group(lab)
    g.transform = (0, 1, -1, 0, 10, bottom + ph / 2)
    d.add(g)
    for value, text, colour in hlines or []:
        y = float(ty(value))
        d.add(Line(left, y, left + pw, y, strokeColor=colour, strokeWidth=0.8, strokeDashArray=[3, 2]))
        d.add(String(left + pw - 2, y + 2, text, fontName=FONT, fontSize=7, textAnchor="end", fillColor=colour))
    for s in series:
        x = tx(s.x)
        y = ty(s.y)
        ok = np.isfinite(x) & np.isfinite(y)
        x, y = x[ok], y[ok]
        if s.style == "markers":
            for xi, yi in zip(x, y, strict=True):
                d.add(Circle(float(xi), float(yi), 2.2, fillColor=None, strokeColor=s.colour, strokeWidth=0.8))
        else:
            pts = [float(v) for pair in zip(x, y, strict=True) for v in pair]
            dash = [4, 2] if s.style == "dashed" else None
            d.add(PolyLine(pts, strokeColor=s.colour, strokeWidth=1.1, strokeDashArray=dash))
    labelled = [s for s in series if s.label]
    for k, s in enumerate(labelled):
        y = bottom + ph - 10 - 10 * k
        x = left + 8
        if s.style == "markers":
            d.add(Circle(x + 6, y + 2.5, 2.2, fillColor=None, strokeColor=s.colour, strokeWidth=0.8))
        else:
            d.add(
                Line(
                    x,
                    y + 2.5,
                    x + 12,
                    y + 2.5,
                    strokeColor=s.colour,
                    strokeWidth=1.1,
                    strokeDashArray=[4, 2] if s.style == "dashed" else None,
                )
            )
        d.add(String(x + 16, y, s.label, fontName=FONT, fontSize=7))
    return d
