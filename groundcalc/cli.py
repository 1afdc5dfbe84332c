"""Command line: ``groundcalc template``, ``groundcalc run`` and ``groundcalc soil``.

Exit codes: 0 finished (the design may still fail the safety criteria; the
output says so), 2 bad input or arguments, 1 internal error.
"""

from __future__ import annotations

import argparse
import logging
import sys
import textwrap
from pathlib import Path

from . import __version__
from .errors import InputError

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
    from .outputs import atomic_write, check_output
    from .template import build_template

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
        f"Max touch voltage         = {results.max_touch_v:10.1f} V   limit {lim.touch_v:8.1f} V   "
        f"margin {a.touch_margin_pct:+6.1f} %   {'PASS' if a.touch_ok else 'FAIL'}   "
        f"at ({t.location_xy[0]:.2f}, {t.location_xy[1]:.2f}) m",
        f"Max step voltage          = {results.max_step_v:10.1f} V   limit {lim.step_v:8.1f} V   "
        f"margin {a.step_margin_pct:+6.1f} %   {'PASS' if a.step_ok else 'FAIL'}   "
        f"from ({s.start_xy[0]:.2f}, {s.start_xy[1]:.2f}) to ({s.end_xy[0]:.2f}, {s.end_xy[1]:.2f}) m",
        f"Limits: {lim.basis}, Cs = {lim.cs:.4f}",
    ]
    if lim.touch_user or lim.step_user:
        lines.append(
            f"  (IEEE Std 80 values for comparison: touch {lim.ieee_touch_v:.1f} V, step {lim.ieee_step_v:.1f} V)"
        )
    sz = results.sizing
    if sz is not None:
        verdict = "PASS" if sz.ok else f"FAIL: {len(sz.undersized)} undersized (see warnings)"
        lines.append(
            f"Conductor sizing          : needs {sz.required_mm2:.1f} mm2 for {sz.current_a:,.0f} A, "
            f"{sz.duration_s:g} s (IEEE Std 80 Eq. 37); smallest used {min(i.area_mm2 for i in sz.items):.1f} mm2"
            f"   {verdict}"
        )
    lines.append(f"Overall: {'PASS' if a.passed else 'FAIL'} (governing: {a.governing})")
    lines += closed_form_lines(results)
    return lines


def closed_form_lines(results) -> list[str]:
    """IEEE Std 80 closed forms beside the numerical values."""
    from .outputs import CLOSED_FORM_NOTE, closed_form_rows

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
    from .outputs import atomic_write, check_output, file_sha256, results_to_dict, write_json
    from .workbook import read_design

    inputs = [args.workbook]
    report = check_output(args.report, inputs, args.overwrite, "report") if args.report else None
    json_out = check_output(args.json, inputs, args.overwrite, "JSON") if args.json else None
    if report and json_out and report.resolve() == json_out.resolve():
        raise InputError("the report and JSON outputs are the same file", fix="Give them different names")
    sha_before = file_sha256(args.workbook) if Path(args.workbook).is_file() else None
    log.info("reading %s", args.workbook)
    design = read_design(args.workbook)
    results = analyse(design)
    for n in results.notices:
        log.warning("%s: %s", n.level, n.message)
    if results.soil_fit is not None:
        print("\n".join(soil_fit_lines(results.soil_fit)))
        print()
    print("\n".join(_summary_lines(results)))
    if json_out:
        write_json(json_out, results_to_dict(results, args.workbook))
        log.info("wrote %s", json_out)
    if report:
        from .report import write_report

        log.info("writing report %s", report)
        atomic_write(report, lambda tmp: write_report(results, tmp, Path(args.workbook).name, sha_before or ""))
        log.info("wrote %s", report)
    _print_cautions()
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
    return lines


def _cmd_soil(args: argparse.Namespace) -> int:
    from .outputs import check_output, soil_fit_to_dict, write_design_with_soil, write_json
    from .soilfit import fit_soil
    from .workbook import read_wenner

    inputs = [args.workbook]
    design_out = check_output(args.write_design, inputs, args.overwrite, "design") if args.write_design else None
    if design_out is not None and design_out.suffix.lower() != ".xlsx":
        raise InputError(f"the design copy '{design_out.name}' must end in .xlsx", fix="For example design-fitted.xlsx")
    json_out = check_output(args.json, inputs, args.overwrite, "JSON") if args.json else None
    readings = read_wenner(args.workbook)
    log.info("fitting uniform and two-layer models to %d readings", len(readings.spacing_m))
    fit = fit_soil(readings)
    print("\n".join(soil_fit_lines(fit)))
    if fit.misfit_pct > 10.0:
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
        print(f"\nwrote {design_out} with the fitted two-layer model on its Soil sheet (the input is unchanged)")
    print(
        "\nCAUTION: a fitted soil model is only as good as the readings. Seasonal changes (frozen or dry "
        "topsoil) and soil variation across the site are not captured; a licensed engineer decides the design model."
    )
    return 0


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
    r.add_argument("--report", metavar="PDF", help="write the draft report to this PDF")
    r.add_argument("--json", metavar="JSON", help="write machine-readable results to this file")
    r.add_argument("--overwrite", action="store_true", help="replace existing output files")
    r.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    r.set_defaults(func=_cmd_run)

    s = sub.add_parser("soil", help="fit uniform and two-layer soil models to Wenner readings")
    s.add_argument("workbook", help="workbook with a 'Wenner' sheet (.xlsx)")
    s.add_argument("--write-design", metavar="XLSX", help="write a copy of the workbook with the fitted model")
    s.add_argument("--json", metavar="JSON", help="write the fit to this file")
    s.add_argument("--overwrite", action="store_true", help="replace existing output files")
    s.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    s.set_defaults(func=_cmd_soil)
    return p


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``groundcalc`` command."""
    parser = _parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    _setup_logging(getattr(args, "quiet", False))
    try:
        return int(args.func(args))
    except InputError as exc:
        print(f"groundcalc: error: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:
        return 0
    except KeyboardInterrupt:
        print("groundcalc: interrupted", file=sys.stderr)
        return 130
