"""Wall time of FEM-corrected extractions, side by side with the solves they are made of.

Prints, for the Quillfield guarded cell at rtol 1e-6: one real solve, one complex solve on
the default BLAS threads and on one thread (the ratio is why capbench.extract limits
complex factorisations to one thread), and contacting extractions of growing scope, each
as a multiple of one real solve measured in the same run. Meshes are built once first
(warm caches), as in a session that extracts several specimens on one fixture.

Then the two demo measurements that extract from solves of their own cells (the
micrometer file QF-PS-07 and the two-fluid file QF-PMMA-02 of fixtures/quillfield/), each
as a multiple of one solve of that cell, with the share of the time spent on the
dimension derivatives (central differences of re-meshed solves) and on the Newton solves.

    python benchmarks/extraction_speed.py            # both parts
    python benchmarks/extraction_speed.py --demos    # the demo files only
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

from threadpoolctl import threadpool_limits

import capbench as cb
from capbench import extract as X
from capbench import files
from capbench import uncertainty as U
from capbench.capacitance import SOLUTIONS


def timed(fn, repeat: int = 3) -> float:
    """Best of ``repeat`` runs in a warm process (meshes kept), every solve done again
    (the solution memo is emptied before each run)."""
    best = float("inf")
    for _ in range(repeat):
        SOLUTIONS.clear()
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> None:
    fx = cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="0.5 mm",
        guard_width="10 mm",
        specimen_thickness="2 mm",
        unguarded_radius="50 mm",
    )
    lossy = fx.with_permittivity("specimen", complex(2.3, -7e-4))
    cb.solve(fx, rtol=1e-6)  # warm the mesh and assembly caches
    real = timed(lambda: cb.solve(fx.with_permittivity("specimen", 2.31), rtol=1e-6))
    cplx = timed(lambda: cb.solve(lossy, rtol=1e-6), repeat=1)
    with threadpool_limits(limits=1, user_api="blas"):
        cplx1 = timed(lambda: cb.solve(lossy, rtol=1e-6))
    sol = cb.solve(lossy, rtol=1e-6)
    c, d = sol.terminal.real, sol.dissipation_factor
    freqs = [1e2, 1e3, 1e4, 1e5, 1e6]
    t = U.type_a(["2.001 mm", "1.999 mm", "2.000 mm"], "thickness")
    r = U.type_b("25 mm", half_width="0.01 mm", name="electrode radius")
    cases = {
        "contacting, 1 frequency, no loss": lambda: X.contacting(fx, c),
        "contacting, 1 frequency, loss": lambda: X.contacting(fx, c, dissipation=d),
        "contacting, 5 frequencies, loss": lambda: X.contacting(
            fx, [c] * 5, dissipation=[d] * 5, frequency=freqs
        ),
        "  + uncertain thickness and radius": lambda: X.contacting(
            fx,
            [c] * 5,
            dissipation=[d] * 5,
            frequency=freqs,
            thickness=t,
            dimensions={"electrode_radius": r},
        ),
    }
    print(f"{'case':<40} {'wall s':>8} {'/ real solve':>13} {'solves':>7}")
    print(f"{'one real solve':<40} {real:>8.3f} {1.0:>13.1f} {1:>7}")
    print(
        f"{'one complex solve, default BLAS threads':<40} {cplx:>8.3f} {cplx / real:>13.1f} {1:>7}"
    )
    print(f"{'one complex solve, one BLAS thread':<40} {cplx1:>8.3f} {cplx1 / real:>13.1f} {1:>7}")
    for name, fn in cases.items():
        res = fn()  # warm the fixtures this case rebuilds
        w = timed(fn, repeat=2)
        print(f"{name:<40} {w:>8.3f} {w / real:>13.1f} {res.solves:>7}")


DEMOS = Path(__file__).resolve().parents[1] / "fixtures" / "quillfield"


def demos() -> None:
    """Each demo file's extraction against one solve of its own cell, and where its time
    goes: solves made for dimension derivatives (``_Fem.gradient``) against the rest."""
    print(
        f"\n{'demo file (rtol 1e-6)':<28} {'wall s':>8} {'/ solve':>8} {'solves':>7} "
        f"{'derivs s':>9} {'deriv solves':>13}"
    )
    for name in ("qf-ps-07", "qf-pmma-02"):
        m = files.read_measurement(DEMOS / f"{name}.toml")
        cb.solve(m.fixture, rtol=1e-6)  # warm the mesh and assembly caches
        one = timed(lambda m=m: cb.solve(m.fixture, rtol=1e-6))
        m.extract(rtol=1e-6)  # warm the fixtures the method rebuilds
        spent = {"s": 0.0, "n": 0}
        plain = X._Fem.gradient

        def counted(self, *a, plain=plain, spent=spent, **k):
            before, t0 = self.count, time.perf_counter()
            try:
                return plain(self, *a, **k)
            finally:
                spent["s"] += time.perf_counter() - t0
                spent["n"] += self.count - before

        X._Fem.gradient = counted  # instrumentation only, restored below
        try:
            t0 = time.perf_counter()
            res = m.extract(rtol=1e-6)
            wall = time.perf_counter() - t0
        finally:
            X._Fem.gradient = plain
        print(
            f"{name + ' (' + m.method + ')':<28} {wall:>8.2f} {wall / one:>8.1f} "
            f"{res.solves:>7} {spent['s']:>9.2f} {spent['n']:>13}"
        )
    print("one solve of each cell:", "timed warm, best of 3")


if __name__ == "__main__":
    if "--demos" not in sys.argv[1:]:
        main()
    demos()
