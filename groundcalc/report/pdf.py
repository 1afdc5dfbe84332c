"""Build the PDF draft report with reportlab's platypus."""

from __future__ import annotations

import datetime as _dt
from pathlib import Path

import numpy as np
from reportlab.lib.units import mm
from reportlab.platypus import KeepTogether, PageBreak, Paragraph, Spacer, TableStyle

from ..analysis import Results
from ..io.outputs import CLOSED_FORM_NOTE, closed_form_rows
from ..version import __version__
from .charts import Series, line_chart
from .comparison import variants_section
from .figures import leakage_figure, plan_figure, potential_figure, step_profile, touch_figure, touch_profile
from .soilcharts import layered_fit_flowables
from .style import (
    BODY,
    FIT_COLOUR,
    H1,
    H2,
    MEASURED_COLOUR,
    SMALL,
    UNIFORM_COLOUR,
    VERDICT,
    NumberedCanvas,
    cautions,
    draft_document,
    fmt,
    references,
    table,
    verdict,
)
from .text import markup

__all__ = ["write_report"]


def title_block(results: Results, input_name: str, sha256: str) -> list:
    """Title block flowables."""
    p = results.design.project
    cells, missing = [], 0
    for value in (p.project, p.site, p.prepared_by, p.revision, input_name):
        text, lost = markup(value or "-")
        cells.append(Paragraph(text, BODY))
        missing += lost
    rows = [
        ["Project", cells[0]],
        ["Site", cells[1]],
        ["Prepared by", cells[2]],
        ["Revision", cells[3]],
        ["Date", _dt.date.today().isoformat()],
        ["Input file", cells[4]],
        ["Input SHA-256", Paragraph(f'<font size="7.5">{sha256}</font>', SMALL)],
        ["Program", f"groundcalc {__version__}"],
    ]
    out = [
        Paragraph("Substation grounding study - draft results", H1),
        table(rows, [35 * mm, 135 * mm], header=False, align_right_from=2),
    ]
    if missing:
        out.append(
            Paragraph(
                f"<b>Note:</b> {missing} character(s) of the title block could not be printed in the fonts "
                "available and are shown as '?'; the JSON results hold the text as typed.",
                SMALL,
            )
        )
    return out


