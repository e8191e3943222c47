"""Geometric multigrid for the condensed field systems of nested meshes.

The ladder's refined meshes split every triangle of the level below into four, so at one
element degree the spaces of levels 0, 1, ... L are nested (up to the curved boundary,
whose new vertices are moved onto the arc). :func:`solve` runs conjugate gradients on the
finest level, preconditioned by one V-cycle per iteration:

* prolongation: the coarse element's polynomial (its vertex and edge unknowns, with the
  interior ones recovered by static condensation) evaluated at the fine unknowns' nodes;
* smoother: multiplicative Schwarz over vertex patches (a vertex's unknown and those of
  the edges that meet there), whose convergence does not degrade with the element degree
  (J. Schoeberl, J. M. Melenk, C. Pechstein and S. Zaglmayr, "Additive Schwarz
  preconditioning for p-version triangular and tetrahedral finite elements", IMA J.
  Numer. Anal. 28, 1, 2008), then an exact solve on the far-field shell. The mapped
  shell is strongly anisotropic near its outer edge, where patch smoothing alone stalls
  (measured: iterations doubled with each level, 23, 47, 82); the shell is a thin band, so
  its block factorises cheaply. The post-smoother applies the two in reverse order, which
  keeps the preconditioner symmetric;
* coarsest level: a sparse direct factorisation.

Measured on two thin discs (``python benchmarks/accuracy_speed.py --scaling-only``): 6 to
8 iterations to a relative residual of 1e-11 from 27k to 1.75M vertex and edge unknowns
at degrees 3, 4 and 8, so the work grows nearly in proportion to the unknowns, where the
factorisation grows as N^1.2 to N^1.5. The factorisation is still faster below about two
million unknowns (all of them, interiors included) on this 2-core machine.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from pyamg import amg_core

from .errors import SolverError

#: relative residual at which CG stops; the capacitance's error is quadratic in the
#: potential's, so this leaves it at the solver's rounding (checked against the direct
#: solve in tests/test_multigrid.py)
RTOL = 1e-11
MAX_ITERATIONS = 100


@dataclass(frozen=True, eq=False)
class Level:
    """One level's reduced system and the data of its smoother.

    ``A``: the system on this level's unknowns; ``P``: prolongation from the next
    coarser level (None on the coarsest); ``patches``/``patch_ptr``: the vertex patches
    (CSR-style lists of unknowns); ``inverses``/``inverse_ptr``: their inverted blocks;
    ``band``: unknowns of the exactly solved band (far-field shell), with ``band_rows``
    (A's rows there, for the band's residual) and ``band_lu``.
    """

    A: sp.csr_matrix
    P: sp.csr_matrix | None
    patches: np.ndarray | None = None
    patch_ptr: np.ndarray | None = None
    inverses: np.ndarray | None = None
    inverse_ptr: np.ndarray | None = None
    band: np.ndarray | None = None
    band_rows: sp.csr_matrix | None = None
    band_lu: object = None
    coarse_lu: object = None


def patch_inverses(A: sp.csr_matrix, patches: np.ndarray, ptr: np.ndarray):
    """The inverse of A restricted to each patch, flattened, and the offsets into it.
    Patches must come sorted by size."""
    size = np.diff(ptr)
    inv_ptr = np.zeros(ptr.shape, dtype=A.indices.dtype)
    inv_ptr[1:] = np.cumsum(size * size)
    blocks = np.zeros(int(inv_ptr[-1]), dtype=A.dtype)
    amg_core.extract_subblocks(
        A.indptr, A.indices, A.data, blocks, inv_ptr, patches, ptr, size.size, A.shape[0]
    )
    # patches of equal size are contiguous (see field._vertex_patches): one batch each
    starts = np.flatnonzero(np.diff(np.concatenate(([-1], size))) != 0)
    ends = np.append(starts[1:], size.size)
    for a, b in zip(starts, ends, strict=True):
        m = int(size[a])
        if m == 0:
            continue
        lo, hi = inv_ptr[a], inv_ptr[b]
        blocks[lo:hi] = np.linalg.inv(blocks[lo:hi].reshape(-1, m, m)).ravel()
    return blocks, inv_ptr


def make_level(
    A: sp.csr_matrix,
    P: sp.csr_matrix | None,
    factorise,
    patches: np.ndarray | None = None,
    patch_ptr: np.ndarray | None = None,
    band: np.ndarray | None = None,
) -> Level:
    """Prepare one level: on the coarsest (``P is None``) a direct factorisation by
    ``factorise(csc) -> object with .solve``, elsewhere the smoother's blocks."""
    A = A.tocsr()
    A.sort_indices()
    if P is None:
        return Level(A, None, coarse_lu=factorise(A.tocsc()))
    patches = patches.astype(A.indices.dtype)
    patch_ptr = patch_ptr.astype(A.indices.dtype)
    inverses, inverse_ptr = patch_inverses(A, patches, patch_ptr)
    band_rows = band_lu = None
    if band is not None and band.size:
        band_rows = A[band]
        band_lu = factorise(band_rows[:, band].tocsc())
    return Level(A, P.tocsr(), patches, patch_ptr, inverses, inverse_ptr, band, band_rows, band_lu)


