"""Several designs side by side: one-line summaries, run in parallel worker processes.

A worker runs the whole pipeline on one design and returns a
:class:`DesignSummary` (plain numbers and arrays, cheap to send between
processes). A design that cannot be read gives a summary with its error, so
the others are still reported.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..analysis import Results, analyse, plan_lines
from ..errors import InputError
from ..model import Design
from ..safety.materials import MATERIALS

__all__ = ["DesignSummary", "buried_mass_kg", "rank", "summarise", "summarise_file"]


@dataclass
class DesignSummary:
    """The numbers a side-by-side table needs, for one design or variant."""

    name: str
    source: str = ""
    error: str | None = None
    resistance_ohm: float = math.nan
    grid_current_a: float = math.nan
    gpr_v: float = math.nan
    max_touch_v: float = math.nan
    touch_limit_v: float = math.nan
    touch_margin_pct: float = math.nan
    max_step_v: float = math.nan
    step_limit_v: float = math.nan
    step_margin_pct: float = math.nan
    conductors_ok: bool = False
    passed: bool = False
    governing: str = ""
    conductor_length_m: float = 0.0
    rod_count: int = 0
    rod_length_m: float = 0.0
    mass_kg: float = 0.0
    segment_count: int = 0
    limits_basis: str = ""
    lines: np.ndarray = field(default_factory=lambda: np.zeros((0, 2, 2)))
    rods_xy: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))
    touch_xy: tuple[float, float] = (math.nan, math.nan)
    step_xy: tuple[tuple[float, float], tuple[float, float]] = ((math.nan, math.nan), (math.nan, math.nan))
    warnings: list[str] = field(default_factory=list)
    extra: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary (no drawing arrays)."""
        if self.error is not None:
            return {"name": self.name, "source": self.source, "error": self.error}
        out = {
            "name": self.name,
            "source": self.source,
            "grid_resistance_ohm": self.resistance_ohm,
            "grid_current_a": self.grid_current_a,
            "gpr_v": self.gpr_v,
            "max_touch_v": self.max_touch_v,
            "touch_limit_v": self.touch_limit_v,
            "touch_margin_pct": self.touch_margin_pct,
            "max_step_v": self.max_step_v,
            "step_limit_v": self.step_limit_v,
            "step_margin_pct": self.step_margin_pct,
            "conductors_ok": self.conductors_ok,
            "passed": self.passed,
            "governing": self.governing,
            "total_conductor_length_m": self.conductor_length_m,
            "rod_count": self.rod_count,
            "total_rod_length_m": self.rod_length_m,
            "buried_mass_kg": self.mass_kg,
            "segment_count": self.segment_count,
            "limits_basis": self.limits_basis,
            "touch_location": {"x_m": self.touch_xy[0], "y_m": self.touch_xy[1]},
            "warnings": self.warnings,
        }
        out.update(self.extra)
        return out


def buried_mass_kg(design: Design) -> float:
    """Mass of buried conductor and rod metal, from diameters and material densities. [kg]

    Notes
    -----
    Solid round sections (common practice for a first material estimate);
    densities of :data:`groundcalc.safety.materials.MATERIALS`.
    """
    total = 0.0
    for c in design.all_conductors():
        area = math.pi * c.diameter_m**2 / 4.0
        total += area * c.length_m * MATERIALS[c.material].density_kg_m3
    return total