def summary(results: Results) -> list:
    """Pass/fail summary flowables."""
    a = results.assessment
    lim = results.limits
    overall = (
        f"Overall: {verdict(a.passed)} &nbsp; (governing criterion: {a.governing}, margin "
        f"{a.governing_margin_pct:+.1f} %)"
    )
    rows = [
        ["Criterion", "Computed", "Tolerable", "Margin [%]", "Result"],
        [
            Paragraph("Touch voltage [V]" + (", grid footprint" if getattr(a, "checks", ()) else ""), BODY),
            fmt(results.max_touch_v),
            fmt(lim.touch_limit_v),
            f"{a.touch_margin_pct:+.1f}",
            Paragraph(verdict(a.touch_ok), BODY),
        ],
        [
            "Step voltage [V]",
            fmt(results.max_step_v),
            fmt(lim.step_limit_v),
            f"{a.step_margin_pct:+.1f}",
            Paragraph(verdict(a.step_ok), BODY),
        ],
    ]
    sz = results.sizing
    if sz is not None:
        smallest = min(i.area_mm2 for i in sz.items)
        rows.append(
            [
                "Conductor section [mm2]",
                f"{smallest:.1f}",
                f"at least {sz.required_mm2:.1f}",
                f"{100.0 * (smallest - sz.required_mm2) / smallest:+.1f}",
                Paragraph(verdict(sz.ok), BODY),
            ]
        )
    checks = getattr(a, "checks", ())
    if checks:
        worst = min(checks, key=lambda c: (c.limit_v - c.value_v) / c.limit_v)
        failing = sum(not c.ok for c in checks)
        rows.append(
            [
                Paragraph(f"Fences, gates, points, areas: {failing} of {len(checks)} fail; worst", BODY),
                fmt(worst.value_v),
                fmt(worst.limit_v),
                f"{100.0 * (worst.limit_v - worst.value_v) / worst.limit_v:+.1f}",
                Paragraph(verdict(failing == 0), BODY),
            ]
        )
    basis = f"Tolerable voltages: {lim.basis}, Cs = {lim.cs:.4f}."
    if lim.touch_user or lim.step_user:
        basis += (
            f" <b>User-defined limits replace IEEE Std 80</b> (IEEE Std 80 values: "
            f"touch {lim.ieee80_touch_limit_v:.1f} V, step {lim.ieee80_step_limit_v:.1f} V)."
        )
    key = [
        ["Quantity", "Value"],
        ["Grid resistance Rg", f"{results.resistance_ohm:.4g} ohm"],
        ["Grid current I_G = Df Sf 3I0", f"{results.grid_current_a:,.0f} A"],
        ["Ground potential rise GPR", f"{results.gpr_v:,.0f} V"],
        ["Worst touch point (x, y)", "({:.2f}, {:.2f}) m".format(*results.field.touch.location_xy)],
        [
            "Worst step (from -> to)",
            "({:.2f}, {:.2f}) -> ({:.2f}, {:.2f}) m".format(*results.field.step.start_xy, *results.field.step.end_xy),
        ],
    ]
    advice = (
        "The design meets the touch, step and conductor-sizing criteria for the stated data."
        if a.passed
        else "The design does not meet the criteria. Options: more conductors or closer spacing "
        "where the worst point lies, rods on the perimeter, a thicker or more resistive surface "
        "layer, a deeper or larger grid, or a lower fault current or faster clearing; undersized "
        "conductors need a larger cross-section or a better material."
    )
    return [
        Paragraph("Summary", H2),
        Paragraph(overall, VERDICT),
        Spacer(1, 4),
        table(rows, [40 * mm, 30 * mm, 30 * mm, 25 * mm, 25 * mm]),
        Paragraph(basis, SMALL),
        Spacer(1, 6),
        table(key, [70 * mm, 80 * mm]),
        Spacer(1, 4),
        Paragraph(advice, BODY),
    ]


def inputs(results: Results) -> list:
    """Input data flowables."""
    d = results.design
    s = d.soil
    model = s.model + (" (fitted to the Wenner readings)" if results.soil_fit is not None else "")
    soil_rows = [["Soil model", model]]
    soil_rows.append(["Upper resistivity", f"{s.rho1_ohm_m:g} ohm*m"])
    if s.model == "two-layer":
        soil_rows += [
            ["Upper thickness H", f"{s.thickness_m:g} m"],
            ["Lower resistivity", f"{s.rho2_ohm_m:g} ohm*m"],
            ["Reflection coefficient K", f"{s.reflection_k:+.3f}"],
        ]
    if s.model == "multilayer":
        soil_rows = soil_rows[:1] + [
            [f"Layer {k}", f"{r:g} ohm*m, " + (f"{t:g} m thick" if t is not None else "to infinite depth")]
            for k, (r, t) in enumerate(s.layers, start=1)
        ]
    if d.surface_layer:
        soil_rows += [
            ["Surface layer", f"{d.surface_layer.rho_ohm_m:g} ohm*m, {d.surface_layer.thickness_m:g} m thick"],
            ["Derating factor Cs (IEEE Std 80 Eq. 27)", f"{results.limits.cs:.4f}"],
        ]
    else:
        soil_rows.append(["Surface layer", "none (Cs = 1)"])
    f = d.fault
    fault_rows = [
        ["Fault current 3I0", f"{f.fault_current_a:,.0f} A"],
        ["Split factor Sf", f"{f.split_factor:g}"],
        ["X/R, frequency", f"{f.x_over_r:g}, {f.frequency_hz:g} Hz"],
        ["Fault duration tf", f"{f.fault_duration_s:g} s"],
        ["Decrement factor Df (Eq. 79)", f"{results.decrement_factor:.4f}"],
        ["Shock duration ts, body weight", f"{f.shock_duration_s:g} s, {f.body_weight_kg:.0f} kg"],
    ]
    seg = results.geometry.solution.segments
    conductors = [c for c in d.all_conductors() if c.kind != "rod"]
    geo_rows = [
        ["Horizontal conductors", f"{len(conductors)}, total {sum(c.length_m for c in conductors):,.1f} m"],
        ["Rods", f"{len(d.rods)}, total {sum(r.length_m for r in d.rods):,.1f} m"],
        ["Segments (target length)", f"{len(seg)} ({d.settings.segment_length_m:g} m)"],
        ["Surface raster spacing, margin", f"{results.field.raster.spacing_m:.3g} m, {d.settings.margin_m:g} m"],
        ["Soil Green's function", Paragraph(results.geometry.solution.greens.description, SMALL)],
        [
            "Image terms (explicit / all)",
            f"{results.geometry.solution.greens.explicit_terms} / {results.geometry.solution.greens.terms}",
        ],
        ["Linear solver", results.geometry.solution.method],
    ]
    est = results.discretisation
    if est is not None:
        touch_txt = "n/a" if est.touch_rel is None else f"{100 * est.touch_rel:.2g} %"
        geo_rows.append(
            [
                "Discretisation error, est. (Rg / touch)",
                f"{100 * est.resistance_rel:.2g} % / {touch_txt}" + (" - above 1 %" if est.exceeds_warning else ""),
            ]
        )
    w = [70 * mm, 100 * mm]
    return [
        Paragraph("Inputs", H2),
        table([["Soil", ""]] + soil_rows, w, align_right_from=2),
        Spacer(1, 4),
        table([["Fault", ""]] + fault_rows, w, align_right_from=2),
        Spacer(1, 4),
        table([["Geometry and numerics", ""]] + geo_rows, w, align_right_from=2),
    ]


