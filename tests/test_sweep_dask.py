"""Sweeps on a Dask cluster started by the test give the tables of the local run."""

import json

import pytest
from sweep_helpers import tiny_sweep

from thinfilm.input.errors import InputError
from thinfilm.runs.sweep import run_sweep

distributed = pytest.importorskip("distributed")
pytestmark = pytest.mark.filterwarnings("ignore::thinfilm.input.errors.ThinFilmWarning")


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as lc:
        yield lc.scheduler_address


@pytest.mark.parametrize("order", ["independent", "heating"])
def test_dask_sweep_matches_the_local_sweep(tmp_path, cluster, order):
    sc = tiny_sweep(order=order, sizes=(6, 8), temps=("1.5 K", "3.5 K"), samples=100)
    local = run_sweep(sc, tmp_path / "local", workers=1, progress=False)
    remote = run_sweep(sc, tmp_path / "dask", cluster=cluster, progress=False)
    for name in ("observables.csv", "tc.json"):
        assert (local / name).read_bytes() == (remote / name).read_bytes()
    how = json.loads((remote / "manifest.json").read_text())["executor"]
    assert how["kind"] == "dask" and how["address"] == cluster


def test_dask_resume_continues_a_local_sweep(tmp_path, cluster):
    sc = tiny_sweep(sizes=(6,), temps=("1.5 K", "2.5 K", "3.5 K"), samples=100)
    ref = run_sweep(sc, tmp_path / "ref", workers=1, progress=False)
    out = run_sweep(sc, tmp_path / "mix", workers=1, progress=False)
    (out / "points" / "L6_T2.500K" / "point.json").unlink()
    run_sweep(sc, out, resume=True, cluster=cluster, progress=False)
    assert (ref / "observables.csv").read_bytes() == (out / "observables.csv").read_bytes()


def test_unreachable_scheduler_is_a_clear_error(tmp_path, monkeypatch):
    monkeypatch.setattr("thinfilm.runs.sweep.CONNECT_TIMEOUT_S", 1)
    with pytest.raises(InputError, match=r"tcp://127\.0\.0\.1:9.*cannot reach a Dask scheduler"):
        run_sweep(tiny_sweep(sizes=(6,)), tmp_path / "x", cluster="tcp://127.0.0.1:9",
                  progress=False)


@pytest.mark.slow
def test_dask_process_workers_match_the_local_sweep(tmp_path):
    sc = tiny_sweep(sizes=(6,), temps=("1.5 K", "3.5 K"), samples=100)
    local = run_sweep(sc, tmp_path / "local", workers=1, progress=False)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as lc:
        remote = run_sweep(sc, tmp_path / "dask", cluster=lc.scheduler_address,
                           progress=False)
    assert (local / "observables.csv").read_bytes() == (remote / "observables.csv").read_bytes()
