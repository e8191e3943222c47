"""Accuracy against cost, capbench's default beside a plain baseline, in one run.

    python benchmarks/accuracy_speed.py [--quick] [--repeats N] [--json out.json]
    python benchmarks/accuracy_speed.py --scaling-only | --love-only

For each case and each target relative error (1e-3 .. 1e-6) it prints the unknowns, wall
time (median of repeats) and peak memory that capbench's default (``cb.solve(fx,
rtol=target)``) and the baseline (P1 elements on the same seed mesh, refined uniformly
until the target is met) need, and their ratio. Every measurement runs in a fresh
process (cold caches; peak resident memory of that process above its level before the
solve). Machines are noisy: compare the ratios, which are measured side by side.

Cases: (a) two thin discs, d/a = 0.1 and 1, against Love's integral equation solved here;
(b) a guarded cell (electrode radius 25 mm, guard gap 0.5 mm, guard width 10 mm,
specimen 2 mm thick, eps_r 4, unguarded electrode 50 mm radius) and (c) a planar
interdigitated electrode, against a capbench solve two refinement levels finer than the
one its 1e-6 solve used. It also times Love's equation itself (the semi-analytic limit
for (a)) against capbench in a fresh process and as a later solve of a session, and fits
the exponent of one solve's time against unknowns up to about 1e6, by sparse
factorisation and by multigrid CG side by side.
"""

from __future__ import annotations

import argparse
import json
import math
import multiprocessing as mp
import resource
import statistics
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))

TARGETS = (1e-3, 1e-4, 1e-5, 1e-6)
BASELINE_MAX_DOFS = 400_000


def make_fixture(case: str):
    import capbench as cb

    if case == "discs d/a=0.1":
        return cb.parallel_discs(radius="25 mm", gap="2.5 mm")
    if case == "discs d/a=1":
        return cb.parallel_discs(radius="25 mm", gap="25 mm")
    if case == "guarded cell":
        return cb.guarded_cell(
            electrode_radius="25 mm",
            guard_gap="0.5 mm",
            guard_width="10 mm",
            specimen_thickness="2 mm",
            specimen_eps_r=4.0,
            unguarded_radius="50 mm",
        )
    if case == "interdigitated":
        return cb.interdigitated(
            finger_width="50 um",
            finger_gap="50 um",
            n_fingers=6,
            substrate_thickness="0.5 mm",
            substrate_eps_r=9.8,
        )
    raise KeyError(case)


def _rss() -> float:
    """Peak resident memory of this process so far, MiB (Linux reports KiB)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _current_rss() -> float:
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1]) * resource.getpagesize() / 2**20


# ----------------------------------------------------------------- child processes


def _child_default(case: str, rtol: float) -> dict:
    import warnings

    import capbench as cb

    warnings.simplefilter("ignore")
    fx = make_fixture(case)
    before = _current_rss()
    t0 = time.perf_counter()
    sol = cb.solve(fx, rtol=rtol, time_budget=600)
    seconds = time.perf_counter() - t0
    return {
        "C": sol.terminal.real,
        "n": sol.n_dofs,
        "s": seconds,
        "mem": max(0.0, _rss() - before),
        "est": sol.rel_error,
        "level": sol.rungs[-1].level,
    }


def _child_warm(case: str, rtol: float, repeats: int) -> float:
    """Median time of solves in a process that has solved before (element tables built,
    modules loaded), each on an emptied mesh and assembly cache: a user's second and
    later solves of a session, which is how Love's equation is timed too."""
    import warnings

    import capbench as cb

    warnings.simplefilter("ignore")
    cb.solve(cb.parallel_discs(radius="20 mm", gap="3 mm"), rtol=rtol)
    fx = make_fixture(case)
    times = []
    for _ in range(repeats):
        cb.clear_caches()
        t0 = time.perf_counter()
        cb.solve(fx, rtol=rtol)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def _child_baseline(case: str, level: int) -> dict:
    import warnings

    import capbench as cb
    from capbench import capacitance as cc
    from capbench import field as fe
    from capbench import mesh as mm

    warnings.simplefilter("ignore")
    fx = make_fixture(case)
    g = fx.geometry
    before = _current_rss()
    t0 = time.perf_counter()
    mesh = mm.attach_shell(mm.seed(g), g)
    for _ in range(level):
        mesh = mm.refined(mesh)
    asm = fe.assemble(mesh, 1, len(g.conductors))
    fs = fe.solve_unit_drives(asm, cc.eps_by_region(g))
    C = cc.terminal_capacitance(
        fs.maxwell_energy, g.conductor_names, fx.high, fx.low, fx.connection, cc.has_ground(g)
    )
    seconds = time.perf_counter() - t0
    del cb
    return {"C": C.real, "n": asm.n_dofs, "s": seconds, "mem": max(0.0, _rss() - before)}


