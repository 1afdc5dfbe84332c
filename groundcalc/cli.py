"""Command line: ``groundcalc template``, ``run``, ``import``, ``soil``, ``compare``, ``sweep`` and ``uncertainty``.

Exit codes: 0 finished (the design may still fail the safety criteria; the
output says so), 2 bad input or arguments, 1 internal error.
"""

from __future__ import annotations

import argparse
import logging
import sys
import textwrap
from pathlib import Path

from .errors import InputError
from .version import __version__

__all__ = ["main"]

log = logging.getLogger("groundcalc")


def _setup_logging(quiet: bool) -> None:
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(logging.Formatter("groundcalc: %(message)s"))
    root = logging.getLogger("groundcalc")
    root.handlers[:] = [handler]
    root.setLevel(logging.WARNING if quiet else logging.INFO)
    root.propagate = False


def _print_cautions() -> None:
    from .cautions import CAUTIONS, DRAFT_MARK

    print()
    print(f"CAUTION: {DRAFT_MARK}.")
    for head, text in CAUTIONS[1:]:
        print(textwrap.fill(f"- {head}: {text}", width=100, subsequent_indent="  "))
    print("  Full text: CAUTIONS.md")


def _cmd_template(args: argparse.Namespace) -> int:
    from .io.outputs import atomic_write, check_output
    from .io.template import build_template

    out = check_output(args.path, [], args.overwrite, "template")
    if out.suffix.lower() != ".xlsx":
        raise InputError(f"the template name '{out.name}' must end in .xlsx", fix="For example design.xlsx")
    wb = build_template()
    atomic_write(out, lambda tmp: wb.save(tmp))
    print(f"wrote blank design workbook {out}")
    print("fill it in, then run: groundcalc run " + str(out) + " --report draft.pdf --json results.json")
    return 0


def _summary_lines(results) -> list[str]:
    a = results.assessment
    lim = results.limits
    t, s = results.field.touch, results.field.step
    lines = [
        f"Grid resistance      Rg   = {results.resistance_ohm:10.4g} ohm   "
        f"({len(results.geometry.solution.segments)} segments)",
        f"Decrement factor     Df   = {results.decrement_factor:10.4f}",
        f"Grid current         I_G  = {results.grid_current_a:10.1f} A",
        f"Ground potential rise GPR = {results.gpr_v:10.1f} V",
        f"Max touch voltage         = {results.max_touch_v:10.1f} V   limit {lim.touch_limit_v:8.1f} V   "
        f"margin {a.touch_margin_pct:+6.1f} %   {'PASS' if a.touch_ok else 'FAIL'}   "
        f"at ({t.location_xy[0]:.2f}, {t.location_xy[1]:.2f}) m",
        f"Max step voltage          = {results.max_step_v:10.1f} V   limit {lim.step_limit_v:8.1f} V   "
        f"margin {a.step_margin_pct:+6.1f} %   {'PASS' if a.step_ok else 'FAIL'}   "
        f"from ({s.start_xy[0]:.2f}, {s.start_xy[1]:.2f}) to ({s.end_xy[0]:.2f}, {s.end_xy[1]:.2f}) m",
        f"Limits: {lim.basis}, Cs = {lim.cs:.4f}",
    ]
    if lim.touch_user or lim.step_user:
        lines.append(
            f"  (IEEE Std 80 values for comparison: touch {lim.ieee80_touch_limit_v:.1f} V, "
            f"step {lim.ieee80_step_limit_v:.1f} V)"
        )
    sz = results.sizing
    if sz is not None:
        verdict = "PASS" if sz.ok else f"FAIL: {len(sz.undersized)} undersized (see warnings)"
        lines.append(
            f"Conductor sizing          : needs {sz.required_mm2:.1f} mm2 for {sz.current_a:,.0f} A, "
            f"{sz.duration_s:g} s (IEEE Std 80 Eq. 37); smallest used {min(i.area_mm2 for i in sz.items):.1f} mm2"
            f"   {verdict}"
        )
    if results.metal is not None:
        from .report.metal import metal_lines

        lines += metal_lines(results)
    lines.append(f"Overall: {'PASS' if a.passed else 'FAIL'} (governing: {a.governing})")
    est = getattr(results, "discretisation", None)
    if est is not None:
        touch_txt = "n/a" if est.touch_rel is None else f"{100 * est.touch_rel:.2g} %"
        lines.append(
            f"Discretisation error (estimated, check level {est.coarse_segment_length_m:g} m segments): "
            f"Rg {100 * est.resistance_rel:.2g} %, max touch {touch_txt}"
        )
    lines += closed_form_lines(results)
    return lines


