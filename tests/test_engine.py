"""Runs on a Dask cluster equal the local ones; a dying worker loses nothing; progress output."""

from __future__ import annotations

import io
import json
import logging
import sys

import numpy as np
import pytest

from groundcalc.cli import main
from groundcalc.errors import InputError
from groundcalc.io.uncertainty import UncertainQuantity
from groundcalc.model import GridSpec, Soil
from groundcalc.studies.engine import Engine, Progress
from groundcalc.studies.uncertainty import run_uncertainty, solve_per_volt

from .conftest import make_design, write_workbook

distributed = pytest.importorskip("distributed")

SOIL = {"Model": "uniform", "Upper resistivity [ohm*m]": 400}
COARSE = {"Segment length [m]": 4, "Raster spacing [m]": 2, "Margin [m]": 2}


@pytest.fixture(scope="module")
def cluster():
    # an in-process cluster: two single-threaded workers, no dashboard (the scheduler address is inproc://)
    with (
        distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None) as c,
        distributed.Client(c) as client,
    ):
        yield c, client


def _tiny(rho=400.0):
    return make_design(grids=[GridSpec("G", 0, 0, 8, 8, 2, 2, 0.5, 0.01)], segment=4.0, spacing=2.0, margin=2.0,
                       soil=Soil("uniform", rho))  # fmt: skip


def _designs(tmp_path):
    a = write_workbook(tmp_path / "a.xlsx", soil=SOIL, grids=[["G", 0, 0, 8, 8, 2, 2, 0.5, 10]], settings=COARSE)
    b = write_workbook(tmp_path / "b.xlsx", soil=SOIL, grids=[["G", 0, 0, 8, 8, 3, 3, 0.5, 10]], settings=COARSE)
    return a, b


def test_compare_and_sweep_on_the_cluster_equal_the_local_runs(tmp_path, cluster):
    c, _ = cluster
    a, b = _designs(tmp_path)
    for name, args in (
        ("compare", ["compare", str(a), str(b), str(tmp_path / "missing.xlsx")]),
        ("sweep", ["sweep", str(a), "--spacing", "8", "--rods", "0,4"]),
    ):
        local, dist = tmp_path / f"{name}-local.json", tmp_path / f"{name}-dask.json"
        code_local = main(args + ["--jobs", "1", "--json", str(local), "--quiet"])
        code_dist = main(args + ["--scheduler", c.scheduler_address, "--json", str(dist), "--quiet"])
        assert code_local == code_dist
        d_local, d_dist = json.loads(local.read_text()), json.loads(dist.read_text())
        assert d_dist["designs"] == d_local["designs"]  # every number to the last digit, in the same order
        assert len(d_local["designs"]) == (3 if name == "compare" else 2)


def test_missing_workbook_error_is_the_same_on_the_cluster(tmp_path, cluster):
    c, _ = cluster
    a, _ = _designs(tmp_path)
    out = tmp_path / "c.json"
    assert main(["compare", str(a), str(tmp_path / "gone.xlsx"), "--scheduler", c.scheduler_address,
                 "--json", str(out), "--quiet"]) == 2  # fmt: skip
    err = {d["name"]: d.get("error") for d in json.loads(out.read_text())["designs"]}
    assert err["a"] is None and "does not exist" in err["gone"]


def test_uncertainty_on_the_cluster_equals_the_local_run(cluster):
    _, client = cluster
    q = UncertainQuantity("upper resistivity", "Upper resistivity", "ohm*m", 300.0, 500.0, "uniform", 0, np.inf, 2)
    local = run_uncertainty(_tiny(), (q,), samples=4, seed=2)
    dist = run_uncertainty(_tiny(), (q,), samples=4, seed=2, engine=Engine(client=client))
    assert dist.solves == local.solves == 5
    for key, col in local.cases[0].samples.items():
        assert np.array_equal(dist.cases[0].samples[key], col), key
    assert "Dask" in dist.where


def test_a_worker_that_dies_mid_run_loses_nothing(cluster):
    c, client = cluster
    designs = [_tiny(rho) for rho in (100.0, 200.0, 300.0, 400.0, 500.0, 600.0)]
    expected = [solve_per_volt(d) for d in designs]
    killed = []

    def kill_a_busy_worker(index, result):
        if killed:
            return
        busy = [w for w, tasks in client.processing().items() if tasks] or list(client.scheduler_info()["workers"])
        name = next(n for n, w in c.workers.items() if w.address == busy[0])
        killed.append(name)
        c.sync(c.workers[name].close)

    got = Engine(client=client).map(solve_per_volt, designs, "soil samples", on_result=kill_a_busy_worker)
    assert killed  # a worker was really closed while tasks were running
    assert [g.resistance_ohm for g in got] == [e.resistance_ohm for e in expected]
    assert [g.touch_per_v for g in got] == [e.touch_per_v for e in expected]


def test_unreachable_scheduler_and_missing_packages_are_clear(monkeypatch):
    with pytest.raises(InputError, match="no Dask scheduler answers"):
        Engine(scheduler="tcp://127.0.0.1:9", timeout_s=1.0).map(solve_per_volt, [_tiny()], "designs")
    monkeypatch.setitem(sys.modules, "distributed", None)
    with pytest.raises(InputError, match=r"groundcalc\[cluster\]"):
        Engine(scheduler="tcp://127.0.0.1:9").map(solve_per_volt, [_tiny()], "designs")


class _Tty(io.StringIO):
    def isatty(self):
        return True


def test_progress_bar_on_a_terminal_plain_lines_otherwise_nothing_when_quiet(caplog):
    logger = logging.getLogger("groundcalc")
    logger.setLevel(logging.INFO)
    tty = _Tty()
    with Progress("layouts", 3, stream=tty) as p:
        for _ in range(3):
            p.update()
    assert "layouts" in tty.getvalue() and "3/3" in tty.getvalue()  # tqdm's bar
    with caplog.at_level(logging.INFO, logger="groundcalc"):
        with Progress("designs", 2, stream=io.StringIO()) as p:
            p.update()
            p.update()
    assert any("designs: 2/2 done" in r.getMessage() for r in caplog.records)
    logger.setLevel(logging.WARNING)  # --quiet
    quiet = _Tty()
    with Progress("designs", 2, stream=quiet) as p:
        p.update(2)
    assert quiet.getvalue() == "" and not p.enabled


def test_engine_results_keep_the_order_of_the_items():
    rhos = [300.0, 100.0, 200.0]
    got = Engine(jobs=1).map(solve_per_volt, [_tiny(r) for r in rhos], "soil samples")
    # uniform soil: Rg is proportional to rho (the kernel is), so the order shows in the values
    assert [g.resistance_ohm / r for g, r in zip(got, rhos, strict=True)] == pytest.approx(
        [got[0].resistance_ohm / 300] * 3
    )
    assert got[1].resistance_ohm < got[2].resistance_ohm < got[0].resistance_ohm
