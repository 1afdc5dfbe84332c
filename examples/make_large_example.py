"""Write the large demo workbook: a generating-station switchyard with unequal conductor spacing.

- kestrel-brook-large.xlsx: a 180 m x 140 m yard whose conductors are closer toward the edges
  (cosine spacing, common practice to even out the mesh voltages), a skewed transformer bay on
  the east side, 28 perimeter rods, in two-layer soil. About 9,700 segments at 1 m: solved by
  the matrix-free operator (no matrix stored).

The site, names and data are invented for the demo. Run from the repository root:

    python examples/make_large_example.py
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from make_example import fill_keyvalue  # noqa: E402

from groundcalc.io.template import build_template  # noqa: E402

HERE = Path(__file__).resolve().parent
OUT = HERE / "kestrel-brook-large.xlsx"
DEPTH_M = 0.6
DIAMETER_MM = 12


def edge_compressed(width_m: float, count: int) -> np.ndarray:
    """Conductor positions closer toward both edges (70 % cosine, 30 % even spacing)."""
    t = np.linspace(0.0, 1.0, count)
    return np.round(width_m * (0.7 * (0.5 - 0.5 * np.cos(np.pi * t)) + 0.3 * t), 2)


def build(path: Path = OUT) -> Path:
    wb = build_template()
    fill_keyvalue(
        wb["Project"],
        {
            "Project": "Kestrel Brook generating station switchyard - grounding study (demo)",
            "Site": "Kestrel Brook (fictional site)",
            "Prepared by": "groundcalc example",
            "Revision": "A",
        },
    )
    fill_keyvalue(
        wb["Soil"],
        {
            "Model": "two-layer",
            "Upper resistivity [ohm*m]": 300,
            "Upper thickness [m]": 2.5,
            "Lower resistivity [ohm*m]": 60,
            "Surface layer resistivity [ohm*m]": 3000,
            "Surface layer thickness [m]": 0.15,
        },
    )
    fill_keyvalue(
        wb["Fault"],
        {
            "Fault current [A]": 25000,
            "Split factor": 0.4,
            "X/R ratio": 20,
            "Fault duration [s]": 0.5,
            "Shock duration [s]": 0.5,
            "Body weight [kg]": 70,
            "Frequency [Hz]": 50,
        },
    )
    fill_keyvalue(wb["Settings"], {"Segment length [m]": 1.0})
    ws = wb["Conductors"]
    width, height = 180.0, 140.0
    for k, x in enumerate(edge_compressed(width, 31), start=1):
        ws.append([f"Yard-X{k}", float(x), 0.0, DEPTH_M, float(x), height, DEPTH_M, DIAMETER_MM])
    for k, y in enumerate(edge_compressed(height, 25), start=1):
        ws.append([f"Yard-Y{k}", 0.0, float(y), DEPTH_M, width, float(y), DEPTH_M, DIAMETER_MM])
    # transformer bay east of the yard, its bays skewed by 10 m over its 40 m depth
    for k, y in enumerate((30.0, 40.0, 50.0, 60.0, 70.0), start=1):
        ws.append([f"Bay-{k}", width, y, DEPTH_M, width + 40.0, y + 10.0, DEPTH_M, DIAMETER_MM])
    for k, x in enumerate((10.0, 20.0, 30.0, 40.0), start=1):
        ws.append([f"Bay-T{k}", width + x, 30.0 + x / 4.0, DEPTH_M, width + x, 70.0 + x / 4.0, DEPTH_M, DIAMETER_MM])
    ws = wb["Rods"]
    spots = [(width * f, 0.0) for f in np.linspace(0.0, 1.0, 8)[:-1]]
    spots += [(width, height * f) for f in np.linspace(0.0, 1.0, 8)[:-1]]
    spots += [(width * (1 - f), height) for f in np.linspace(0.0, 1.0, 8)[:-1]]
    spots += [(0.0, height * (1 - f)) for f in np.linspace(0.0, 1.0, 8)[:-1]]
    for k, (x, y) in enumerate(spots, start=1):
        ws.append([f"Rod-{k}", round(float(x), 2), round(float(y), 2), DEPTH_M, 3.0, 16])
    wb.save(path)
    return path


if __name__ == "__main__":
    print(build())
