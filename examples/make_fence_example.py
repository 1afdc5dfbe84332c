"""Write the demo designs with a fence and other buried metal in examples/.

The scenario is invented for demonstration: the made-up "Kestrel Brook"
substation of make_example.py, with

- a perimeter fence 1.5 m outside the grid (steel posts every 2.5 m, 1 m deep)
  with a 4 m gate on the south side, and a grading conductor 1 m outside the
  fence joined to the grid (common practice for a bonded fence),
- the neighbouring farm's paddock fence, 4 m east of the site fence and not
  bonded to anything (it floats and picks up a transferred potential),
- a ductile-iron water main crossing the yard at 1.2 m depth, not bonded
  (it floats at a transferred potential),
- check points at a breaker handle, a standpipe on the water main outside the
  fence and a lighting pole in the car park fed from the station (bonded),
- the car park round the lighting pole as a check area, and two profiles.

Files:

- kestrel-brook-fence.xlsx: the perimeter fence bonded to the grid.
- kestrel-brook-fence-unbonded.xlsx: the same with the perimeter fence not bonded.

Run from the repository root:  python examples/make_fence_example.py
"""

from __future__ import annotations

import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import openpyxl  # noqa: E402
from make_example import build as build_base  # noqa: E402

BONDED = HERE / "kestrel-brook-fence.xlsx"
UNBONDED = HERE / "kestrel-brook-fence-unbonded.xlsx"

#: Fence corners 1.5 m outside the grid (the grid spans x 0..72 m, y 0..40 m).
FENCE = [(-1.5, -1.5), (73.5, -1.5), (73.5, 41.5), (-1.5, 41.5)]
GATE = ((20.0, -1.5), (24.0, -1.5))


def _append(ws, values: dict[str, object]) -> None:
    cols = {str(c.value): c.column for c in ws[1]}
    row = ws.max_row + 1
    for header, v in values.items():
        ws.cell(row=row, column=cols[header], value=v)


def build(path: Path = BONDED, bonded: bool = True) -> Path:
    """Build the fence demo at ``path``; ``bonded`` says whether the fence is bonded to the grid."""
    build_base(path)
    wb = openpyxl.load_workbook(path)
    wb["Project"]["B2"].value = "Kestrel Brook 132/33 kV substation - fence and buried metal (demo)"
    post = {
        "Post spacing [m]": 2.5,
        "Post length [m]": 1.0,
        "Post diameter [mm]": 60,
        "Bonded": "yes" if bonded else "no",
    }
    ws = wb["Fences"]
    (x0, y0), gate_a, gate_b = FENCE[0], GATE[0], GATE[1]
    runs = [((x0, y0), gate_a), (gate_b, FENCE[1]), (FENCE[1], FENCE[2]), (FENCE[2], FENCE[3]), (FENCE[3], FENCE[0])]
    for a, b in runs:
        _append(ws, {"Label": "Perimeter", "X1 [m]": a[0], "Y1 [m]": a[1], "X2 [m]": b[0], "Y2 [m]": b[1], **post})
    _append(
        ws,
        {
            "Label": "Perimeter",
            "X1 [m]": gate_a[0],
            "Y1 [m]": gate_a[1],
            "X2 [m]": gate_b[0],
            "Y2 [m]": gate_b[1],
            **post,
            "Gate swing [m]": 4.0,
        },
    )
    # grading conductor 1 m outside the fence at the grid's depth, joined to the grid by four straight jumpers
    ring = [(-2.5, -2.5), (74.5, -2.5), (74.5, 42.5), (-2.5, 42.5), (-2.5, -2.5)]
    jumpers = [((30, 0), (30, -2.5)), ((30, 40), (30, 42.5)), ((0, 20), (-2.5, 20)), ((72, 17.5), (74.5, 17.5))]
    edges = [(f"Grading-{k + 1}", ring[k], ring[k + 1]) for k in range(4)]
    edges += [(f"Jumper-{k + 1}", a, b) for k, (a, b) in enumerate(jumpers)]
    for label, a, b in edges:
        _append(
            wb["Conductors"],
            {
                "Label": label,
                "X1 [m]": a[0],
                "Y1 [m]": a[1],
                "Depth1 [m]": 0.6,
                "X2 [m]": b[0],
                "Y2 [m]": b[1],
                "Depth2 [m]": 0.6,
                "Diameter [mm]": 12,
            },
        )
    _append(
        ws,
        {
            "Label": "Paddock",
            "X1 [m]": 77.5,
            "Y1 [m]": 20,
            "X2 [m]": 150,
            "Y2 [m]": 20,
            "Post spacing [m]": 3,
            "Post length [m]": 0.8,
            "Post diameter [mm]": 50,
            "Bonded": "no",
        },
    )
    _append(wb["Metal"], {"Group": "Water main", "Bonded to grid": "no"})
    _append(
        wb["Conductors"],
        {
            "Label": "Water main",
            "X1 [m]": -30,
            "Y1 [m]": 32,
            "Depth1 [m]": 1.2,
            "X2 [m]": 110,
            "Y2 [m]": 32,
            "Depth2 [m]": 1.2,
            "Diameter [mm]": 150,
            "Material": "steel 1020",
            "Group": "Water main",
        },
    )
    for label, x, y, group in [
        ("Breaker handle Q1", 33.0, 17.0, None),
        ("Standpipe on the water main", 95.0, 32.0, "Water main"),
        ("Car park lighting pole", 85.0, 8.0, None),
    ]:
        _append(wb["Check points"], {"Label": label, "X [m]": x, "Y [m]": y, "Group": group})
    for k, (x, y) in enumerate([(80, 2), (92, 2), (92, 14), (80, 14)], start=1):
        _append(wb["Check areas"], {"Area": "Car park", "Vertex": k, "X [m]": x, "Y [m]": y})
    _append(
        wb["Profiles"],
        {"Label": "South to north through the gate", "X1 [m]": 22, "Y1 [m]": -12, "X2 [m]": 22, "Y2 [m]": 52},
    )
    _append(wb["Profiles"], {"Label": "Along the water main", "X1 [m]": -20, "Y1 [m]": 32, "X2 [m]": 100, "Y2 [m]": 32})
    wb.save(path)
    return path


if __name__ == "__main__":
    print(build())
    print(build(UNBONDED, bonded=False))
