"""Result tables as pandas DataFrames, and their CSV and results-workbook files.

Every column name carries its unit (``_m``, ``_v``, ``_a_per_m`` ...), as
pandapower does with its result tables. The tables are built from the
pipeline's results (:class:`groundcalc.analysis.Results`); the surface values
come from the public functions of :mod:`groundcalc.surface.potential`.

Files are written atomically (:func:`groundcalc.io.outputs.atomic_write`) and
never over an input.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..analysis import Results as PipelineResults
from ..cautions import DRAFT_MARK
from ..errors import InputError
from ..studies.compare import DesignSummary
from ..surface.potential import STEP_LENGTH_M, surface_potential
from .outputs import atomic_write, check_output

__all__ = [
    "CSV_FILES",
    "EXCEL_MAX_ROWS",
    "RESULT_SHEETS",
    "check_csv_folder",
    "line_through",
    "profile_frame",
    "raster_frame",
    "segments_frame",
    "summaries_frame",
    "summary_frame",
    "worst_point_profiles",
    "write_csv",
    "write_results_xlsx",
]

#: File names written by :func:`write_csv`, by table.
CSV_FILES = {
    "summary": "summary.csv",
    "segments": "segments.csv",
    "surface": "surface.csv",
    "profiles": "profiles.csv",
}
#: Sheets of the results workbook, in order.
RESULT_SHEETS = ("Summary", "Segments", "Surface", "Profiles")
#: Rows one worksheet can hold (Excel's limit, less the header row).
EXCEL_MAX_ROWS = 1_048_575
#: Points along each profile written by the CLI.
PROFILE_POINTS = 201

#: Unit of a flat result field, from the end of its name.
_SUFFIX_UNITS = (
    ("_ohm_m", "ohm*m"),
    ("_ohm", "ohm"),
    ("_a_per_m", "A/m"),
    ("_mm2", "mm2"),
    ("_pct", "%"),
    ("_xy_m", "m"),
    ("_kg", "kg"),
    ("_v", "V"),
    ("_a", "A"),
    ("_m", "m"),
    ("_s", "s"),
)


def _unit(name: str) -> str:
    for suffix, unit in _SUFFIX_UNITS:
        if name.endswith(suffix):
            return unit
    return ""


def segments_frame(results: PipelineResults) -> pd.DataFrame:
    """One row per segment: ends, length, leakage current and its density.

    Columns: ``segment``, ``conductor`` (label), ``kind`` (conductor or rod),
    ``material``, ``x1_m``, ``y1_m``, ``depth1_m``, ``x2_m``, ``y2_m``,
    ``depth2_m``, ``length_m``, ``radius_m``, ``soil_layer`` (0 upper or only,
    1 lower), ``leakage_current_a`` and ``leakage_density_a_per_m`` at the
    design's GPR. Depth is positive downward.
    """
    sol = results.geometry.solution
    seg = sol.segments
    conductors = results.geometry.segmentation.conductors
    idx = np.asarray(seg.conductor, dtype=int)
    current = sol.leakage_a(results.gpr_v)
    return pd.DataFrame(
        {
            "segment": np.arange(len(seg)),
            "conductor": [conductors[k].label for k in idx],
            "kind": [conductors[k].kind for k in idx],
            "material": [conductors[k].material for k in idx],
            "x1_m": seg.a[:, 0],
            "y1_m": seg.a[:, 1],
            "depth1_m": seg.a[:, 2],
            "x2_m": seg.b[:, 0],
            "y2_m": seg.b[:, 1],
            "depth2_m": seg.b[:, 2],
            "length_m": seg.length,
            "radius_m": seg.radius,
            "soil_layer": np.asarray(seg.layer, dtype=int),
            "leakage_current_a": current,
            "leakage_density_a_per_m": current / seg.length,
        }
    )


def raster_frame(results: PipelineResults) -> pd.DataFrame:
    """The surface raster, one row per node (x fastest).

    Columns: ``x_m``, ``y_m``, ``potential_v`` (surface potential against
    remote earth), ``touch_v`` (GPR minus the surface potential, at every
    node) and ``in_touch_area`` (whether the node lies where touch voltage is
    assessed).
    """
    r = results.field.raster
    xx, yy = np.meshgrid(r.x, r.y)
    pot = r.potential_per_gpr * results.gpr_v
    return pd.DataFrame(
        {
            "x_m": xx.ravel(),
            "y_m": yy.ravel(),
            "potential_v": pot.ravel(),
            "touch_v": (results.gpr_v - pot).ravel(),
            "in_touch_area": r.touch_mask.ravel(),
        }
    )


def profile_frame(
    results: PipelineResults, start_xy_m: Sequence[float], end_xy_m: Sequence[float], n: int = 101
) -> pd.DataFrame:
    """Surface values at ``n`` evenly spaced points from ``start_xy_m`` to ``end_xy_m``.

    Columns: ``distance_m`` (from the start), ``x_m``, ``y_m``,
    ``potential_v``, ``touch_v`` (GPR minus potential), ``step_v`` (potential
    difference to the point 1 m further along the line, the step of IEEE Std
    80 clause 8.3 with both feet on the line) and ``in_touch_area``.

    Raises
    ------
    InputError
        When ``n`` is below 2, the ends coincide or are not finite.
    """
    a = np.asarray(start_xy_m, dtype=float).reshape(-1)
    b = np.asarray(end_xy_m, dtype=float).reshape(-1)
    if a.shape != (2,) or b.shape != (2,) or not (np.isfinite(a).all() and np.isfinite(b).all()):
        raise InputError(
            f"a profile needs two finite plan points (x, y), got {tuple(a)} and {tuple(b)}",
            fix="Give start and end as (x, y) in metres",
        )
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 2:
        raise InputError(f"a profile needs at least 2 points, got {n!r}", fix="Give n as a whole number, e.g. 101")
    length = float(np.hypot(*(b - a)))
    if length == 0.0:
        raise InputError("the profile's start and end are the same point", fix="Give two different points")
    u = (b - a) / length
    s = np.linspace(0.0, length, int(n))
    pts = a + s[:, None] * u
    sol = results.geometry.solution
    v = surface_potential(pts, sol, results.gpr_v)
    v1 = surface_potential(pts + STEP_LENGTH_M * u, sol, results.gpr_v)
    inside = results.field.raster.touch_area.contains(pts)
    return pd.DataFrame(
        {
            "distance_m": s,
            "x_m": pts[:, 0],
            "y_m": pts[:, 1],
            "potential_v": v,
            "touch_v": results.gpr_v - v,
            "step_v": np.abs(v - v1),
            "in_touch_area": inside,
        }
    )


def line_through(results: PipelineResults, point_xy_m: Sequence[float], direction: Sequence[float]):
    """Ends of the line through a point in a direction, clipped to the surface raster.

    Returns
    -------
    tuple of numpy.ndarray
        ``(start_xy_m, end_xy_m)``. [m]
    """
    r = results.field.raster
    lo = np.array([r.x[0], r.y[0]])
    hi = np.array([r.x[-1], r.y[-1]])
    p = np.asarray(point_xy_m, dtype=float)
    u = np.asarray(direction, dtype=float)
    u = u / np.linalg.norm(u)
    s0, s1 = -math.inf, math.inf
    for k in range(2):
        if abs(u[k]) < 1e-12:
            continue
        ta, tb = sorted(((lo[k] - p[k]) / u[k], (hi[k] - p[k]) / u[k]))
        s0, s1 = max(s0, ta), min(s1, tb)
    return p + s0 * u, p + s1 * u


def worst_point_profiles(results: PipelineResults, n: int = PROFILE_POINTS) -> pd.DataFrame:
    """The two profiles of the report: along x through the worst touch point, and along the worst step.

    The frame of :func:`profile_frame` with a first column ``profile``
    (``"touch"`` or ``"step"``); both lines span the surface raster.
    """
    t = results.field.touch
    st = results.field.step
    out = []
    a, b = line_through(results, t.location_xy, (1.0, 0.0))
    out.append(profile_frame(results, a, b, n).assign(profile="touch"))
    d = np.subtract(st.end_xy, st.start_xy)
    if np.hypot(*d) > 0:
        a, b = line_through(results, st.start_xy, d)
        out.append(profile_frame(results, a, b, n).assign(profile="step"))
    frame = pd.concat(out, ignore_index=True)
    return frame[["profile"] + [c for c in frame.columns if c != "profile"]]


def summary_frame(flat: Any) -> pd.DataFrame:
    """A flat results record (a dataclass of numbers and text) as rows of quantity, value, unit.

    The first row is the draft status. Location tuples become one row per
    coordinate (``..._x``, ``..._y``); notices are left out (they have their
    own listing).
    """
    rows: list[tuple[str, Any, str]] = [("status", DRAFT_MARK, "")]
    for f in dataclasses.fields(flat):
        if not f.repr or f.name == "notices":
            continue
        value = getattr(flat, f.name)
        unit = _unit(f.name)
        if isinstance(value, tuple):
            base = f.name[: -len("_xy_m")] if f.name.endswith("_xy_m") else f.name
            rows += [(f"{base}_{axis}_m", float(v), unit) for axis, v in zip("xy", value, strict=True)]
        else:
            rows.append((f.name, value, unit))
    return pd.DataFrame(rows, columns=["quantity", "value", "unit"])


def summaries_frame(summaries: Sequence[DesignSummary], ranks: Sequence[int | None]) -> pd.DataFrame:
    """One row per design (or layout) of a comparison or sweep, with its rank.

    The columns are the JSON keys of the side-by-side table; the touch
    location is split into ``touch_x_m`` and ``touch_y_m``, warnings are
    joined by `` | ``; ``rank`` is empty for designs that fail, ``error``
    holds the reason a design could not be analysed.
    """
    rows = []
    for s, r in zip(summaries, ranks, strict=True):
        d = s.to_dict()
        loc = d.pop("touch_location", None)
        if loc is not None:
            d["touch_x_m"], d["touch_y_m"] = loc["x_m"], loc["y_m"]
        if "warnings" in d:
            d["warnings"] = " | ".join(d["warnings"])
        d["rank"] = r
        d["error"] = s.error
        rows.append(d)
    frame = pd.DataFrame(rows)
    frame["rank"] = frame["rank"].astype("Int64")
    return frame


def _tables(flat: Any, results: PipelineResults) -> dict[str, pd.DataFrame]:
    return {
        "summary": summary_frame(flat),
        "segments": segments_frame(results),
        "surface": raster_frame(results),
        "profiles": worst_point_profiles(results),
    }


def check_csv_folder(folder: str | Path, inputs: Iterable[str | Path], overwrite: bool) -> Path:
    """Check a folder for the CSV tables before any work is done (created later if missing).

    Raises
    ------
    InputError
        When the path is a file, its parent folder does not exist, or a
        table file exists without ``overwrite`` or is one of the inputs.
    """
    out = Path(folder)
    if out.exists() and not out.is_dir():
        raise InputError(f"the CSV output '{out}' is a file, not a folder", fix="Give a folder name for the tables")
    if not out.exists() and not out.parent.exists():
        raise InputError(
            f"the folder '{out.parent}' for the CSV tables does not exist",
            fix="Create it first or choose another path",
        )
    if out.exists():
        for name in CSV_FILES.values():
            check_output(out / name, inputs, overwrite, "CSV")
    return out


def write_csv(flat: Any, results: PipelineResults, folder: str | Path) -> list[Path]:
    """Write the summary, segments, surface raster and profiles as CSV files in ``folder``.

    The folder is created if missing (its parent must exist). Each file is
    written atomically. Returns the paths written.
    """
    out = Path(folder)
    out.mkdir(exist_ok=True)
    written = []
    for key, frame in _tables(flat, results).items():
        path = out / CSV_FILES[key]
        atomic_write(path, lambda tmp, frame=frame: frame.to_csv(tmp, index=False))
        written.append(path)
    return written


def write_results_xlsx(flat: Any, results: PipelineResults, path: str | Path) -> None:
    """Write the results workbook: sheets Summary, Segments, Surface and Profiles (atomically).

    Raises
    ------
    InputError
        When a table has more rows than a worksheet holds.
    """
    tables = _tables(flat, results)
    for sheet, frame in zip(RESULT_SHEETS, tables.values(), strict=True):
        if len(frame) > EXCEL_MAX_ROWS:
            raise InputError(
                f"the {sheet} table has {len(frame):,} rows, more than a worksheet holds ({EXCEL_MAX_ROWS:,})",
                fix="Use a coarser raster spacing, or write the tables as CSV files instead",
            )

    def writer(tmp: Path) -> None:
        import openpyxl

        wb = openpyxl.Workbook(write_only=True)  # streamed rows: several times faster for the raster
        for sheet, frame in zip(RESULT_SHEETS, tables.values(), strict=True):
            ws = wb.create_sheet(sheet)
            ws.freeze_panes = "A2"
            ws.append([str(c) for c in frame.columns])
            cells = frame.astype(object).where(frame.notna(), None)
            for row in cells.itertuples(index=False, name=None):
                ws.append([v.item() if isinstance(v, np.generic) else v for v in row])
        wb.save(tmp)

    atomic_write(path, writer)
