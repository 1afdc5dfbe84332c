"""Short form of CAUTIONS.md, shown by the command line and in the report."""

from __future__ import annotations

__all__ = ["CAUTIONS", "DRAFT_MARK"]

#: Marking printed on every report page.
DRAFT_MARK = "DRAFT - for review by a licensed professional engineer - not for construction"

#: (heading, text) pairs; every heading is a heading of CAUTIONS.md.
CAUTIONS: tuple[tuple[str, str], ...] = (
    (
        "Draft for review",
        "Results are a design aid and a draft. A licensed professional engineer must review, "
        "check and stamp the design before it is built or relied on.",
    ),
    (
        "Standards and local codes govern",
        "IEEE Std 80 and the standards, codes and utility rules that apply where the substation "
        "is built take precedence over this program. User-entered limits replace IEEE Std 80 and "
        "are labelled user-defined.",
    ),
    (
        "Closed forms and conductor sizing are checks, not the design",
        "The IEEE Std 80 closed forms assume uniform soil and regular grids; the numerical result is "
        "the design value. Sizing assumes a solid round conductor carrying Df x 3I0 for the fault "
        "duration; stranding, joints, corrosion and mechanical strength are the engineer's to check. "
        "Ranking compared or swept layouts by metal mass is a material estimate, not a recommendation.",
    ),
    (
        "Model assumptions",
        "The grid is at one potential (no conductor impedance); metal on the Metal and Fences sheets "
        "is at its own potential (bonded at the GPR, or floating); power frequency only (no lightning "
        "or switching surges); soil idealised as uniform or horizontal layers; transferred "
        "potentials beyond the modelled length of fences, pipes and rails, and through cable "
        "sheaths, neutrals or other impedances, are not modelled; other buried metal only as entered.",
    ),
    (
        "Layered soil models",
        "A fitted third layer is preferred by an information criterion, not proven; layers deeper "
        "than the longest Wenner spacing can see are not resolved, yet they can change the "
        "resistance of a large grid a lot.",
    ),
    (
        "Input data dominate",
        "Soil resistivity, fault current, split factor and clearing time decide the answer. "
        "Check them, and consider seasonal changes (frozen or dry soil).",
    ),
    (
        "Uncertainty band",
        "The band covers only the two-layer fit's covariance and the ranges typed on the Uncertainty "
        "sheet; when another soil model is preferred it uses the two-layer fit and says so. Its "
        "percentiles come from a finite Latin hypercube and carry sampling error.",
    ),
    (
        "Where touch and step are checked",
        "Touch voltage is checked over the grid footprint and the check areas, on fences at the fence "
        "reach on both sides, on gates over their swing and at the check points; metal left off the "
        "workbook is not checked. Step is checked over the grid and margin, the fence-reach bands and "
        "the check areas. Fence posts are bare rods from grade (no footings).",
    ),
    (
        "Drawings (DXF)",
        "Import reads model space only, ignores z, takes the unit from $INSUNITS or --units, replaces "
        "arcs and circles by chords, drops unmapped layers and imports no fences. Exported contours "
        "are linear within raster cells; exceeded areas are accurate to one raster cell.",
    ),
    (
        "Tables and the Python API",
        "CSV tables, the results workbook and DataFrames carry the numbers without the report's "
        "notes; touch voltage counts only where in_touch_area is true; designs built in code take SI units.",
    ),
    (
        "Discretisation error and rod ends",
        "The error estimate compares with a solve at twice the segment length and covers the "
        "segment length only, not the thin-wire model at rod ends (about 0.1 %), the soil model or "
        "the raster search. Above 1 %: shorten the segments.",
    ),
    (
        "Large grids: matrix-free solve",
        "From 6000 segments a matrix-free approximation is solved (tested within 0.05 % on Rg and "
        "0.3 % on touch and step against the exact path on small grids, not on every layout).",
    ),
)
