"""capbench's vectorised assembly against scikit-fem's own BilinearForm assembly.

The engine assembles element matrices by one matrix multiply with reference tensors (for
speed); scikit-fem's quadrature-based assembly of the same weak form must give the same
matrix to rounding (common practice for verifying an assembler, no source).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.sparse as sp
from skfem import Basis, BilinearForm, ElementTriP1, ElementTriP2, ElementTriP3, ElementTriP4

import capbench as cb
from capbench import capacitance as cc
from capbench import field as fe
from capbench import mesh as mm

SKFEM = {1: ElementTriP1, 2: ElementTriP2, 3: ElementTriP3, 4: ElementTriP4}


@BilinearForm
def _axisymmetric(u, v, w):
    return 2 * math.pi * w.x[0] * (u.grad[0] * v.grad[0] + u.grad[1] * v.grad[1])


@pytest.mark.parametrize("degree", [1, 2, 3, 4])
def test_element_matrices_equal_scikit_fem(degree):
    fx = cb.parallel_discs(radius="25 mm", gap="2.5 mm", specimen=cb.Specimen("1 mm", 3.0))
    mesh = mm.seed(fx.geometry)  # straight elements only, no shell
    m = fe.topology(mesh)
    basis = Basis(m, SKFEM[degree](), intorder=2 * degree)
    K_ref = _axisymmetric.assemble(basis).tocsr()
    ref = fe._reference(degree)
    Ke = fe._straight_matrices(ref, m.p, m.t, axisymmetric=True)
    ed = basis.element_dofs
    rows = np.repeat(ed.T, ref.nb, axis=1).ravel()
    cols = np.tile(ed.T, (1, ref.nb)).ravel()
    K = sp.csr_matrix((Ke.ravel(), (rows, cols)), shape=K_ref.shape)
    assert abs(K - K_ref).max() <= 1e-12 * abs(K_ref).max()


def test_general_degree_basis_matches_scikit_fem_up_to_4():
    X = np.array([[0.1, 0.25, 0.6], [0.2, 0.5, 0.1]])
    for degree in (1, 2, 3, 4):
        mine = fe.element(degree).all_bases(X)
        theirs = SKFEM[degree]()
        for i in range(mine[0].shape[0]):
            phi, dphi = theirs.lbasis(X, i)
            assert np.allclose(mine[0][i], phi, atol=1e-13)
            assert np.allclose(mine[1][i], dphi, atol=1e-12)


@pytest.mark.parametrize("degree", [5, 6, 7, 8])
def test_high_degree_basis_is_a_partition_of_unity(degree):
    # Lagrange bases reproduce constants and linears exactly (interpolation property)
    X = np.random.default_rng(3).random((2, 50)) * 0.5
    phi, dphi = fe.element(degree).all_bases(X)
    nodes = fe.element(degree).doflocs.T
    assert np.max(np.abs(phi.sum(axis=0) - 1)) < 1e-10
    assert np.max(np.abs(nodes[0] @ phi - X[0])) < 1e-10
    assert np.max(np.abs(dphi.sum(axis=0))) < 1e-8


def test_condensed_system_gives_the_full_system_energy():
    # static condensation is exact algebra: the capacitance from the condensed degree-4
    # system equals the one from the full system solved directly
    fx = cb.parallel_discs(radius="25 mm", gap="2.5 mm")
    g = fx.geometry
    mesh = cc.base_mesh(g, 1e-6)
    asm = fe.assemble(mesh, 4, 2)
    fs = fe.solve_unit_drives(asm, cc.eps_by_region(g))
    # rebuild the full (uncondensed) matrix and solve it with the same boundary values
    m = fe.topology(mesh)
    ref = fe._reference(4)
    Ke = np.empty((m.t.shape[1], ref.nb, ref.nb))
    plain = mesh.region != mm.SHELL_REGION
    Ke[plain] = fe._straight_matrices(ref, m.p, m.t[:, plain], True)
    Ke[~plain] = fe._shell_matrices(ref, m.p, m.t[:, ~plain], mesh.shell, True, 16)
    ed = asm.dofs.element_dofs
    rows = np.repeat(ed.T, ref.nb, axis=1).ravel()
    cols = np.tile(ed.T, (1, ref.nb)).ravel()
    K = sp.csr_matrix((Ke.ravel(), (rows, cols)), shape=(asm.n_dofs,) * 2) * cb.EPS0
    U = fs.potentials
    energy_full = U.T @ (K @ U)
    assert np.allclose(energy_full, fs.maxwell_energy, rtol=1e-10, atol=0)
