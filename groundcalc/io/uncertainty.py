"""The optional Uncertainty sheet: ranges of uncertain inputs.

One row per quantity: ``Quantity`` (name with its unit in brackets, e.g.
``Fault current [kA]``), ``Low``, ``High`` and ``Distribution``. Values are
converted to SI with the unit of the quantity and checked against the same
rules as on the Soil and Fault sheets.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import scipy.stats

from ..errors import InputError
from ..model import Design, Notice
from .cells import Cell, _factor, check_formulas, open_workbook, read_table, value
from .schema import FAULT, SOIL, UNCERTAINTY, Field
from .units import DEFAULT_UNIT, split_header

__all__ = ["QUANTITIES", "SOIL_QUANTITIES", "UncertainQuantity", "base_value", "read_uncertainty"]

#: Quantities the sheet may vary: normalised name -> (sheet spec the field comes from).
QUANTITIES = {
    "fault current": FAULT,
    "split factor": FAULT,
    "fault duration": FAULT,
    "x/r ratio": FAULT,
    "surface layer resistivity": SOIL,
    "surface layer thickness": SOIL,
    "upper resistivity": SOIL,
    "upper thickness": SOIL,
    "lower resistivity": SOIL,
}
#: Quantities that change the soil model (each sample then needs its own solve).
SOIL_QUANTITIES = ("upper resistivity", "upper thickness", "lower resistivity")
#: Other accepted spellings.
_ALIASES = {"clearing time": "fault duration", "x/r": "x/r ratio", "xr ratio": "x/r ratio"}
#: z of the 95th percentile of the standard normal distribution.
_Z95 = float(scipy.stats.norm.ppf(0.95))


@dataclass(frozen=True)
class UncertainQuantity:
    """One row of the Uncertainty sheet, in SI units.

    Attributes
    ----------
    key : str
        Normalised quantity name, e.g. ``"fault current"``.
    name : str
        Quantity name as in the template, e.g. ``"Fault current"``.
    unit : str
        SI unit of the values (``""`` for plain numbers).
    low, high : float
        The range in SI units.
    distribution : str
        ``"uniform"``, ``"normal"`` or ``"lognormal"``.
    lower_bound, upper_bound : float
        Physical range the samples are kept in (the distribution is truncated there).
    row : int
        Worksheet row, for messages.
    """

    key: str
    name: str
    unit: str
    low: float
    high: float
    distribution: str
    lower_bound: float
    upper_bound: float
    row: int = 0

    def ppf(self, u: np.ndarray) -> np.ndarray:
        """Values at probabilities ``u`` (inverse of the distribution function).

        Notes
        -----
        uniform: ``Low + u (High - Low)``. normal: mean ``(Low + High)/2``,
        standard deviation ``(High - Low) / (2 z95)`` so that Low and High are
        the 5th and 95th percentiles, truncated to the physical range.
        lognormal: the same in the logarithm of the value.
        """
        u = np.asarray(u, dtype=float)
        if self.distribution == "uniform":
            return self.low + u * (self.high - self.low)
        if self.distribution == "normal":
            lo, hi, lb, ub = self.low, self.high, self.lower_bound, self.upper_bound
            transform = None
        else:
            lo, hi = math.log(self.low), math.log(self.high)
            lb = math.log(self.lower_bound) if self.lower_bound > 0 else -math.inf
            ub = math.log(self.upper_bound) if math.isfinite(self.upper_bound) else math.inf
            transform = np.exp
        loc, scale = 0.5 * (lo + hi), (hi - lo) / (2.0 * _Z95)
        x = scipy.stats.truncnorm.ppf(u, (lb - loc) / scale, (ub - loc) / scale, loc=loc, scale=scale)
        return transform(x) if transform is not None else x

    def describe(self) -> str:
        """Plain text, e.g. ``fault current 9000 to 11000 A, uniform``."""
        unit = f" {self.unit}" if self.unit else ""
        shape = {"uniform": "uniform", "normal": "normal, P5 to P95", "lognormal": "lognormal, P5 to P95"}
        return f"{self.name} {self.low:.4g} to {self.high:.4g}{unit} ({shape[self.distribution]})"


def base_value(design: Design, key: str) -> float | None:
    """The design's own value of an uncertain quantity (``None`` when it has none). [SI]"""
    f, soil, surf = design.fault, design.soil, design.surface_layer
    values = {
        "fault current": f.fault_current_a,
        "split factor": f.split_factor,
        "fault duration": f.fault_duration_s,
        "x/r ratio": f.x_over_r,
        "surface layer resistivity": surf.rho_ohm_m if surf else None,
        "surface layer thickness": surf.thickness_m if surf else None,
        "upper resistivity": soil.rho1_ohm_m,
        "upper thickness": soil.thickness_m,
        "lower resistivity": soil.rho2_ohm_m,
    }
    return values[key]


def _bounds(field: Field) -> tuple[float, float]:
    if field.rule == "fraction":
        return 0.0, 1.0
    if field.rule in ("positive", "nonnegative"):
        return 0.0, math.inf
    return -math.inf, math.inf