def _child_reference(case: str, level: int) -> float:
    import warnings

    from capbench import capacitance as cc
    from capbench import field as fe
    from capbench import mesh as mm

    warnings.simplefilter("ignore")
    fx = make_fixture(case)
    g = fx.geometry
    mesh = cc.level_mesh(g, 1e-9, level, mm.DEFAULT_OPTIONS)
    asm = fe.assemble(mesh, 4, len(g.conductors))
    fs = fe.solve_unit_drives(asm, cc.eps_by_region(g))
    return cc.terminal_capacitance(
        fs.maxwell_energy, g.conductor_names, fx.high, fx.low, fx.connection, cc.has_ground(g)
    ).real


def _child_scaling(level: int, degree: int = 4, solver: str = "direct") -> dict:
    import warnings

    from capbench import capacitance as cc
    from capbench import field as fe
    from capbench import mesh as mm

    warnings.simplefilter("ignore")
    fx = make_fixture("discs d/a=0.1")
    g = fx.geometry
    meshes = [cc.level_mesh(g, 1e-6, k, mm.DEFAULT_OPTIONS) for k in range(level + 1)]
    before = _current_rss()
    t0 = time.perf_counter()
    # multigrid needs the levels below; their assembly is part of its cost
    coarser = (
        tuple(fe.assemble(m, degree, len(g.conductors)) for m in meshes[:-1])
        if solver == "multigrid"
        else ()
    )
    asm = fe.assemble(meshes[-1], degree, len(g.conductors))
    fs = fe.solve_unit_drives(asm, cc.eps_by_region(g), coarser=coarser, solver=solver)
    return {
        "n": asm.n_dofs,
        "s": time.perf_counter() - t0,
        "factor": fs.seconds["factor_solve"],
        "mem": max(0.0, _rss() - before),
        "solver": fs.seconds["solver"],
        "iterations": fs.seconds.get("iterations"),
    }


def run_in_child(fn, *args):
    ctx = mp.get_context("spawn")
    with ctx.Pool(1) as pool:
        return pool.apply(fn, args)


# ----------------------------------------------------------------- references


def love_reference(case: str) -> float:
    import references as ref

    kappa = 0.1 if case == "discs d/a=0.1" else 1.0
    return ref.love_discs(kappa, panel_width=kappa / 2, order=24) * ref.EPS0 * 0.025


def love_timing(kappa: float, target: float, repeats: int) -> tuple[float, int]:
    """Median time of the cheapest Love discretisation (panel width kappa, Gauss order
    n) that meets ``target`` against a fine solve, and its number of unknowns."""
    import references as ref

    exact = ref.love_discs(kappa, panel_width=kappa / 2, order=24)
    for order in range(2, 25):
        c = ref.love_discs(kappa, panel_width=kappa, order=order)
        if abs(c - exact) / exact <= target:
            times = []
            for _ in range(max(10 * repeats, 50)):  # a micro-benchmark: many repeats
                t0 = time.perf_counter()
                ref.love_discs(kappa, panel_width=kappa, order=order)
                times.append(time.perf_counter() - t0)
            n_panels = max(4, math.ceil(2.0 / kappa))
            return statistics.median(times), n_panels * order
    raise RuntimeError("Love's equation did not converge")


# ----------------------------------------------------------------- main


