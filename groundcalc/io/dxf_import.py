"""Take the grid from a DXF drawing: layers map to conductors and rods.

A drawing's layers are mapped to parts of the design, by command-line
options or by a ``Drawing`` sheet (the one this module writes into every
imported workbook, so a revised drawing can be imported again with the same
mapping):

- lines, polylines, arcs and circles on a *conductor* layer become straight
  conductors at a given burial depth and diameter; polylines are split at
  their vertices and curved pieces are followed by chords;
- points, circles and block inserts on a *rod* layer become driven rods of a
  given length (at the point, the circle's centre or the insertion point).

The drawing unit comes from the header variable ``$INSUNITS`` or from the
caller. Plan coordinates are kept as drawn (scaled to metres); drawing
elevations (z) are not used, the depth comes from the mapping.

The workbook written from the import is built in
:mod:`groundcalc.io.dxf_workbook`.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import math
import re
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..model import Conductor, Notice, Rod
from .units import normalise_name

__all__ = [
    "DRAWING_UNITS",
    "DrawingImport",
    "LayerReport",
    "LayerRule",
    "complete_rules",
    "drawing_scale",
    "import_drawing",
    "import_lines",
]

#: Drawing units accepted from ``$INSUNITS`` (code -> name, metres per unit).
DRAWING_UNITS: dict[int, tuple[str, float]] = {
    1: ("in", 0.0254),
    2: ("ft", 0.3048),
    4: ("mm", 0.001),
    5: ("cm", 0.01),
    6: ("m", 1.0),
    10: ("yd", 0.9144),
    14: ("dm", 0.1),
    21: ("us-ft", 1200.0 / 3937.0),
}
#: Unit names accepted from the caller (``--units``).
UNIT_NAMES: dict[str, int] = {name: code for code, (name, _) in DRAWING_UNITS.items()}

#: Largest distance a chord may stray from an arc or circle it replaces. [m]
CHORD_SAGITTA_M = 0.01
#: Pieces shorter than this are dropped (repeated vertices). [m]
MIN_PIECE_M = 1e-6
#: Most conductors or rods one drawing may give (the workbook table limit).
MAX_ITEMS = 20_000

_CONDUCTOR_TYPES = ("LINE", "LWPOLYLINE", "POLYLINE", "ARC", "CIRCLE")
_ROD_TYPES = ("POINT", "CIRCLE", "INSERT")
PARTS = ("conductor", "rod", "ignore")

_DEFAULT_DATE = _dt.datetime(2000, 1, 1)


@dataclass(frozen=True)
class LayerRule:
    """How one drawing layer maps to the design.

    Attributes
    ----------
    layer : str
        Layer name as given.
    part : str
        ``"conductor"``, ``"rod"`` or ``"ignore"``.
    depth_m : float or None
        Conductor burial depth, or rod top depth (``None`` = conductor depth). [m]
    diameter_m : float or None
        Conductor or rod diameter. [m]
    length_m : float or None
        Rod length. [m]
    material : str or None
        Material name; ``None`` = the default material.
    origin : str
        Where the rule came from, for messages.
    """

    layer: str
    part: str
    depth_m: float | None = None
    diameter_m: float | None = None
    length_m: float | None = None
    material: str | None = None
    origin: str = ""


@dataclass(frozen=True)
class LayerReport:
    """What was taken from one layer."""

    layer: str
    part: str
    entities: int
    taken: dict[str, int]
    ignored: dict[str, int]
    items: int
    length_m: float
    dropped_pieces: int = 0


@dataclass(frozen=True)
class DrawingImport:
    """Conductors and rods taken from a drawing, with the record of what was taken.

    Attributes
    ----------
    conductors, rods : tuple
        The design parts, in metres.
    layers : tuple of LayerReport
        One per mapped layer, in drawing layer order.
    unmapped : dict
        Layer -> number of model-space entities on layers not mapped.
    rules : tuple of LayerRule
        The mapping used, completed with depths and diameters.
    unit_name : str
        Drawing unit (``mm``, ``ft``, ...).
    scale_m : float
        Metres per drawing unit. [m]
    unit_source : str
        ``"$INSUNITS = 4"`` or ``"--units"``.
    source_name, sha256 : str
        Drawing file name and the SHA-256 of its bytes.
    saved : datetime.datetime
        The drawing's own last-saved date (``$TDUPDATE``), or a fixed date.
    notices : tuple of Notice
    """

    conductors: tuple[Conductor, ...]
    rods: tuple[Rod, ...]
    layers: tuple[LayerReport, ...]
    unmapped: dict[str, int]
    rules: tuple[LayerRule, ...]
    unit_name: str
    scale_m: float
    unit_source: str
    source_name: str = ""
    sha256: str = ""
    saved: _dt.datetime = _DEFAULT_DATE
    notices: tuple[Notice, ...] = field(default=())

    @property
    def conductor_length_m(self) -> float:
        """Total length of the conductors taken. [m]"""
        return float(sum(c.length_m for c in self.conductors))

    def summary_lines(self) -> list[str]:
        """Plain-text record of what was taken and what was left."""
        lines = [
            f"Drawing {self.source_name}: units {self.unit_name} ({self.unit_source}), 1 unit = {self.scale_m:g} m",
        ]
        for r in self.layers:
            taken = ", ".join(f"{n} {t}" for t, n in sorted(r.taken.items())) or "nothing"
            what = f"{r.items} conductor(s), {r.length_m:.2f} m" if r.part == "conductor" else f"{r.items} rod(s)"
            lines.append(f"  layer {r.layer!r} -> {r.part}: {taken} -> {what}")
            if r.ignored:
                lines.append(
                    "    ignored on this layer: " + ", ".join(f"{n} {t}" for t, n in sorted(r.ignored.items()))
                )
            if r.dropped_pieces:
                lines.append(f"    {r.dropped_pieces} zero-length piece(s) dropped (repeated vertices)")
        if self.unmapped:
            lines.append(
                "  layers ignored: " + ", ".join(f"{name!r} ({n} entities)" for name, n in self.unmapped.items())
            )
        lines.append(
            f"Taken: {len(self.conductors)} conductor(s), total length {self.conductor_length_m:.2f} m; "
            f"{len(self.rods)} rod(s), total length {sum(r.length_m for r in self.rods):.2f} m"
        )
        return lines


# --------------------------------------------------------------------------- reading the drawing


def _read_drawing(path: str | Path):
    """Open an ASCII DXF file with ezdxf, refusing what is not one."""
    import ezdxf

    p = Path(path)
    if not p.exists():
        raise InputError(f"file '{p}' does not exist", fix="Check the path and file name")
    if p.is_dir():
        raise InputError(f"'{p}' is a folder, not a drawing", fix="Give the path of a .dxf file")
    with open(p, "rb") as fh:
        head = fh.read(32)
    if head.startswith(b"AutoCAD Binary DXF"):
        raise InputError(
            f"'{p.name}' is a binary DXF file",
            fix="Save the drawing as an ASCII (text) DXF from the CAD program (DXF format, not binary)",
        )
    if re.match(rb"AC1\d\d\d", head):
        raise InputError(
            f"'{p.name}' is a DWG drawing, not a DXF file",
            fix="Export or save the drawing as DXF (ASCII) from the CAD program",
        )
    if not head.strip():
        raise InputError(f"'{p.name}' is empty", fix="Give a DXF drawing that holds the grid")
    try:
        return ezdxf.readfile(p)
    except (OSError, ValueError, UnicodeError, ezdxf.DXFError) as exc:
        raise InputError(
            f"'{p.name}' could not be read as a DXF drawing ({exc})",
            fix="Save the drawing as an ASCII DXF from the CAD program (R12 or later)",
        ) from exc


def _header_insunits(raw: bytes) -> int | None:
    """``$INSUNITS`` as written in the file's HEADER section, or ``None`` when absent.

    ezdxf fills absent header variables with defaults, so presence is read
    from the file itself.
    """
    m = re.search(rb"\$INSUNITS\s*\r?\n\s*70\s*\r?\n\s*(-?\d+)", raw[:2_000_000])
    return int(m.group(1)) if m else None


def drawing_scale(code: int | None, units: str | None) -> tuple[str, float, str]:
    """Drawing unit name, metres per unit and where the unit came from.

    Parameters
    ----------
    code : int or None
        ``$INSUNITS`` of the file (``None`` when absent).
    units : str or None
        Unit given by the caller; it overrides the header.

    Raises
    ------
    InputError
        When neither gives a usable length unit.
    """
    accepted = ", ".join(UNIT_NAMES)
    if units is not None:
        key = units.strip().lower()
        if key not in UNIT_NAMES:
            raise InputError(f"--units '{units}' is not a drawing unit groundcalc knows", fix=f"Use one of: {accepted}")
        name, scale = DRAWING_UNITS[UNIT_NAMES[key]]
        return name, scale, "--units"
    if code is None or code == 0:
        state = "has no $INSUNITS header variable" if code is None else "says its units are 'unitless' ($INSUNITS = 0)"
        raise InputError(
            f"the drawing {state}, so its unit is unknown",
            fix=f"Give the unit the drawing was made in with --units ({accepted}); mm and ft are common",
        )
    if code not in DRAWING_UNITS:
        raise InputError(
            f"the drawing's unit ($INSUNITS = {code}) is not one used for site plans",
            fix=f"Check the drawing; give the unit it was really made in with --units ({accepted})",
        )
    name, scale = DRAWING_UNITS[code]
    return name, scale, f"$INSUNITS = {code}"


def _saved_date(doc) -> _dt.datetime:
    """The drawing's last-saved date as its header records it (``$TDUPDATE``), to the second."""
    from ezdxf.tools.juliandate import calendardate

    for var in ("$TDUPDATE", "$TDUUPDATE"):
        try:
            jd = float(doc.header.get(var, 0.0) or 0.0)
        except (TypeError, ValueError):
            continue
        if jd > 2_400_000.0:
            try:
                return calendardate(jd).replace(microsecond=0, tzinfo=None)
            except (ValueError, OverflowError):
                continue
    return _DEFAULT_DATE