def _schwarz(lev: Level, x: np.ndarray, b: np.ndarray, forward: bool) -> None:
    n = lev.patch_ptr.size - 1
    start, stop, step = (0, n, 1) if forward else (n - 1, -1, -1)
    A = lev.A
    amg_core.overlapping_schwarz_csr(
        A.indptr,
        A.indices,
        A.data,
        x,
        b,
        lev.inverses,
        lev.inverse_ptr,
        lev.patches,
        lev.patch_ptr,
        n,
        A.shape[0],
        start,
        stop,
        step,
    )


def _band(lev: Level, x: np.ndarray, b: np.ndarray) -> None:
    if lev.band_lu is not None:
        r = b[lev.band] - lev.band_rows @ x
        x[lev.band] += lev.band_lu.solve(r)


def vcycle(levels: list[Level], b: np.ndarray, k: int = 0) -> np.ndarray:
    """One V-cycle from level k (0: finest) for the right-hand side b."""
    lev = levels[k]
    if lev.P is None:
        return lev.coarse_lu.solve(b)
    x = np.zeros_like(b)
    _schwarz(lev, x, b, forward=True)
    _band(lev, x, b)
    r = b - lev.A @ x
    x += lev.P @ vcycle(levels, lev.P.T @ r, k + 1)
    _band(lev, x, b)
    _schwarz(lev, x, b, forward=False)
    return x


def solve(
    levels: list[Level], rhs: np.ndarray, x0: np.ndarray | None = None, rtol: float = RTOL
) -> tuple[np.ndarray, list[int]]:
    """Solve levels[0].A x = rhs (one column per right-hand side) by V-cycle CG; return
    the solutions and each column's iteration count.

    Raises :class:`SolverError` when a column has not converged after MAX_ITERATIONS.
    """
    A = levels[0].A
    n = A.shape[0]
    M = spla.LinearOperator(
        (n, n), matvec=lambda r: vcycle(levels, np.ascontiguousarray(r, dtype=float)), dtype=float
    )
    rhs = np.asarray(rhs, dtype=float).reshape(n, -1)
    X = np.zeros_like(rhs) if x0 is None else np.array(x0, dtype=float).reshape(n, -1)
    iterations = []
    for j in range(rhs.shape[1]):
        count = [0]

        def tick(_x, count=count):
            count[0] += 1

        x, info = spla.cg(
            A,
            rhs[:, j],
            x0=X[:, j],
            rtol=rtol,
            atol=0.0,
            maxiter=MAX_ITERATIONS,
            M=M,
            callback=tick,
        )
        if info != 0 or not np.all(np.isfinite(x)):
            raise SolverError(
                f"multigrid CG did not reach a relative residual of {rtol:.0e} in "
                f"{MAX_ITERATIONS} iterations ({n:,} unknowns)"
            )
        X[:, j] = x
        iterations.append(count[0])
    return X, iterations