def closed_form_lines(results) -> list[str]:
    """IEEE Std 80 closed forms beside the numerical values."""
    from .io.outputs import CLOSED_FORM_NOTE, closed_form_rows

    cf = results.closed_form
    if cf is None:
        return ["", "IEEE Std 80 closed forms: not applicable (the conductors enclose no area)."]
    lines = [
        "",
        "IEEE Std 80 closed forms beside the numerical result:",
        f"  {'':<20s} {'numerical':>15s} {'closed form':>15s}  {'':<23s} {'diff.':>8s}",
    ]
    last = ""
    for q, num, unit, closed, eq, diff in closed_form_rows(results):
        name, last = ("" if q == last else q), q
        spec = "10.4g" if unit == "ohm" else "10.1f"
        lines.append(f"  {name:<20s} {num:{spec}} {unit:<4s} {closed:{spec}} {unit:<4s}  {eq:<23s} {diff:+7.1f} %")
    lines.append(
        f"  (n = {cf.n:.2f}, Km = {cf.km:.3f}, Ki = {cf.ki:.3f}, Ks = {cf.ks:.3f}, D = {cf.layout.spacing_m:.2f} m)"
    )
    lines += ["  " + t for t in textwrap.wrap(CLOSED_FORM_NOTE, 96)]
    return lines


def _cmd_run(args: argparse.Namespace) -> int:
    from .analysis import analyse
    from .io.outputs import atomic_write, file_sha256, results_to_dict, write_json
    from .io.workbook import read_design

    inputs = [args.workbook]
    report, json_out = _output_paths(args, inputs)
    dxf_out, levels = _dxf_output(args, inputs, [report, json_out])
    csv_dir, xlsx_out = _table_outputs(args, inputs, [report, json_out, dxf_out])
    sha_before = file_sha256(args.workbook) if Path(args.workbook).is_file() else None
    if args.check and (report or dxf_out):
        raise InputError("--check reads and checks only; it writes no report or drawing", fix="Drop --report/--dxf")
    log.info("reading %s", args.workbook)
    design = read_design(args.workbook)
    if args.check:
        return _check_only(design, args.workbook, json_out)
    variant_run = None
    if design.variants:
        from .studies.compare import summarise, table_lines
        from .studies.variants import run_variants

        log.info("base case and %d variant(s)", len(design.variants))
        variant_run = run_variants(design)
        results = variant_run.results[0]
        vsum = [summarise(r, n) for n, r in zip(variant_run.names, variant_run.results, strict=True)]
        if not args.no_error_estimate:
            from .analysis import with_discretisation

            results = with_discretisation(results)
    else:
        results = analyse(design, error_estimate=not args.no_error_estimate)
    for n in results.notices:
        log.warning("%s: %s", n.level, n.message)
    if results.soil_fit is not None:
        print("\n".join(soil_fit_lines(results.soil_fit)))
        print()
    print("\n".join(_summary_lines(results)))
    extra = None
    if variant_run is not None:
        print(f"\nBase case and variants (geometry solved {variant_run.geometry_solves} time(s)):")
        print("\n".join(table_lines(vsum, [None] * len(vsum), first="Case")))
        extra = (variant_run.names, vsum, variant_run.descriptions, variant_run.geometry_solves)
    if json_out:
        data = results_to_dict(results, args.workbook)
        if variant_run is not None:
            data["variants"] = [{**s.to_dict(), "changes": o} for s, o in zip(vsum, variant_run.changes, strict=True)]
            data["geometry_solves"] = variant_run.geometry_solves
        write_json(json_out, data)
        log.info("wrote %s", json_out)
    if report:
        from .report import write_report

        log.info("writing report %s", report)
        atomic_write(report, lambda tmp: write_report(results, tmp, Path(args.workbook).name, sha_before or "", extra))
        log.info("wrote %s", report)
    if dxf_out:
        from .io.dxf_export import write_results_dxf

        counts = write_results_dxf(results, dxf_out, levels, args.dxf_units)
        print(f"\nwrote {dxf_out}: " + ", ".join(f"{layer} {n}" for layer, n in counts.items()))
    if csv_dir or xlsx_out:
        from .api import Results as FlatResults
        from .io.frames import write_csv, write_results_xlsx

        flat = FlatResults.from_pipeline(results)
        if csv_dir:
            written = write_csv(flat, results, csv_dir)
            print(f"\nwrote {len(written)} CSV tables to {csv_dir}: " + ", ".join(w.name for w in written))
        if xlsx_out:
            write_results_xlsx(flat, results, xlsx_out)
            print(f"\nwrote results workbook {xlsx_out} (sheets Summary, Segments, Surface, Profiles)")
    _print_cautions()
    return 0