def measure_case(case: str, targets, repeats: int) -> list[dict]:
    rows = []
    # capbench default at each target
    default = {}
    for tol in targets:
        runs = [run_in_child(_child_default, case, tol) for _ in range(repeats)]
        default[tol] = {
            **runs[0],
            "s": statistics.median(r["s"] for r in runs),
            "mem": max(r["mem"] for r in runs),
        }
    if case.startswith("discs"):
        c_ref = love_reference(case)
        ref_note = "Love's equation"
    else:
        finest = max(d["level"] for d in default.values())
        c_ref = run_in_child(_child_reference, case, finest + 2)
        ref_note = f"capbench P4 at level {finest + 2}"
    # baseline: P1, uniform refinement of the seed, until each target is met
    base_levels = []
    level = 0
    while True:
        r = run_in_child(_child_baseline, case, level)
        r["err"] = abs(r["C"] - c_ref) / c_ref
        base_levels.append(r)
        if r["err"] <= min(targets) or r["n"] * 4 > BASELINE_MAX_DOFS:
            break
        level += 1
    # the baseline's error falls as N^-rate; extrapolate the unknowns it would need
    ns = np.array([b["n"] for b in base_levels], float)
    es = np.array([b["err"] for b in base_levels])
    rate = -np.polyfit(np.log(ns[-3:]), np.log(es[-3:]), 1)[0] if len(ns) >= 3 else math.nan
    for tol in targets:
        d = default[tol]
        err = abs(d["C"] - c_ref) / c_ref
        hit = next((b for b in base_levels if b["err"] <= tol), None)
        if hit is None:
            hit = next(
                (base_levels[k] for k in range(len(base_levels)) if base_levels[k]["err"] <= tol),
                None,
            )
        row = {
            "case": case,
            "target": tol,
            "reference": ref_note,
            "capbench_n": d["n"],
            "capbench_s": d["s"],
            "capbench_mem": d["mem"],
            "capbench_err": err,
            "capbench_est": d["est"],
        }
        if hit is not None:
            reps = [
                run_in_child(_child_baseline, case, base_levels.index(hit))
                for _ in range(max(repeats - 1, 0))
            ]
            s = statistics.median([hit["s"], *[x["s"] for x in reps]])
            row.update(
                baseline_n=hit["n"],
                baseline_s=s,
                baseline_mem=hit["mem"],
                baseline_err=hit["err"],
                ratio_s=s / d["s"],
                ratio_n=hit["n"] / d["n"],
            )
        else:
            need = ns[-1] * (es[-1] / tol) ** (1 / rate) if rate > 0 else math.inf
            row.update(
                baseline_n=None,
                baseline_needs_n=need,
                baseline_rate=rate,
                baseline_best_err=float(es[-1]),
                baseline_max_n=int(ns[-1]),
            )
        rows.append(row)
    return rows


def fmt_row(r: dict) -> str:
    base = (
        f"{r['baseline_n']:>9,} {r['baseline_s']:8.3f} {r['baseline_mem']:7.0f}  "
        f"x{r['ratio_s']:<8.1f}"
        if r.get("baseline_n")
        else f"  not reached: best {r['baseline_best_err']:.1e} at "
        f"{r['baseline_max_n']:,} unknowns; needs ~{r['baseline_needs_n']:.1e}"
    )
    return (
        f"{r['case']:16s} {r['target']:6.0e} | {r['capbench_n']:>8,} "
        f"{r['capbench_s']:7.3f} {r['capbench_mem']:6.0f} {r['capbench_err']:8.1e} | " + base
    )


def love_ratios(rows: list | None, repeats: int) -> dict:
    """Love's equation at 1e-6 against capbench's default, cold and as a later solve."""
    print("\nLove's integral equation (semi-analytic limit), cheapest solve meeting 1e-6:")
    love = {}
    for kappa, case in ((0.1, "discs d/a=0.1"), (1.0, "discs d/a=1")):
        s, n = love_timing(kappa, 1e-6, repeats)
        if rows:
            cold = next(r for r in rows if r["case"] == case and r["target"] == 1e-6)
            cold = cold["capbench_s"]
        else:
            runs = [run_in_child(_child_default, case, 1e-6) for _ in range(repeats)]
            cold = statistics.median(r["s"] for r in runs)
        warm = run_in_child(_child_warm, case, 1e-6, max(5, repeats))
        love[case] = {"s": s, "n": n, "ratio": cold / s, "warm_ratio": warm / s}
        print(
            f"  d/a = {kappa:g}: {n} unknowns, {s * 1e3:.2f} ms; capbench default at "
            f"1e-6 takes x{cold / s:.0f} that in a fresh process ({cold * 1e3:.0f} ms), "
            f"x{warm / s:.0f} ({warm * 1e3:.0f} ms) as a later solve of a session",
            flush=True,
        )
    return love


