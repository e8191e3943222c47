"""Convergence rates of the discretisation, fitted on log(error) against log(h).

Expected rates are those of finite-element theory for the energy (capacitance) error:
h^(2p) for a smooth solution with P_p elements, and h^(2 alpha) = h^1 at a knife edge
(alpha = 1/2) on meshes refined uniformly without grading (I. Babuska and B. Q. Guo,
"The h, p and h-p version of the finite element method; basis theory and applications",
Adv. Eng. Software 15, 159, 1992; the rates are textbook results).
"""

from __future__ import annotations

import numpy as np
import pytest
import references as ref

from capbench import capacitance as cc
from capbench import field as fe
from capbench import mesh as mm
from capbench.geometry import (
    AXISYMMETRIC,
    DIRECT,
    PLANAR,
    Annulus,
    Circle,
    Conductor,
    Geometry,
    Plate,
)


def _terminal(mesh: mm.TriMesh, degree: int, g: Geometry, high: str, low: str) -> float:
    asm = fe.assemble(mesh, degree, len(g.conductors))
    fs = fe.solve_unit_drives(asm, cc.eps_by_region(g))
    return cc.terminal_capacitance(
        fs.maxwell_energy, g.conductor_names, high, low, DIRECT, cc.has_ground(g)
    ).real


def _slope(errors: list[float]) -> float:
    h = 0.5 ** np.arange(len(errors))  # each uniform refinement halves h
    return float(np.polyfit(np.log(h), np.log(errors), 1)[0])


@pytest.mark.parametrize("degree", [1, 2])
def test_smooth_field_converges_at_rate_2p(degree):
    # coaxial cylinders, C' = 2 pi eps0 / ln(b/a) (textbook); exact curved boundaries
    a, b = 0.02, 0.05
    g = Geometry(
        PLANAR, (Conductor("in", Circle(0, 0, a)), Conductor("out", Annulus(0, 0, b, 1.2 * b)))
    )
    exact = ref.coaxial_cylinders(a, b)
    mesh = mm.attach_shell(mm.seed(g), g)
    errors = []
    for _ in range(4):
        errors.append(abs(_terminal(mesh, degree, g, "in", "out") - exact) / exact)
        mesh = mm.refined(mesh)
    rate = _slope(errors)
    # band: +-0.3 around 2p, pre-asymptotic levels included in the fit
    assert 2 * degree - 0.3 <= rate <= 2 * degree + 0.3, (rate, errors)


def test_knife_edge_without_grading_converges_at_rate_1():
    # isolated thin disc, C = 8 eps0 a: the r^(1/2) edge singularity limits the energy
    # error to O(h) under uniform refinement, whatever the degree
    a = 0.02
    g = Geometry(AXISYMMETRIC, (Conductor("disc", Plate(0, 0, a, 0)),))
    exact = ref.isolated_disc(a)
    mesh = mm.attach_shell(mm.seed(g), g)
    errors = []
    for _ in range(4):
        errors.append(abs(_terminal(mesh, 2, g, "disc", "ground") - exact) / exact)
        mesh = mm.refined(mesh)
    rate = _slope(errors[1:])
    assert 0.8 <= rate <= 1.3, (rate, errors)


def test_geometric_grading_restores_fast_convergence():
    # the same disc with the star refinement at its edge: P4 on the graded family gains
    # at least a factor 30 per uniform refinement (theory: up to 4^4 = 256)
    a = 0.02
    g = Geometry(AXISYMMETRIC, (Conductor("disc", Plate(0, 0, a, 0)),))
    exact = ref.isolated_disc(a)
    errors = []
    for level in range(3):
        mesh = cc.level_mesh(g, 1e-9, level)
        errors.append(abs(_terminal(mesh, 4, g, "disc", "ground") - exact) / exact)
    assert errors[0] / errors[1] > 30 and errors[1] / errors[2] > 30, errors
    assert errors[2] < 1e-9