def _check_only(design, workbook, json_out) -> int:
    """``run --check``: the workbook was read, checked and repaired; list the notices, solve nothing."""
    from .io.outputs import write_json

    for n in design.notices:
        log.warning("%s: %s", n.level, n.message)
    print(f"{workbook}: read and checked, {len(design.notices)} warning(s) and note(s); not analysed (--check)")
    if json_out:
        write_json(
            json_out,
            {
                "groundcalc_version": __version__,
                "input_file": str(workbook),
                "checked_only": True,
                "warnings": [{"code": n.code, "level": n.level, "message": n.message} for n in design.notices],
            },
        )
    return 0


def _dxf_output(args, inputs, others) -> tuple[Path | None, list[float] | None]:
    """Checked ``--dxf`` path and ``--contours`` levels (refused before any work if unusable)."""
    from .io.dxf_export import parse_levels
    from .io.outputs import check_output

    levels = parse_levels(args.contours) if args.contours else None
    if not args.dxf:
        if levels:
            raise InputError("--contours needs --dxf", fix="Add --dxf RESULTS.dxf to write the contours")
        return None, None
    out = check_output(args.dxf, inputs, args.overwrite, "DXF")
    if out.suffix.lower() != ".dxf":
        raise InputError(f"the DXF output '{out.name}' must end in .dxf", fix="For example results.dxf")
    if any(o is not None and o.resolve() == out.resolve() for o in others):
        raise InputError("the DXF output is the same file as another output", fix="Give each output its own name")
    return out, levels


def _table_outputs(args, inputs, others) -> tuple[Path | None, Path | None]:
    """Checked ``--csv`` folder and ``--results-xlsx`` path (refused before any work if unusable)."""
    from .io.frames import check_csv_folder
    from .io.outputs import check_output

    csv_dir = check_csv_folder(args.csv, inputs, args.overwrite) if args.csv else None
    xlsx = None
    if args.results_xlsx:
        xlsx = check_output(args.results_xlsx, inputs, args.overwrite, "results workbook")
        if xlsx.suffix.lower() != ".xlsx":
            raise InputError(f"the results workbook '{xlsx.name}' must end in .xlsx", fix="For example results.xlsx")
        if any(o is not None and o.resolve() == xlsx.resolve() for o in others):
            raise InputError(
                "the results workbook is the same file as another output", fix="Give each output its own name"
            )
    if csv_dir is not None and any(o is not None and o.resolve() == csv_dir.resolve() for o in others + [xlsx]):
        raise InputError("the CSV folder is the same path as another output", fix="Give the tables their own folder")
    return csv_dir, xlsx


def _cmd_import(args: argparse.Namespace) -> int:
    from .io.dxf_import import complete_rules, import_drawing
    from .io.dxf_workbook import read_layer_rules, write_import_workbook
    from .io.outputs import check_output, file_sha256

    inputs = [args.drawing] + ([args.layers] if args.layers else [])
    out = check_output(args.workbook, inputs, args.overwrite, "workbook")
    if out.suffix.lower() != ".xlsx":
        raise InputError(f"the workbook name '{out.name}' must end in .xlsx", fix="For example design.xlsx")
    sheet_rules = read_layer_rules(args.layers) if args.layers else []

    def names(values) -> list[str]:
        return [n.strip() for v in values or [] for n in v.split(",") if n.strip()]

    mm = 1e-3
    rules = complete_rules(
        sheet_rules,
        names(args.conductors),
        names(args.rods),
        args.depth,
        args.diameter * mm if args.diameter is not None else None,
        args.rod_length,
        args.rod_diameter * mm if args.rod_diameter is not None else None,
        args.rod_top_depth,
    )
    sha = file_sha256(args.drawing) if Path(args.drawing).is_file() else None
    imp = import_drawing(args.drawing, rules, args.units)
    print("\n".join(imp.summary_lines()))
    for n in imp.notices:
        log.warning("%s: %s", n.level, n.message)
    write_import_workbook(imp, out)
    if sha is not None and file_sha256(args.drawing) != sha:  # pragma: no cover - defensive
        raise InputError(f"the drawing '{args.drawing}' changed while it was read", fix="Run the import again")
    print(f"\nwrote design workbook {out}")
    print("fill in the Soil and Fault sheets (marked in yellow), then run: groundcalc run " + str(out))
    return 0