def summarise(results: Results, name: str, source: str = "") -> DesignSummary:
    """One design's results as a :class:`DesignSummary`."""
    d = results.design
    a = results.assessment
    t, s = results.field.touch, results.field.step
    return DesignSummary(
        name=name,
        source=source,
        resistance_ohm=results.resistance_ohm,
        grid_current_a=results.grid_current_a,
        gpr_v=results.gpr_v,
        max_touch_v=results.max_touch_v,
        touch_limit_v=results.limits.touch_limit_v,
        touch_margin_pct=a.touch_margin_pct,
        max_step_v=results.max_step_v,
        step_limit_v=results.limits.step_limit_v,
        step_margin_pct=a.step_margin_pct,
        conductors_ok=a.conductors_ok,
        passed=a.passed,
        governing=a.governing,
        conductor_length_m=float(sum(c.length_m for c in d.all_conductors() if c.kind != "rod")),
        rod_count=len(d.rods),
        rod_length_m=float(sum(r.length_m for r in d.rods)),
        mass_kg=buried_mass_kg(d),
        segment_count=len(results.geometry.solution.segments),
        limits_basis=results.limits.basis,
        lines=plan_lines(d),
        rods_xy=np.array([[r.x_m, r.y_m] for r in d.rods]).reshape(-1, 2),
        touch_xy=tuple(t.location_xy),
        step_xy=(tuple(s.start_xy), tuple(s.end_xy)),
        warnings=[n.message for n in results.notices if n.level != "note"],
    )


def summarise_file(path: str) -> DesignSummary:
    """Read and analyse one workbook; an unreadable one gives a summary with its error."""
    from ..io.workbook import read_design

    name = Path(path).stem
    try:
        design = read_design(path)
        return summarise(analyse(design), name, str(path))
    except InputError as exc:
        return DesignSummary(name=name, source=str(path), error=str(exc))
    except Exception as exc:  # one failed design must not lose the others' results
        return DesignSummary(name=name, source=str(path), error=f"internal error ({type(exc).__name__}: {exc})")


def summarise_design(item: tuple[str, Design]) -> DesignSummary:
    """Analyse an already built design (used by the sweep)."""
    name, design = item
    return summarise(analyse(design), name, design.source_name)


def default_jobs() -> int:
    """Worker processes by default: one per core."""
    return max(1, os.cpu_count() or 1)


def rank(summaries: Sequence[DesignSummary]) -> list[int | None]:
    """Rank of each passing design by buried metal mass (1 = least), ``None`` for the rest."""
    ok = sorted((s.mass_kg, k) for k, s in enumerate(summaries) if s.error is None and s.passed)
    out: list[int | None] = [None] * len(summaries)
    for r, (_, k) in enumerate(ok, start=1):
        out[k] = r
    return out


def table_lines(summaries: Sequence[DesignSummary], ranks: Sequence[int | None], first: str = "Design") -> list[str]:
    """Plain-text side-by-side table for the terminal."""
    w = min(32, max([22] + [len(s.name) for s in summaries]))
    head = (
        f"{first:<{w}s} {'Rg [ohm]':>9s} {'GPR [V]':>9s} {'Touch [V]':>10s} {'limit':>7s} {'margin':>7s} "
        f"{'Step [V]':>9s} {'limit':>7s} {'margin':>7s} {'LC [m]':>7s} {'rods':>4s} {'LR [m]':>6s} "
        f"{'mass [kg]':>9s}  {'result':<6s} {'governing':<9s} {'rank':>4s}"
    )
    lines = [head, "-" * len(head)]
    for s, r in zip(summaries, ranks, strict=True):
        if s.error is not None:
            lines.append(f"{s.name[:w]:<{w}s} ERROR: {s.error}")
            continue
        lines.append(
            f"{s.name[:w]:<{w}s} {s.resistance_ohm:9.4g} {s.gpr_v:9.0f} {s.max_touch_v:10.1f} {s.touch_limit_v:7.0f} "
            f"{s.touch_margin_pct:+6.1f}% {s.max_step_v:9.1f} {s.step_limit_v:7.0f} {s.step_margin_pct:+6.1f}% "
            f"{s.conductor_length_m:7.0f} {s.rod_count:4d} {s.rod_length_m:6.0f} {s.mass_kg:9.0f}  "
            f"{'PASS' if s.passed else 'FAIL':<6s} {s.governing:<9s} {r if r else '-':>4}"
        )
    return lines