def soil_fit_section(results: Results) -> list:
    """Wenner readings against the fitted models."""
    fit = results.soil_fit
    if fit is None:
        return []
    a = np.asarray(fit.readings.spacing_m)
    meas = np.asarray(fit.readings.apparent_ohm_m)
    curve_a = np.geomspace(a.min() * 0.8, a.max() * 1.25, 120)
    chart = line_chart(
        [
            Series(a, meas, "measured (Wenner)", MEASURED_COLOUR, "markers"),
            Series(curve_a, fit.model_ohm_m(curve_a), "two-layer fit", FIT_COLOUR, "line"),
            Series(curve_a, np.full_like(curve_a, fit.uniform_ohm_m), "uniform fit", UNIFORM_COLOUR, "dashed"),
        ],
        165 * mm,
        70 * mm,
        "Pin spacing a [m]",
        "Apparent resistivity [ohm*m]",
        xlog=True,
        ylog=True,
    )
    rows = [["Spacing [m]", "Measured [ohm*m]", "Two-layer [ohm*m]", "Deviation [%]"]]
    rows += [[f"{x:g}", f"{m:.4g}", f"{p:.4g}", f"{dev:+.1f}"] for x, m, p, dev, _ in fit.table()]
    text = (
        f"Two-layer model fitted to {len(a)} Wenner readings (least squares on log apparent resistivity, "
        f"IEEE Std 81 series): rho1 = {fit.rho1_ohm_m:.4g} ohm*m over rho2 = {fit.rho2_ohm_m:.4g} ohm*m below "
        f"H = {fit.thickness_m:.3g} m; RMS misfit {fit.misfit_pct:.2g} %. A uniform model "
        f"({fit.uniform_ohm_m:.4g} ohm*m) misfits by {fit.uniform_misfit_pct:.2g} %."
    )
    return [
        Paragraph("Soil model fitted to Wenner readings", H2),
        Paragraph(text, BODY),
        Spacer(1, 4),
        chart,
        Spacer(1, 4),
        table(rows, [35 * mm, 40 * mm, 40 * mm, 35 * mm]),
    ] + layered_fit_flowables(fit)


