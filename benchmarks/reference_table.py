"""Error reached and time taken on every outside reference case of the field engine.

    python benchmarks/reference_table.py [--rtol 1e-6 1e-8]

Reads tests/cases/field_cases.json (values from tests/references.py: Love's equation,
closed forms, the image series) plus the Thompson-Lampard sections, solves each at the
given tolerances in this process (warm imports, cold meshes), and prints the true error,
the estimated error, the unknowns and the wall time.
"""

from __future__ import annotations

import argparse
import math
import sys
import time
import warnings
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))

import references as ref  # noqa: E402
from conftest import field_cases  # noqa: E402
from test_reference_field import build  # noqa: E402

import capbench as cb  # noqa: E402
from capbench.geometry import DIRECT, Fixture  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--rtol", type=float, nargs="+", default=[1e-6, 1e-8])
    args = ap.parse_args(argv)
    warnings.simplefilter("ignore")
    cb.solve(cb.parallel_discs(radius="20 mm", gap="3 mm"), rtol=1e-4)  # warm up imports
    print(
        f"{'case':30s} {'rtol':>6s} {'true error':>10s} {'estimate':>9s} "
        f"{'unknowns':>9s} {'time/s':>7s}"
    )
    for rtol in args.rtol:
        for case in field_cases():
            cb.clear_caches()
            t0 = time.perf_counter()
            sol = cb.solve(build(case), rtol=rtol)
            s = time.perf_counter() - t0
            err = abs(sol.terminal.real - case["capacitance"]) / case["capacitance"]
            print(
                f"{case['id']:30s} {rtol:6.0e} {err:10.1e} {sol.rel_error:9.1e} "
                f"{sol.n_dofs:9,} {s:7.3f}",
                flush=True,
            )
        for name, kw in (
            ("thompson-lampard-square", {}),
            ("thompson-lampard-20x13", {"height": "13 mm"}),
        ):
            cb.clear_caches()
            fx = cb.four_electrode_section(width="20 mm", gap="0.02 mm", **kw)
            t0 = time.perf_counter()
            s1 = cb.solve(fx, rtol=rtol)
            s2 = cb.solve(Fixture(fx.geometry, high="b", low="d", connection=DIRECT), rtol=rtol)
            s = time.perf_counter() - t0
            resid = abs(
                math.exp(-math.pi * s1.terminal.real / ref.EPS0)
                + math.exp(-math.pi * s2.terminal.real / ref.EPS0)
                - 1
            )
            print(
                f"{name:30s} {rtol:6.0e} {resid:10.1e} {max(s1.rel_error, s2.rel_error):9.1e} "
                f"{s1.n_dofs + s2.n_dofs:9,} {s:7.3f}  (residual of the theorem)",
                flush=True,
            )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
