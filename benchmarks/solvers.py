"""Linear solvers side by side on capbench's own systems (how the default was chosen).

    python benchmarks/solvers.py

Builds the condensed field systems of the guarded benchmark cell at several degrees and
refinement levels and times, in one run: SuperLU with the default column ordering
(COLAMD), SuperLU in symmetric mode with a minimum-degree ordering of A + A^T (capbench's
default), and, where installed, algebraic-multigrid CG (pyamg) and CHOLMOD (through
cvxopt, GPL-licensed, so not a capbench dependency). Prints seconds, the ratio to the
default, and the agreement of the solutions.
"""

from __future__ import annotations

import time
import warnings

import numpy as np
import scipy.sparse.linalg as spla

import capbench as cb
from capbench import capacitance as cc


def systems():
    fx = cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="0.5 mm",
        guard_width="10 mm",
        specimen_thickness="2 mm",
        specimen_eps_r=4.0,
        unguarded_radius="50 mm",
    )
    g = fx.geometry
    for level, degree in ((0, 5), (0, 8), (1, 8), (2, 4)):
        asm = cc._assembly(g, 1e-6, level, degree, cc.mm.DEFAULT_OPTIONS)
        K = asm.matrix(cc.eps_by_region(g))
        fixed = np.zeros(asm.n_skeleton, bool)
        for d in asm.conductor_dofs:
            fixed[d] = True
        fixed[asm.ground_dofs] = True
        free = np.nonzero(~fixed)[0]
        A = K[free][:, free].tocsc()
        A = A / A.diagonal().max()
        yield f"level {level}, degree {degree}", A


def superlu(A, b, spec, symmetric):
    opts = {"SymmetricMode": True} if symmetric else {}
    lu = spla.splu(A, permc_spec=spec, diag_pivot_thresh=0.0 if symmetric else 1.0, options=opts)
    return lu.solve(b)


def amg_cg(A, b):
    import pyamg

    d = 1 / np.sqrt(A.diagonal())
    As = (A.multiply(d[:, None]).multiply(d[None, :])).tocsr()
    ml = pyamg.smoothed_aggregation_solver(As)
    x = np.column_stack(
        [ml.solve(b[:, k] * d, tol=1e-12, accel="cg", maxiter=300) for k in range(b.shape[1])]
    )
    return x * d[:, None]


def cholmod(A, b):
    import scipy.sparse as sp
    from cvxopt import cholmod as cm
    from cvxopt import matrix, spmatrix

    low = sp.tril(A).tocoo()
    M = spmatrix(low.data, low.row.astype(int), low.col.astype(int), A.shape)
    F = cm.symbolic(M)
    cm.numeric(M, F)
    B = matrix(b)
    cm.solve(F, B)
    return np.array(B)


def main() -> int:
    warnings.simplefilter("ignore")
    print(
        f"{'system':22s} {'unknowns':>9s}  solver                          seconds  ratio  max diff"
    )
    for name, A in systems():
        b = np.random.default_rng(0).random((A.shape[0], 3))
        t0 = time.perf_counter()
        ref = superlu(A, b, "MMD_AT_PLUS_A", True)
        base = time.perf_counter() - t0
        print(f"{name:22s} {A.shape[0]:9,}  SuperLU, MMD(A+A^T), symmetric  {base:7.3f}  x1.0")
        others = [
            ("SuperLU, COLAMD (scipy default)", superlu, ("COLAMD", False)),
            ("AMG-CG (pyamg), tol 1e-12", amg_cg, ()),
            ("CHOLMOD (cvxopt, GPL)", cholmod, ()),
        ]
        for label, fn, extra in others:
            try:
                t0 = time.perf_counter()
                x = fn(A, b, *extra)
                s = time.perf_counter() - t0
            except ImportError:
                print(f"{'':22s} {'':9s}  {label:31s} not installed")
                continue
            diff = np.max(np.abs(x - ref)) / np.max(np.abs(ref))
            print(f"{'':22s} {'':9s}  {label:31s} {s:7.3f}  x{s / base:<5.1f} {diff:8.1e}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
