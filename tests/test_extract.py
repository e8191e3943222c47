"""Closed (parallel-plate) forms of capbench.extract against their published formulas.

Each closed form is checked by making readings with the parallel-plate model it inverts
(series layers of dielectric between plates of area A, plus a stray capacitance where
the method allows one), written out here independently, and inverting them; and against
the published formula where one exists:
* ASTM D150 (Standard Test Methods for AC Loss Characteristics and Permittivity of Solid
  Electrical Insulation): eps_r = C_x/C_v with C_v = eps0 A/t (contacting); the air-gap
  form eps_r = t/(t - s(1 - C0/C)); the micrometer re-set form eps_r = t/(t - delta_s);
  the guarded electrode's effective diameter d1 + B g, B = 1 - 2 delta/g,
  delta = (2t/pi) ln cosh(pi g/(4t)) (the table form and its attribution to ASTM D150
  and IEC 62631-2-1 are from memory).
* The two-fluid algebra is derived in capbench.extract.ideal_two_fluid; the check is that
  synthetic readings invert exactly.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from uncertainties import ufloat

import capbench as cb
from capbench import extract as X
from capbench import uncertainty as U

EPS0 = 8.8541878188e-12  # F/m, CODATA 2022


def plates(area, layers, stray=0.0):
    """Capacitance of plates of ``area`` with series layers [(thickness, eps), ...]."""
    return EPS0 * area / sum(d / e for d, e in layers) + stray


def test_contacting_formula():
    # ASTM D150: eps_r = C t / (eps0 A)
    a, t, eps = 0.025, 2e-3, 2.31
    c = plates(math.pi * a**2, [(t, eps)])
    assert X.ideal_contacting(c, t, math.pi * a**2) == pytest.approx(eps, rel=1e-14)
    q = X.ideal_contacting(cb.Q_(c * 1e12, "pF"), "2 mm", cb.Q_(math.pi * 25**2, "mm**2"))
    assert q == pytest.approx(eps, rel=1e-12)


def test_guard_effective_area_formula():
    # ASTM D150 / IEC 62631-2-1 effective diameter, written out here
    r1, g, t = 25e-3, 0.5e-3, 2e-3
    delta = 2 * t / math.pi * math.log(math.cosh(math.pi * g / (4 * t)))
    b = 1 - 2 * delta / g
    area = math.pi * (2 * r1 + b * g) ** 2 / 4
    got = X.guard_effective_area("25 mm", "0.5 mm", "2 mm").to("m**2").magnitude
    assert got == pytest.approx(area, rel=1e-14)
    # limits (series of ln cosh, common practice, no source): a thin gap adds about half
    # of itself to the radius, B = 1 - pi g / (8 t) + O(g^3); a gap much wider than the
    # specimen adds little, B -> 4 t ln2 / (pi g)
    thin = X.guard_effective_area("25 mm", "1 um", "2 mm").to("m**2").magnitude
    b_thin = 1 - math.pi * 1e-6 / (8 * 2e-3)
    assert thin == pytest.approx(math.pi * (25e-3 + b_thin * 0.5e-6) ** 2, rel=1e-13)
    wide = X.guard_effective_area("25 mm", "20 mm", "0.1 mm").to("m**2").magnitude
    b_wide = 4 * 0.1e-3 * math.log(2) / (math.pi * 20e-3)
    assert wide == pytest.approx(math.pi * (25e-3 + b_wide * 10e-3) ** 2, rel=1e-9)


@pytest.mark.parametrize("eps", [2.3, complex(2.3, -2.3 * 4e-4), 9.4, complex(40.0, -8.0)])
def test_air_gap_inverts_series_model(eps):
    # series capacitors (ASTM D150's air-gap method): 1/C = (s - t)/(eps0) + t/(eps0 eps)
    area, s, t = 1.9e-3, 3e-3, 2e-3
    c0 = plates(area, [(s, 1.0)])
    c = plates(area, [(s - t, 1.0), (t, eps)])
    got = X._air_gap_formula(c0, c, t, s)
    assert complex(got) == pytest.approx(complex(eps), rel=1e-12)
    if isinstance(eps, float):
        assert X.ideal_air_gap(c0, c, t, s) == pytest.approx(eps, rel=1e-12)
        # the published form, written out
        assert eps == pytest.approx(t / (t - s * (1 - c0 / c)), rel=1e-12)


def test_air_gap_with_a_fluid_in_the_gap():
    area, s, t, eps, eg = 1e-3, 4e-3, 1e-3, 3.0, 2.0243
    c0 = plates(area, [(s, eg)])
    c = plates(area, [(s - t, eg), (t, eps)])
    assert X.ideal_air_gap(c0, c, t, s, gap_eps_r=eg) == pytest.approx(eps, rel=1e-12)


@pytest.mark.parametrize("s1_extra", [0.0, 0.4e-3])
def test_micrometer_inverts_series_model(s1_extra):
    # ASTM D150 re-set method: same capacitance with the specimen at s1 and empty at s2
    area, t, eps = 1.2e-3, 2e-3, 2.3
    s1 = t + s1_extra
    c1 = plates(area, [(s1 - t, 1.0), (t, eps)])
    s2 = EPS0 * area / c1
    assert X.ideal_micrometer(t, s1, s2) == pytest.approx(eps, rel=1e-12)
    if s1_extra == 0:
        # published form eps_r = t / (t - delta_s), delta_s = s1 - s2
        assert eps == pytest.approx(t / (t - (s1 - s2)), rel=1e-12)
    # a residual difference of the readings: C2 at s2' differs from C1; ratio C2/C1
    s2b = 1.01 * s2
    c2 = plates(area, [(s2b, 1.0)])
    assert X.ideal_micrometer(t, s1, s2b, c2 / c1) == pytest.approx(eps, rel=1e-12)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_two_fluid_inverts_synthetic_readings(seed):
    # the derived two-fluid algebra inverts readings made with random area, spacing,
    # specimen fraction, stray capacitance and fluids, exactly
    rng = np.random.default_rng(seed)
    area = rng.uniform(5e-4, 3e-3)
    s = rng.uniform(1e-3, 5e-3)
    x = rng.uniform(0.2, 0.95)
    cp = rng.uniform(0, 2e-12)
    eps = rng.uniform(1.5, 12.0) * (1 - 1j * rng.uniform(0, 0.01))
    e1, e2 = 1.000536, rng.uniform(1.8, 2.5)
    c1 = plates(area, [(s, e1)], cp)
    c2 = plates(area, [(s, e2)], cp)
    c1s = plates(area, [((1 - x) * s, e1), (x * s, eps)], cp)
    c2s = plates(area, [((1 - x) * s, e2), (x * s, eps)], cp)
    got, xf, cv, cpf = X._two_fluid_formula(c1, c1s, c2, c2s, e1, e2)
    assert complex(got) == pytest.approx(eps, rel=1e-10)
    assert complex(xf).real == pytest.approx(x, rel=1e-10)
    assert cv == pytest.approx(EPS0 * area / s, rel=1e-10)
    assert cpf == pytest.approx(cp, rel=1e-6, abs=1e-22)
    if eps.imag == 0:
        res = X.ideal_two_fluid(c1, c1s, c2, c2s, e1, e2)
        assert res.eps_r == pytest.approx(eps.real, rel=1e-10)


def test_two_fluid_propagates_uncertainty():
    area, s, x, cp, eps, e1 = 2e-3, 3e-3, 0.6, 0.4e-12, 2.3, 1.0
    e2 = ufloat(2.0243, 0.0005)
    c1 = plates(area, [(s, e1)], cp)
    c2 = plates(area, [(s, e2.n)], cp)
    c1s = plates(area, [((1 - x) * s, e1), (x * s, eps)], cp)
    c2s = plates(area, [((1 - x) * s, e2.n), (x * s, eps)], cp)
    res = X.ideal_two_fluid(c1, c1s, c2, c2s, e1, e2)
    assert res.eps_r.n == pytest.approx(eps, rel=1e-10)
    # second method: the derivative d eps / d e2 by central differences of the formula
    h = 1e-7
    up = X._two_fluid_formula(c1, c1s, c2, c2s, e1, e2.n + h)[0]
    dn = X._two_fluid_formula(c1, c1s, c2, c2s, e1, e2.n - h)[0]
    assert res.eps_r.s == pytest.approx(abs(up - dn) / (2 * h) * 0.0005, rel=1e-5)


def test_liquid_cell_formula():
    # C_e = e0 C_v + C_p, C_f = eps C_v + C_p (common practice, no source)
    cv, cp, e0, eps = 4.1e-12, 1.2e-12, 1.000536, 78.3 - 1.5j
    ce, cf = e0 * cv + cp, eps * cv + cp
    assert complex(X._liquid_formula(ce, cf, e0, cp)) == pytest.approx(eps, rel=1e-12)
    assert X.ideal_liquid(ce, cf.real, e0, cp) == pytest.approx(eps.real, rel=1e-12)


def test_closed_forms_refuse_bad_readings():
    with pytest.raises(cb.ExtractionError, match="not above the empty"):
        X.ideal_air_gap("12 pF", "10 pF", "2 mm", "3 mm")
    with pytest.raises(cb.ExtractionError, match="thicker than the electrode spacing"):
        X.ideal_air_gap("10 pF", "12 pF", "3 mm", "2 mm")
    with pytest.raises(cb.InputError, match="outside the valid range"):
        X.ideal_air_gap("-10 pF", "12 pF", "2 mm", "3 mm")
    with pytest.raises(cb.InputError, match="not a capacitance"):
        X.ideal_contacting("10 mm", "2 mm", 1e-3)
    with pytest.raises(cb.InputError, match="outside the valid range"):
        X.ideal_contacting(0.0, "2 mm", 1e-3)
    with pytest.raises(cb.ExtractionError, match="no root"):
        X.ideal_micrometer("2 mm", "2 mm", "2.5 mm")  # re-set wider than loaded
    with pytest.raises(cb.ExtractionError, match="same permittivity"):
        X.ideal_two_fluid("10 pF", "12 pF", "20 pF", "22 pF", 2.0, 2.0)
    with pytest.raises(cb.ExtractionError, match="fraction"):
        # readings that would need the specimen to fill more than the spacing
        X.ideal_two_fluid("10 pF", "30 pF", "20 pF", "60 pF", 1.0, 2.0)
    with pytest.raises(cb.ExtractionError, match="not above the empty"):
        X.ideal_liquid("10 pF", "9 pF")
    # a value with uncertainty is range-checked on its nominal value
    with pytest.raises(cb.InputError, match="outside the valid range"):
        X.ideal_contacting(cb.Q_(ufloat(-1.0, 0.1), "pF"), "2 mm", 1e-3)
    # all errors are capbench errors that are also ValueErrors
    with pytest.raises(ValueError):
        X.ideal_liquid("10 pF", "9 pF")


def test_uncertain_readings_flow_through_closed_forms():
    spec = U.AccuracySpec.parse("0.05 % of reading + 0.002 pF")
    c0 = spec.apply(cb.Q_(10.0, "pF"), "C0 bridge")
    c = spec.apply(cb.Q_(13.0, "pF"), "C bridge")
    t = U.type_a(["2.000 mm", "2.002 mm", "1.999 mm"], "thickness")
    eps = X.ideal_air_gap(c0, c, t, "3 mm")
    b = U.budget(eps, "eps")
    assert {r.name for r in b.rows} == {"C0 bridge", "C bridge", "thickness"}
    assert b.shares_total == pytest.approx(1.0, abs=1e-12)


def test_methods_without_fem_give_the_closed_forms():
    # fem=False: the method's result is its closed form (ASTM D150 formulas above)
    fx = cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="0.5 mm",
        guard_width="10 mm",
        specimen_thickness="2 mm",
        unguarded_radius="50 mm",
    )
    res = X.contacting(fx, "20.5 pF", dissipation=3e-4, fem=False)
    area = X.guard_effective_area("25 mm", "0.5 mm", "2 mm").to("m**2").magnitude
    assert res[0].eps_r.n == pytest.approx(20.5e-12 * 2e-3 / (EPS0 * area), rel=1e-12)
    assert res[0].tan_delta.n == pytest.approx(3e-4, rel=1e-9)
    assert res.solves == 0 and res[0].correction == 0.0
    gapped = cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="0.5 mm",
        guard_width="10 mm",
        specimen_thickness="2 mm",
        unguarded_radius="50 mm",
        air_gap="1 mm",
    )
    res = X.air_gap(gapped, "14 pF", "17 pF", fem=False)
    assert res[0].eps_r.n == pytest.approx(X.ideal_air_gap("14 pF", "17 pF", "2 mm", "3 mm"))
    # a reading below the vacuum capacitance has no root >= 1, with or without the FEM
    with pytest.raises(cb.ExtractionError, match="outside 1 to 10000"):
        X.contacting(fx, "5 pF", fem=False)
