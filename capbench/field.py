"""Finite-element assembly and solve of the electrostatic field (scikit-fem).

The potential u satisfies div(eps grad u) = 0 between the conductors, u = V_k on
conductor k, u = 0 on grounded boundaries, and the natural condition on the symmetry
axis. The weak form is

    a(u, v) = eps0 * sum_regions eps_r * integral grad u . grad v * w dA,

with w = 2 pi r (axisymmetric, so that a(u, u) is twice the field energy per volt
squared) or w = 1 (planar, per unit length). In the far-field shell the integrand is
mapped (see :class:`capbench.mesh.Shell`): grad u . A grad v with
A = w(x') |det J| J^-1 J^-T, J = dx'/dx.

The Maxwell capacitance matrix follows from one solve per conductor (one factorisation,
several right-hand sides): C_jk = a(u_j, u_k) (energy form) and C_jk = charge on
conductor j from solution k, the sum of the residual a(u_k, phi_i) over the basis
functions phi_i of conductor j (charge form). The two agree to the solver's precision.
"""

from __future__ import annotations

import math
import time
import warnings
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from skfem import MeshTri1
from skfem.assembly import Dofs
from skfem.element import ElementH1
from skfem.quadrature import get_quadrature
from skfem.refdom import RefTri

from . import multigrid, validate
from .errors import SolverError
from .mesh import (
    GROUND_TAG,
    INFINITY_TAG,
    MEDIUM_REGION,
    SHELL_REGION,
    Shell,
    TriMesh,
    _edge_keys,
)
from .units import EPS0
from .validate import CapbenchWarning

MAX_DEGREE = 8


class LagrangeTriangle(ElementH1):
    """Lagrange element of any degree p on the reference triangle (0,0), (1,0), (0,1).

    Nodes: the vertices; p - 1 equispaced nodes on each edge, ordered from the lower to
    the higher local vertex (edges v0-v1, v1-v2, v0-v2, as scikit-fem numbers facets, so
    that sorted triangles share edge nodes in one order); then the interior lattice. The
    nodal basis is found through a Vandermonde matrix of products of Legendre
    polynomials in x and y, which keeps it well conditioned up to p = 8 (sum of the
    basis functions equals 1 to 2e-11). For p <= 4 it equals scikit-fem's ElementTriP1..4.
    """

    refdom = RefTri

    def __init__(self, p: int):
        if not 1 <= p <= MAX_DEGREE:
            raise SolverError(f"element degree = {p}; valid: 1 to {MAX_DEGREE}", value=p)
        self.p = p
        self.nodal_dofs = 1
        self.facet_dofs = p - 1
        self.interior_dofs = (p - 1) * (p - 2) // 2
        self.maxdeg = p
        self.dofnames = ["u"] * 4
        pts = [(0.0, 0.0), (1.0, 0.0), (0.0, 1.0)]
        pts += [(k / p, 0.0) for k in range(1, p)]
        pts += [((p - k) / p, k / p) for k in range(1, p)]
        pts += [(0.0, k / p) for k in range(1, p)]
        pts += [(i / p, j / p) for j in range(1, p) for i in range(1, p - j)]
        self.doflocs = np.array(pts)
        self._powers = [(a, b) for a in range(p + 1) for b in range(p + 1 - a)]
        self._coef = np.linalg.inv(self._legendre(self.doflocs.T)[0].T)

    @property
    def n_local(self) -> int:
        return len(self.doflocs)

    def _legendre(self, X):
        from numpy.polynomial import legendre as leg

        x, y = 2 * np.asarray(X[0]) - 1, 2 * np.asarray(X[1]) - 1
        eye = np.eye(self.p + 1)
        px = [leg.legval(x, eye[k]) for k in range(self.p + 1)]
        py = [leg.legval(y, eye[k]) for k in range(self.p + 1)]
        dpx = [2 * leg.legval(x, leg.legder(eye[k])) for k in range(self.p + 1)]
        dpy = [2 * leg.legval(y, leg.legder(eye[k])) for k in range(self.p + 1)]
        M = np.array([px[a] * py[b] for a, b in self._powers])
        Mx = np.array([dpx[a] * py[b] for a, b in self._powers])
        My = np.array([px[a] * dpy[b] for a, b in self._powers])
        return M, Mx, My

    def all_bases(self, X):
        """Values (n, nq) and gradients (n, 2, nq) of every basis function at X."""
        M, Mx, My = self._legendre(X)
        c = self._coef
        return c.T @ M, np.stack((c.T @ Mx, c.T @ My), axis=1)

    def lbasis(self, X, i):
        M, Mx, My = self._legendre(X)
        c = self._coef[:, i]
        return c @ M, np.array([c @ Mx, c @ My])


_ELEMENTS: dict[int, LagrangeTriangle] = {}


def element(degree: int) -> LagrangeTriangle:
    if degree not in _ELEMENTS:
        _ELEMENTS[degree] = LagrangeTriangle(degree)
    return _ELEMENTS[degree]


