"""Sweeps: local pool, serial run and a Dask LocalCluster give the same results, and a
swept family of coaxial sections follows the closed form."""

from __future__ import annotations

import io
import math
import pickle

import pytest

import capbench as cb
from capbench import sweep
from capbench.geometry import PAIR, PLANAR, Annulus, Circle, Conductor, Fixture, Geometry

EPS0 = 8.8541878188e-12  # F/m, CODATA 2022


@pytest.fixture(scope="module")
def specs():
    return sweep.grid(
        "guarded_cell",
        electrode_radius="10 mm",
        guard_gap=["0.3 mm", "0.6 mm"],
        guard_width=["3 mm", "6 mm"],
        specimen_thickness="1 mm",
        specimen_eps_r=[2.0, 4.0],
    )


@pytest.fixture(scope="module")
def pool_results(specs):
    return sweep.solve_grid(specs, rtol=1e-5, max_workers=2, progress=False)


def test_grid_order_and_plain_data(specs):
    assert len(specs) == 8
    # itertools.product order over the axes as given: eps_r varies fastest
    assert [s["params"]["specimen_eps_r"] for s in specs[:2]] == [2.0, 4.0]
    assert specs[0]["params"]["guard_gap"] == pytest.approx(0.3e-3)
    assert specs[-1]["params"]["guard_width"] == pytest.approx(6e-3)
    for s in specs:
        assert s["kind"] == "guarded_cell"
        pickle.dumps(s)  # travels to workers as plain data
    fx = sweep.build(specs[3])
    assert fx == cb.guarded_cell("10 mm", "0.3 mm", "6 mm", "1 mm", specimen_eps_r=4.0)


def test_spec_round_trip_keeps_changed_permittivity():
    fx = cb.guarded_cell("10 mm", "0.3 mm", "3 mm", "1 mm", specimen_eps_r=2.0)
    changed = fx.with_permittivity("specimen", 7.5)
    assert sweep.build(sweep.spec_of(changed)).geometry == changed.geometry


def test_pool_equals_serial_and_direct(specs, pool_results):
    serial = sweep.solve_grid(specs[:3], rtol=1e-5, max_workers=1, progress=False)
    for a, b in zip(serial, pool_results[:3], strict=True):
        # the same computation in another process; the pool's workers run one BLAS
        # thread, this process may run several, so sums may round in another order:
        # equal to 1e-12, far below the solve's rtol of 1e-5
        assert a.capacitance.magnitude == pytest.approx(b.capacitance.magnitude, rel=1e-12)
    direct = cb.solve(sweep.build(specs[0]), rtol=1e-5)
    # in this process, the sweep's serial path is the plain solve: identical numbers
    assert serial[0].capacitance.to("F").magnitude == direct.terminal.real
    for r in pool_results:
        assert r.rel_error <= 1e-5 and r.n_dofs > 0 and r.capacitance.units == cb.ureg.F


def test_dask_local_cluster_equals_local_pool(specs, pool_results):
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(
        n_workers=1, threads_per_worker=2, processes=False, dashboard_address=None
    ) as cluster:
        dask_results = sweep.solve_grid(
            specs, rtol=1e-5, scheduler=cluster.scheduler_address, progress=False
        )
        # a connected Client is accepted too
        with distributed.Client(cluster) as client:
            again = sweep.solve_grid(specs[:2], rtol=1e-5, scheduler=client, progress=False)
    for a, b in zip(dask_results, pool_results, strict=True):
        assert a.spec == b.spec
        # Dask's threads here run in this process (BLAS threading may differ from the
        # pool's one thread per worker, see above): equal to 1e-12
        assert a.capacitance.magnitude == pytest.approx(b.capacitance.magnitude, rel=1e-12)
        assert a.rel_error == pytest.approx(b.rel_error, rel=1e-6, abs=1e-15)
    for a, b in zip(again, dask_results[:2], strict=True):
        assert a.capacitance == b.capacitance  # same process, same cluster: identical


def coax(b_over_a: float) -> Fixture:
    a = 1e-3
    geom = Geometry(
        PLANAR,
        (
            Conductor("inner", Circle(0.0, 0.0, a)),
            Conductor("outer", Annulus(0.0, 0.0, b_over_a * a, 1.2 * b_over_a * a)),
        ),
    )
    return Fixture(geom, high="inner", low="outer", connection=PAIR, name=f"coax {b_over_a}")


def test_swept_coaxial_sections_follow_closed_form():
    # coaxial cylinders: C' = 2 pi eps0 / ln(b/a) per metre (textbook closed form)
    ratios = [1.5, 2.0, 4.0]
    results = sweep.solve_fixtures([coax(r) for r in ratios], rtol=1e-5, progress=False)
    for r, res in zip(ratios, results, strict=True):
        assert res.spec["kind"] == "custom"
        assert res.capacitance.to("F/m").magnitude == pytest.approx(
            2 * math.pi * EPS0 / math.log(r), rel=1e-5
        )


def add_one(x):
    if x == 3:
        raise ValueError("three is not allowed here")
    return x + 1


def test_run_progress_and_errors():
    calls = []
    out = sweep.run(add_one, [0, 1, 2], max_workers=2, progress=lambda d, n: calls.append((d, n)))
    assert out == [1, 2, 3]
    assert calls[0] == (0, 3) and calls[-1] == (3, 3) and len(calls) == 4
    kept = sweep.run(add_one, [2, 3], max_workers=2, progress=False, on_error="keep")
    assert kept[0] == 3 and isinstance(kept[1], ValueError)
    with pytest.raises(sweep.TaskFailed, match="three is not allowed"):
        sweep.run(add_one, [2, 3], max_workers=2, progress=False)
    stream = io.StringIO()
    bar = sweep.TerminalBar("demo", stream=stream)
    for i in range(5):
        bar(i, 4)
    assert "demo 4/4" in stream.getvalue()


def test_sweep_refuses_bad_input():
    with pytest.raises(cb.InputError, match="max_workers"):
        sweep.run(add_one, [1], max_workers=0)
    with pytest.raises(cb.InputError, match="scheduler"):
        sweep.run(add_one, [1], scheduler=42)
    with pytest.raises(cb.InputError, match="on_error"):
        sweep.run(add_one, [1], on_error="ignore")
    with pytest.raises(cb.InputError, match="progress"):
        sweep.run(add_one, [1], progress="yes")
    with pytest.raises(cb.InputError, match="kind"):
        sweep.grid("teapot", radius="1 mm")
    with pytest.raises(cb.InputError, match="empty"):
        sweep.grid("parallel_discs", radius=[], gap="1 mm")
    with pytest.raises(cb.InputError, match="rtol"):
        sweep.solve_grid([], rtol=0.5)
    with pytest.raises(cb.InputError, match="Fixture"):
        sweep.spec_of("not a fixture")
    with pytest.raises(cb.InputError, match="kind"):
        sweep.build({"params": {}})


def test_unreachable_scheduler_is_a_clear_error(monkeypatch):
    pytest.importorskip("distributed")
    monkeypatch.setattr(sweep, "CONNECT_TIMEOUT", 2.0)
    with pytest.raises(sweep.ClusterError, match="no Dask scheduler answered") as info:
        sweep.run(add_one, [1], scheduler="tcp://127.0.0.1:9", progress=False)
    assert isinstance(info.value, ConnectionError) and isinstance(info.value, cb.CapbenchError)
    assert pickle.loads(pickle.dumps(info.value)).address == "tcp://127.0.0.1:9"
