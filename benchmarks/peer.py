"""capbench beside a general-purpose hp finite-element library on the same fixtures.

    make bench-peer            (builds .venv-peer with NGSolve, then runs this)
    python benchmarks/peer.py [--targets 1e-4 1e-6 1e-8] [--repeats 3]

Both sides certify what they report: capbench by its own error estimate
(``sol.rel_error <= target``), the peer by its p-ladder (two successive element degrees
agree to the target); see benchmarks/peer_ngsolve.py for how the peer is set up (hp mesh
graded geometrically toward every edge, static condensation, sparse Cholesky, an exact
Kelvin inversion of open space). The peer's geometric layer count is picked per target as
the fastest of a few that certify, which favours the peer. Times are medians of
``--repeats`` warm runs in one process per side, one BLAS thread, meshing and assembly
included; both run here, side by side, in one invocation. The ratio is capbench's time
over the peer's (below 1: capbench faster).

References: Love's integral equation for the discs (tests/references.py); for the guarded
cell, which has no closed form, a capbench solve at rtol 1e-9 (its own estimate).
A star after an error marks an estimate that did not bound the true error.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import time
import warnings
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT / "tests"))

import references as ref  # noqa: E402

import capbench as cb  # noqa: E402

PEER_PYTHON = ROOT / ".venv-peer" / "bin" / "python"
A = 25.0  # disc radius, mm


def _discs(kappa: float) -> dict:
    h = kappa * A / 2
    return {
        "id": f"discs d/a = {kappa:g}",
        "R": 1.5 * A,
        "antisymmetric": True,  # discs at +V and -V: solve z >= 0 with u = 0 on z = 0
        "maxh": A / 4,
        "factor": 0.15,
        "cells": [{"name": "gap", "box": [0, 0, A, h], "eps": 1.0}],
        "electrodes": {"disc": [[(0, h), (A, h)]]},
        "corners": [(A, h)],
        "high": "disc",
        "low": None,
        "scale": 0.5e-3,  # C = Q / (2V); lengths in mm
        "fixture": lambda: cb.parallel_discs(radius=f"{A} mm", gap=f"{kappa * A} mm"),
        "reference": lambda: ref.love_discs(kappa) * ref.EPS0 * A * 1e-3,
    }


def _guarded() -> dict:
    # README's guarded cell: 25 mm electrode, 0.5 mm gap, 10 mm guard, 2 mm of eps 4.
    r1, g, w, t = 25.0, 0.5, 10.0, 2.0
    ro = r1 + g + w
    return {
        "id": "guarded cell",
        "R": 1.5 * ro,
        "antisymmetric": False,
        "maxh": ro / 4,
        "factor": 0.15,
        "cells": [
            {"name": "s1", "box": [0, 0, r1, t], "eps": 4.0},
            {"name": "s2", "box": [r1, 0, r1 + g, t], "eps": 4.0},
            {"name": "s3", "box": [r1 + g, 0, ro, t], "eps": 4.0},
        ],
        "electrodes": {
            "unguarded": [[(0, t), (ro, t)]],
            "guarded": [[(0, 0), (r1, 0)]],
            "guard": [[(r1 + g, 0), (ro, 0)]],
        },
        "corners": [(r1, 0), (r1 + g, 0), (ro, 0), (ro, t)],
        "high": "unguarded",
        "low": "guarded",
        "scale": 1e-3,
        "fixture": lambda: cb.guarded_cell(
            f"{r1} mm", f"{g} mm", f"{w} mm", f"{t} mm", specimen_eps_r=4.0
        ),
        "reference": lambda: (
            cb.solve(
                cb.guarded_cell(f"{r1} mm", f"{g} mm", f"{w} mm", f"{t} mm", specimen_eps_r=4.0),
                rtol=1e-9,
            ).terminal.real
        ),
    }


def _clear() -> None:
    cb.clear_caches()


def _capbench(case: dict, target: float, repeats: int) -> dict:
    runs = []
    for _ in range(repeats):
        _clear()
        t0 = time.perf_counter()
        sol = cb.solve(case["fixture"](), rtol=target)
        runs.append((time.perf_counter() - t0, sol))
    runs.sort(key=lambda r: r[0])
    t, sol = runs[len(runs) // 2]
    return {"C": sol.terminal.real, "estimate": sol.rel_error, "unknowns": sol.n_dofs, "time": t}


def _peer(cases: list[dict], targets: list[float], repeats: int, levels: list[int]) -> dict:
    job = {
        "cases": [{k: v for k, v in c.items() if not callable(v)} for c in cases],
        "targets": targets,
        "repeats": repeats,
        "levels": levels,
    }
    proc = subprocess.run(
        [str(PEER_PYTHON), str(HERE / "peer_ngsolve.py")],
        input=json.dumps(job),
        capture_output=True,
        text=True,
        check=True,
    )
    out = {}
    for line in proc.stdout.splitlines():
        d = json.loads(line)
        out[(d["case"], d["target"])] = d
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--targets", type=float, nargs="+", default=[1e-4, 1e-6, 1e-8])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--levels", type=int, nargs="+", default=[4, 6, 8, 10])
    args = ap.parse_args(argv)
    if not PEER_PYTHON.exists():
        print(f"no peer environment at {PEER_PYTHON}: run `make bench-peer`", file=sys.stderr)
        return 2
    warnings.simplefilter("ignore")
    cases = [_discs(0.1), _discs(1.0), _guarded()]
    t0 = time.perf_counter()
    peer = _peer(cases, args.targets, args.repeats, args.levels)
    peer_wall = time.perf_counter() - t0
    cb.solve(cb.parallel_discs(radius="20 mm", gap="3 mm"), rtol=1e-4)  # warm imports
    print(
        f"{'case':16s} {'target':>6s} | {'peer: unknowns':>14s} {'time':>8s} {'error':>9s} "
        f"| {'capbench: unknowns':>18s} {'time':>8s} {'error':>9s} "
        f"| {'time ratio':>10s} {'unknowns ratio':>14s}"
    )
    ratios = []
    misses = [0, 0]
    for case in cases:
        truth = case["reference"]()
        for target in args.targets:
            p = peer.get((case["id"], target), {"certified": False})
            c = _capbench(case, target, args.repeats)
            c_err = abs(c["C"] - truth) / truth
            if not p.get("certified"):
                print(f"{case['id']:16s} {target:6.0e} | peer did not certify")
                continue
            p_err = abs(p["C"] - truth) / truth
            ratio = c["time"] / p["time"]
            ratios.append(ratio)
            p_star = "*" if p_err > p["estimate"] else " "
            c_star = "*" if c_err > c["estimate"] else " "
            misses[0] += p_star == "*"
            misses[1] += c_star == "*"
            print(
                f"{case['id']:16s} {target:6.0e} | {p['unknowns']:14,} "
                f"{p['time'] * 1e3:6.0f}ms {p_err:8.1e}{p_star} | {c['unknowns']:18,} "
                f"{c['time'] * 1e3:6.0f}ms {c_err:8.1e}{c_star} "
                f"| {ratio:9.1f}x {c['unknowns'] / p['unknowns']:13.1f}x",
                flush=True,
            )
    if ratios:
        print(
            f"capbench/peer time: median {statistics.median(ratios):.1f}x, "
            f"range {min(ratios):.1f}x to {max(ratios):.1f}x (peer side {peer_wall:.0f} s wall)"
        )
        print(f"estimates below the true error: peer {misses[0]}, capbench {misses[1]}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
