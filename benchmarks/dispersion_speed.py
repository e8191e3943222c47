"""How long a relaxation fit takes, against the issue's goal and a diagonal-weighted fit.

    python benchmarks/dispersion_speed.py [--repeats 7]

The case is the issue 19 goal: a 5-parameter Havriliak-Negami fit to 50 frequencies
(100 values) with their full covariance (0.2 % independent scatter and a 1 % scale
common to every value, as one specimen's thickness and area give). Timed side by side in
one run, interleaved, medians printed with ratios: the full-covariance fit, the same fit
weighted by the diagonal alone, the ranking of all 8 models (with and without a
conductivity), the linear Kramers-Kronig test and a 200-draw Monte Carlo check. The
goal is the first line under 1 s (the "x goal" column below 1).
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np

from capbench import dispersion as D

GOAL = 1.0  # s, issue 19: a 5-parameter fit to 50 frequencies with full covariance


def _spectrum(full: bool) -> D.Spectrum:
    f = np.logspace(1, 7, 50)
    e = D.permittivity(f, 3.0, 5.0, 1e-4, alpha=0.7, beta=0.6)
    y = np.concatenate([e.real, -e.imag])
    cov = np.diag((0.002 * y) ** 2)
    if full:
        cov = cov + 0.01**2 * np.outer(y, y)
    rng = np.random.default_rng(19)
    y = y + np.linalg.cholesky(cov) @ rng.standard_normal(y.size)
    return D.Spectrum(f, y[:50], y[50:], cov)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--repeats", type=int, default=7)
    args = ap.parse_args(argv)
    full, diag = _spectrum(True), _spectrum(False)
    best = D.fit(full)
    D.fit(diag)  # warm: scipy's imports and first calls are not the fit's cost
    cases = {
        "HN fit, 50 frequencies, full covariance": lambda: D.fit(full),
        "HN fit, 50 frequencies, diagonal weights": lambda: D.fit(diag),
        "rank 8 models (choose), full covariance": lambda: D.choose(full),
        "linear Kramers-Kronig test": lambda: D.kramers_kronig(full),
        "Monte Carlo check, 200 refits": lambda: D.monte_carlo(best, full, 200, seed=1),
    }
    times: dict[str, list[float]] = {k: [] for k in cases}
    for _ in range(args.repeats):
        for name, run in cases.items():
            t0 = time.perf_counter()
            run()
            times[name].append(time.perf_counter() - t0)
    first = statistics.median(times["HN fit, 50 frequencies, full covariance"])
    print(f"{'case':44s} {'median':>9s} {'x goal':>8s} {'x fit':>7s}")
    for name, ts in times.items():
        m = statistics.median(ts)
        print(f"{name:44s} {m:8.4f}s {m / GOAL:8.3f} {m / first:7.2f}")
    print(
        f"goal: {GOAL:g} s for the first line; "
        + ("met" if first < GOAL else "NOT met")
        + f" ({args.repeats} repeats, medians)"
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