def soil_fit_lines(fit) -> list[str]:
    """Plain-text summary of a soil fit (used by ``soil`` and ``run``)."""
    rows = fit.readings.rows
    where = f"sheet '{fit.readings.sheet}'" + (f", rows {min(rows)}-{max(rows)}" if rows else "")
    lines = [
        f"Wenner readings: {len(fit.readings.spacing_m)} spacings ({where})",
        f"Uniform model:    rho  = {fit.uniform_ohm_m:9.4g} ohm*m{'':32s}RMS misfit {fit.uniform_misfit_pct:6.2f} %",
        f"Two-layer model:  rho1 = {fit.rho1_ohm_m:9.4g} ohm*m, H = {fit.thickness_m:7.3g} m, "
        f"rho2 = {fit.rho2_ohm_m:9.4g} ohm*m   RMS misfit {fit.misfit_pct:6.2f} %   (K = {fit.soil.reflection_k:+.3f})",
        "",
        f"  {'Spacing [m]':>11s}  {'Measured [ohm*m]':>16s}  {'Two-layer [ohm*m]':>17s}  {'Dev. [%]':>8s}"
        f"  {'Uniform dev. [%]':>16s}",
    ]
    for a, m, p, dev, udev in fit.table():
        lines.append(f"  {a:11.3g}  {m:16.4g}  {p:17.4g}  {dev:+8.2f}  {udev:+16.2f}")
    if getattr(fit, "layered", None) is not None:
        lines += ["", f"Layered models (Stefanescu integral), ranked by {fit.layered.criterion}:"]
        lines.append(
            f"  {'Layers':>6s}  {'RMS misfit [%]':>14s}  {'AIC':>8s}  {'BIC':>8s}  "
            "Resistivities [ohm*m] / thicknesses [m]"
        )
        for f in fit.layered.fits:
            mark = "  <- preferred" if f is fit.layered.chosen else ""
            rho = ", ".join(f"{r:.4g}" for r in f.profile.rho)
            th = ", ".join(f"{t:.3g}" for t in f.profile.thickness) or "-"
            lines.append(f"  {f.layers:6d}  {f.rms_pct:14.2f}  {f.aic:8.1f}  {f.bic:8.1f}  {rho} / {th}{mark}")
        lines.append("  " + fit.layered.summary())
    return lines


def _cmd_soil(args: argparse.Namespace) -> int:
    from .io.outputs import check_distinct, check_output, soil_fit_to_dict, write_design_with_soil, write_json
    from .io.workbook import read_wenner
    from .soil.wenner import fit_soil

    inputs = [args.workbook]
    design_out = check_output(args.write_design, inputs, args.overwrite, "design") if args.write_design else None
    if design_out is not None and design_out.suffix.lower() != ".xlsx":
        raise InputError(f"the design copy '{design_out.name}' must end in .xlsx", fix="For example design-fitted.xlsx")
    json_out = check_output(args.json, inputs, args.overwrite, "JSON") if args.json else None
    check_distinct({"design copy": design_out, "JSON": json_out})
    readings = read_wenner(args.workbook)
    log.info("fitting 1 to %d layers to %d readings", args.max_layers, len(readings.spacing_m))
    fit = fit_soil(readings, max_layers=args.max_layers, criterion=args.criterion)
    print("\n".join(soil_fit_lines(fit)))
    if fit.misfit_pct > 10.0 and fit.layered.chosen.layers <= 2:
        print(
            f"\nWARNING: the two-layer model misfits the readings by {fit.misfit_pct:.1f} % RMS. "
            "The soil may have more "
            "layers or lateral changes, or some readings may be in error; review the data before using the model."
        )
    if json_out:
        write_json(json_out, {"input_file": str(args.workbook), "soil_fit": soil_fit_to_dict(fit)})
        log.info("wrote %s", json_out)
    if design_out:
        write_design_with_soil(args.workbook, design_out, fit)
        layers = fit.layered.chosen.layers if fit.layered.chosen.layers >= 3 else 2
        where = "on its Layers sheet" if layers >= 3 else "on its Soil sheet"
        print(f"\nwrote {design_out} with the fitted {layers}-layer model {where} (the input is unchanged)")
    print(
        "\nCAUTION: a fitted soil model is only as good as the readings. Seasonal changes (frozen or dry "
        "topsoil) and soil variation across the site are not captured; a licensed engineer decides the design model."
    )
    return 0


