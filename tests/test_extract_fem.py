"""FEM-corrected extraction: each method inverts readings that the field solver made on a
fixture of known permittivity.

The synthetic readings come straight from ``capbench.solve`` on fixtures built here
(independently of capbench.extract); each method must give back the permittivity, and
the loss, to 1e-6 (the issue's acceptance criterion; the solves share meshes, so the
inversion is limited by the Newton tolerance, about 1e-8, and where the test's fixture
differs from the one the method builds, by the discretisation error, about 1e-7).
Further checks use second methods: the loss dilution against the filling factor from the
solver's sensitivity, the linearised thickness sensitivity against re-extraction at a
changed thickness, the covariance of two frequencies against the budget rows.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from threadpoolctl import threadpool_limits
from uncertainties import covariance_matrix

import capbench as cb
from capbench import extract as X
from capbench import uncertainty as U

RTOL = 1e-6
TOL = 1e-6  # acceptance: relative error of the recovered eps' and eps''


def fem(fx, eps, medium=None):
    """Complex terminal capacitance (F) of ``fx`` with the specimen at ``eps``."""
    if medium is not None:
        fx = fx.with_permittivity(cb.MEDIUM, medium)
    # complex factorisations on one BLAS thread (many times faster here, see extract.py)
    with threadpool_limits(limits=1, user_api="blas"):
        sol = cb.solve(fx.with_permittivity("specimen", eps), rtol=RTOL)
    return complex(sol.terminal) * (fx.length or 1.0), sol


def reading(fx, eps, medium=None):
    """Bench-style reading: parallel capacitance C and dissipation factor D."""
    c, _ = fem(fx, eps, medium)
    return c.real, -c.imag / c.real


GUARDED = dict(
    electrode_radius="25 mm", guard_gap="0.5 mm", guard_width="10 mm", unguarded_radius="50 mm"
)
EPS_F = [
    complex(2.3003, -2.3003 * 2.1e-4),
    complex(2.3, -2.3 * 3e-4),
    complex(2.2996, -2.2996 * 4.6e-4),
]
FREQ = [100.0, 1e3, 1e4]


@pytest.fixture(scope="module")
def guarded():
    return cb.guarded_cell(specimen_thickness="2 mm", specimen_eps_r=2.3, **GUARDED)


@pytest.fixture(scope="module")
def contacting_result(guarded):
    cd = [reading(guarded, e) for e in EPS_F]
    t = U.type_a(["2.001 mm", "1.999 mm", "2.000 mm", "2.0015 mm", "1.9985 mm"], "thickness")
    spec = U.AccuracySpec.parse("0.05 % of reading + 0.002 pF")
    caps = [
        spec.apply(cb.Q_(c * 1e12, "pF"), f"bridge C at {f:g} Hz")
        for (c, _), f in zip(cd, FREQ, strict=True)
    ]
    ds = [
        U.type_b(d, half_width=2e-5, name=f"bridge D at {f:g} Hz")
        for (_, d), f in zip(cd, FREQ, strict=True)
    ]
    res = X.contacting(guarded, caps, dissipation=ds, frequency=FREQ, thickness=t, rtol=RTOL)
    return res, cd, t


def test_contacting_guarded_inverts_to_1e6(contacting_result):
    res, _cd, _t = contacting_result
    assert res.fem and res.method == "contacting" and len(res) == 3
    for p, e in zip(res.points, EPS_F, strict=True):
        assert p.eps_r.n == pytest.approx(e.real, rel=TOL)
        assert p.eps_loss.n == pytest.approx(-e.imag, rel=TOL)
        assert p.tan_delta.n == pytest.approx(-e.imag / e.real, rel=TOL)
    assert res.rel_error < 1e-6


def test_contacting_loss_dilution_matches_filling_factor(guarded, contacting_result):
    # the fringing field in air dilutes the specimen's loss: D = tan delta * F to first
    # order, F = eps' (dC/deps') / C the share of the field energy in the specimen;
    # second method: F from a separate real solve's sensitivity
    res, cd, _t = contacting_result
    c, sol = fem(guarded, EPS_F[1].real)
    filling = EPS_F[1].real * sol.sensitivity("specimen").real / c.real
    assert 0.95 < filling < 1.0
    d = cd[1][1]
    assert res[1].tan_delta.n == pytest.approx(d / filling, rel=1e-3)  # O(tan delta) terms
    assert res[1].tan_delta_ideal.n == pytest.approx(d, rel=1e-9)  # closed form: tan delta = D


def test_contacting_correction_against_closed_form(contacting_result):
    # the guarded cell without a shield collects flux below the guarded electrode, so the
    # FEM capacitance exceeds eps0 eps A_eff / t and the corrected eps_r is lower; the
    # closed form uses ASTM D150's effective area (see test_extract.py)
    res, _cd, _t = contacting_result
    for p in res.points:
        assert -0.03 < p.correction < -0.005
        expected = p.eps_r.n / p.eps_r_ideal.n - 1
        assert p.correction == pytest.approx(expected)


def test_linearised_thickness_sensitivity_matches_re_extraction(guarded, contacting_result):
    # second method: extract again at thickness t +- 0.5 % and difference the results
    res, cd, t = contacting_result
    c = [cb.Q_(x * 1e12, "pF") for x, _ in cd]
    t0 = t.to("mm").magnitude.n
    h = 0.005 * t0
    up = X.contacting(guarded, c, thickness=f"{t0 + h} mm", rtol=RTOL)[1].eps_r.n
    dn = X.contacting(guarded, c, thickness=f"{t0 - h} mm", rtol=RTOL)[1].eps_r.n
    slope = (up - dn) / (2 * h)  # per mm
    row = res[1].budget.row("thickness")
    assert cb.Q_(1.0, row.unit) == cb.Q_(1.0, "mm")
    assert row.sensitivity == pytest.approx(slope, rel=5e-3)
    # near eps_r / t for an almost parallel-plate field (common practice, no source)
    assert row.sensitivity == pytest.approx(res[1].eps_r.n / t0, rel=0.05)


def test_frequencies_are_correlated_through_common_inputs(contacting_result):
    # cov(eps(f1), eps(f2)) = sum over shared inputs c_i(f1) c_i(f2) u_i^2 (GUM 5.2.2),
    # computed here from the budget rows
    res, _cd, _t = contacting_result
    b0, b2 = res[0].budget, res[2].budget
    shared = {r.name for r in b0.rows} & {r.name for r in b2.rows}
    assert "thickness" in shared and "FEM discretisation (with specimen)" in shared
    cov = sum(b0.row(n).sensitivity * b2.row(n).sensitivity * b0.row(n).u ** 2 for n in shared)
    got = covariance_matrix([res[0].eps_r, res[2].eps_r])[0][1]
    assert got == pytest.approx(cov, rel=1e-9)
    assert got > 0


def test_budget_shares_sum_to_one(contacting_result):
    res, _cd, _t = contacting_result
    for p in res.points:
        for b in (p.budget, p.loss_budget):
            assert b.shares_total == pytest.approx(1.0, abs=1e-12)
            assert b.correlation_share == 0.0
    text = res.table()
    assert "tan delta" in text and "1 kHz" in text
    arrays = res.arrays()
    assert arrays["eps_r"].shape == (3,) and np.all(arrays["u_tan_delta"] > 0)


def test_monte_carlo_cross_check_of_an_extraction(contacting_result):
    res, _cd, _t = contacting_result
    mc = res.monte_carlo(1, rng=5, adaptive=False, trials=200_000)
    # the hybrid model's mean sits at the result (nonlinearity is second order here):
    # within five Monte Carlo standard errors
    assert mc.value == pytest.approx(res[1].eps_r.n, abs=5 * mc.u / math.sqrt(mc.trials))
    # the type A thickness (4 dof) is sampled from t_4, whose variance is 2 u^2
    # (JCGM 101 6.4.9): the Monte Carlo u exceeds the linear one
    assert mc.u > res[1].eps_r.s
    assert mc.adequate in (True, False)
    mc_tan = res.monte_carlo(1, "tan_delta", rng=6, adaptive=False, trials=100_000)
    assert mc_tan.u == pytest.approx(res[1].tan_delta.s, rel=0.05)


def test_conductance_gives_the_same_loss(guarded):
    c, d = reading(guarded, EPS_F[1])
    f = 1e3
    g = d * 2 * math.pi * f * c
    a = X.contacting(guarded, c, dissipation=d, rtol=RTOL)[0]
    b = X.contacting(guarded, c, conductance=g, frequency=f, rtol=RTOL)[0]
    assert b.tan_delta.n == pytest.approx(a.tan_delta.n, rel=1e-12)


def test_contacting_unguarded_discs():
    fx = cb.parallel_discs(radius="20 mm", gap="2 mm", specimen=cb.Specimen("2 mm", 3.1))
    c, d = reading(fx, complex(3.1, -3.1e-3))
    res = X.contacting(fx, cb.Q_(c, "F"), dissipation=d, thickness="2 mm", rtol=RTOL)
    assert res[0].eps_r.n == pytest.approx(3.1, rel=TOL)
    assert res[0].eps_loss.n == pytest.approx(3.1e-3, rel=TOL)
    # unguarded discs: the fringe adds capacitance, the closed form overestimates eps_r
    assert res[0].correction < -0.01


def test_air_gap_guarded_with_loss():
    fx = cb.guarded_cell(specimen_thickness="2 mm", air_gap="0.5 mm", **GUARDED)
    eps = complex(2.3, -2.3 * 3e-4)
    c0, d0 = reading(fx, 1.0)
    c, d = reading(fx, eps)
    res = X.air_gap(fx, c0, c, dissipation=d, empty_dissipation=d0, rtol=RTOL)
    p = res[0]
    assert p.eps_r.n == pytest.approx(eps.real, rel=TOL)
    assert p.eps_loss.n == pytest.approx(-eps.imag, rel=TOL)
    # the closed form (series capacitors) corrects the air gap in the loss too: its tan
    # delta is far above the reading's D
    assert p.tan_delta_ideal.n > 1.5 * d
    assert abs(p.correction) < 0.05


def test_air_gap_discs_with_uncertain_spacing():
    fx = cb.parallel_discs(radius="20 mm", gap="3 mm", specimen=cb.Specimen("2 mm", 4.0))
    c0, _ = reading(fx, 1.0)
    c, _ = reading(fx, 4.0)
    s = U.type_b("3 mm", half_width="0.005 mm", name="spacing")
    res = X.air_gap(fx, c0, c, spacing=s, thickness="2 mm", rtol=RTOL)
    assert res[0].eps_r.n == pytest.approx(4.0, rel=TOL)
    row = res[0].budget.row("spacing")
    assert row.sensitivity > 0  # a wider gap at the same readings means a higher eps_r
    assert res[0].budget.shares_total == pytest.approx(1.0)


def test_micrometer_discs_with_residual_difference():
    # loaded reading with the electrodes on the specimen (s1 = t), empty at a re-set s2
    # whose reading differs slightly; the method corrects with C1 - C2
    eps = complex(2.3, -2.3 * 5e-4)
    t = 2e-3
    loaded = cb.parallel_discs(radius="20 mm", gap=t, specimen=cb.Specimen(t, 2.3))
    s2 = 0.88e-3
    c1, d1 = reading(loaded, eps)
    c2 = cb.solve(cb.parallel_discs(radius="20 mm", gap=s2), rtol=RTOL).terminal.real
    res = X.micrometer(
        loaded,
        thickness=t,
        loaded_spacing=t,
        empty_spacing=s2,
        capacitance=c1,
        empty_capacitance=c2,
        dissipation=d1,
        empty_dissipation=0.0,
        rtol=RTOL,
    )
    p = res[0]
    # the test's empty cell has no specimen region; the method's has one at eps_r 1:
    # different meshes, discretisation differences of ~1e-8
    assert p.eps_r.n == pytest.approx(eps.real, rel=TOL)
    assert p.eps_loss.n == pytest.approx(-eps.imag, rel=1e-5)
    assert abs(p.correction) < 0.05


@pytest.fixture(scope="module")
def touching_cell():
    """Micrometer electrodes resting on a 2 mm specimen of eps' 2.3 (20 mm radius), read
    C1; the empty electrodes at s2 = 0.88 mm read C2 (solves at 1e-7, the readings)."""
    eps, t, s2 = 2.3, 2e-3, 0.88e-3
    loaded = cb.parallel_discs(radius="20 mm", gap=t, specimen=cb.Specimen(t, eps))
    c1 = cb.solve(loaded, rtol=1e-7).terminal.real
    c2 = cb.solve(cb.parallel_discs(radius="20 mm", gap=s2), rtol=1e-7).terminal.real
    return eps, t, s2, loaded, c1, c2


def test_micrometer_touching_electrodes_with_uncertain_thickness_and_spacing(touching_cell):
    # s1 = t read on two micrometers: the thickness cannot be varied alone (a thinner
    # specimen opens an air film no mesh resolves), so the method varies L = s1 = t and
    # splits dC/dL by the series model (extract._touching_fd)
    eps, _t, s2, loaded, c1, c2 = touching_cell

    def run(length_mm, fem=True):
        return X.micrometer(
            loaded,
            thickness=U.type_b(f"{length_mm} mm", u="1 um", name="thickness"),
            loaded_spacing=U.type_b(f"{length_mm} mm", u="2 um", name="loaded spacing"),
            empty_spacing=s2,
            capacitance=c1,
            empty_capacitance=c2,
            fem=fem,
            rtol=RTOL,
        )[0]

    p = run(2.0)
    assert p.eps_r.n == pytest.approx(eps, rel=TOL)
    sens = {r.name: r.sensitivity for r in p.budget.rows}  # per mm
    # the sum of the two is the FEM's own dC/dL: against a central difference of the
    # whole extraction at L +- 10 um (its error ~ the solves' 1e-6 over the 1 % step)
    step = 0.01
    slope = (run(2.0 + step).eps_r.n - run(2.0 - step).eps_r.n) / (2 * step)
    assert sens["thickness"] + sens["loaded spacing"] == pytest.approx(slope, rel=1e-3)
    # each against the closed form's, eps = t / (t - s1 + s2 C2/C1): equal but for the
    # fringing field, which changes dC/dL by a few per cent in this d/a = 0.1 cell
    ideal = {r.name: r.sensitivity for r in run(2.0, fem=False).budget.rows}
    for name in ("thickness", "loaded spacing"):
        assert sens[name] == pytest.approx(ideal[name], rel=0.05)


def test_micrometer_film_below_mesh_resolution_moves_eps_as_the_closed_form_says(
    touching_cell,
):
    # the loaded spacing read 1.2 um (0.06 %) above, then 1 um below, the thickness: too
    # thin a film to mesh, so the method solves the touching cell and adds the film to
    # first order (extract._through_film). Its effect on eps' must match the closed
    # form's, eps = t / (t - s1 + s2 C2/C1), exact in the uniform field, to within the
    # fringing field's share of dC/dL (a few per cent in this d/a = 0.1 cell)
    eps, t, s2, loaded, c1, c2 = touching_cell

    def run(s1, fem=True):
        kw = dict(thickness=t, loaded_spacing=s1, empty_spacing=s2, rtol=RTOL, fem=fem)
        return X.micrometer(loaded, capacitance=c1, empty_capacitance=c2, **kw)[0]

    touching, closed = run(t).eps_r.n, run(t, fem=False).eps_r.n
    assert touching == pytest.approx(eps, rel=TOL)
    for film in (1.2e-6, -1e-6):
        p = run(t + film)
        shift = p.eps_r.n - touching
        expected = run(t + film, fem=False).eps_r.n - closed
        assert abs(expected) > 1e-4 * eps  # a film that matters at the 1e-4 level
        assert shift == pytest.approx(expected, rel=0.05)
        # the model's own error is in the budget: its half-width for this cell
        # (rectangular) of the shift
        row = next(r for r in p.budget.rows if r.name == "air film, first-order model")
        u_model = X.film_model_half_width(t, 0.02) / math.sqrt(3) * abs(shift)
        assert abs(row.contribution) == pytest.approx(u_model, rel=0.02)


@pytest.mark.slow
def test_micrometer_first_order_film_within_its_stated_error_of_a_meshed_film(
    touching_cell, monkeypatch
):
    # a 20 um film (1 % of t) is meshed as it is; the first-order model, forced to take
    # it, must land within the error the budget states for it (film_model_half_width of
    # the film's effect on eps'); the second method is the meshed film itself
    _eps, t, s2, loaded, c1, c2 = touching_cell
    film = 20e-6

    def run(s1):
        kw = dict(thickness=t, loaded_spacing=s1, empty_spacing=s2, rtol=RTOL)
        return X.micrometer(loaded, capacitance=c1, empty_capacitance=c2, **kw)[0].eps_r.n

    touching, meshed = run(t), run(t + film)
    monkeypatch.setattr(X, "FILM_TIE", 0.05)
    first_order = run(t + film)
    half = X.film_model_half_width(t, 0.02)
    assert abs(first_order - meshed) <= half * abs(first_order - touching)


@pytest.mark.slow
@pytest.mark.parametrize("radius_mm", [1.5, 3.0])
def test_first_order_film_on_small_discs_within_its_stated_error(radius_mm, monkeypatch):
    """Issue 13: on small discs (1.1 mm specimen, film 0.15 % of the spacing) the model
    was 6.9 % and more of the film's effect off against a stated 5 %; the bound now grows
    with t / a. Second method: the same film meshed (FILM_TIE lowered to force it)."""
    t, frac, eps = 1.1e-3, 0.0015, 2.3
    s2 = 0.5 * t
    loaded = cb.parallel_discs(radius=f"{radius_mm} mm", gap=t, specimen=cb.Specimen(t, eps))
    c1 = cb.solve(loaded, rtol=1e-7).terminal.real
    c2 = cb.solve(cb.parallel_discs(radius=f"{radius_mm} mm", gap=s2), rtol=1e-7).terminal.real

    def run(s1):
        kw = dict(thickness=t, loaded_spacing=s1, empty_spacing=s2, rtol=RTOL)
        return X.micrometer(loaded, capacitance=c1, empty_capacitance=c2, **kw)[0].eps_r.n

    touching, first_order = run(t), run(t * (1 + frac))
    monkeypatch.setattr(X, "FILM_TIE", frac / 2)
    monkeypatch.setattr(X, "FILM_MESH_MIN", 0.0)
    meshed = run(t * (1 + frac))
    half = X.film_model_half_width(t, radius_mm * 1e-3)
    assert abs(first_order - meshed) <= half * abs(first_order - touching)


@pytest.fixture(scope="module")
def two_fluid_case():
    eps = complex(2.3, -2.3 * 4e-4)
    e1, e2 = 1.000536, 2.0243
    true = cb.parallel_discs(radius="20 mm", gap="2 mm", specimen=cb.Specimen("1.5 mm", 2.3))
    stray = 0.35e-12
    c1 = reading(true, e1, e1)[0] + stray
    c2 = reading(true, e2, e2)[0] + stray
    r1, d1 = reading(true, eps, e1)
    r2, d2 = reading(true, eps, e2)
    # the stray capacitance is lossless: D of the total reading
    d1, d2 = d1 * r1 / (r1 + stray), d2 * r2 / (r2 + stray)
    r1, r2 = r1 + stray, r2 + stray
    # the method is given the cell with a nominal (wrong) thickness: it fits it
    nominal = cb.parallel_discs(radius="20 mm", gap="2 mm", specimen=cb.Specimen("1.52 mm", 2.3))
    res = X.two_fluid(
        nominal,
        c1,
        r1,
        c2,
        r2,
        eps_fluid1=e1,
        eps_fluid2=e2,
        dissipation1=d1,
        dissipation2=d2,
        rtol=RTOL,
    )
    return res, eps, stray


@pytest.mark.slow
def test_two_fluid_fits_eps_and_thickness(two_fluid_case):
    res, eps, stray = two_fluid_case
    p = res[0]
    assert p.eps_r.n == pytest.approx(eps.real, rel=TOL)
    assert res.extra("thickness")[0].to("mm").magnitude.n == pytest.approx(1.5, rel=TOL)
    assert res.extra("stray")[0].to("pF").magnitude.n == pytest.approx(stray * 1e12, rel=1e-4)
    # the loss is fitted in complex arithmetic (no first-order truncation)
    assert p.eps_loss.n == pytest.approx(-eps.imag, rel=TOL)
    assert abs(p.correction) < 0.05


def test_two_fluid_with_loss_inverts_its_forward_model():
    """eps' 11.4, tan delta 0.017 (issue 13): fitting the real parts of the readings to
    C(eps') missed eps' by 2.3e-4, growing as tan delta squared; the complex fit recovers
    eps' and eps'' of readings made by the forward model (the two-fluid method of ASTM
    D150's fluid-displacement procedure, readings from the field solver) to the solve's
    tolerance."""
    eps = complex(11.4, -11.4 * 0.017)
    e1, e2 = 1.000536, 2.0243
    true = cb.parallel_discs(radius="20 mm", gap="2 mm", specimen=cb.Specimen("1.5 mm", 11.4))
    stray = 0.35e-12
    c1 = reading(true, e1, e1)[0] + stray
    c2 = reading(true, e2, e2)[0] + stray
    r1, d1 = reading(true, eps, e1)
    r2, d2 = reading(true, eps, e2)
    d1, d2 = d1 * r1 / (r1 + stray), d2 * r2 / (r2 + stray)
    nominal = cb.parallel_discs(radius="20 mm", gap="2 mm", specimen=cb.Specimen("1.52 mm", 11))
    res = X.two_fluid(
        nominal,
        c1,
        r1 + stray,
        c2,
        r2 + stray,
        eps_fluid1=e1,
        eps_fluid2=e2,
        dissipation1=d1,
        dissipation2=d2,
        rtol=RTOL,
    )
    p = res[0]
    assert p.eps_r.n == pytest.approx(eps.real, rel=TOL)
    assert p.eps_loss.n == pytest.approx(-eps.imag, rel=TOL)
    assert res.extra("thickness")[0].to("mm").magnitude.n == pytest.approx(1.5, rel=TOL)


@pytest.fixture(scope="module")
def water_cell():
    return cb.coaxial_cell("5 mm", "10 mm", "50 mm", guard_length="10 mm", guard_gap="1 mm")


def test_liquid_coaxial_guarded(water_cell):
    from capbench import materials as mat

    e0 = mat.air_eps_r()
    water = complex(78.3, -78.3 * 0.02)
    stray = 1.2e-12
    ce = reading(water_cell, e0)[0] + stray
    cf, df = reading(water_cell, water)
    df = df * cf / (cf + stray)
    cf += stray
    res = X.liquid(water_cell, ce, cf, dissipation=df, empty_eps_r=e0, rtol=RTOL)
    p = res[0]
    assert p.eps_r.n == pytest.approx(water.real, rel=TOL)
    assert p.eps_loss.n == pytest.approx(-water.imag, rel=TOL)
    assert res.extra("stray")[0].to("pF").magnitude.n == pytest.approx(1.2, rel=1e-6)
    # cell constant against the coaxial closed form 2 pi eps0 L / ln(b/a) (textbook): the
    # guard gaps add flux at both ends (through the gap and around onto the low
    # electrode's outer face), less than the gaps plus the wall thickness would
    # (a bound, common practice, no source)
    ideal = 2 * math.pi * cb.EPS0 * 0.050 / math.log(2) * 1e12
    cc = res.extra("cell_constant").to("pF").magnitude
    assert 1.0 < cc / ideal < 1 + (2 * 0.001 + 2 * 0.001) / 0.050
    # without the stray correction the closed form is far off
    assert p.correction > 0.005


def test_liquid_parallel_discs():
    cell = cb.parallel_discs(radius="15 mm", gap="1 mm", specimen=cb.Specimen("1 mm", 1.0))
    eps = complex(2.0243, -2.0243 * 1e-4)
    ce = reading(cell, 1.0)[0]
    cf, df = reading(cell, eps)
    res = X.liquid(cell, ce, cf, dissipation=df, rtol=RTOL)
    assert res[0].eps_r.n == pytest.approx(eps.real, rel=TOL)
    assert res[0].eps_loss.n == pytest.approx(-eps.imag, rel=TOL)
    assert res.extra("stray")[0].to("pF").magnitude.n == pytest.approx(0.0, abs=1e-6)


def test_bad_readings_get_clear_errors(guarded):
    c_vac = fem(guarded, 1.0)[0].real
    with pytest.raises(cb.ExtractionError, match="no permittivity root"):
        X.contacting(guarded, 0.9 * c_vac, rtol=RTOL)
    with pytest.raises(cb.InputError, match="not a capacitance"):
        X.contacting(guarded, "20 mm", rtol=RTOL)
    with pytest.raises(cb.InputError, match="outside the valid range"):
        X.contacting(guarded, "-20 pF", rtol=RTOL)
    with pytest.raises(cb.InputError, match="outside the valid range"):
        X.contacting(guarded, "0 pF", rtol=RTOL)
    with pytest.raises(cb.InputError, match="needs its frequency"):
        X.contacting(guarded, "20 pF", conductance="1 nS", rtol=RTOL)
    with pytest.raises(cb.InputError, match="not an uncertain dimension"):
        X.contacting(guarded, "20 pF", dimensions={"colour": "1 mm"}, rtol=RTOL)
    gapped = cb.guarded_cell(specimen_thickness="2 mm", air_gap="0.5 mm", **GUARDED)
    with pytest.raises(cb.ExtractionError, match="use air_gap"):
        X.contacting(gapped, "20 pF", rtol=RTOL)
    with pytest.raises(cb.ExtractionError, match="not above the empty"):
        X.air_gap(gapped, "16 pF", "15 pF", rtol=RTOL)
    with pytest.raises(cb.ExtractionError, match="thicker than the electrode spacing"):
        X.air_gap(gapped, "15 pF", "16 pF", thickness="3 mm", rtol=RTOL)
    with pytest.raises(cb.ExtractionError, match="supports fixtures"):
        X.contacting(cb.coaxial_cell("5 mm", "10 mm", "50 mm"), "20 pF", rtol=RTOL)
    with pytest.raises(cb.InputError, match="2 values for 3 readings"):
        X.contacting(guarded, ["20 pF"] * 3, dissipation=[1e-4, 2e-4], rtol=RTOL)