def _parse_row(cells: dict[str, Cell], fields: dict[str, Field], design: Design) -> UncertainQuantity:
    qcell = cells["quantity"]
    text = value(cells, fields["quantity"])
    if text is None:
        raise InputError(
            "the row has values but no quantity name",
            sheet=qcell.sheet,
            row=qcell.row,
            column=qcell.column,
            fix="Write the quantity with its unit, e.g. 'Fault current [kA]', or delete the row",
        )
    name, unit = split_header(text)
    name = _ALIASES.get(name, name)
    valid = ", ".join(f"'{QUANTITIES[k].field(k).header()}'" for k in QUANTITIES)
    if name not in QUANTITIES:
        raise InputError(
            f"'{text}' is not a quantity the uncertainty study can vary",
            sheet=qcell.sheet,
            row=qcell.row,
            column=qcell.column,
            fix=f"Use one of {valid}",
        )
    field = QUANTITIES[name].field(name)
    ucell = Cell(None, qcell.sheet, qcell.row, qcell.column, unit, qcell.row)
    _factor(ucell, field)  # refuses a missing or wrong unit, pointing at the Quantity cell
    if design.soil.model == "fitted" and name in SOIL_QUANTITIES:
        raise InputError(
            f"'{field.name}' cannot be given a range when the soil model is fitted to the Wenner readings",
            sheet=qcell.sheet,
            row=qcell.row,
            column=qcell.column,
            fix="The fitted model brings its own uncertainty from the readings; delete this row, or give the soil "
            "model on the Soil sheet",
        )
    if name in ("upper thickness", "lower resistivity") and design.soil.model not in ("two-layer", "multilayer"):
        raise InputError(
            f"'{field.name}' needs a layered soil model, but the Soil sheet gives a {design.soil.model} one",
            sheet=qcell.sheet,
            row=qcell.row,
            column=qcell.column,
            fix="Vary 'Upper resistivity' for uniform soil, or give a two-layer or multilayer model on the Soil sheet "
            "(the ranges then act on its top two layers)",
        )
    if name.startswith("surface layer") and design.surface_layer is None:
        raise InputError(
            f"'{field.name}' is given a range but the design has no surface layer",
            sheet=qcell.sheet,
            row=qcell.row,
            column=qcell.column,
            fix="Give the surface layer on the Soil sheet, or delete this row",
        )
    vals = {}
    for col in ("low", "high"):
        c = cells.get(col)
        if c is None or value({col: c}, fields[col]) is None:
            raise InputError(
                f"'{fields[col].name}' is blank",
                sheet=qcell.sheet,
                row=qcell.row,
                column=c.column if c is not None else f"'{fields[col].name}'",
                fix=f"Enter the {fields[col].name.lower()} end of the range in {unit or 'the quantity unit'}",
            )
        phys = Cell(c.value, c.sheet, c.row, c.column, unit, c.row)
        x = value({name: phys}, field)  # number, unit conversion and the quantity's rule (positive, fraction)
        vals[col] = float(x)
    dist = value(cells, fields["distribution"]) if "distribution" in cells else None
    dist = dist or "uniform"
    low, high = vals["low"], vals["high"]
    if not low < high:
        c = cells["high"]
        raise InputError(
            f"High ({c.value}) must be greater than Low ({cells['low'].value})",
            sheet=c.sheet,
            row=c.row,
            column=c.column,
            fix="Give the range with Low below High; a quantity that is not uncertain belongs on its own sheet only",
        )
    lb, ub = _bounds(field)
    if dist == "lognormal" and low <= 0:
        c = cells["low"]
        raise InputError(
            f"a lognormal range needs a Low above zero, got {c.value}",
            sheet=c.sheet,
            row=c.row,
            column=c.column,
            fix="Give a positive Low, or choose the uniform or normal distribution",
        )
    return UncertainQuantity(name, field.name, DEFAULT_UNIT.get(field.kind, ""), low, high, dist, lb, ub, qcell.row)


def read_uncertainty(path: str | Path, design: Design) -> tuple[tuple[UncertainQuantity, ...], tuple[Notice, ...]]:
    """Read the optional Uncertainty sheet of a design workbook.

    Parameters
    ----------
    path : str or pathlib.Path
        The workbook (opened read-only).
    design : Design
        The design read from the same workbook (for the checks against its soil and fault data).

    Returns
    -------
    quantities : tuple of UncertainQuantity
        Empty when the sheet is missing or empty.
    notices : tuple of Notice
        Warnings, e.g. a range that does not contain the design's own value.

    Raises
    ------
    InputError
        For a bad row, naming the sheet, row and column.
    """
    wb = open_workbook(path)
    try:
        check_formulas(path, wb)
        rows = read_table(wb, UNCERTAINTY)
    finally:
        wb.close()
    fields = {f.key: f for f in UNCERTAINTY.fields}
    out: list[UncertainQuantity] = []
    notices: list[Notice] = []
    seen: dict[str, int] = {}
    for cells in rows:
        q = _parse_row(cells, fields, design)
        if q.key in seen:
            c = cells["quantity"]
            raise InputError(
                f"'{q.name}' is given twice (first on row {seen[q.key]})",
                sheet=c.sheet,
                row=c.row,
                column=c.column,
                fix="Keep one row per quantity",
            )
        seen[q.key] = q.row
        base = base_value(design, q.key)
        if base is not None and not q.low <= base <= q.high:
            notices.append(
                Notice(
                    "range-excludes-design-value",
                    f"Uncertainty row {q.row}: the range of {q.name} ({q.low:.4g} to {q.high:.4g} {q.unit}) does not "
                    f"contain the design value {base:.4g} {q.unit}; the band is not centred on the deterministic "
                    "result.",
                )
            )
        out.append(q)
    return tuple(out), tuple(notices)