def _whole_number(option: str, least: int):
    """An argparse type: a whole number of at least ``least``, or a clear error naming ``option``."""

    def parse(value: str) -> int:
        try:
            n = int(value)
        except ValueError:
            n = least - 1
        if n < least:
            raise argparse.ArgumentTypeError(f"{option} must be a whole number of {least} or more, got '{value}'")
        return n

    return parse


_jobs = _whole_number("--jobs", 1)
_samples = _whole_number("--samples", 4)
_seed = _whole_number("--seed", 0)


def _output_paths(args, inputs) -> tuple[Path | None, Path | None]:
    """Checked ``--report`` and ``--json`` paths (refused before any work if unusable)."""
    from .io.outputs import check_output

    report = check_output(args.report, inputs, args.overwrite, "report") if args.report else None
    json_out = check_output(args.json, inputs, args.overwrite, "JSON") if args.json else None
    if report and json_out and report.resolve() == json_out.resolve():
        raise InputError("the report and JSON outputs are the same file", fix="Give them different names")
    return report, json_out


def _write_side_by_side(outputs, summaries, ranks, title, intro, first, extra_json=None) -> None:
    from .io.outputs import atomic_write, write_json

    report, json_out = outputs
    if json_out:
        from .cautions import CAUTIONS, DRAFT_MARK

        data = {
            "groundcalc_version": __version__,
            "status": DRAFT_MARK,
            "designs": [{**s.to_dict(), "rank": r} for s, r in zip(summaries, ranks, strict=True)],
            "ranking_basis": "passing designs by buried metal mass (kg), lightest first",
            "cautions": [f"{h}: {t}" for h, t in CAUTIONS],
            **(extra_json or {}),
        }
        write_json(json_out, data)
        log.info("wrote %s", json_out)
    if report:
        from .report.comparison import write_comparison_report

        atomic_write(report, lambda tmp: write_comparison_report(tmp, title, summaries, ranks, intro, first))
        log.info("wrote %s", report)


def _cmd_compare(args: argparse.Namespace) -> int:
    from .studies.compare import default_jobs, rank, summarise_file, table_lines

    inputs = list(args.workbooks)
    outputs = _output_paths(args, inputs)
    engine = _engine(args, default_jobs())
    log.info("analysing %s", engine.describe(len(inputs)))
    if engine.distributed:
        from .studies.engine import summarise_bytes, workbook_item

        summaries = engine.map(summarise_bytes, [workbook_item(p) for p in inputs], "designs")
    else:
        summaries = engine.map(summarise_file, [str(p) for p in inputs], "designs")
    ranks = rank(summaries)
    print("\n".join(table_lines(summaries, ranks)))
    passing = [s for s, r in sorted(zip(summaries, ranks, strict=True), key=lambda t: t[1] or 10**9) if r]
    if passing:
        print(f"\nLightest passing design: {passing[0].name} ({passing[0].mass_kg:,.0f} kg of buried metal)")
    else:
        print("\nNo design passes.")
    _write_side_by_side(
        outputs,
        summaries,
        ranks,
        "Grounding designs side by side - draft",
        f"{len(summaries)} designs compared: " + ", ".join(Path(p).name for p in inputs) + ".",
        "Design",
    )
    _print_cautions()
    failed = [s for s in summaries if s.error is not None]
    for s in failed:
        print(f"groundcalc: error: {s.name}: {s.error}", file=sys.stderr)
    return 2 if failed else 0


