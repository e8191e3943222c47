"""The field engine against outside references (issue: field engine).

Every reference value comes from tests/references.py (independent of capbench) through
tests/cases/field_cases.json; each case names its source.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import references as ref
from conftest import assert_close, field_cases

import capbench as cb
from capbench.geometry import (
    AXISYMMETRIC,
    DIRECT,
    GROUND,
    PLANAR,
    Annulus,
    Circle,
    Conductor,
    Fixture,
    Geometry,
    OpenSpace,
    Plate,
)

CASES = field_cases()


def build(case: dict) -> Fixture:
    kind = case["kind"]
    if kind == "equal_thin_discs":
        return cb.parallel_discs(radius=case["radius"], gap=case["gap"])
    if kind == "isolated_disc":
        parts = (Conductor("disc", Plate(0.0, 0.0, case["radius"], 0.0)),)
        return Fixture(Geometry(AXISYMMETRIC, parts), high="disc", low=GROUND, connection=DIRECT)
    if kind == "isolated_sphere":
        parts = (Conductor("sphere", Circle(0.0, 0.0, case["radius"])),)
        return Fixture(Geometry(AXISYMMETRIC, parts), high="sphere", low=GROUND, connection=DIRECT)
    if kind in ("concentric_spheres", "coaxial_cylinders"):
        a, b = case["inner"], case["outer"]
        parts = (
            Conductor("inner", Circle(0.0, 0.0, a)),
            Conductor("outer", Annulus(0.0, 0.0, b, 1.2 * b)),
        )
        sym = AXISYMMETRIC if kind == "concentric_spheres" else PLANAR
        return Fixture(Geometry(sym, parts), high="inner", low="outer", connection=DIRECT)
    if kind == "sphere_over_plane":
        parts = (Conductor("sphere", Circle(0.0, case["height"], case["radius"])),)
        g = Geometry(AXISYMMETRIC, parts, boundary=OpenSpace(ground_plane=0.0))
        return Fixture(g, high="sphere", low=GROUND, connection=DIRECT)
    raise AssertionError(kind)


@pytest.mark.parametrize("case", CASES, ids=[c["id"] for c in CASES])
def test_reference_case_at_1e6(case):
    """rtol = 1e-6 is met against the outside value, and the error bar covers the truth."""
    sol = cb.solve(build(case), rtol=1e-6)
    true_error = abs(sol.terminal.real - case["capacitance"]) / case["capacitance"]
    assert true_error <= 1e-6, f"{case['id']}: true error {true_error:.2e} ({case['source']})"
    assert sol.rel_error >= true_error, (
        f"{case['id']}: estimate {sol.rel_error:.2e} below true error {true_error:.2e}"
    )
    assert sol.rel_error <= 1e-6


@pytest.mark.parametrize("kappa", [0.1, 0.5, 1.0])
@pytest.mark.parametrize("rtol", [1e-4, 1e-5])
def test_error_bar_covers_truth_at_looser_tolerances(kappa, rtol):
    # Love (1949), solved independently in tests/references.py
    c_ref = ref.love_discs(kappa) * ref.EPS0 * 0.025
    sol = cb.solve(cb.parallel_discs(radius="25 mm", gap=f"{25 * kappa} mm"), rtol=rtol)
    true_error = abs(sol.terminal.real - c_ref) / c_ref
    assert true_error <= sol.rel_error <= rtol


@pytest.mark.parametrize("case_id", ["isolated-disc", "love-discs-d_a-0.1"])
def test_no_truncation_error_at_1e8(case_id):
    """Open space is mapped exactly: at rtol 1e-8 the isolated disc (C = 8 eps0 a,
    potential theory) and Love's discs agree to better than 1e-8."""
    case = next(c for c in CASES if c["id"] == case_id)
    sol = cb.solve(build(case), rtol=1e-8)
    true_error = abs(sol.terminal.real - case["capacitance"]) / case["capacitance"]
    assert true_error <= 1e-8
    assert sol.rel_error >= true_error


def test_case_table_matches_fresh_reference_solves():
    # Guards the committed JSON against a stale regeneration: Love's equation at two
    # resolutions (tests/references.py) must reproduce the table to 1e-12.
    for case in CASES:
        if case["kind"] == "equal_thin_discs" and case["gap"] / case["radius"] >= 0.1:
            kappa = case["gap"] / case["radius"]
            fresh = ref.love_discs(kappa, panel_width=kappa / 2, order=20)
            assert_close(fresh * ref.EPS0 * case["radius"], case["capacitance"], rtol=1e-12)


