"""Plan drawings for the report: layout to scale, colour maps, leakage along the conductors.

Everything is drawn straight onto the reportlab canvas by one flowable,
:class:`PlanFigure`, in true proportion (one scale for x and y) with axes in
metres and a scale bar. Colour maps are raster images built from numpy
arrays with Pillow (a reportlab dependency).

The colour scale is our own: lightness rises linearly from dark to light in
CIELAB (so equal steps of value look like equal steps of colour and the
scale reads correctly in grey print), and the hue runs from blue to yellow,
the axis that stays distinct for red-green colour vision deficiency.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from PIL import Image
from reportlab.lib import colors
from reportlab.lib.utils import ImageReader
from reportlab.platypus import Flowable

from .charts import nice_ticks

__all__ = [
    "COLOUR_STOPS_LAB",
    "PlanFigure",
    "colour_lut",
    "lab_to_srgb",
    "map_image",
    "pixel_scale",
]

#: Colour-scale anchors in CIELAB (L*, a*, b*): lightness linear from 20 to 92.
COLOUR_STOPS_LAB = np.array(
    [
        [20.0, 20.0, -50.0],  # deep blue-violet
        [38.0, 4.0, -44.0],  # blue
        [56.0, -16.0, -20.0],  # steel teal
        [74.0, -14.0, 22.0],  # sage
        [92.0, -4.0, 62.0],  # pale yellow
    ]
)

AXIS = colors.HexColor("#333333")
OUTSIDE = (222, 222, 222)  # raster cells outside the area a map covers
FONT = "Helvetica"


def lab_to_srgb(lab: np.ndarray) -> np.ndarray:
    """CIELAB (D65 white) to sRGB in [0, 1], clipped to the gamut.

    References
    ----------
    CIE 15:2004 Colorimetry (L*a*b* inverse); IEC 61966-2-1 (sRGB matrix and
    transfer curve).
    """
    lab = np.asarray(lab, float)
    fy = (lab[..., 0] + 16.0) / 116.0
    fx = fy + lab[..., 1] / 500.0
    fz = fy - lab[..., 2] / 200.0
    eps = 6.0 / 29.0

    def finv(t):
        return np.where(t > eps, t**3, 3.0 * eps**2 * (t - 4.0 / 29.0))

    xyz = np.stack([0.95047 * finv(fx), finv(fy), 1.08883 * finv(fz)], axis=-1)
    m = np.array([[3.2406, -1.5372, -0.4986], [-0.9689, 1.8758, 0.0415], [0.0557, -0.2040, 1.0570]])
    lin = np.clip(xyz @ m.T, 0.0, 1.0)
    return np.where(lin <= 0.0031308, 12.92 * lin, 1.055 * lin ** (1.0 / 2.4) - 0.055)


def colour_lut(n: int = 256) -> np.ndarray:
    """The colour scale as an (n, 3) uint8 table, low values first."""
    t = np.linspace(0.0, 1.0, n)
    pos = np.linspace(0.0, 1.0, len(COLOUR_STOPS_LAB))
    lab = np.column_stack([np.interp(t, pos, COLOUR_STOPS_LAB[:, k]) for k in range(3)])
    return np.round(lab_to_srgb(lab) * 255.0).astype(np.uint8)


LUT = colour_lut()


def pixel_scale(nx: int, ny: int, target: int = 720, largest: int = 2400) -> int:
    """Integer up-scaling of a raster of nx x ny cells for the embedded image."""
    k = max(1, math.ceil(target / max(nx, ny)))
    while k > 1 and max(nx, ny) * k > largest:
        k -= 1
    return k


def map_image(values: np.ndarray, vmin: float, vmax: float, hatch: np.ndarray | None = None) -> Image.Image:
    """Colour image of a raster (rows = y ascending), north up.

    Parameters
    ----------
    values : numpy.ndarray, shape (ny, nx)
        Values; NaN cells are drawn light grey.
    vmin, vmax : float
        Ends of the colour scale.
    hatch : numpy.ndarray of bool, optional
        Cells to hatch with diagonal lines (where a limit is exceeded).

    Returns
    -------
    PIL.Image.Image
        RGB image of ``pixel_scale(nx, ny)`` pixels per cell.
    """
    ny, nx = values.shape
    k = pixel_scale(nx, ny)
    span = vmax - vmin if vmax > vmin else 1.0
    t = np.clip((values - vmin) / span, 0.0, 1.0)
    idx = np.round(np.nan_to_num(t) * (len(LUT) - 1)).astype(int)
    rgb = LUT[idx]
    rgb[~np.isfinite(values)] = OUTSIDE
    big = np.repeat(np.repeat(rgb, k, axis=0), k, axis=1)
    if hatch is not None and hatch.any():
        hb = np.repeat(np.repeat(hatch, k, axis=0), k, axis=1)
        ii, jj = np.indices(hb.shape)
        phase = (ii + jj) % 10
        # a dark line with a light edge reads on every colour of the scale
        big[hb & (phase < 2)] = (15, 15, 15)
        big[hb & (phase == 2)] = (255, 255, 255)
    return Image.fromarray(big[::-1].copy(), "RGB")


@dataclass
class ColourBar:
    """A vertical colour bar beside a plan."""

    vmin: float
    vmax: float
    label: str
    marks: list[tuple[float, str]] = field(default_factory=list)


@dataclass
class Marker:
    """A labelled point (or, with ``to``, a labelled pair of points)."""

    xy: tuple[float, float]
    text: str
    to: tuple[float, float] | None = None


class PlanFigure(Flowable):
    """Plan view to scale: optional colour image, conductors, rods, markers, axes, scale bar.

    Parameters
    ----------
    width : float
        Width of the flowable. [pt]
    max_height : float
        Largest height it may take. [pt]
    bounds : (xmin, xmax, ymin, ymax)
        Plan area to show. [m]
    """

    def __init__(self, width: float, max_height: float, bounds: tuple[float, float, float, float]):
        super().__init__()
        self.width = width
        self.max_height = max_height
        self.bounds = bounds
        self.image: Image.Image | None = None
        self.image_extent: tuple[float, float, float, float] | None = None
        self.lines: np.ndarray = np.zeros((0, 2, 2))
        self.line_colours: list | None = None
        self.line_width = 0.9
        self.line_colour = colors.HexColor("#3a3a3a")
        self.rods: np.ndarray = np.zeros((0, 2))
        self.rod_colours: list | None = None
        self.markers: list[Marker] = []
        self.colour_bar: ColourBar | None = None
        self.left, self.bottom, self.top = 38.0, 26.0, 6.0
        self._layout()

    def _layout(self) -> None:
        right = 84.0 if self.colour_bar else 10.0
        x0, x1, y0, y1 = self.bounds
        pw = self.width - self.left - right
        ph_max = self.max_height - self.bottom - self.top
        self.scale = min(pw / max(x1 - x0, 1e-9), ph_max / max(y1 - y0, 1e-9))
        self.plot_w = (x1 - x0) * self.scale
        self.plot_h = (y1 - y0) * self.scale
        self.height = self.plot_h + self.bottom + self.top

    def set_colour_bar(self, bar: ColourBar) -> None:
        """Add a colour bar (re-computes the layout)."""
        self.colour_bar = bar
        self._layout()

    def wrap(self, avail_width, avail_height):  # noqa: D102 (reportlab API)
        return self.width, self.height

    def _px(self, x):
        return self.left + (np.asarray(x, float) - self.bounds[0]) * self.scale

    def _py(self, y):
        return self.bottom + (np.asarray(y, float) - self.bounds[2]) * self.scale

    def draw(self):  # noqa: D102 (reportlab API)
        c = self.canv
        x0, x1, y0, y1 = self.bounds
        if self.image is not None and self.image_extent is not None:
            ex0, ex1, ey0, ey1 = self.image_extent
            c.saveState()
            p = c.beginPath()
            p.rect(self.left, self.bottom, self.plot_w, self.plot_h)
            c.clipPath(p, stroke=0, fill=0)
            c.drawImage(
                ImageReader(self.image),
                float(self._px(ex0)),
                float(self._py(ey0)),
                (ex1 - ex0) * self.scale,
                (ey1 - ey0) * self.scale,
            )
            c.restoreState()
        self._draw_lines(c)
        self._draw_rods(c)
        self._draw_axes(c, x0, x1, y0, y1)
        self._draw_scale_bar(c, x0, x1)
        for m in self.markers:
            self._draw_marker(c, m)
        if self.colour_bar is not None:
            self._draw_colour_bar(c, self.colour_bar)

    def _draw_lines(self, c) -> None:
        c.saveState()
        c.setLineCap(1)
        c.setLineWidth(self.line_width)
        for k, ((ax, ay), (bx, by)) in enumerate(self.lines):
            c.setStrokeColor(self.line_colours[k] if self.line_colours is not None else self.line_colour)
            c.line(float(self._px(ax)), float(self._py(ay)), float(self._px(bx)), float(self._py(by)))
        c.restoreState()

    def _draw_rods(self, c) -> None:
        c.saveState()
        c.setLineWidth(0.6)
        c.setStrokeColor(colors.black)
        for k, (x, y) in enumerate(self.rods):
            fill = self.rod_colours[k] if self.rod_colours is not None else colors.white
            c.setFillColor(fill)
            c.circle(float(self._px(x)), float(self._py(y)), 2.4, stroke=1, fill=1)
        c.restoreState()

    def _draw_axes(self, c, x0, x1, y0, y1) -> None:
        c.saveState()
        c.setStrokeColor(AXIS)
        c.setLineWidth(0.6)
        c.rect(self.left, self.bottom, self.plot_w, self.plot_h, stroke=1, fill=0)
        c.setFont(FONT, 7)
        # scale bar at the lower left (see _draw_scale_bar); the axis label is centred
        c.setFillColor(AXIS)
        for t in nice_ticks(x0, x1, target=7):
            px = float(self._px(t))
            c.line(px, self.bottom, px, self.bottom - 3)
            c.drawCentredString(px, self.bottom - 11, f"{t:g}")
        for t in nice_ticks(y0, y1, target=max(3, round(7 * (y1 - y0) / max(x1 - x0, 1e-9)))):
            py = float(self._py(t))
            c.line(self.left, py, self.left - 3, py)
            c.drawRightString(self.left - 5, py - 2.5, f"{t:g}")
        c.setFont(FONT, 8)
        c.drawCentredString(self.left + self.plot_w / 2, 3, "x [m]")
        c.saveState()
        c.translate(9, self.bottom + self.plot_h / 2)
        c.rotate(90)
        c.drawCentredString(0, 0, "y [m]")
        c.restoreState()
        c.restoreState()

    def _draw_scale_bar(self, c, x0, x1) -> None:
        want = (x1 - x0) / 6.0
        mag = 10 ** math.floor(math.log10(want))
        length = max(m * mag for m in (1, 2, 5) if m * mag <= want * 1.0001)
        # below the axis, left of the axis label, so it never hides the layout
        px0 = self.left
        py = 3.0
        w = length * self.scale
        c.saveState()
        c.setStrokeColor(colors.black)
        c.setLineWidth(0.5)
        c.setFillColor(colors.black)
        c.rect(px0, py, w / 2, 3, stroke=1, fill=1)
        c.setFillColor(colors.white)
        c.rect(px0 + w / 2, py, w / 2, 3, stroke=1, fill=1)
        c.setFillColor(colors.black)
        c.setFont(FONT, 6.5)
        c.drawString(px0 + w + 4, py - 0.5, f"{length:g} m")
        c.restoreState()

    def _draw_marker(self, c, m: Marker) -> None:
        px, py = float(self._px(m.xy[0])), float(self._py(m.xy[1]))
        c.saveState()
        c.setStrokeColor(colors.black)
        c.setLineWidth(1.0)
        if m.to is not None:
            qx, qy = float(self._px(m.to[0])), float(self._py(m.to[1]))
            c.line(px, py, qx, qy)
            for x, y in ((px, py), (qx, qy)):
                c.setFillColor(colors.white)
                c.circle(x, y, 2.2, stroke=1, fill=1)
        else:
            c.setFillColor(colors.white)
            c.circle(px, py, 3.2, stroke=1, fill=1)
            c.line(px - 5, py, px + 5, py)
            c.line(px, py - 5, px, py + 5)
        c.setFont("Helvetica-Bold", 7.5)
        w = c.stringWidth(m.text, "Helvetica-Bold", 7.5)
        tx = px + 7 if px + 7 + w < self.left + self.plot_w - 2 else px - 7 - w
        ty = py + 5 if py + 12 < self.bottom + self.plot_h else py - 12
        c.setFillColor(colors.Color(1, 1, 1, alpha=0.85))
        c.rect(tx - 1.5, ty - 2, w + 3, 9.5, stroke=0, fill=1)
        c.setFillColor(colors.black)
        c.drawString(tx, ty, m.text)
        c.restoreState()

    def _draw_colour_bar(self, c, bar: ColourBar) -> None:
        bx = self.left + self.plot_w + 14
        bw = 11
        by, bh = self.bottom, self.plot_h
        strip = Image.fromarray(np.repeat(LUT[::-1][:, None, :], 4, axis=1), "RGB")
        c.drawImage(ImageReader(strip), bx, by, bw, bh)
        c.saveState()
        c.setStrokeColor(AXIS)
        c.setLineWidth(0.5)
        c.rect(bx, by, bw, bh, stroke=1, fill=0)
        c.setFont(FONT, 6.5)
        c.setFillColor(AXIS)
        span = bar.vmax - bar.vmin if bar.vmax > bar.vmin else 1.0
        marks = [(by + bh * (v - bar.vmin) / span, text) for v, text in bar.marks if bar.vmin <= v <= bar.vmax]
        for t in nice_ticks(bar.vmin, bar.vmax, target=6):
            y = by + bh * (t - bar.vmin) / span
            c.line(bx + bw, y, bx + bw + 3, y)
            if all(abs(y - ym) > 8 for ym, _ in marks):
                c.drawString(bx + bw + 5, y - 2.3, f"{t:,.6g}")
        for y, text in marks:
            c.setStrokeColor(colors.black)
            c.setLineWidth(1.4)
            c.line(bx - 2, y, bx + bw + 3, y)
            c.setFont("Helvetica-Bold", 6.5)
            c.drawString(bx + bw + 5, y - 2.3, text)
            c.setFont(FONT, 6.5)
        c.setFont(FONT, 7.5)
        c.translate(bx + bw + 62, by + bh / 2)
        c.rotate(90)
        c.drawCentredString(0, 0, bar.label)
        c.restoreState()


def colour_of(value: float, vmin: float, vmax: float):
    """The scale's colour for one value, as a reportlab colour."""
    span = vmax - vmin if vmax > vmin else 1.0
    i = int(round(np.clip((value - vmin) / span, 0.0, 1.0) * (len(LUT) - 1)))
    r, g, b = LUT[i] / 255.0
    return colors.Color(float(r), float(g), float(b))
