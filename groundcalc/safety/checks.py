"""Every touch and step check of a design against its limits, and the verdict.

The grid's own touch (over the footprint) and step stay in
:class:`~groundcalc.safety.limits.Assessment`; the checks on fences, gates,
check points, check areas and the fence-reach band are added here, and all
of them count in the verdict and the governing criterion.
"""

from __future__ import annotations

from dataclasses import dataclass

from .limits import Assessment

__all__ = ["Check", "MetalAssessment"]


@dataclass(frozen=True)
class Check:
    """One computed voltage against its tolerable value.

    Attributes
    ----------
    criterion : str
        ``"touch"`` or ``"step"``.
    kind : str
        ``"fence"``, ``"gate"``, ``"point"``, ``"area"`` or ``"fence reach"``.
    name : str
        Fence label, gate, check point or area name.
    value_v : float
        Computed voltage. [V]
    limit_v : float
        Tolerable voltage (IEEE Std 80-2000 Eqs. 32-33 or 29-30, or user-defined). [V]
    location : tuple
        (x, y) of the worst point, or ((x, y), (x, y)) for a step. [m]
    """

    criterion: str
    kind: str
    name: str
    value_v: float
    limit_v: float
    location: tuple

    @property
    def ok(self) -> bool:
        """True when the voltage does not exceed its limit."""
        return self.value_v <= self.limit_v

    @property
    def margin_pct(self) -> float:
        """``(limit - computed) / limit`` in percent; positive passes. [%]"""
        return 100.0 * (self.limit_v - self.value_v) / self.limit_v

    @property
    def title(self) -> str:
        """Plain-language name, e.g. ``"touch at fence 'Perimeter'"``."""
        return f"{self.criterion} at {self.kind} '{self.name}'"


@dataclass(frozen=True)
class MetalAssessment(Assessment):
    """The grid's assessment plus the checks where people meet other metal.

    ``footprint_counts`` is False when the check areas replace the grid
    footprint as the place where touch is assessed; the footprint's touch is
    then reported but does not decide the verdict.
    """

    checks: tuple[Check, ...] = ()
    footprint_counts: bool = True

    @property
    def checks_ok(self) -> bool:
        """True when every added check passes."""
        return all(c.ok for c in self.checks)

    @property
    def passed(self) -> bool:
        """True when every counted criterion passes."""
        touch = self.touch_ok or not self.footprint_counts
        return touch and self.step_ok and self.conductors_ok and self.checks_ok

    def _margins(self) -> list[tuple[float, str]]:
        out = [(self.step_margin_pct, "step")]
        if self.footprint_counts:
            out.append((self.touch_margin_pct, "touch"))
        out += [(c.margin_pct, c.title) for c in self.checks]
        return out

    @property
    def governing(self) -> str:
        """The criterion with the smallest margin: ``"touch"``, ``"step"`` or a check's title."""
        return min(self._margins(), key=lambda m: m[0])[1]

    @property
    def governing_margin_pct(self) -> float:
        """Margin of the governing criterion. [%]"""
        return min(self._margins(), key=lambda m: m[0])[0]
