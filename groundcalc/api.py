"""The Python entry points: read or build a design, analyse it, tabulate and write the results.

``import groundcalc as gc`` gives these functions and the model classes::

    design = gc.read_design("site.xlsx")        # or gc.Design(...) built in code
    res = gc.analyse(design)                    # the same pipeline as ``groundcalc run``
    res.resistance_ohm, res.max_touch_v, res.passed
    res.segments_frame(); res.raster_frame(); res.profile_frame((0, 10), (70, 10))
    gc.write_json(res, "site.json"); gc.write_report(res, "site.pdf")

:func:`analyse` runs :func:`groundcalc.analysis.analyse`, the function behind
``groundcalc run``, so every check made there applies here too. Results are
a draft for review by a licensed professional engineer.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from . import analysis
from .errors import InputError
from .io.workbook import read_design
from .model import Design, Notice
from .surface.potential import surface_potential

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "Results",
    "analyse",
    "compare",
    "read_design",
    "sweep",
    "write_csv",
    "write_json",
    "write_report",
    "write_results_xlsx",
]


@dataclass(frozen=True)
class Results:
    """Results of one design, as flat fields with their units (SI).

    Attributes
    ----------
    name : str
        Design name (the workbook name, or the project name for a design built in code).
    resistance_ohm : float
        Grid resistance to remote earth (method of moments). [ohm]
    decrement_factor : float
        Decrement factor Df (IEEE Std 80 Eq. 79).
    grid_current_a : float
        Grid current I_G = Df * Sf * 3I0 (IEEE Std 80 Eq. 64). [A]
    gpr_v : float
        Ground potential rise, I_G times the grid resistance. [V]
    max_touch_v : float
        Largest touch voltage in the touch area. [V]
    max_touch_xy_m : tuple of float
        Where it occurs (x, y). [m]
    max_step_v : float
        Largest step voltage, over 1 m on the surface. [V]
    max_step_start_xy_m, max_step_end_xy_m : tuple of float
        The two feet of the largest step, higher potential first. [m]
    touch_limit_v, step_limit_v : float
        Tolerable touch and step voltages applied (IEEE Std 80 Eqs. 29-33, or user-defined). [V]
    ieee80_touch_limit_v, ieee80_step_limit_v : float
        The IEEE Std 80 values, shown beside user-defined limits. [V]
    surface_layer_factor_cs : float
        Surface layer derating factor Cs (IEEE Std 80 Eq. 27; 1 without a surface layer).
    limits_basis : str
        Where the limits come from.
    touch_margin_pct, step_margin_pct : float
        (limit - computed) / limit; positive passes. [%]
    touch_ok, step_ok, conductors_ok, passed : bool
        Verdicts: touch, step, conductor sizing, and all three together.
    verdict : str
        ``"PASS"`` or ``"FAIL"``.
    governing : str
        ``"touch"`` or ``"step"``, the criterion with the smaller margin.
    sverak_resistance_ohm, schwarz_resistance_ohm, laurent_niemann_resistance_ohm : float or None
        IEEE Std 80 closed-form grid resistance, Eqs. 52, 53-56 and 51; ``None``
        when the conductors enclose no area. [ohm]
    closed_form_mesh_v, closed_form_step_v : float or None
        IEEE Std 80 mesh and step voltages Em (Eq. 80) and Es (Eq. 92). [V]
    required_conductor_area_mm2 : float or None
        Smallest conductor section that carries the fault current (IEEE Std 80 Eq. 37). [mm2]
    smallest_conductor_area_mm2 : float or None
        Smallest section used in the design. [mm2]
    segment_count : int
        Number of segments solved for.
    raster_spacing_m : float
        Surface raster spacing. [m]
    notices : tuple of Notice
        Warnings and notes about the inputs, the numerics and the result.
    pipeline : groundcalc.analysis.Results
        Everything the pipeline computed (segments, solution, raster, limits,
        closed forms), for the reports and for detailed use.
    """

    name: str
    resistance_ohm: float
    decrement_factor: float
    grid_current_a: float
    gpr_v: float
    max_touch_v: float
    max_touch_xy_m: tuple[float, float]
    max_step_v: float
    max_step_start_xy_m: tuple[float, float]
    max_step_end_xy_m: tuple[float, float]
    touch_limit_v: float
    step_limit_v: float
    ieee80_touch_limit_v: float
    ieee80_step_limit_v: float
    surface_layer_factor_cs: float
    limits_basis: str
    touch_margin_pct: float
    step_margin_pct: float
    touch_ok: bool
    step_ok: bool
    conductors_ok: bool
    passed: bool
    verdict: str
    governing: str
    sverak_resistance_ohm: float | None
    schwarz_resistance_ohm: float | None
    laurent_niemann_resistance_ohm: float | None
    closed_form_mesh_v: float | None
    closed_form_step_v: float | None
    required_conductor_area_mm2: float | None
    smallest_conductor_area_mm2: float | None
    segment_count: int
    raster_spacing_m: float
    notices: tuple[Notice, ...] = ()
    pipeline: analysis.Results | None = field(default=None, repr=False, compare=False)

    @classmethod
    def from_pipeline(cls, results: analysis.Results, name: str | None = None) -> Results:
        """The flat record of a pipeline result."""
        d = results.design
        a = results.assessment
        lim = results.limits
        cf = results.closed_form
        sz = results.sizing
        t, s = results.field.touch, results.field.step
        if name is None:
            name = Path(d.source_name).stem if d.source_name else (d.project.project or "design")
        return cls(
            name=name,
            resistance_ohm=float(results.resistance_ohm),
            decrement_factor=float(results.decrement_factor),
            grid_current_a=float(results.grid_current_a),
            gpr_v=float(results.gpr_v),
            max_touch_v=float(results.max_touch_v),
            max_touch_xy_m=(float(t.location_xy[0]), float(t.location_xy[1])),
            max_step_v=float(results.max_step_v),
            max_step_start_xy_m=(float(s.start_xy[0]), float(s.start_xy[1])),
            max_step_end_xy_m=(float(s.end_xy[0]), float(s.end_xy[1])),
            touch_limit_v=float(lim.touch_limit_v),
            step_limit_v=float(lim.step_limit_v),
            ieee80_touch_limit_v=float(lim.ieee80_touch_limit_v),
            ieee80_step_limit_v=float(lim.ieee80_step_limit_v),
            surface_layer_factor_cs=float(lim.cs),
            limits_basis=lim.basis,
            touch_margin_pct=float(a.touch_margin_pct),
            step_margin_pct=float(a.step_margin_pct),
            touch_ok=bool(a.touch_ok),
            step_ok=bool(a.step_ok),
            conductors_ok=bool(a.conductors_ok),
            passed=bool(a.passed),
            verdict="PASS" if a.passed else "FAIL",
            governing=a.governing,
            sverak_resistance_ohm=None if cf is None else float(cf.sverak_ohm),
            schwarz_resistance_ohm=None if cf is None else float(cf.schwarz_ohm),
            laurent_niemann_resistance_ohm=None if cf is None else float(cf.laurent_niemann_ohm),
            closed_form_mesh_v=None if cf is None else float(cf.mesh_voltage_v),
            closed_form_step_v=None if cf is None else float(cf.step_voltage_v),
            required_conductor_area_mm2=None if sz is None else float(sz.required_mm2),
            smallest_conductor_area_mm2=None if sz is None or not sz.items else min(i.area_mm2 for i in sz.items),
            segment_count=len(results.geometry.solution.segments),
            raster_spacing_m=float(results.field.raster.spacing_m),
            notices=tuple(results.notices),
            pipeline=results,
        )

    def _run(self) -> analysis.Results:
        if self.pipeline is None:
            raise InputError(
                "these results carry no pipeline data (they were built by hand)",
                fix="Use the Results returned by groundcalc.analyse",
            )
        return self.pipeline

    def surface_potential_v(self, xy_m: Any) -> np.ndarray:
        """Earth-surface potential against remote earth at any plan points.

        Parameters
        ----------
        xy_m : array_like, shape (2,) or (m, 2)
            Plan coordinates (x, y). [m]

        Returns
        -------
        numpy.ndarray, shape (m,)
            Surface potential at the design's GPR. [V]

        Raises
        ------
        InputError
            When the points are not pairs of finite numbers.
        """
        pts = _points(xy_m)
        run = self._run()
        return surface_potential(pts, run.geometry.solution, run.gpr_v)

    def touch_voltage_v(self, xy_m: Any) -> np.ndarray:
        """GPR minus the surface potential at plan points (the touch voltage to the grid there). [V]"""
        return self.gpr_v - self.surface_potential_v(xy_m)

    def segments_frame(self) -> pd.DataFrame:
        """Segments with their ends, lengths and leakage (:func:`groundcalc.io.frames.segments_frame`)."""
        from .io.frames import segments_frame

        return segments_frame(self._run())

    def raster_frame(self) -> pd.DataFrame:
        """The surface raster: x, y, potential and touch voltage (:func:`groundcalc.io.frames.raster_frame`)."""
        from .io.frames import raster_frame

        return raster_frame(self._run())

    def profile_frame(self, start_xy_m: Sequence[float], end_xy_m: Sequence[float], n: int = 101) -> pd.DataFrame:
        """Surface potential, touch and step voltage along a line (:func:`groundcalc.io.frames.profile_frame`)."""
        from .io.frames import profile_frame

        return profile_frame(self._run(), start_xy_m, end_xy_m, n)

    def summary_frame(self) -> pd.DataFrame:
        """The flat fields as rows of quantity, value and unit."""
        from .io.frames import summary_frame

        return summary_frame(self)

    def to_dict(self) -> dict[str, Any]:
        """The machine-readable results, as written by :func:`write_json` and ``groundcalc run --json``."""
        from .io.outputs import results_to_dict

        return results_to_dict(self._run())


def _points(xy_m: Any) -> np.ndarray:
    try:
        pts = np.asarray(xy_m, dtype=float)
    except (TypeError, ValueError):
        raise InputError("the points are not numbers", fix="Give plan points as (x, y) pairs in metres") from None
    if pts.ndim == 1 and pts.shape == (2,):
        pts = pts[None, :]
    if pts.ndim != 2 or pts.shape[1] != 2:
        raise InputError(
            f"the points have shape {pts.shape}, not (m, 2)",
            fix="Give plan points as (x, y) pairs in metres, e.g. [[0, 0], [10, 5]]",
        )
    if not np.isfinite(pts).all():
        raise InputError("some points are not finite", fix="Give finite coordinates in metres")
    return pts


def _design(item: Any) -> Design:
    if isinstance(item, Design):
        return item
    if isinstance(item, (str, Path)):
        return read_design(item)
    raise InputError(
        f"expected a Design or the path of a design workbook, got {type(item).__name__}",
        fix="Pass groundcalc.Design objects or .xlsx paths",
    )


def analyse(design: Design | str | Path, name: str | None = None) -> Results:
    """Analyse one design: solve, evaluate the surface, assess safety.

    Parameters
    ----------
    design : Design or path
        A design built in code, or the path of a design workbook. The base
        case only: ``compare(design)`` runs the base case and its
        ``variants`` side by side, and
        :func:`groundcalc.studies.variants.apply_variant` gives one variant
        as a design of its own.
    name : str, optional
        Name used in tables; default the workbook or project name.

    Returns
    -------
    Results
    """
    d = _design(design)
    return Results.from_pipeline(analysis.analyse(d), name)


def _pipeline(results: Results | analysis.Results) -> analysis.Results:
    if isinstance(results, Results):
        return results._run()
    if isinstance(results, analysis.Results):
        return results
    raise InputError(
        f"expected the results of groundcalc.analyse, got {type(results).__name__}",
        fix="Pass the Results returned by groundcalc.analyse",
    )


def compare(
    designs: Sequence[Design | str | Path] | Design, names: Sequence[str] | None = None, jobs: int = 1
) -> pd.DataFrame:
    """Several designs side by side, ranked by buried metal mass among those that pass.

    Parameters
    ----------
    designs : sequence of Design or workbook paths, or one Design with variants
        The designs to compare. One design with ``variants`` compares its
        base case with every variant.
    names : sequence of str, optional
        Row names; default the workbook stems or ``design 1``, ``design 2`` ...
    jobs : int
        Worker processes (1: in this process).

    Returns
    -------
    pandas.DataFrame
        One row per design (:func:`groundcalc.io.frames.summaries_frame`).
        A workbook that cannot be read gives a row with its ``error``.
    """
    from .io.frames import summaries_frame
    from .studies.compare import rank, summarise_design, summarise_file
    from .studies.engine import run_parallel

    if isinstance(designs, Design):
        from .studies.compare import summarise
        from .studies.variants import run_variants

        vr = run_variants(designs)
        labels = list(names) if names is not None else vr.names
        if len(labels) != len(vr.names):
            raise InputError(f"{len(labels)} names for {len(vr.names)} cases", fix="Give one name per case, or none")
        summaries = [summarise(r, n, designs.source_name) for n, r in zip(labels, vr.results, strict=True)]
        for s, v in zip(summaries, [None, *designs.variants], strict=True):
            s.extra = {"changes": "" if v is None else v.describe()}
        return summaries_frame(summaries, rank(summaries))
    items = list(designs)
    default = [Path(x).stem if isinstance(x, (str, Path)) else f"design {k + 1}" for k, x in enumerate(items)]
    if not items:
        raise InputError("there are no designs to compare", fix="Pass at least one design")
    if names is not None and len(names) != len(items):
        raise InputError(f"{len(names)} names for {len(items)} designs", fix="Give one name per design, or none")
    _check_jobs(jobs)
    labels = list(names) if names is not None else default
    summaries = [None] * len(items)
    paths = [k for k, x in enumerate(items) if isinstance(x, (str, Path))]
    built = [k for k, x in enumerate(items) if isinstance(x, Design)]
    bad = [k for k in range(len(items)) if k not in paths and k not in built]
    if bad:
        _design(items[bad[0]])  # raises the type error
    for k, s in zip(paths, run_parallel(summarise_file, [str(items[k]) for k in paths], jobs), strict=True):
        s.name = labels[k]
        summaries[k] = s
    for k, s in zip(built, run_parallel(summarise_design, [(labels[k], items[k]) for k in built], jobs), strict=True):
        summaries[k] = s
    return summaries_frame(summaries, rank(summaries))


def _check_jobs(jobs: int) -> None:
    if isinstance(jobs, bool) or not isinstance(jobs, (int, np.integer)) or jobs < 1:
        raise InputError(f"jobs must be a whole number of 1 or more, got {jobs!r}", fix="For example jobs=1")


def sweep(
    design: Design | str | Path,
    spacings_m: Sequence[float],
    rod_counts: Sequence[int] = (0,),
    rod_length_m: float = 3.0,
    rod_diameter_m: float = 0.016,
    jobs: int = 1,
) -> pd.DataFrame:
    """Vary the conductor spacing and perimeter rods of the design's one rectangular grid.

    Parameters
    ----------
    design : Design or path
        A design with exactly one :class:`~groundcalc.model.GridSpec`.
    spacings_m : sequence of float
        Target conductor spacings. [m]
    rod_counts : sequence of int
        Numbers of perimeter rods to add.
    rod_length_m : float
        Length of the added rods. [m]
    rod_diameter_m : float
        Their diameter. [m]
    jobs : int
        Worker processes (1: in this process).

    Returns
    -------
    pandas.DataFrame
        One row per layout with its spacing, conductor counts, added rods and
        rank (1 = lightest passing layout). A design aid: the engineer decides.
    """
    from .io.frames import summaries_frame
    from .studies.compare import rank
    from .studies.sweep import run_sweep

    _check_jobs(jobs)
    try:
        spacings = [float(s) for s in spacings_m]
        counts = [int(c) for c in rod_counts]
    except (TypeError, ValueError):
        raise InputError("spacings and rod counts must be numbers", fix="For example spacings_m=[6, 8, 10]") from None
    if not spacings or any(not np.isfinite(s) or s <= 0 for s in spacings):
        raise InputError("the spacings must be positive numbers", fix="For example spacings_m=[6, 8, 10]")
    if not counts or any(c < 0 or c != float(cc) for c, cc in zip(counts, rod_counts, strict=True)):
        raise InputError("the rod counts must be whole numbers of zero or more", fix="For example rod_counts=[0, 8]")
    if not 0 < rod_length_m <= 100 or not 0 < rod_diameter_m <= 0.2:
        raise InputError(
            f"rod length {rod_length_m:g} m or diameter {rod_diameter_m:g} m is out of range",
            fix="Use a length of 1 to 30 m (typical 3 m) and a diameter of 0.01 to 0.03 m",
        )
    base, _ = analysis.resolve_soil(_design(design))
    _, summaries = run_sweep(base, spacings, sorted(set(counts)), rod_length_m, rod_diameter_m, jobs)
    return summaries_frame(summaries, rank(summaries))


def write_json(results: Results | analysis.Results, path: str | Path, overwrite: bool = False) -> Path:
    """Write the machine-readable results (the format of ``groundcalc run --json``), atomically.

    Raises
    ------
    InputError
        When the path exists without ``overwrite``, is a folder, or its folder is missing.
    """
    from .io.outputs import check_output, results_to_dict
    from .io.outputs import write_json as _write

    run = _pipeline(results)
    out = check_output(path, [], overwrite, "JSON")
    _write(out, results_to_dict(run))
    return out


def write_report(results: Results | analysis.Results, path: str | Path, overwrite: bool = False) -> Path:
    """Write the draft PDF report, atomically.

    Raises
    ------
    InputError
        When the path does not end in .pdf, exists without ``overwrite``, or its folder is missing.
    """
    from .io.outputs import atomic_write, check_output
    from .report import write_report as _write

    run = _pipeline(results)
    out = check_output(path, [], overwrite, "report")
    if out.suffix.lower() != ".pdf":
        raise InputError(f"the report name '{out.name}' must end in .pdf", fix="For example draft.pdf")
    name = run.design.source_name or "design built in code (no input file)"
    atomic_write(out, lambda tmp: _write(run, tmp, name, "-"))
    return out


def _flat(results: Results | analysis.Results) -> Results:
    return results if isinstance(results, Results) else Results.from_pipeline(_pipeline(results))


def write_csv(results: Results | analysis.Results, folder: str | Path, overwrite: bool = False) -> list[Path]:
    """Write summary.csv, segments.csv, surface.csv and profiles.csv into ``folder`` (as ``run --csv``).

    The folder is created if missing (its parent must exist); each file is
    written atomically. Returns the paths written.

    Raises
    ------
    InputError
        When the folder is a file, its parent is missing, or a file exists without ``overwrite``.
    """
    from .io.frames import check_csv_folder
    from .io.frames import write_csv as _write

    flat = _flat(results)
    out = check_csv_folder(folder, [], overwrite)
    return _write(flat, flat._run(), out)


def write_results_xlsx(results: Results | analysis.Results, path: str | Path, overwrite: bool = False) -> Path:
    """Write the results workbook: Summary, Segments, Surface and Profiles (as ``run --results-xlsx``).

    Raises
    ------
    InputError
        When the path does not end in .xlsx, exists without ``overwrite``, or its folder is missing.
    """
    from .io.frames import write_results_xlsx as _write
    from .io.outputs import check_output

    flat = _flat(results)
    out = check_output(path, [], overwrite, "results workbook")
    if out.suffix.lower() != ".xlsx":
        raise InputError(f"the results workbook '{out.name}' must end in .xlsx", fix="For example results.xlsx")
    _write(flat, flat._run(), out)
    return out
