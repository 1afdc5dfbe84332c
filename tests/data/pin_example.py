"""Regenerate ``kestrel-brook-pinned.json`` from the current code.

Run from the repository root: ``python tests/data/pin_example.py``. Only do so
for a change that is meant to move the example's results, and say why in the
commit message.
"""

import json
from pathlib import Path

from groundcalc.analysis import analyse
from groundcalc.io.outputs import results_to_dict
from groundcalc.io.workbook import read_design

ROOT = Path(__file__).resolve().parents[2]
KEYS = [
    "grid_resistance_ohm",
    "decrement_factor",
    "grid_current_a",
    "gpr_v",
    "max_touch_v",
    "max_step_v",
    "surface_layer_factor_cs",
    "touch_limit_v",
    "step_limit_v",
    "touch_ok",
    "step_ok",
    "passed",
    "governing",
    "touch_location",
    "step_location",
    "segment_count",
    "conductor_count",
    "total_conductor_length_m",
    "rod_count",
    "total_rod_length_m",
]

if __name__ == "__main__":
    path = ROOT / "examples" / "kestrel-brook.xlsx"
    d = results_to_dict(analyse(read_design(path)), path)
    pin = {k: d[k] for k in KEYS}
    settings = ("segment_length_m", "raster_spacing_m", "raster_points", "margin_m")
    pin["settings"] = {k: d["settings"][k] for k in settings}
    pin["closed_form"] = d["closed_form"]
    (ROOT / "tests" / "data" / "kestrel-brook-pinned.json").write_text(json.dumps(pin, indent=2) + "\n")