def _layer_names(doc) -> list[str]:
    return [layer.dxf.name for layer in doc.layers]


def _wcs(entity, point) -> tuple[float, float, float]:
    """A point of an OCS entity (circle centre, insert point) in world coordinates."""
    p = entity.ocs().to_wcs(point)
    return (float(p.x), float(p.y), float(p.z))


def _pieces(entity, sagitta: float) -> list[tuple[tuple[float, float, float], tuple[float, float, float]]]:
    """Straight pieces of a line, polyline, arc or circle (drawing units, world coordinates).

    Polylines are split at their vertices; arcs, circles and bulged polyline
    segments are replaced by chords whose ends lie on the curve and which
    stray from it by at most ``sagitta``.
    """
    kind = entity.dxftype()
    if kind == "LINE":
        a, b = entity.dxf.start, entity.dxf.end
        return [((a.x, a.y, a.z), (b.x, b.y, b.z))]
    if kind in ("ARC", "CIRCLE"):
        pts = [(float(v.x), float(v.y), float(v.z)) for v in entity.flattening(sagitta)]
        return list(zip(pts[:-1], pts[1:], strict=True))
    out = []
    for sub in entity.virtual_entities():
        out += _pieces(sub, sagitta)
    return out


def _polyline_ok(entity) -> bool:
    """2D and 3D polylines carry conductors; polygon meshes and polyface meshes do not."""
    if entity.dxftype() != "POLYLINE":
        return True
    return not (entity.is_polygon_mesh or entity.is_poly_face_mesh)


