"""The bundled example's results stay as they were when they were pinned.

``tests/data/kestrel-brook-pinned.json`` holds the JSON values of
``groundcalc run examples/kestrel-brook.xlsx`` at the time they were pinned.
Refactoring must not move them; a physics change that does must regenerate the
file with ``python tests/data/pin_example.py`` and say why in its commit.
This is a regression guard, not an outside check: the outside checks of the
same pipeline are in the other test modules.
"""

import json

import pytest

from groundcalc.analysis import analyse
from groundcalc.io.outputs import results_to_dict
from groundcalc.io.workbook import read_design

from .conftest import ROOT

PINNED = json.loads((ROOT / "tests" / "data" / "kestrel-brook-pinned.json").read_text())


@pytest.fixture(scope="module")
def current():
    results = analyse(read_design(ROOT / "examples" / "kestrel-brook.xlsx"))
    return results_to_dict(results, ROOT / "examples" / "kestrel-brook.xlsx")


def _compare(pinned, now, path=""):
    if isinstance(pinned, dict):
        assert set(pinned) <= set(now), f"{path}: keys missing {set(pinned) - set(now)}"
        for k, v in pinned.items():
            _compare(v, now[k], f"{path}.{k}")
    elif isinstance(pinned, list):
        assert len(pinned) == len(now), path
        for i, (a, b) in enumerate(zip(pinned, now, strict=True)):
            _compare(a, b, f"{path}[{i}]")
    elif isinstance(pinned, float):
        # the report prints four significant figures; 1e-9 leaves room only for round-off
        assert now == pytest.approx(pinned, rel=1e-9, abs=1e-9), path
    else:
        assert now == pinned, path


def test_example_results_equal_the_pinned_values(current):
    _compare(PINNED, current)