def shell_tensor(x: np.ndarray, shell: Shell, axisymmetric: bool) -> np.ndarray:
    """The mapped coefficient A (2, 2, ...) of the shell at points x (2, ...)."""
    dx, dy = x[0] - shell.cx, x[1] - shell.cy
    rx, ry = np.abs(dx) / shell.hx, np.abs(dy) / shell.hy
    side = rx >= ry
    rho = np.where(side, rx, ry)
    gx = np.where(side, np.sign(dx) / shell.hx, 0.0)
    gy = np.where(side, 0.0, np.sign(dy) / shell.hy)
    lam = shell.ratio
    g = (lam - 1.0) / (lam - rho)
    gp = (lam - 1.0) / (lam - rho) ** 2
    f = g / rho
    fp = gp / rho - g / rho**2
    j00 = f + fp * dx * gx
    j01 = fp * dx * gy
    j10 = fp * dy * gx
    j11 = f + fp * dy * gy
    det = j00 * j11 - j01 * j10
    # J^-1 = [[j11, -j01], [-j10, j00]] / det; A = |det| J^-1 J^-T
    i00, i01, i10, i11 = j11 / det, -j01 / det, -j10 / det, j00 / det
    scale = np.abs(det)
    if axisymmetric:
        scale = scale * 2.0 * math.pi * (shell.cx + dx * f)
    a00 = (i00 * i00 + i01 * i01) * scale
    a01 = (i00 * i10 + i01 * i11) * scale
    a11 = (i10 * i10 + i11 * i11) * scale
    return np.array([[a00, a01], [a01, a11]])


def triangle_quadrature(order: int) -> tuple[np.ndarray, np.ndarray]:
    """Points (2, n) and weights on the reference triangle, exact to ``order``.

    scikit-fem's tabulated rules where it has them; beyond, the collapsed (Duffy)
    product of Gauss-Legendre rules: x = s, y = t (1 - s), weight (1 - s)
    (e.g. G. Karniadakis and S. Sherwin, Spectral/hp Element Methods, 2nd ed., 2005,
    section 4.1; from memory for the section).
    """
    try:
        return get_quadrature(RefTri, order)
    except NotImplementedError:
        n = order // 2 + 2
        g, w = np.polynomial.legendre.leggauss(n)
        g, w = 0.5 * (g + 1), 0.5 * w
        s, t = np.meshgrid(g, g, indexing="ij")
        ws = np.outer(w, w) * (1 - s)
        return np.vstack((s.ravel(), (t * (1 - s)).ravel())), ws.ravel()


class _Reference:
    """Basis gradients of one element type on the reference triangle, and the products
    that turn per-element geometry into element matrices with one matrix multiply."""

    def __init__(self, degree: int):
        self.elem = element(degree)
        self.degree = degree
        self.n_interior = self.elem.interior_dofs
        # exact for the (linearly weighted) stiffness of straight-sided elements
        X, W = triangle_quadrature(2 * degree - 1)
        lam = np.vstack((1 - X[0] - X[1], X[0], X[1]))
        dphi = self.gradients(X)  # (nb, 2, nq)
        nb = dphi.shape[0]
        self.nb = nb
        # S[v, a, b, i, j] = sum_q W_q lam_v dphi_i,a dphi_j,b
        self.S = np.einsum("q,vq,iaq,jbq->vabij", W, lam, dphi, dphi).reshape(12, nb * nb)
        self._quad: dict[int, tuple] = {}

    def gradients(self, X: np.ndarray) -> np.ndarray:
        return self.elem.all_bases(X)[1]

    def quadrature(self, order: int):
        """Points, weights and D[q, a, b, i, j] = dphi_i,a dphi_j,b for a rule of ``order``."""
        if order not in self._quad:
            X, W = triangle_quadrature(order)
            dphi = self.gradients(X)
            D = np.einsum("iaq,jbq->qabij", dphi, dphi).reshape(X.shape[1] * 4, -1)
            self._quad[order] = (X, W, D)
        return self._quad[order]


_REFERENCES: dict[int, _Reference] = {}


def _reference(degree: int) -> _Reference:
    if degree not in _REFERENCES:
        _REFERENCES[degree] = _Reference(degree)
    return _REFERENCES[degree]


def _affine(p: np.ndarray, t: np.ndarray):
    """Jacobian B = [p1 - p0, p2 - p0], its determinant and inverse, per element."""
    p0 = p[:, t[0]]
    B = np.stack((p[:, t[1]] - p0, p[:, t[2]] - p0), axis=1)  # (2, 2, nel): B[:, k] column
    det = B[0, 0] * B[1, 1] - B[0, 1] * B[1, 0]
    Binv = np.array([[B[1, 1], -B[0, 1]], [-B[1, 0], B[0, 0]]]) / det
    return p0, B, det, Binv


def _straight_matrices(ref: _Reference, p, t, axisymmetric: bool) -> np.ndarray:
    """Element stiffness matrices of straight-sided elements, weight 2 pi r or 1."""
    _, _, det, Binv = _affine(p, t)
    G = np.einsum("akn,bkn->abn", Binv, Binv) * np.abs(det)  # B^-1 B^-T |det B|
    if axisymmetric:
        wv = 2.0 * math.pi * p[0][t]  # (3, nel): weight at the vertices
    else:
        wv = np.ones((3, t.shape[1]))
    c = np.einsum("vn,abn->nvab", wv, G).reshape(t.shape[1], 12)
    return (c @ ref.S).reshape(-1, ref.nb, ref.nb)


def _quadrature_matrices(ref: _Reference, order: int, metric) -> np.ndarray:
    """Element matrices from M[n, q, a, b] = w_q * (metric at q), by one matrix multiply."""
    X, W, D = ref.quadrature(order)
    M = metric(X) * W[None, :, None, None]
    n = M.shape[0]
    return (M.reshape(n, -1) @ D).reshape(n, ref.nb, ref.nb)


def _shell_matrices(ref: _Reference, p, t, shell: Shell, axisymmetric: bool, order: int):
    p0, B, det, Binv = _affine(p, t)

    def metric(X):
        x = p0[:, :, None] + np.einsum("akn,kq->anq", B, X)  # (2, nel, nq)
        A = shell_tensor(x, shell, axisymmetric)  # (2, 2, nel, nq)
        M = np.einsum("kan,abnq,cbn->nqkc", Binv, A, Binv)
        return M * np.abs(det)[:, None, None, None]

    return _quadrature_matrices(ref, order, metric)