def import_lines(
    doc,
    rules: list[LayerRule],
    scale_m: float,
    unit_name: str = "m",
    unit_source: str = "",
    source_name: str = "",
) -> DrawingImport:
    """Conductors and rods from the model space of an open ezdxf drawing.

    Parameters
    ----------
    doc : ezdxf.document.Drawing
        The drawing.
    rules : list of LayerRule
        Layer mapping; conductor and rod rules must carry their dimensions.
    scale_m : float
        Metres per drawing unit. [m]

    Returns
    -------
    DrawingImport

    Raises
    ------
    InputError
        When a mapped layer is not in the drawing, or nothing matches.
    """
    msp = doc.modelspace()
    by_layer: dict[str, Counter] = {}
    for e in msp:
        by_layer.setdefault(e.dxf.layer, Counter())[e.dxftype()] += 1
    known = {normalise_name(n): n for n in _layer_names(doc)} | {normalise_name(n): n for n in by_layer}
    found = _found_text(by_layer)
    if not by_layer:
        raise InputError(
            "the drawing's model space is empty",
            fix="Give the drawing that holds the grid (entities in paper space or in block definitions are not read)",
        )
    ruled: dict[str, LayerRule] = {}
    for r in rules:
        key = normalise_name(r.layer)
        if r.part != "ignore" and key not in known:
            raise InputError(
                f"the layer '{r.layer}' ({r.origin or r.part}) is not in the drawing",
                fix=f"Layers found: {found}",
            )
        ruled[key] = r
    if not any(r.part != "ignore" for r in ruled.values()):
        raise InputError(
            "no layer is mapped to conductors or rods",
            fix=f"Name the layers with --conductors LAYER and --rods LAYER (or a Drawing sheet). Layers found: {found}",
        )
    sagitta = CHORD_SAGITTA_M / scale_m
    conductors: list[Conductor] = []
    rods: list[Rod] = []
    stats: dict[str, dict[str, Any]] = {}
    elevated = 0
    for e in msp:
        key = normalise_name(e.dxf.layer)
        rule = ruled.get(key)
        if rule is None or rule.part == "ignore":
            continue
        st = stats.setdefault(key, {"taken": Counter(), "ignored": Counter(), "items": 0, "len": 0.0, "drop": 0})
        kind = e.dxftype()
        label = f"{e.dxf.layer} #{e.dxf.handle}"
        mat = rule.material or "hard-drawn copper"
        if rule.part == "conductor":
            if kind not in _CONDUCTOR_TYPES or not _polyline_ok(e):
                st["ignored"][kind] += 1
                continue
            pieces = _pieces(e, sagitta)
            st["taken"][kind] += 1
            many = len(pieces) > 1
            for k, (a, b) in enumerate(pieces, start=1):
                xa, ya = round(a[0] * scale_m, 9), round(a[1] * scale_m, 9)
                xb, yb = round(b[0] * scale_m, 9), round(b[1] * scale_m, 9)
                if math.hypot(xb - xa, yb - ya) < MIN_PIECE_M:
                    st["drop"] += 1
                    continue
                elevated += int(a[2] != 0.0 or b[2] != 0.0)
                c = Conductor(
                    f"{label}.{k}" if many else label,
                    (xa, ya, rule.depth_m),
                    (xb, yb, rule.depth_m),
                    rule.diameter_m,
                    "conductor",
                    f"drawing {source_name} {label}",
                    mat,
                )
                conductors.append(c)
                st["items"] += 1
                st["len"] += c.length_m
        else:
            if kind not in _ROD_TYPES:
                st["ignored"][kind] += 1
                continue
            if kind == "POINT":
                loc = e.dxf.location
                p = (float(loc.x), float(loc.y), float(loc.z))
            elif kind == "CIRCLE":
                p = _wcs(e, e.dxf.center)
            else:
                p = _wcs(e, e.dxf.insert)
            st["taken"][kind] += 1
            elevated += int(p[2] != 0.0)
            rods.append(
                Rod(
                    label,
                    round(p[0] * scale_m, 9),
                    round(p[1] * scale_m, 9),
                    rule.depth_m,
                    rule.length_m,
                    rule.diameter_m,
                    f"drawing {source_name} {label}",
                    mat,
                )
            )
            st["items"] += 1
            st["len"] += rule.length_m
    if not conductors and not rods:
        mapped = ", ".join(f"'{r.layer}' ({r.part})" for r in ruled.values() if r.part != "ignore")
        raise InputError(
            f"no lines, polylines, points, circles or inserts were found on the mapped layers {mapped}",
            fix=f"Conductor layers take lines, polylines, arcs and circles; rod layers take points, circles and "
            f"block inserts. Layers found: {found}",
        )
    if len(conductors) > MAX_ITEMS or len(rods) > MAX_ITEMS:
        raise InputError(
            f"the drawing gives {len(conductors)} conductor pieces and {len(rods)} rods, more than {MAX_ITEMS}",
            fix="Import the grounding grid only (map only its layers), or simplify the drawing",
        )
    reports = []
    for name, counts in by_layer.items():
        key = normalise_name(name)
        rule = ruled.get(key)
        if rule is None or rule.part == "ignore":
            continue
        st = stats[key]
        reports.append(
            LayerReport(
                name,
                rule.part,
                sum(counts.values()),
                dict(st["taken"]),
                dict(st["ignored"]),
                st["items"],
                st["len"],
                st["drop"],
            )
        )
    unmapped = {
        n: sum(c.values())
        for n, c in by_layer.items()
        if normalise_name(n) not in ruled or ruled[normalise_name(n)].part == "ignore"
    }
    notices = []
    if elevated:
        notices.append(
            Notice(
                "drawing-elevation",
                f"{elevated} piece(s) of the drawing have a non-zero elevation (z); elevations are not used, the "
                "depths come from the layer mapping.",
                "note",
            )
        )
    notices += _extent_notice(conductors, rods, unit_name)
    return DrawingImport(
        tuple(conductors),
        tuple(rods),
        tuple(reports),
        unmapped,
        tuple(rules),
        unit_name,
        scale_m,
        unit_source,
        source_name,
        notices=tuple(notices),
    )