def _cmd_sweep(args: argparse.Namespace) -> int:
    from .analysis import resolve_soil
    from .io.outputs import check_distinct, check_output, write_design_with_layout
    from .io.workbook import read_design
    from .studies.compare import default_jobs, rank, table_lines
    from .studies.sweep import parse_counts, parse_range, run_sweep

    inputs = [args.workbook]
    outputs = _output_paths(args, inputs)
    design_out = check_output(args.write_design, inputs, args.overwrite, "design") if args.write_design else None
    if design_out is not None and design_out.suffix.lower() != ".xlsx":
        raise InputError(f"the design copy '{design_out.name}' must end in .xlsx", fix="For example design-swept.xlsx")
    check_distinct({"report": outputs[0], "JSON": outputs[1], "design copy": design_out})
    spacings = parse_range(args.spacing, "--spacing")
    counts = parse_counts(args.rods, "--rods")
    if not 0 < args.rod_length <= 100:
        raise InputError(f"--rod-length {args.rod_length:g} m is out of range", fix="Use 1 to 30 m (typical 3 m)")
    if not 5.0 <= args.rod_diameter <= 100.0:  # rods are 12 to 25 mm (common practice)
        raise InputError(
            f"--rod-diameter {args.rod_diameter:g} mm is out of range",
            fix="Give the diameter in millimetres, 5 to 100 mm (typical 16 mm)",
        )
    design, fit = resolve_soil(read_design(args.workbook))
    if fit is not None:
        log.info("soil fitted once to the Wenner readings for every layout")
    if len(design.grids) != 1:
        raise InputError(
            f"a sweep needs exactly one row on the 'Grids' sheet (this design has {len(design.grids)})",
            sheet="Grids",
            fix="Describe the grid to vary as one Grids row; fixed extra conductors may stay on the Conductors sheet",
        )
    engine = _engine(args, default_jobs())
    log.info("sweep: %s", engine.describe(len(spacings) * len(counts)))
    layouts, summaries = run_sweep(design, spacings, counts, args.rod_length, args.rod_diameter / 1000.0, engine)
    ranks = rank(summaries)
    print("\n".join(table_lines(summaries, ranks, first="Layout")))
    best = min((k for k, r in enumerate(ranks) if r), key=lambda k: ranks[k], default=None)
    if best is None:
        print("\nNo layout of the sweep passes. Try closer spacing, more or longer rods, or a better surface layer.")
    else:
        b = layouts[best]
        print(
            f"\nLightest layout that passes: {b.name} (spacing {b.spacing_x_m:.2f} m x {b.spacing_y_m:.2f} m, "
            f"{summaries[best].mass_kg:,.0f} kg). A design aid: the engineer decides."
        )
        if design_out:
            added = b.design.rods[len(design.rods) :]
            write_design_with_layout(
                args.workbook, design_out, b.design.grids[0], added, "rods added by groundcalc sweep"
            )
            print(f"wrote {design_out} with this layout (the input is unchanged)")
    if design_out and best is None:
        print(f"{design_out} not written: no layout passes")
    _write_side_by_side(
        outputs,
        summaries,
        ranks,
        "Grid layout sweep - draft",
        f"Sweep of {Path(args.workbook).name}: spacings {args.spacing} m, perimeter rods {args.rods} "
        f"({args.rod_length:g} m long). The lightest passing layout is ranked 1; this is a design aid and the "
        "engineer decides.",
        "Layout",
        {"chosen": summaries[best].name if best is not None else None},
    )
    _print_cautions()
    return 0


def _engine(args, default: int):
    """Where the runs of a study execute (``--jobs``, ``--scheduler``)."""
    from .studies.engine import Engine

    return Engine(jobs=args.jobs or default, scheduler=getattr(args, "scheduler", None))


def _cmd_uncertainty(args: argparse.Namespace) -> int:
    from .cautions import CAUTIONS, DRAFT_MARK
    from .io.outputs import atomic_write, file_sha256, write_json
    from .io.uncertainty import read_uncertainty
    from .io.workbook import read_design
    from .studies.compare import default_jobs
    from .studies.uncertainty import run_uncertainty, table_lines

    inputs = [args.workbook]
    report, json_out = _output_paths(args, inputs)
    sha = file_sha256(args.workbook) if Path(args.workbook).is_file() else ""
    design = read_design(args.workbook)
    quantities, notes = read_uncertainty(args.workbook, design)
    run = run_uncertainty(design, quantities, args.samples, args.seed, _engine(args, default_jobs()))
    for n in notes + run.notices:
        log.warning("%s: %s", n.level, n.message)
    print(
        f"Uncertainty band: {run.samples} Latin hypercube samples, seed {run.seed}; "
        f"{run.solves} geometry solve(s) ({run.deterministic_solves} deterministic), {run.seconds:.1f} s"
    )
    if run.soil is not None:
        lo, hi = run.soil.interval(0.90)
        print(
            f"Soil from the Wenner fit: residual s = {100 * run.soil.residual_sd:.2g} % over {run.soil.dof} degrees "
            f"of freedom; 90 % intervals rho1 {lo[0]:.4g}-{hi[0]:.4g} ohm*m, rho2 {lo[1]:.4g}-{hi[1]:.4g} ohm*m, "
            f"H {lo[2]:.3g}-{hi[2]:.3g} m"
        )
    for q in run.quantities:
        print(f"Range: {q.describe()}")
    print()
    print("\n".join(table_lines(run)))
    if json_out:
        data = {
            "groundcalc_version": __version__,
            "status": DRAFT_MARK,
            "input_file": str(args.workbook),
            "input_sha256": sha,
            **run.to_dict(),
            "cautions": [f"{h}: {t}" for h, t in CAUTIONS],
        }
        data["notices"] = [{"level": n.level, "message": n.message} for n in notes] + data["notices"]
        write_json(json_out, data)
        log.info("wrote %s", json_out)
    if report:
        from .report.uncertainty import write_uncertainty_report

        atomic_write(report, lambda tmp: write_uncertainty_report(run, tmp, Path(args.workbook).name, sha, notes))
        log.info("wrote %s", report)
    _print_cautions()
    return 0


