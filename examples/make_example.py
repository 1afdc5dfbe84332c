"""Write the bundled demo designs in examples/.

The scenario is invented for demonstration: "Kestrel Brook" is a made-up
132/33 kV substation with made-up soil and fault data.

- kestrel-brook.xlsx: the base design.
- kestrel-brook-closer.xlsx: the same site with a closer-meshed switchyard grid (for compare).
- kestrel-brook-variants.xlsx: the base design with a Variants sheet (dry season, future
  fault level, thinner crushed rock).
- kestrel-brook-uncertainty.xlsx: the base design with an Uncertainty sheet (ranges of the
  fault current, split factor, clearing time and crushed-rock resistivity).

Run from the repository root:  python examples/make_example.py
"""

from __future__ import annotations

from pathlib import Path

from groundcalc.io.template import build_template

HERE = Path(__file__).resolve().parent
OUT = HERE / "kestrel-brook.xlsx"


def fill_keyvalue(ws, values: dict[str, object]) -> None:
    """Put values beside the quantity names already in the template sheet."""
    for row in ws.iter_rows(min_row=2):
        name = str(row[0].value)
        if name in values:
            row[1].value = values.pop(name)
    if values:
        raise KeyError(f"not in template: {sorted(values)}")


def build(path: Path = OUT, yard=(9, 11), variants=(), uncertainty=()) -> Path:
    """Build the demo workbook at ``path`` (switchyard conductor counts, variant rows, uncertainty rows)."""
    wb = build_template()
    fill_keyvalue(
        wb["Project"],
        {
            "Project": "Kestrel Brook 132/33 kV substation - grounding study (demo)",
            "Site": "Kestrel Brook (fictional site)",
            "Prepared by": "groundcalc example",
            "Revision": "A",
        },
    )
    fill_keyvalue(
        wb["Soil"],
        {
            "Model": "uniform",
            "Upper resistivity [ohm*m]": 150,
            "Surface layer resistivity [ohm*m]": 3000,
            "Surface layer thickness [m]": 0.15,
        },
    )
    fill_keyvalue(
        wb["Fault"],
        {
            "Fault current [A]": 8000,
            "Split factor": 0.45,
            "X/R ratio": 15,
            "Fault duration [s]": 0.5,
            "Shock duration [s]": 0.5,
            "Body weight [kg]": 70,
            "Frequency [Hz]": 50,
        },
    )
    fill_keyvalue(wb["Settings"], {"Segment length [m]": 1.0})
    # Main switchyard grid: 60 m x 40 m, 6 m x 5 m meshes.
    wb["Grids"].append(["Yard", 0, 0, 60, 40, yard[0], yard[1], 0.6, 12])
    # Control building extension on the east side, drawn conductor by conductor.
    ws = wb["Conductors"]
    for row in [
        ["Bldg-S", 60, 10, 0.6, 72, 10, 0.6, 12],
        ["Bldg-N", 60, 25, 0.6, 72, 25, 0.6, 12],
        ["Bldg-E", 72, 10, 0.6, 72, 25, 0.6, 12],
        ["Bldg-M", 66, 10, 0.6, 66, 25, 0.6, 12],
        ["Bldg-C", 60, 17.5, 0.6, 72, 17.5, 0.6, 12],
    ]:
        ws.append(row)
    # Rods at the corners and along the perimeter, tops at grid depth.
    ws = wb["Rods"]
    corners = [(0, 0), (60, 0), (60, 40), (0, 40), (72, 10), (72, 25)]
    sides = [(30, 0), (30, 40), (0, 20)]
    for k, (x, y) in enumerate(corners + sides, start=1):
        ws.append([f"Rod-{k}", x, y, 0.6, 3.0, 16])
    ws = wb["Variants"]
    cols = {str(c.value): c.column for c in ws[1]}
    for name, changes in variants:
        row = ws.max_row + 1
        ws.cell(row=row, column=cols["Variant"], value=name)
        for header, v in changes.items():
            ws.cell(row=row, column=cols[header], value=v)
    for row in uncertainty:
        wb["Uncertainty"].append(list(row))
    wb.save(path)
    return path


VARIANTS = (
    ("dry season", {"Upper resistivity [ohm*m]": 300}),
    ("future fault level", {"Fault current [A]": 12000}),
    ("thin crushed rock", {"Surface layer thickness [m]": 0.08}),
)

UNCERTAINTY = (
    ("Fault current [kA]", 7.0, 9.0, "uniform"),
    ("Split factor", 0.35, 0.55, "normal"),
    ("Fault duration [s]", 0.4, 0.6, "uniform"),
    ("Surface layer resistivity [ohm*m]", 2000, 4500, "lognormal"),
)


if __name__ == "__main__":
    print(build())
    print(build(HERE / "kestrel-brook-closer.xlsx", yard=(11, 13)))
    print(build(HERE / "kestrel-brook-variants.xlsx", variants=VARIANTS))
    print(build(HERE / "kestrel-brook-uncertainty.xlsx", uncertainty=UNCERTAINTY))
