"""PDF of several designs side by side (compare and sweep), and the variants table."""

from __future__ import annotations

import datetime as _dt
from collections.abc import Sequence
from pathlib import Path
from xml.sax.saxutils import escape

import numpy as np
from reportlab.lib.units import mm
from reportlab.platypus import KeepTogether, Paragraph, Spacer, Table, TableStyle

from ..studies.compare import DesignSummary
from ..version import __version__
from .maps import Marker, PlanFigure
from .style import (
    BODY,
    FAIL_COLOUR,
    H1,
    H2,
    PASS_COLOUR,
    SMALL,
    NumberedCanvas,
    cautions,
    draft_document,
    references,
    table,
)

__all__ = ["summary_table", "write_comparison_report"]

_HEAD = [
    "Design",
    "Rg [ohm]",
    "GPR [V]",
    "Touch / limit [V]",
    "Step / limit [V]",
    "LC [m]",
    "Rods, LR [m]",
    "Mass [kg]",
    "Result",
    "Rank",
]


def summary_table(summaries: Sequence[DesignSummary], ranks: Sequence[int | None], first: str = "Design") -> Table:
    """Side-by-side table: one row per design."""
    rows = [[first] + _HEAD[1:]]
    style = []
    for k, (s, r) in enumerate(zip(summaries, ranks, strict=True), start=1):
        if s.error is not None:
            failed = Paragraph(escape(f"not analysed: {s.error}"), SMALL)
            rows.append([Paragraph(escape(s.name), SMALL), failed] + [""] * 8)
            style.append(("SPAN", (1, k), (-1, k)))
            continue
        result = "PASS" if s.passed else f"FAIL ({s.governing})"
        rows.append(
            [
                Paragraph(escape(s.name), SMALL),
                f"{s.resistance_ohm:.4g}",
                f"{s.gpr_v:,.0f}",
                f"{s.max_touch_v:,.0f} / {s.touch_limit_v:,.0f} ({s.touch_margin_pct:+.0f} %)",
                f"{s.max_step_v:,.0f} / {s.step_limit_v:,.0f} ({s.step_margin_pct:+.0f} %)",
                f"{s.conductor_length_m:,.0f}",
                f"{s.rod_count}, {s.rod_length_m:,.0f}",
                f"{s.mass_kg:,.0f}",
                result,
                str(r) if r else "-",
            ]
        )
        style.append(("TEXTCOLOR", (8, k), (8, k), PASS_COLOUR if s.passed else FAIL_COLOUR))
    t = table(rows, [52 * mm, 17 * mm, 18 * mm, 38 * mm, 38 * mm, 16 * mm, 22 * mm, 18 * mm, 30 * mm, 11 * mm])
    t.setStyle(TableStyle(style + [("FONT", (0, 1), (-1, -1), "Helvetica", 8)]))
    return t


def _mini_plan(s: DesignSummary, width: float, height: float) -> list:
    pts = [s.lines.reshape(-1, 2), s.rods_xy]
    allp = np.concatenate([p for p in pts if p.size] or [np.zeros((1, 2))])
    lo, hi = allp.min(axis=0), allp.max(axis=0)
    pad = max(1.0, 0.05 * float(np.max(hi - lo)))
    fig = PlanFigure(width, height, (lo[0] - pad, hi[0] + pad, lo[1] - pad, hi[1] + pad))
    fig.lines = s.lines
    fig.rods = s.rods_xy
    fig.markers = [Marker(s.touch_xy, f"touch {s.max_touch_v:,.0f} V")]
    return [Paragraph(f"<b>{escape(s.name)}</b> - {'PASS' if s.passed else 'FAIL'}", SMALL), fig]


def write_comparison_report(
    path: str | Path,
    title: str,
    summaries: Sequence[DesignSummary],
    ranks: Sequence[int | None],
    intro: str,
    first: str = "Design",
) -> None:
    """Write the side-by-side PDF: table, small plan views, cautions, references."""
    doc = draft_document(path, title, wide=True)
    story = [
        Paragraph(title, H1),
        Paragraph(f"groundcalc {__version__}, {_dt.date.today().isoformat()}. {escape(intro)}", BODY),
        Spacer(1, 6),
        summary_table(summaries, ranks, first),
        Spacer(1, 4),
        Paragraph(
            "Touch and step margins are (limit - computed) / limit. Rank orders the passing designs by the mass "
            "of buried metal (solid round sections, material densities); it is a material estimate, not a cost. "
            "The engineer decides: a lighter design may be harder to build, and each design still needs its own "
            "full report (groundcalc run).",
            SMALL,
        ),
    ]
    ok = [s for s in summaries if s.error is None]
    if ok:
        story.append(Paragraph("Plans (to scale within each view)", H2))
        w, h = 84 * mm, 62 * mm
        cells = [_mini_plan(s, w, h) for s in ok]
        rows = [cells[k : k + 3] for k in range(0, len(cells), 3)]
        rows[-1] = rows[-1] + [""] * (3 - len(rows[-1]))
        grid = Table(rows, colWidths=[w + 4 * mm] * 3, hAlign="LEFT")
        grid.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP")]))
        story.append(grid)
    story += cautions() + references()
    doc.build(story, canvasmaker=NumberedCanvas)


def variants_section(
    names: Sequence[str], summaries: Sequence[DesignSummary], changes: Sequence[str], solves: int
) -> list:
    """Variants table for the main report."""
    changed = list(changes)
    rows = [["Case", "Changes", "Rg [ohm]", "GPR [V]", "Touch / limit [V]", "Step / limit [V]", "Result"]]
    for n, s, c in zip(names, summaries, changed, strict=True):
        rows.append(
            [
                Paragraph(escape(n), SMALL),
                Paragraph(escape(c), SMALL),
                f"{s.resistance_ohm:.4g}",
                f"{s.gpr_v:,.0f}",
                f"{s.max_touch_v:,.0f} / {s.touch_limit_v:,.0f}",
                f"{s.max_step_v:,.0f} / {s.step_limit_v:,.0f}",
                "PASS" if s.passed else f"FAIL ({s.governing})",
            ]
        )
    t = table(rows, [26 * mm, 36 * mm, 16 * mm, 18 * mm, 26 * mm, 26 * mm, 22 * mm])
    t.setStyle(TableStyle([("FONT", (0, 1), (-1, -1), "Helvetica", 8)]))
    text = (
        f"The base case and {len(names) - 1} variant(s) from the Variants sheet; the geometry was solved "
        f"{solves} time(s), once per distinct soil model. Every other section of this report is the base case."
    )
    failing = [n for n, s in zip(names, summaries, strict=True) if not s.passed]
    if failing:
        text += f" <b>Not passing: {', '.join(failing)}.</b>"
    return [KeepTogether([Paragraph("Variants", H2), Paragraph(text, BODY), Spacer(1, 3), t])]