def _add_common(p: argparse.ArgumentParser, report: str | None, json_help: str, jobs: bool = False) -> None:
    """Options shared by the analysis commands."""
    if report:
        p.add_argument("--report", metavar="PDF", help=report)
    p.add_argument("--json", metavar="JSON", help=json_help)
    if jobs:
        p.add_argument("--jobs", type=_jobs, default=0, metavar="N", help="worker processes (default: one per core)")
        p.add_argument(
            "--scheduler",
            metavar="ADDRESS",
            help="run on the Dask cluster whose scheduler is at ADDRESS, e.g. tcp://10.0.0.5:8786 "
            "(needs groundcalc[cluster])",
        )
    p.add_argument("--overwrite", action="store_true", help="replace existing output files")
    p.add_argument("--quiet", action="store_true", help="no progress lines on stderr")


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="groundcalc",
        description="Substation grounding grid analysis: grid resistance, GPR, touch and step "
        "voltages against IEEE Std 80 limits. Results are a draft for a licensed engineer.",
    )
    p.add_argument("--version", action="version", version=f"groundcalc {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    t = sub.add_parser("template", help="write a blank design workbook")
    t.add_argument("path", help="new workbook to write (.xlsx)")
    t.add_argument("--overwrite", action="store_true", help="replace the file if it exists")
    t.set_defaults(func=_cmd_template)

    r = sub.add_parser("run", help="analyse a design workbook")
    r.add_argument("workbook", help="design workbook (.xlsx)")
    _add_common(r, "write the draft report to this PDF", "write machine-readable results to this file")
    r.add_argument("--dxf", metavar="DXF", help="write conductors, rods and touch-voltage contours to this drawing")
    r.add_argument(
        "--contours",
        metavar="V,V,...",
        help="touch-voltage contour levels [V] (default: 25 %% to 200 %% of the limit, plus levels across the "
        "touch range when none of those cut it)",
    )
    r.add_argument("--dxf-units", default="m", choices=("m", "mm", "cm", "ft", "in"), help="unit of the DXF (m)")
    r.add_argument("--csv", metavar="DIR", help="write the summary, segments, surface raster and profiles as CSV here")
    r.add_argument(
        "--results-xlsx", metavar="XLSX", help="write a results workbook (Summary, Segments, Surface, Profiles)"
    )
    r.add_argument(
        "--check", action="store_true", help="only read and check the workbook: list errors and warnings, solve nothing"
    )
    r.add_argument(
        "--no-error-estimate",
        action="store_true",
        help="skip the second, coarser solve that estimates the discretisation error (saves about 10 %% of the time)",
    )
    r.set_defaults(func=_cmd_run)

    i = sub.add_parser("import", help="write a design workbook from the grid in a DXF drawing")
    i.add_argument("drawing", help="ASCII DXF drawing (.dxf)")
    i.add_argument("workbook", help="new design workbook to write (.xlsx)")
    i.add_argument("--conductors", action="append", metavar="LAYER", help="layer(s) holding the buried conductors")
    i.add_argument("--rods", action="append", metavar="LAYER", help="layer(s) holding the rods")
    i.add_argument("--layers", metavar="XLSX", help="take the layer mapping from the Drawing sheet of this workbook")
    i.add_argument("--depth", type=float, metavar="M", help="burial depth of the conductors [m]")
    i.add_argument("--diameter", type=float, metavar="MM", help="conductor diameter [mm]")
    i.add_argument("--rod-length", type=float, metavar="M", help="rod length [m]")
    i.add_argument("--rod-diameter", type=float, metavar="MM", help="rod diameter [mm]")
    i.add_argument("--rod-top-depth", type=float, metavar="M", help="depth of the rod tops [m] (the conductor depth)")
    i.add_argument("--units", metavar="UNIT", help="drawing unit (mm, cm, m, in, ft, ...), overriding $INSUNITS")
    i.add_argument("--overwrite", action="store_true", help="replace the workbook if it exists")
    i.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    i.set_defaults(func=_cmd_import)

    s = sub.add_parser("soil", help="fit soil models of 1 to 3 (or 4) layers to Wenner readings")
    s.add_argument("workbook", help="workbook with a 'Wenner' sheet (.xlsx)")
    s.add_argument(
        "--write-design",
        metavar="XLSX",
        help="write a copy of the workbook with the preferred model (two-layer on the Soil sheet, "
        "or a Layers sheet for 3 or more layers)",
    )
    s.add_argument("--max-layers", type=int, choices=(3, 4), default=3, help="fit 1 to this many layers (default 3)")
    s.add_argument(
        "--criterion", choices=("BIC", "AIC"), default="BIC", help="information criterion that ranks them (default BIC)"
    )
    _add_common(s, None, "write the fit to this file")
    s.set_defaults(func=_cmd_soil)

    c = sub.add_parser("compare", help="analyse several design workbooks and compare them side by side")
    c.add_argument("workbooks", nargs="+", help="design workbooks (.xlsx)")
    _add_common(c, "write the side-by-side draft to this PDF", "write the table to this file", jobs=True)
    c.set_defaults(func=_cmd_compare)

    w = sub.add_parser("sweep", help="vary the spacing and perimeter rods of a rectangular grid")
    w.add_argument("workbook", help="design workbook with one 'Grids' row (.xlsx)")
    w.add_argument("--spacing", required=True, metavar="FROM:TO:STEP", help="conductor spacings to try [m], or a list")
    w.add_argument("--rods", default="0", metavar="N,N,...", help="numbers of perimeter rods to try (default 0)")
    w.add_argument("--rod-length", type=float, default=3.0, metavar="M", help="length of the added rods [m] (3)")
    w.add_argument("--rod-diameter", type=float, default=16.0, metavar="MM", help="their diameter [mm] (16)")
    w.add_argument("--write-design", metavar="XLSX", help="write a copy of the workbook with the chosen layout")
    _add_common(w, "write the sweep table to this PDF", "write the sweep table to this file", jobs=True)
    w.set_defaults(func=_cmd_sweep)

    u = sub.add_parser("uncertainty", help="band of Rg, GPR, touch and step over uncertain soil and fault data")
    u.add_argument("workbook", help="design workbook (.xlsx): soil fitted to Wenner readings, or an Uncertainty sheet")
    u.add_argument("--samples", type=_samples, default=64, metavar="N", help="Latin hypercube samples (default 64)")
    u.add_argument("--seed", type=_seed, default=20, metavar="S", help="seed of the sampling (default 20)")
    _add_common(u, "write the draft band report to this PDF", "write the band and every sample to this file", True)
    u.set_defaults(func=_cmd_uncertainty)
    return p


def _new_outputs(args: argparse.Namespace) -> list[Path]:
    """Output paths that do not exist yet: removed again if the command fails (all or nothing)."""
    out = []
    for name in ("json", "report", "dxf", "write_design"):
        value = getattr(args, name, None)
        if value:
            try:
                p = Path(value)
                if not p.exists():
                    out.append(p)
            except OSError:  # a name the system refuses: checked and reported by the command
                pass
    return out


def _remove(paths: list[Path]) -> None:
    for p in paths:
        try:
            if p.is_file():
                p.unlink()
        except OSError:
            pass


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``groundcalc`` command."""
    parser = _parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    _setup_logging(getattr(args, "quiet", False))
    fresh = _new_outputs(args)
    try:
        return int(args.func(args))
    except InputError as exc:
        _remove(fresh)
        print(f"groundcalc: error: {exc}", file=sys.stderr)
        return 2
    except BaseException:
        _remove(fresh)
        raise
    except BrokenPipeError:
        return 0
    except KeyboardInterrupt:
        print("groundcalc: interrupted", file=sys.stderr)
        return 130