def test_hand_formulas_fall_short_by_what_loves_equation_says():
    """At d/a = 0.1 the ideal parallel-plate formula and Kirchhoff's edge-corrected
    formula (1877) fall short of the true capacitance; the shortfalls are computed here
    from Love's equation (tests/references.py, E. R. Love 1949: about 17.6 % and 0.8 %)
    and the FEM must reproduce both to its own tolerance."""
    kappa, a = 0.1, 0.025
    sol = cb.solve(cb.parallel_discs(radius=a, gap=kappa * a), rtol=1e-6)
    c = sol.terminal.real / (ref.EPS0 * a)
    love = ref.love_discs(kappa)
    ideal = math.pi / kappa
    assert_close(c / ideal - 1, love / ideal - 1, rtol=1e-5, what="parallel-plate shortfall")
    kirchhoff = ref.kirchhoff_discs(kappa)
    assert_close(1 - kirchhoff / c, 1 - kirchhoff / love, rtol=1e-3, what="Kirchhoff shortfall")
    assert 0.17 < love / ideal - 1 < 0.18 and 0.007 < 1 - kirchhoff / love < 0.009


def test_kirchhoff_converges_as_the_gap_closes():
    # Kirchhoff (1877) is an asymptotic formula for kappa -> 0: its shortfall against the
    # FEM shrinks as d/a falls (Love 1949 gives the same trend).
    a = 0.025
    short = []
    for kappa in (0.1, 0.05, 0.02):
        sol = cb.solve(cb.parallel_discs(radius=a, gap=kappa * a), rtol=1e-6)
        short.append(1 - ref.kirchhoff_discs(kappa) / (sol.terminal.real / (ref.EPS0 * a)))
    assert short[0] > short[1] > short[2] > 0


def test_energy_and_charge_forms_agree():
    # Common practice, no source: C_jk from the field energy a(u_j, u_k) and from the
    # charge on conductor j must agree once the linear system is solved exactly.
    fx = cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="0.5 mm",
        guard_width="10 mm",
        specimen_thickness="2 mm",
        specimen_eps_r=2.3,
    )
    sol = cb.solve(fx, rtol=1e-6)
    assert sol.energy_charge_mismatch < 1e-10


def test_maxwell_matrix_is_a_capacitance_matrix():
    # Maxwell matrix properties (common practice, no source): symmetric, positive
    # diagonal, non-positive off-diagonals, diagonally dominant (the rest is the
    # capacitance to ground).
    fx = cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="0.5 mm",
        guard_width="10 mm",
        specimen_thickness="2 mm",
        specimen_eps_r=2.3,
    )
    C = cb.solve(fx, rtol=1e-6).maxwell
    assert np.allclose(C, C.T, rtol=1e-12, atol=0)
    assert np.all(np.diag(C) > 0)
    off = C - np.diag(np.diag(C))
    assert np.all(off <= 0)
    assert np.all(np.diag(C) >= -off.sum(axis=1))
    assert np.all(np.linalg.eigvalsh(C) > 0)


def test_thompson_lampard_symmetric_section():
    """Four bars framing a square with slots 1e-3 of the side: the cross capacitance is
    eps0 ln 2 / pi = 1.953549 pF/m (Thompson and Lampard, Nature 177, 888, 1956)."""
    fx = cb.four_electrode_section(width="20 mm", gap="0.02 mm")
    sol = cb.solve(fx, rtol=1e-7)
    assert_close(sol.capacitance, cb.Q_(ref.thompson_lampard_symmetric(), "F/m"), rtol=1e-6)
    assert_close(sol.capacitance.to("pF/m").magnitude, 1.953549, rtol=1e-6)


def test_thompson_lampard_unequal_sides():
    """A 20 mm x 13 mm section: the two cross capacitances differ but
    exp(-pi C1/eps0) + exp(-pi C2/eps0) = 1 (Thompson and Lampard, 1956)."""
    fx = cb.four_electrode_section(width="20 mm", height="13 mm", gap="0.02 mm")
    c1 = cb.solve(fx, rtol=1e-7).terminal.real
    c2 = cb.solve(
        Fixture(fx.geometry, high="b", low="d", connection=DIRECT), rtol=1e-7
    ).terminal.real
    assert abs(c1 - c2) > 0.5 * c1  # far from the symmetric case
    residual = math.exp(-math.pi * c1 / ref.EPS0) + math.exp(-math.pi * c2 / ref.EPS0) - 1
    assert abs(residual) < 1e-6
