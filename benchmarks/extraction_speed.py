"""Wall time of FEM-corrected extractions, side by side with the solves they are made of.

Prints, for the Quillfield guarded cell at rtol 1e-6: one real solve, one complex solve on
the default BLAS threads and on one thread (the ratio is why capbench.extract limits
complex factorisations to one thread), and contacting extractions of growing scope, each
as a multiple of one real solve measured in the same run. Meshes are built once first
(warm caches), as in a session that extracts several specimens on one fixture.

    python benchmarks/extraction_speed.py
"""

from __future__ import annotations

import time

from threadpoolctl import threadpool_limits

import capbench as cb
from capbench import extract as X
from capbench import uncertainty as U


def timed(fn, repeat: int = 3) -> float:
    best = float("inf")
    for _ in range(repeat):
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


if __name__ == "__main__":
    main()