def scaling() -> tuple[list, dict]:
    """One solve's time against its unknowns, by factorisation and by multigrid CG."""
    print("\nScaling of one solve (assembly + solves), discs d/a = 0.1:", flush=True)
    scal, exponents = [], {}
    # P4 goes one level past 1e6 unknowns: below about 2e5 the matrices still partly fit
    # in the processor's cache, which bends the fitted exponent upward for both solvers
    for degree, levels, fit in ((4, range(5), slice(1, 4)), (8, range(3), slice(1, 3))):
        for solver in ("direct", "multigrid"):
            runs = [run_in_child(_child_scaling, level, degree, solver) for level in levels]
            for s in runs:
                its = f", CG iterations {s['iterations']}" if s["iterations"] else ""
                print(
                    f"  P{degree} {solver:9} {s['n']:>9,} unknowns: {s['s']:7.3f} s "
                    f"(solve {s['factor']:.3f} s), {s['mem']:.0f} MiB{its}",
                    flush=True,
                )
            n = np.array([s["n"] for s in runs], float)
            t = np.array([s["s"] for s in runs])
            key = f"P{degree} {solver}"
            exponents[key] = float(np.polyfit(np.log(n[fit]), np.log(t[fit]), 1)[0])
            nlogn = np.polyfit(np.log(n[fit]), np.log(n[fit] * np.log(n[fit])), 1)[0]
            print(
                f"  {key}: fitted exponent of time against unknowns {exponents[key]:.2f} "
                f"from {n[fit][0]:,.0f} to {n[fit][-1]:,.0f} (N log N over this range would "
                f"fit as {nlogn:.2f})",
                flush=True,
            )
            if len(n) > fit.stop:
                last = float(np.log(t[-1] / t[-2]) / np.log(n[-1] / n[-2]))
                exponents[key + " beyond"] = last
                print(f"  {key}: from {n[-2]:,.0f} to {n[-1]:,.0f}: exponent {last:.2f}")
            scal += [{**s, "degree": degree} for s in runs]
    return scal, exponents


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--quick", action="store_true", help="one repeat, two cases")
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--json", type=Path, help="write all figures to this file")
    ap.add_argument(
        "--scaling-only", action="store_true", help="only the one-solve scaling (a few minutes)"
    )
    ap.add_argument("--love-only", action="store_true", help="only the ratios to Love's equation")
    args = ap.parse_args(argv)
    if args.scaling_only:
        scaling()
        return 0
    if args.love_only:
        love_ratios(None, args.repeats)
        return 0
    repeats = 1 if args.quick else args.repeats
    cases = (
        ["discs d/a=0.1", "guarded cell"]
        if args.quick
        else ["discs d/a=0.1", "discs d/a=1", "guarded cell", "interdigitated"]
    )
    print(
        "case             target |  capbench: unknowns  time/s  MiB  true err | "
        "baseline P1 uniform: unknowns  time/s  MiB  time ratio",
        flush=True,
    )
    rows = []
    for case in cases:
        for r in measure_case(case, TARGETS, repeats):
            rows.append(r)
            print(fmt_row(r), flush=True)

    print("\nThin discs d/a = 0.1 beyond 1e-6 (capbench default):")
    extra = {}
    for tol in (1e-7, 1e-8):
        runs = [run_in_child(_child_default, "discs d/a=0.1", tol) for _ in range(repeats)]
        c_ref = love_reference("discs d/a=0.1")
        err = abs(runs[0]["C"] - c_ref) / c_ref
        s = statistics.median(r["s"] for r in runs)
        extra[tol] = {"n": runs[0]["n"], "s": s, "err": err, "mem": max(r["mem"] for r in runs)}
        print(
            f"  rtol {tol:.0e}: {runs[0]['n']:,} unknowns, {s:.3f} s, "
            f"{extra[tol]['mem']:.0f} MiB, true error {err:.1e}"
        )

    love = love_ratios(rows, repeats)

    scal, exponents = scaling()
    expo = exponents
    if args.json:
        args.json.write_text(
            json.dumps(
                {"rows": rows, "beyond": extra, "love": love, "scaling": scal, "exponent": expo},
                indent=1,
                default=float,
            )
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