def _curved_mapping(p: np.ndarray, t: np.ndarray, arcs: np.ndarray):
    """The exact map of elements with curved edges: X (2, nq) -> (x (2, n, nq), J).

    arcs (3, n, 3): for local edge e (0: v0-v1, 1: v1-v2, 2: v0-v2) the circle (cx, cy, r),
    or r = 0 for a straight edge. The map is the affine one plus, for each curved edge
    (i, j), the correction l_i l_j q(tau), tau = (1 + l_j - l_i) / 2, where
    q(t) = [c(t) - (1 - t) v_i - t v_j] / (t (1 - t)) and c(t) runs along the arc. On the
    edge tau = l_j, so the edge is exact; the correction vanishes on the other two edges
    and is smooth, so Gauss quadrature keeps its accuracy (a smooth variant of the
    blending maps of M. Zlamal, SIAM J. Numer. Anal. 10(1), 229, 1973).
    """
    V = p[:, t]  # (2, 3, n)
    local = ((0, 1), (1, 2), (0, 2))

    def mapping(X):
        # X (2, nq): the same reference points in every element; or (2, n, nq)
        if X.ndim == 2:
            X = np.broadcast_to(X[:, None, :], (2, V.shape[2], X.shape[1]))
        lam = np.stack((1 - X[0] - X[1], X[0], X[1]))  # (3, n, nq)
        dlam = np.array([[-1.0, -1.0], [1.0, 0.0], [0.0, 1.0]])  # d lam_k / d X_b
        x = np.einsum("akn,knq->anq", V, lam)
        J = np.einsum("akn,kb->abn", V, dlam)[..., None] * np.ones(X.shape[2])
        for e, (i, j) in enumerate(local):
            R = arcs[e, :, 2]
            on = R > 0
            if not on.any():
                continue
            cx, cy = arcs[e, on, 0][:, None], arcs[e, on, 1][:, None]
            vi, vj = V[:, i, on][:, :, None], V[:, j, on][:, :, None]
            ti = np.arctan2(vi[1] - cy, vi[0] - cx)
            tj = np.arctan2(vj[1] - cy, vj[0] - cx)
            dth = np.mod(tj - ti + np.pi, 2 * np.pi) - np.pi  # the short way round
            tau = 0.5 * (1.0 + lam[j, on] - lam[i, on])
            th = ti + tau * dth
            Rn = R[on][:, None]
            d = np.array([cx + Rn * np.cos(th), cy + Rn * np.sin(th)]) - (vi * (1 - tau) + vj * tau)
            dp = np.array([-Rn * np.sin(th), Rn * np.cos(th)]) * dth + (vi - vj)
            w = tau * (1 - tau)
            q = d / w
            qp = (dp * w - d * (1 - 2 * tau)) / w**2
            li, lj = lam[i, on][None], lam[j, on][None]
            x[:, on] += li * lj * q
            df_di = lj * q - 0.5 * li * lj * qp
            df_dj = li * q + 0.5 * li * lj * qp
            for b in range(2):
                J[:, b, on] += df_di * dlam[i, b] + df_dj * dlam[j, b]
        return x, J

    return mapping


def _curved_matrices(
    ref: _Reference, p: np.ndarray, t: np.ndarray, arcs: np.ndarray, axisymmetric: bool, order: int
):
    """Element matrices of elements with curved edges (see :func:`_curved_mapping`)."""
    mapping = _curved_mapping(p, t, arcs)

    def metric(X):
        x, J = mapping(X)  # J[a, b, n, q] = dx_a / dX_b
        det = J[0, 0] * J[1, 1] - J[0, 1] * J[1, 0]
        Ji = np.array([[J[1, 1], -J[0, 1]], [-J[1, 0], J[0, 0]]]) / det
        M = np.einsum("kanq,lanq->nqkl", Ji, Ji) * np.abs(det)[..., None, None]
        if axisymmetric:
            M = M * (2.0 * math.pi * x[0])[..., None, None]
        return M

    return _quadrature_matrices(ref, order, metric)


@dataclass(eq=False)
class Assembly:
    """Per-region stiffness matrices and the degree-of-freedom sets of one mesh and degree.

    The matrices exclude the permittivity, so a change of permittivity costs a sparse
    sum, not a new assembly.
    """

    mesh: TriMesh
    degree: int
    skmesh: MeshTri1  # topology (vertices, sorted triangles, facets)
    dofs: Dofs
    parts: dict  # region code -> csr matrix (without permittivity)
    conductor_dofs: list  # conductor index -> dof array
    ground_dofs: np.ndarray
    infinity_dofs: np.ndarray
    floating_infinity: bool
    curved_elements: np.ndarray
    n_skeleton: int  # vertex and edge unknowns: the size of the condensed system
    recovery: np.ndarray | None  # (nel, n_interior, n_skeleton_local), see assemble
    seconds: float = 0.0
    cache: dict = field(default_factory=dict, repr=False)  # point finder, prolongation

    @property
    def n_dofs(self) -> int:
        """Unknowns of the finite-element space (interior ones included)."""
        return int(self.dofs.N)

    def expand(self, Us: np.ndarray) -> np.ndarray:
        """Full coefficient vectors (n_dofs, k) from skeleton ones (n_skeleton, k)."""
        if self.recovery is None:
            return Us
        ed = self.dofs.element_dofs
        ns = self.recovery.shape[2]
        U = np.zeros((self.n_dofs, Us.shape[1]), dtype=Us.dtype)
        U[: self.n_skeleton] = Us
        interior = np.einsum("eij,jek->eik", self.recovery, Us[ed[:ns]])  # (nel, ni, k)
        U[ed[ns:].T] = interior
        return U

    def matrix(self, eps_by_region: dict[int, complex]) -> sp.csr_matrix:
        """K = eps0 * sum_r eps_r K_r."""
        K = None
        for r, Kr in self.parts.items():
            e = complex(eps_by_region[MEDIUM_REGION if r == SHELL_REGION else r])
            term = Kr * (EPS0 * (e.real if e.imag == 0 else e))
            K = term if K is None else K + term
        return K.tocsr()