def _extent_notice(conductors: list[Conductor], rods: list[Rod], unit_name: str) -> list[Notice]:
    """Flag a grid whose size suggests the wrong drawing unit."""
    xs = [p[0] for c in conductors for p in (c.start, c.end)] + [r.x_m for r in rods]
    ys = [p[1] for c in conductors for p in (c.start, c.end)] + [r.y_m for r in rods]
    if not xs:
        return []
    extent = max(max(xs) - min(xs), max(ys) - min(ys))
    if 0 < extent < 2.0 or extent > 5000.0:
        return [
            Notice(
                "drawing-units",
                f"The imported grid spans {extent:.4g} m with the drawing unit '{unit_name}'; substation grids are "
                "usually 10 m to 1 km across. Check the unit (--units).",
            )
        ]
    return []


def _found_text(by_layer: dict[str, Counter]) -> str:
    if not by_layer:
        return "none (the model space is empty)"
    parts = []
    for name, counts in by_layer.items():
        kinds = ", ".join(f"{n} {t}" for t, n in sorted(counts.items()))
        parts.append(f"'{name}' ({kinds})")
    return "; ".join(parts)


# --------------------------------------------------------------------------- the mapping


def complete_rules(
    sheet_rules: list[LayerRule],
    conductor_layers: list[str],
    rod_layers: list[str],
    depth_m: float | None,
    diameter_m: float | None,
    rod_length_m: float | None,
    rod_diameter_m: float | None,
    rod_top_depth_m: float | None,
) -> list[LayerRule]:
    """Merge the Drawing-sheet rules with the command-line options and check every dimension is known.

    Options name layers and give dimensions; a dimension given as an option
    applies to every layer of its part, a Drawing-sheet value only to its row.
    Rod tops default to the conductor depth, so that the rods join the grid.
    """
    rules: dict[str, LayerRule] = {normalise_name(r.layer): r for r in sheet_rules}
    for layer in conductor_layers:
        old = rules.get(normalise_name(layer))
        rules[normalise_name(layer)] = LayerRule(
            layer, "conductor", material=old.material if old else None, origin="--conductors"
        )
    for layer in rod_layers:
        key = normalise_name(layer)
        if key in rules and rules[key].origin == "--conductors":
            raise InputError(
                f"the layer '{layer}' is given to both --conductors and --rods", fix="Give each layer one part"
            )
        old = rules.get(key)
        rules[key] = LayerRule(layer, "rod", material=old.material if old else None, origin="--rods")
    sheet_depth = {normalise_name(r.layer): r for r in sheet_rules}
    out = []
    cond_depths = []
    for key, r in rules.items():
        if r.part != "conductor":
            continue
        old = sheet_depth.get(key)
        d = depth_m if depth_m is not None else (old.depth_m if old else None)
        dia = diameter_m if diameter_m is not None else (old.diameter_m if old else None)
        where = r.origin or "conductor layer"
        if d is None or d <= 0:
            state = "is not given" if d is None else f"must be greater than zero, got {d:g} m"
            raise InputError(
                f"the burial depth of the conductors on layer '{r.layer}' ({where}) {state}",
                fix="Give it with --depth M (typical 0.3 to 1.5 m) or in the Depth column of the Drawing sheet",
            )
        if dia is None:
            raise InputError(
                f"the diameter of the conductors on layer '{r.layer}' ({where}) is not given",
                fix="Give it with --diameter MM (typical 8 to 20 mm) or in the Diameter column of the Drawing sheet",
            )
        cond_depths.append(d)
        rules[key] = LayerRule(r.layer, "conductor", d, dia, None, r.material, r.origin)
    for key, r in rules.items():
        if r.part != "rod":
            continue
        old = sheet_depth.get(key)
        top = rod_top_depth_m if rod_top_depth_m is not None else (old.depth_m if old else None)
        if top is None and cond_depths:
            top = min(cond_depths)
        length = rod_length_m if rod_length_m is not None else (old.length_m if old else None)
        dia = rod_diameter_m if rod_diameter_m is not None else (old.diameter_m if old else None)
        where = r.origin or "rod layer"
        if top is None:
            raise InputError(
                f"the top depth of the rods on layer '{r.layer}' ({where}) is not given and there is no "
                "conductor layer to take it from",
                fix="Give it with --rod-top-depth M (usually the grid depth)",
            )
        if length is None:
            raise InputError(
                f"the length of the rods on layer '{r.layer}' ({where}) is not given",
                fix="Give it with --rod-length M (typical 2.4 to 30 m) or in the Length column of the Drawing sheet",
            )
        if dia is None:
            raise InputError(
                f"the diameter of the rods on layer '{r.layer}' ({where}) is not given",
                fix="Give it with --rod-diameter MM (typical 12 to 25 mm) or in the Diameter column of the "
                "Drawing sheet",
            )
        rules[key] = LayerRule(r.layer, "rod", top, dia, length, r.material, r.origin)
    for r in rules.values():
        for name, v, lo, hi in (
            ("depth", r.depth_m, 0.0, 100.0),
            ("diameter", r.diameter_m, 1e-4, 0.5),
            ("length", r.length_m, 0.1, 100.0),
        ):
            if r.part != "ignore" and v is not None and not lo <= v <= hi:
                raise InputError(
                    f"the {name} {v:g} m for layer '{r.layer}' ({r.origin or r.part}) is out of range",
                    fix=f"Use {lo:g} to {hi:g} m (diameters are given in mm on the command line)",
                )
        out.append(r)
    return out


def import_drawing(
    path: str | Path,
    rules: list[LayerRule],
    units: str | None = None,
) -> DrawingImport:
    """Read a DXF drawing and take the mapped layers.

    Parameters
    ----------
    path : str or pathlib.Path
        ASCII DXF drawing (opened read-only).
    rules : list of LayerRule
        Complete layer mapping (see :func:`complete_rules`).
    units : str, optional
        Drawing unit, overriding ``$INSUNITS``.

    Returns
    -------
    DrawingImport
    """
    p = Path(path)
    doc = _read_drawing(p)
    raw = p.read_bytes()
    name, scale, source = drawing_scale(_header_insunits(raw), units)
    imp = import_lines(doc, rules, scale, name, source, p.name)
    from dataclasses import replace

    return replace(imp, sha256=hashlib.sha256(raw).hexdigest(), saved=_saved_date(doc))