def closed_form_section(results: Results) -> list:
    """IEEE Std 80 closed forms beside the numerical values."""
    cf = results.closed_form
    items = [Paragraph("IEEE Std 80 closed forms beside the numerical result", H2)]
    if cf is None:
        return items + [Paragraph("Not applicable: the conductors enclose no area.", BODY)]
    rows = [["Quantity", "Numerical", "Closed form", "Equation (IEEE Std 80-2000)", "Difference"]]
    last = ""
    for q, num, unit, closed, eq, diff in closed_form_rows(results):
        spec = ".4g" if unit == "ohm" else ",.1f"
        rows.append(["" if q == last else q, f"{num:{spec}} {unit}", f"{closed:{spec}} {unit}", eq, f"{diff:+.1f} %"])
        last = q
    t = table(rows, [40 * mm, 27 * mm, 27 * mm, 50 * mm, 24 * mm])
    t.setStyle(TableStyle([("ALIGN", (3, 0), (3, -1), "LEFT")]))
    q = cf.layout
    factors = (
        f"Layout as the equations see it: LC = {q.lc_m:,.1f} m, LR = {q.lr_total_m:,.1f} m ({q.rod_count} rods"
        f"{', on the perimeter' if q.rods_on_perimeter else ''}), A = {q.area_m2:,.0f} m2, "
        f"Lp = {q.perimeter_m:,.1f} m, "
        f"D = {q.spacing_m:.2f} m ({q.spacing_from}), h = {q.depth_m:.2f} m, d = {q.diameter_m * 1000:.1f} mm, "
        f"rho = {cf.rho_ohm_m:g} ohm*m. n = {cf.n:.2f} (na {cf.na:.2f}, nb {cf.nb:.3f}, nc {cf.nc:.3f}, "
        f"nd {cf.nd:.3f}), Km = {cf.km:.3f}, Ki = {cf.ki:.3f}, Ks = {cf.ks:.3f}, LM = {cf.lm_m:,.1f} m, "
        f"LS = {cf.ls_m:,.1f} m."
    )
    items += [Paragraph(f"<b>{CLOSED_FORM_NOTE}</b>", BODY), Spacer(1, 3), t, Spacer(1, 3), Paragraph(factors, SMALL)]
    for w in cf.warnings:
        items.append(Paragraph(f"<b>Limit:</b> {w}", SMALL))
    return [KeepTogether(items)]


def sizing_section(results: Results) -> list:
    """Conductor sizing against the fault current (IEEE Std 80 Eq. 37)."""
    sz = results.sizing
    if sz is None:
        return []
    mats: dict[str, list] = {}
    for i in sz.items:
        m = mats.setdefault(i.material, [i.required_mm2, i.max_temp_c, np.inf, 0, []])
        m[2] = min(m[2], i.area_mm2)
        m[3] += 1
        if not i.ok:
            m[4].append(i.label)
    rows = [["Material", "Items", "Tm [degC]", "Needed [mm2]", "Smallest [mm2]", "Result"]]
    for name, (req, tm, small, count, bad) in mats.items():
        rows.append([name, str(count), f"{tm:g}", f"{req:.1f}", f"{small:.1f}", Paragraph(verdict(not bad), BODY)])
    text = (
        f"Each conductor and rod is checked for the asymmetrical fault current Df x 3I0 = {sz.current_a:,.0f} A "
        f"for the fault duration {sz.duration_s:g} s, from an ambient {sz.ambient_c:g} degC (IEEE Std 80-2000 "
        "clause 11.3, Eq. 37, material constants of Table 1). The section is that of a solid round conductor of "
        "the entered diameter."
    )
    items = [Paragraph("Conductor sizing", H2), Paragraph(text, BODY), Spacer(1, 3)]
    items.append(table(rows, [55 * mm, 15 * mm, 22 * mm, 27 * mm, 27 * mm, 20 * mm]))
    for name, (_, _, _, _, bad) in mats.items():
        if bad:
            items.append(
                Paragraph(
                    f"<b>Undersized ({name}):</b> " + ", ".join(bad[:40]) + (" ..." if len(bad) > 40 else ""), BODY
                )
            )
    return [KeepTogether(items)]