def _facet_index(m: MeshTri1, edges: np.ndarray) -> np.ndarray:
    """Index into m.facets of each (sorted) vertex pair in ``edges``."""
    fkeys = _edge_keys(m.facets[0], m.facets[1])
    ek = _edge_keys(edges[0], edges[1])
    if ek.size == 0:
        return np.zeros(0, np.int64)
    order = np.argsort(fkeys)
    pos = order[np.searchsorted(fkeys, ek, sorter=order)]
    if not np.array_equal(fkeys[pos], ek):
        raise SolverError("internal: a tagged edge is not an edge of the mesh")
    return pos


def _arc_facets(mesh: TriMesh, m: MeshTri1):
    on = mesh.edge_arc >= 0
    return _facet_index(m, mesh.edges[:, on]), mesh.edge_arc[on]


def _element_arcs(mesh: TriMesh, m: MeshTri1) -> np.ndarray:
    """(3, nel, 3): the circle (cx, cy, r) of each local edge, r = 0 where straight."""
    arcs = np.zeros((3, m.t.shape[1], 3))
    if not mesh.curved:
        return arcs
    pos, arc_id = _arc_facets(mesh, m)
    circle = np.asarray(mesh.arcs)
    facet_arc = np.full(m.facets.shape[1], -1)
    facet_arc[pos] = arc_id
    for e in range(3):
        a = facet_arc[m.t2f[e]]
        arcs[e, a >= 0] = circle[a[a >= 0]]
    return arcs


