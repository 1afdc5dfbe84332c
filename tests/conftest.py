"""Shared fixtures: small designs built in code, workbooks written to tmp_path."""

from __future__ import annotations

import logging
from pathlib import Path

import pytest

from groundcalc.model import Design, Fault, GridSpec, Project, Rod, Settings, Soil, SurfaceLayer

ROOT = Path(__file__).resolve().parents[1]
#: Annex B surface layer: rho_s = 2500 ohm*m, h_s = 0.102 m [mem] (docs/references.md).
ANNEX_B_SURFACE = SurfaceLayer(2500.0, 0.102)


@pytest.fixture(autouse=True)
def _quiet_logs():
    logging.getLogger("groundcalc").setLevel(logging.WARNING)
    yield


def annex_b_fault() -> Fault:
    """IEEE Std 80-2000 Annex B common data: 3I0 = 3180 A, Sf = 0.6, Df = 1, 0.5 s, 70 kg [mem]
    (I_G = 1908 A [doc]; see docs/references.md, "IEEE Std 80-2000 Annex B and tables")."""
    return Fault(3180.0, 0.6, 0.0, 0.5, 0.5, 70.0, 60.0)


def annex_b_grid(n: int = 11, rods: bool = False) -> list:
    """Annex B Example 1 grid: 70 m x 70 m, 11 x 11 conductors [mem]; h = 0.5 m, d = 0.01 m [doc]."""
    return [GridSpec("B1", 0.0, 0.0, 70.0, 70.0, n, n, 0.5, 0.01)]


def annex_b_perimeter_rods() -> list[Rod]:
    """Example 2: 20 rods of 7.5 m on the perimeter (LR = 150 m) [mem]; placement ours:
    the four corners and four more per side at 14 m pitch. Rod diameter is not given in our
    notes; 20 mm is assumed (it barely affects the result)."""
    pos = set()
    for k in range(6):
        t = 14.0 * k
        pos |= {(t, 0.0), (t, 70.0), (0.0, t), (70.0, t)}
    return [Rod(f"R{i}", x, y, 0.5, 7.5, 0.02) for i, (x, y) in enumerate(sorted(pos))]


def make_design(
    grids=(),
    rods=(),
    conductors=(),
    rho=400.0,
    surface=ANNEX_B_SURFACE,
    fault=None,
    segment=2.0,
    spacing=1.0,
    margin=3.0,
    soil=None,
) -> Design:
    return Design(
        project=Project("test"),
        soil=soil or Soil("uniform", rho),
        surface_layer=surface,
        fault=fault or annex_b_fault(),
        conductors=tuple(conductors),
        rods=tuple(rods),
        grids=tuple(grids),
        settings=Settings(segment, spacing, margin),
    )


def write_workbook(
    path: Path,
    soil: dict | None = None,
    fault: dict | None = None,
    grids: list | None = None,
    conductors: list | None = None,
    rods: list | None = None,
    settings: dict | None = None,
    edit=None,
) -> Path:
    """Fill the template with the given rows and save it (a workbook a user could fill in).

    ``soil``/``fault``/``settings`` map quantity text to a value. A key whose name (without
    the unit) is in the template replaces that row's text, so ``"Fault current [kA]"`` changes
    the unit; other keys are appended as new rows (to test unknown names). ``edit(wb)``, if
    given, changes the filled workbook before it is saved (one save only).
    """
    from groundcalc.io.template import build_template
    from groundcalc.io.units import split_header

    wb = build_template()

    def fill(ws, values):
        values = dict(values)
        for row in ws.iter_rows(min_row=2):
            for key in list(values):
                if split_header(key)[0] == split_header(str(row[0].value))[0]:
                    row[0].value = key
                    row[1].value = values.pop(key)
        for k, v in values.items():
            ws.append([k, v])

    fill(wb["Soil"], soil if soil is not None else {"Model": "uniform", "Upper resistivity [ohm*m]": 400})
    fill(
        wb["Fault"],
        fault
        if fault is not None
        else {
            "Fault current [A]": 3180,
            "Split factor": 0.6,
            "X/R ratio": 0,
            "Fault duration [s]": 0.5,
            "Body weight [kg]": 70,
            "Frequency [Hz]": 60,
        },
    )
    fill(wb["Settings"], settings if settings is not None else {"Segment length [m]": 5, "Raster spacing [m]": 1})
    for name, rows in (("Grids", grids), ("Conductors", conductors), ("Rods", rods)):
        for r in rows or []:
            wb[name].append(list(r))
    if edit is not None:
        edit(wb)
    wb.save(path)
    return path