def notices(results: Results) -> list:
    """Warnings and notes flowables."""
    if not results.notices:
        return []
    items = [Paragraph("Warnings and notes", H2)]
    for n in results.notices:
        items.append(Paragraph(f"<b>{n.level.capitalize()}:</b> {markup(n.message)[0]}", BODY))  # as typed
    return items


def figures_section(results: Results) -> list:
    """Plan, colour maps, profiles and leakage density."""

    def headed(title: str | None, flowables: list) -> list:
        # one figure, its caption and its heading stay on one page
        return [KeepTogether(([Paragraph(title, H2)] if title else []) + flowables)]

    out: list = headed("Layout", plan_figure(results, SMALL, max_height=90 * mm))
    out += headed("Earth-surface potential", potential_figure(results, SMALL, max_height=100 * mm))
    out += headed("Touch voltage", touch_figure(results, SMALL, max_height=100 * mm))
    out += headed("Profiles through the worst points", touch_profile(results, SMALL))
    out += [Spacer(1, 6)]
    out += headed(None, step_profile(results, SMALL))
    out += headed("Leakage current along the conductors", leakage_figure(results, SMALL))
    return out


def assumptions(results: Results) -> list:
    """Assumptions and limitations that apply to this run."""
    d = results.design
    sol = results.geometry.solution
    items = [
        f"The {len(sol.segments)} segments (target length {d.settings.segment_length_m:g} m) each carry a "
        "constant leakage current per metre; the conductors are thin wires at one potential (the GPR), "
        "with no conductor impedance.",
        f"Soil: {sol.greens.description}. Real soil varies sideways and with season.",
        f"Surface potential on a {results.field.raster.spacing_m:.3g} m raster over the grid and a "
        f"{d.settings.margin_m:g} m margin; the worst points are refined by a local search, but a peak narrower "
        "than the raster can be missed.",
        f"Touch voltage of grid metal is assessed over the {results.field.raster.touch_area.description}"
        + (
            "; fences, gates, check points and check areas entered in the workbook are checked as listed in "
            "their section. Metal left off the workbook is not checked."
            if results.metal is not None
            else "; no fences, gates, check points or other metal were entered, so metal outside it (a fence, "
            "a gate, equipment beyond the grid edge) is not checked: enter it on the Fences, Metal or Check "
            "points sheets."
        )
        + " Step voltage is assessed over the raster.",
        "Power frequency only; no transferred potentials through cable sheaths, neutrals or beyond the modelled "
        "metal; other buried metal only as entered.",
        "The IEEE Std 80 closed forms are a sanity check only: they assume uniform soil and regular grids.",
    ]
    return [KeepTogether([Paragraph("Assumptions and limitations", H2)] + [Paragraph(f"- {t}", BODY) for t in items])]


def write_report(results: Results, path: str | Path, input_name: str, sha256: str, variants=None) -> None:
    """Write the PDF report.

    Parameters
    ----------
    results : Results
        Analysis results.
    path : str or pathlib.Path
        Output PDF path (the caller handles atomic replacement).
    input_name : str
        Input workbook name for the title block.
    sha256 : str
        SHA-256 of the input workbook.
    variants : tuple, optional
        ``(names, summaries, changes, geometry_solves)`` of the Variants
        sheet, shown after the summary.
    """
    doc = draft_document(path, "groundcalc draft grounding study", results.design.project.prepared_by or "groundcalc")
    story = []
    story += title_block(results, input_name, sha256)
    story += summary(results)
    if variants is not None:
        story += variants_section(*variants)
    story += [PageBreak()]
    story += inputs(results)
    story += soil_fit_section(results)
    story += [PageBreak()]
    story += figures_section(results)
    if results.metal is not None:
        from .metal import metal_section

        story += metal_section(results)
    story += closed_form_section(results)
    story += sizing_section(results)
    story += notices(results)
    story += assumptions(results)
    story += cautions()
    story += references()
    doc.build(story, canvasmaker=NumberedCanvas)