def gradients_at(
    asm: Assembly, u: np.ndarray, X: np.ndarray, elements: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Points x (2, n, nq) and gradients grad u (2, n, nq) at reference points X (2, nq)
    of the given elements, through the exact element maps (straight or curved)."""
    m = asm.skmesh
    el = np.arange(m.t.shape[1]) if elements is None else np.asarray(elements)
    t = m.t[:, el]
    ref = _reference(asm.degree)
    dphi = ref.gradients(X)  # (nb, 2, nq)
    ue = u[asm.dofs.element_dofs[:, el]]  # (nb, n)
    gref = np.einsum("in,ibq->bnq", ue, dphi)  # reference gradient (2, n, nq)
    arcs = _element_arcs(asm.mesh, m)[:, el]
    curved = np.any(arcs[:, :, 2] > 0, axis=0)
    p0, B, _, Binv = _affine(m.p, t)
    x = p0[:, :, None] + np.einsum("akn,kq->anq", B, X)
    # grad u = J^-T grad_ref u
    g = np.einsum("ban,bnq->anq", Binv, gref)
    if curved.any():
        xc, J = _curved_mapping(m.p, t[:, curved], arcs[:, curved])(X)
        detc = J[0, 0] * J[1, 1] - J[0, 1] * J[1, 0]
        Ji = np.array([[J[1, 1], -J[0, 1]], [-J[1, 0], J[0, 0]]]) / detc
        x[:, curved] = xc
        g[:, curved] = np.einsum("banq,bnq->anq", Ji, gref[:, curved])
    return x, g


def locate(asm: Assembly, P: np.ndarray, candidates: int = 12):
    """Element and reference coordinates of points P (2, n), through the exact element
    maps (Newton on curved elements). Points in no element get cell -1."""
    from scipy.spatial import cKDTree

    m = asm.skmesh
    if "centroids" not in asm.cache:
        asm.cache["centroids"] = cKDTree(np.mean(m.p[:, m.t], axis=1).T)
    k = min(candidates, m.t.shape[1])
    n = P.shape[1]
    _, near = asm.cache["centroids"].query(P.T, k)
    near = np.asarray(near).reshape(n, -1)
    arcs = _element_arcs(asm.mesh, m)
    cells = np.full(n, -1)
    X = np.zeros((2, n))
    for j in range(near.shape[1]):
        todo = np.nonzero(cells < 0)[0]
        if todo.size == 0:
            break
        c = near[todo, j]
        Xj = _reference_point(m.p, m.t[:, c], arcs[:, c], P[:, todo])
        inside = np.all(np.isfinite(Xj), axis=0)
        inside[inside] = (
            np.minimum(np.minimum(Xj[0, inside], Xj[1, inside]), 1 - Xj.sum(0)[inside]) >= -1e-9
        )
        cells[todo[inside]] = c[inside]
        X[:, todo[inside]] = Xj[:, inside]
    return cells, X


def _reference_point(p, t, arcs, P) -> np.ndarray:
    """Reference coordinates of P (2, m) in elements t (3, m): the straight-sided guess,
    then Newton on the curved map; NaN where Newton does not settle."""
    a0 = p[:, t[0]]
    d1, d2, q = p[:, t[1]] - a0, p[:, t[2]] - a0, P - a0
    det = d1[0] * d2[1] - d1[1] * d2[0]
    X = np.vstack(((q[0] * d2[1] - q[1] * d2[0]) / det, (d1[0] * q[1] - d1[1] * q[0]) / det))
    curved = np.any(arcs[:, :, 2] > 0, axis=0)
    if not curved.any():
        return X
    mapping = _curved_mapping(p, t[:, curved], arcs[:, curved])
    Xc = X[:, curved][:, :, None]
    step = np.zeros_like(Xc)
    for _ in range(20):
        x, J = mapping(Xc)
        r = P[:, curved][:, :, None] - x
        det = J[0, 0] * J[1, 1] - J[0, 1] * J[1, 0]
        step = np.array(
            [(J[1, 1] * r[0] - J[0, 1] * r[1]) / det, (J[0, 0] * r[1] - J[1, 0] * r[0]) / det]
        )
        Xc = Xc + step
        if np.max(np.abs(step)) < 1e-13:
            break
    Xc = Xc[:, :, 0]
    Xc[:, np.any(np.abs(step[:, :, 0]) > 1e-8, axis=0)] = np.nan
    X[:, curved] = Xc
    return X


def gradient_at(asm: Assembly, u: np.ndarray, cells: np.ndarray, X: np.ndarray) -> np.ndarray:
    """grad u (2, n) at reference points X (2, n) of elements ``cells`` (n,)."""
    ref = _reference(asm.degree)
    m = asm.skmesh
    t = m.t[:, cells]
    phi = ref.elem.all_bases(X)[1]  # (nb, 2, n)
    gref = np.einsum("in,ibn->bn", u[asm.dofs.element_dofs[:, cells]], phi)
    _, _, _, Binv = _affine(m.p, t)
    g = np.einsum("ban,bn->an", Binv, gref)
    arcs = _element_arcs(asm.mesh, m)[:, cells]
    curved = np.any(arcs[:, :, 2] > 0, axis=0)
    if curved.any():
        _, J = _curved_mapping(m.p, t[:, curved], arcs[:, curved])(X[:, curved][:, :, None])
        J = J[..., 0]
        det = J[0, 0] * J[1, 1] - J[0, 1] * J[1, 0]
        Ji = np.array([[J[1, 1], -J[0, 1]], [-J[1, 0], J[0, 0]]]) / det
        g[:, curved] = np.einsum("ban,bn->an", Ji, gref[:, curved])
    return g


def topology(mesh: TriMesh) -> MeshTri1:
    """scikit-fem's view of the mesh (sorted triangles, facets), built once per mesh."""
    m = mesh.cache.get("skfem")
    if m is None:
        m = MeshTri1(np.ascontiguousarray(mesh.p), np.ascontiguousarray(mesh.t), validate=False)
        m.facets  # noqa: B018 (builds and caches the facet arrays)
        mesh.cache["skfem"] = m
    return m


def assemble(mesh: TriMesh, degree: int, n_conductors: int) -> Assembly:
    """Assemble the stiffness matrix of each region on ``mesh`` with P``degree`` elements.

    Straight-sided elements use exact reference-element products (one matrix multiply
    for all elements); curved and shell elements use quadrature at every point.
    """
    t0 = time.perf_counter()
    m = topology(mesh)
    dofs = Dofs(m, element(degree))
    ref = _reference(degree)
    t = m.t
    p = m.p
    nel = t.shape[1]
    Ke = np.empty((nel, ref.nb, ref.nb))
    shell = mesh.region == SHELL_REGION
    curved = np.zeros(nel, bool)
    if mesh.curved:
        pos, _ = _arc_facets(mesh, m)
        curved[np.any(np.isin(m.t2f, pos), axis=0)] = True
    plain = ~shell & ~curved
    Ke[plain] = _straight_matrices(ref, p, t[:, plain], mesh.axisymmetric)
    if shell.any():
        Ke[shell] = _shell_matrices(
            ref, p, t[:, shell], mesh.shell, mesh.axisymmetric, order=2 * degree + 8
        )
    if curved.any():
        arcs = _element_arcs(mesh, m)
        Ke[curved] = _curved_matrices(
            ref, p, t[:, curved], arcs[:, curved], mesh.axisymmetric, order=2 * degree + 4
        )
    # Static condensation: an element's interior unknowns couple only within it, so
    # K_e -> S_e = K_ss - K_si K_ii^-1 K_is on its vertex and edge unknowns, and the
    # interior follows from u_i = R_e u_s, R_e = -K_ii^-1 K_is. Each element lies in one
    # region, so R_e does not depend on the permittivity and S scales with it.
    ni = ref.n_interior
    ns = ref.nb - ni
    recovery = None
    if ni:
        Kii = Ke[:, ns:, ns:]
        recovery = -np.linalg.solve(Kii, Ke[:, ns:, :ns])  # (nel, ni, ns)
        Ke = Ke[:, :ns, :ns] + np.einsum("eij,ejk->eik", Ke[:, :ns, ns:], recovery)
    ed = dofs.element_dofs[:ns]  # vertex and edge unknowns come first in the numbering
    n_skel = int(dofs.N) - ni * nel
    parts: dict[int, sp.csr_matrix] = {}
    for r in np.unique(mesh.region):
        sel = mesh.region == r
        rows = np.repeat(ed[:, sel].T, ns, axis=1).ravel()
        cols = np.tile(ed[:, sel].T, (1, ns)).ravel()
        parts[int(r)] = sp.csr_matrix((Ke[sel].ravel(), (rows, cols)), shape=(n_skel, n_skel))

    def dofs_of(tag_mask):
        f = _facet_index(m, mesh.edges[:, tag_mask])
        if f.size == 0:
            return np.zeros(0, np.int64)
        out = [dofs.nodal_dofs[:, m.facets[:, f].ravel()].ravel()]
        if dofs.facet_dofs.size:
            out.append(dofs.facet_dofs[:, f].ravel())
        return np.unique(np.concatenate(out)).astype(np.int64)

    conductor_dofs = [dofs_of(mesh.edge_tag == k) for k in range(n_conductors)]
    ground = dofs_of(mesh.edge_tag == GROUND_TAG)
    inf = dofs_of(mesh.edge_tag == INFINITY_TAG)
    floating = bool(mesh.shell is not None and mesh.shell.floating)
    if not floating:
        ground = np.union1d(ground, inf)
        inf = np.zeros(0, np.int64)
    return Assembly(
        mesh=mesh,
        degree=degree,
        skmesh=m,
        dofs=dofs,
        parts=parts,
        conductor_dofs=conductor_dofs,
        ground_dofs=ground,
        infinity_dofs=inf,
        floating_infinity=floating,
        curved_elements=np.nonzero(curved)[0],
        n_skeleton=n_skel,
        recovery=recovery,
        seconds=time.perf_counter() - t0,
    )


@dataclass(eq=False)
class FieldSolution:
    """Potentials of the unit drives and the Maxwell matrix of one mesh and degree."""

    assembly: Assembly
    potentials: np.ndarray  # (n_dofs, n_conductors): u_k with conductor k at 1 V
    maxwell_energy: np.ndarray  # C_jk = a(u_j, u_k), F (or F/m)
    maxwell_charge: np.ndarray  # C_jk = charge on j from u_k
    seconds: dict = field(default_factory=dict)

    @property
    def n_dofs(self) -> int:
        return self.assembly.n_dofs


@dataclass(eq=False)
class System:
    """The reduced system of one assembly and permittivity set: A x = rhs, where the
    skeleton potentials are U = S x + G (G: conductor k at 1 V in column k; S: free
    unknowns, and the far boundary tied into one floating unknown where it floats)."""

    K: sp.csr_matrix
    A: sp.spmatrix
    rhs: np.ndarray
    S: sp.csr_matrix
    G: np.ndarray
    counts: np.ndarray  # skeleton unknowns behind each reduced one (> 1: the tied one)

    def reduce(self, U: np.ndarray) -> np.ndarray:
        """x with S x = U on the free unknowns (the tied unknown: the boundary's mean)."""
        return (self.S.T @ U) / self.counts[:, None]


def reduced_system(asm: Assembly, eps_by_region: dict[int, complex]) -> System:
    K = asm.matrix(eps_by_region)
    N = asm.n_skeleton
    nc = len(asm.conductor_dofs)
    fixed = np.zeros(N, bool)
    for d in asm.conductor_dofs:
        fixed[d] = True
    fixed[asm.ground_dofs] = True
    free = ~fixed
    if asm.infinity_dofs.size:
        free[asm.infinity_dofs] = False
    free_idx = np.nonzero(free)[0]
    n_u = free_idx.size + (1 if asm.infinity_dofs.size else 0)
    rows = np.concatenate((free_idx, asm.infinity_dofs))
    cols = np.concatenate(
        (np.arange(free_idx.size), np.full(asm.infinity_dofs.size, free_idx.size))
    )
    S = sp.csr_matrix((np.ones(rows.size), (rows, cols)), shape=(N, n_u))
    G = np.zeros((N, nc))
    for k, d in enumerate(asm.conductor_dofs):
        G[d, k] = 1.0
    if asm.infinity_dofs.size:  # tie the far boundary into one floating unknown
        A = S.T @ K @ S
        rhs = -(S.T @ (K @ G))
    else:
        A = K[free_idx][:, free_idx]
        rhs = -(K @ G)[free_idx]
    counts = np.ones(n_u)
    counts[free_idx.size :] = asm.infinity_dofs.size
    return System(K, A, np.asarray(rhs), S, G, counts)


#: unknowns (interiors included) from which "auto" solves a refined level by multigrid:
#: the measured crossover (benchmarks/accuracy_speed.py --scaling-only, thin discs at
#: 2.8M unknowns: 55 s against 58 s at degree 4, 55 s against 60 s at degree 8, and
#: 4.3 GiB against 5.8 GiB at degree 4; below about 2M the factorisation is faster)
MULTIGRID_FROM = 2_000_000


def multigrid_wanted(asm: Assembly, solver: str) -> bool:
    """Whether ``solver`` asks for multigrid on this assembly (given coarser levels)."""
    return solver == "multigrid" or (solver == "auto" and asm.n_dofs >= MULTIGRID_FROM)


def solve_unit_drives(
    asm: Assembly,
    eps_by_region: dict[int, complex],
    coarser: tuple[Assembly, ...] = (),
    start: FieldSolution | None = None,
    solver: str = "auto",
) -> FieldSolution:
    """One solve per conductor held at 1 V (all others at 0 V).

    ``solver="direct"``: one sparse factorisation for all conductors.
    ``solver="multigrid"``: conjugate gradients with a V-cycle over the ``coarser``
    levels (coarsest first, the same degree; :mod:`capbench.multigrid`), for a real
    system on a refined mesh; a lossy (complex) system, or one without coarser levels, is
    factorised. ``start``, a solution on the level just below, is prolonged to start CG.
    ``solver="auto"``: multigrid from MULTIGRID_FROM unknowns, else the factorisation.
    Measured (``python benchmarks/accuracy_speed.py --scaling-only``, thin discs): the
    factorisation is faster below about two million unknowns (1.2 to 1.7 times at 175k to
    700k); beyond, multigrid's time grows as N^1.05 against the factorisation's N^1.47,
    and it needs less memory.
    """
    validate.solver(solver)
    t0 = time.perf_counter()
    system = reduced_system(asm, eps_by_region)
    A = system.A
    t1 = time.perf_counter()
    info: dict = {"solver": "direct"}
    x = None
    if multigrid_wanted(asm, solver) and coarser and not np.iscomplexobj(A):
        try:
            x, info = _multigrid_solve(asm, system, coarser, eps_by_region, start)
        except SolverError as exc:
            warnings.warn(f"{exc}; factorising instead", CapbenchWarning, stacklevel=2)
    if x is None:
        x = _solve(A.tocsc(), system.rhs)
    t2 = time.perf_counter()
    U = system.S @ x + system.G
    KU = system.K @ U
    C_energy = U.T @ KU
    C_charge = system.G.T @ KU
    return FieldSolution(
        asm,
        asm.expand(U),
        C_energy,
        C_charge,
        seconds={"assemble": asm.seconds, "system": t1 - t0, "factor_solve": t2 - t1, **info},
    )


def _multigrid_solve(asm, system, coarser, eps_by_region, start):
    """Set up the hierarchy (coarsest level factorised) and run V-cycle CG.

    Each level's system and smoother are kept on its assembly for the permittivities
    they were built with: the ladder's next rung finds the levels below it ready.
    """
    chain = [*coarser, asm]
    eps_key = tuple(sorted((int(k), complex(v)) for k, v in eps_by_region.items()))
    systems, levels = [], []
    for k, a in enumerate(chain):
        key = ("multigrid", eps_key, k == 0)
        if key not in a.cache:
            sk = system if a is asm else reduced_system(a, eps_by_region)
            if k == 0:
                lev = multigrid.make_level(sk.A, None, _factorise)
            else:
                if "prolongation" not in a.cache:  # depends on the meshes only
                    a.cache["prolongation"] = prolongation(chain[k - 1], a)
                P = _reduced_prolongation(a.cache["prolongation"], systems[k - 1], sk)
                patches, ptr = _vertex_patches(a, sk)
                lev = multigrid.make_level(
                    sk.A, P, _factorise, patches, ptr, _shell_unknowns(a, sk)
                )
            a.cache[key] = (sk, lev)
        sk, lev = a.cache[key]
        systems.append(sk)
        levels.insert(0, lev)  # finest first
    x0 = None
    if start is not None and start.assembly is chain[-2]:
        U_prev = start.potentials[: chain[-2].n_skeleton]
        x0 = levels[0].P @ systems[-2].reduce(U_prev)
    x, iterations = multigrid.solve(levels, systems[-1].rhs, x0)
    return x, {"iterations": iterations, "solver": "multigrid"}


def skeleton_nodes(asm: Assembly) -> tuple[np.ndarray, np.ndarray]:
    """Position (2, n_skeleton) of each vertex and edge unknown's node, through the
    exact element maps, and an element (n_skeleton,) that holds it."""
    m = asm.skmesh
    ref = _reference(asm.degree)
    ns = ref.nb - ref.n_interior
    X = ref.elem.doflocs[:ns].T
    p0, B, _, _ = _affine(m.p, m.t)
    x = p0[:, :, None] + np.einsum("akn,kq->anq", B, X)  # (2, nel, ns)
    arcs = _element_arcs(asm.mesh, m)
    curved = np.any(arcs[:, :, 2] > 0, axis=0)
    if curved.any():
        x[:, curved] = _curved_mapping(m.p, m.t[:, curved], arcs[:, curved])(X)[0]
    ed = asm.dofs.element_dofs[:ns]  # (ns, nel)
    nodes = np.empty((2, asm.n_skeleton))
    nodes[:, ed.T.ravel()] = x.reshape(2, -1)
    owner = np.empty(asm.n_skeleton, np.int64)
    owner[ed.T.ravel()] = np.repeat(np.arange(ed.shape[1]), ns)
    return nodes, owner


def prolongation(coarse: Assembly, fine: Assembly) -> sp.csr_matrix:
    """Skeleton-to-skeleton prolongation from a mesh to its uniform refinement.

    A fine node's value is the coarse element's polynomial there: the parent's vertex and
    edge unknowns, plus its interior ones as static condensation recovers them. A child
    of element e of the coarse mesh is element e + k n_coarse of the fine one (k = 0..3,
    :func:`capbench.mesh.refined`).
    """
    mc = coarse.skmesh
    nc = mc.t.shape[1]
    if fine.skmesh.t.shape[1] != 4 * nc or coarse.degree != fine.degree:
        raise SolverError("internal: multigrid levels are not nested refinements")
    ref = _reference(coarse.degree)
    ns = ref.nb - ref.n_interior
    nodes, owner = skeleton_nodes(fine)
    parent = owner % nc
    arcs = _element_arcs(coarse.mesh, mc)
    X = _reference_point(mc.p, mc.t[:, parent], arcs[:, parent], nodes)
    # on straight parents the nodes sit on the lattice k / (2p): evaluate the basis
    # once per lattice point, not once per node
    scale = 2 * coarse.degree
    lattice = np.rint(X * scale)
    on = np.all(np.abs(X * scale - lattice) < 1e-7, axis=0) & np.all(lattice >= 0, axis=0)
    grid = np.stack(np.meshgrid(np.arange(scale + 1), np.arange(scale + 1), indexing="ij"))
    at_grid = ref.elem.all_bases(grid.reshape(2, -1) / scale)[0]
    key = (lattice[0, on] * (scale + 1) + lattice[1, on]).astype(np.int64)
    phi = np.empty((ref.nb, X.shape[1]))
    phi[:, on] = at_grid[:, key]
    if (~on).any():
        phi[:, ~on] = ref.elem.all_bases(X[:, ~on])[0]
    w = phi[:ns]
    if coarse.recovery is not None:
        # interior values R_e u_s: w += R_parent^T phi_interior, as one sparse product
        # (gathering each node's R_parent would copy ni x ns numbers per node)
        ni = ref.n_interior
        Phi = _rows_of(phi[ns:].T, parent[:, None] * ni + np.arange(ni), nc * ni)
        w = w + (Phi @ coarse.recovery.reshape(nc * ni, ns)).T
    w[np.abs(w) < 1e-13] = 0.0
    cols = coarse.dofs.element_dofs[:ns, parent]
    P = _rows_of(w.T, cols.T, coarse.n_skeleton)
    P.eliminate_zeros()
    return P


def _rows_of(values: np.ndarray, columns: np.ndarray, n_columns: int) -> sp.csr_matrix:
    """A CSR matrix whose row i holds values[i] in columns[i] (the same count in every
    row, columns distinct within a row): built directly, without a sort."""
    n, k = values.shape
    return sp.csr_matrix(
        (
            np.ascontiguousarray(values).ravel(),
            np.ascontiguousarray(columns).ravel(),
            np.arange(0, n * k + 1, k),
        ),
        shape=(n, n_columns),
    )


def _reduced_prolongation(P, coarse_system, fine_system) -> sp.csr_matrix:
    """The prolongation between the reduced unknowns: x_f = S_f^+ P S_c x_c."""
    P = P @ coarse_system.S
    return (sp.diags(1.0 / fine_system.counts) @ (fine_system.S.T @ P)).tocsr()


def _reduced_index(system: System) -> np.ndarray:
    """Reduced unknown of each skeleton unknown; -1 where fixed or tied to infinity."""
    S = system.S.tocoo()
    index = np.full(S.shape[0], -1, np.int64)
    index[S.row] = S.col
    index[system.counts[np.maximum(index, 0)] > 1] = -1
    return index


def _vertex_patches(asm: Assembly, system: System) -> tuple[np.ndarray, np.ndarray]:
    """Each vertex's unknown and those of the edges meeting there, as (unknowns, ptr)."""
    m = asm.skmesh
    dofs = asm.dofs
    index = _reduced_index(system)
    vertex = [np.arange(m.p.shape[1])]
    unknown = [dofs.nodal_dofs[0]]
    if dofs.facet_dofs.size:
        k = dofs.facet_dofs.shape[0]
        for end in (0, 1):
            vertex.append(np.repeat(m.facets[end], k))
            unknown.append(dofs.facet_dofs.T.ravel())
    vertex = np.concatenate(vertex)
    unknown = index[np.concatenate(unknown)]
    keep = unknown >= 0
    vertex, unknown = vertex[keep], unknown[keep]
    counts = np.bincount(vertex, minlength=m.p.shape[1])
    # patches of one size next to each other, so that their blocks invert as one batch
    rank = np.empty_like(counts)
    by_size = np.argsort(counts, kind="stable")
    rank[by_size] = np.arange(counts.size)
    order = np.lexsort((unknown, rank[vertex]))
    return unknown[order], np.concatenate(([0], np.cumsum(counts[by_size])))


def _shell_unknowns(asm: Assembly, system: System) -> np.ndarray:
    """Reduced unknowns on the far-field shell's elements (with the tied one)."""
    ref = _reference(asm.degree)
    ns = ref.nb - ref.n_interior
    on = asm.mesh.region == SHELL_REGION
    if not on.any():
        return np.zeros(0, np.int64)
    mark = np.zeros(asm.n_skeleton)
    mark[asm.dofs.element_dofs[:ns, on].ravel()] = 1.0
    return np.nonzero(system.S.T @ mark)[0]


def _solve(A: sp.csc_matrix, rhs: np.ndarray) -> np.ndarray:
    """Factorise and solve every right-hand side.

    A factor is not reused across permittivities: as a GMRES preconditioner for a
    changed permittivity it saved at most 15 % on real systems and was slower than a new
    factorisation on complex ones (measured at 20k unknowns, degree 6), because the
    triangular solves of these fill-heavy factors cost a tenth of a factorisation each.
    """
    lu = _factorise(A)
    x = lu.solve(rhs.astype(A.dtype) if np.iscomplexobj(A) else rhs)
    if not np.all(np.isfinite(x)):
        raise SolverError(
            "the field solve produced non-finite potentials; the system is singular or "
            "badly scaled (check for a region cut off from every conductor)"
        )
    return x


def _factorise(A: sp.csc_matrix):
    """Sparse LU in symmetric mode with a minimum-degree ordering of A + A^T.

    Chosen by measurement (benchmarks/solvers.py, 20k to 250k unknowns): 1.1 to 2.3
    times faster than SuperLU's default column ordering; algebraic-multigrid CG (pyamg)
    was 70 to 160 times slower and had not reached 1e-12 after 300 iterations on these
    graded high-degree systems; CHOLMOD was up to 1.7 times faster but is installable
    here only through a GPL-licensed package.
    Complex systems run on one BLAS thread: on two cores the threaded kernels were 3 to
    10 times slower for them (measured 0.75 s against 0.23 s at 20k unknowns).
    """
    from threadpoolctl import threadpool_limits

    try:
        if np.iscomplexobj(A):
            with threadpool_limits(1, user_api="blas"):
                return spla.splu(
                    A,
                    permc_spec="MMD_AT_PLUS_A",
                    diag_pivot_thresh=0.0,
                    options={"SymmetricMode": True},
                )
        return spla.splu(
            A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0, options={"SymmetricMode": True}
        )
    except RuntimeError as exc:
        raise SolverError(
            f"the field system is singular ({exc}); a region may be cut off "
            "from every conductor and from ground"
        ) from None
