"""capbench.uncertainty against the GUM (JCGM 100:2008) and its Supplement 1 (JCGM 101:2008).

Sources, named beside each check:
* GUM example H.2 (simultaneous resistance and reactance): the five sets of (V, I, phi)
  of its table H.2 are from memory; they reproduce the means, standard uncertainties and
  correlation coefficients that the GTC documentation (gtc.readthedocs.io, "Resistance
  and reactance measurement (GUM H2)") quotes from the GUM (4.9990 V, 3.2 mV;
  19.6610 mA, 9.5 uA; 1.04446 rad, 0.75 mrad; r = -0.36, 0.86, -0.65), which the first
  test checks. The published results (R = 127.732 ohm, u 0.071; X = 219.847 ohm, u 0.295;
  Z = 254.260 ohm, u 0.236; r(R,X) = -0.588, r(R,Z) = -0.485, r(X,Z) = 0.993) are from
  memory.
* GUM G.4.1 example (Welch-Satterthwaite, nu_eff = 19) and table G.2 (t factors): from
  memory.
* JCGM 101 9.2 (additive model) and 9.3 (mass calibration): inputs and published results
  from memory; each Monte Carlo result is also checked against an exact value computed
  here by a second method (Irwin-Hall distribution, numerical convolution, moments).
"""

from __future__ import annotations

import math
import statistics

import numpy as np
import pytest
from numpy.polynomial.legendre import leggauss
from scipy import integrate, optimize
from scipy import stats as sst
from uncertainties import correlation_matrix
from uncertainties.umath import cos, sin

import capbench as cb
from capbench import uncertainty as U

# GUM table H.2, the five sets of simultaneous readings (from memory; checked below)
H2 = [
    ("5.007 V", "19.663 mA", 1.0456),
    ("4.994 V", "19.639 mA", 1.0438),
    ("5.005 V", "19.640 mA", 1.0468),
    ("4.990 V", "19.685 mA", 1.0428),
    ("4.999 V", "19.678 mA", 1.0433),
]


@pytest.fixture(scope="module")
def h2():
    V, I, phi = U.type_a_correlated(H2, ["V", "I", "phi"], ["V", "mA", ""])
    R = (V * cos(phi) / I).to("ohm")
    X = (V * sin(phi) / I).to("ohm")
    Z = (V / I).to("ohm")
    return V, I, phi, R, X, Z


def test_h2_input_summary_matches_quoted_gum_values(h2):
    # GTC documentation quoting GUM H.2: means, u and correlations of the inputs
    V, I, phi, *_ = h2
    assert round(V.magnitude.n, 4) == 4.9990
    assert round(V.magnitude.s, 4) == 0.0032
    assert round(I.magnitude.n, 4) == 19.6610
    assert round(I.magnitude.s, 4) == 0.0095
    assert round(phi.n, 5) == 1.04446
    assert round(phi.s, 5) == 0.00075
    r = correlation_matrix([V.magnitude, I.magnitude, phi])
    assert round(r[0, 1], 2) == -0.36
    assert round(r[0, 2], 2) == 0.86
    assert round(r[1, 2], 2) == -0.65


def test_h2_results_reproduce_published_digits(h2):
    # GUM H.2, table H.3 (from memory): values and uncertainties to their digits. First
    # approach, the law of propagation with the correlated means (GUM 5.2.2).
    *_, R, X, Z = h2
    assert round(R.magnitude.n, 3) == 127.732
    assert round(R.magnitude.s, 3) == 0.071
    assert round(X.magnitude.n, 3) == 219.847
    # linearised in full precision u(X) = 0.29558 ohm; the published 0.295 is what the
    # second approach gives (below); the GTC documentation notes round-off in the GUM's
    # own first-approach arithmetic. One unit of the last digit.
    assert X.magnitude.s == pytest.approx(0.295, abs=0.001)
    assert round(Z.magnitude.n, 3) == 254.260
    assert round(Z.magnitude.s, 3) == 0.236
    r = correlation_matrix([R.magnitude, X.magnitude, Z.magnitude])
    assert round(r[0, 1], 3) == -0.588
    assert round(r[0, 2], 3) == -0.485
    assert round(r[1, 2], 3) == 0.993


def test_h2_second_approach_reproduces_published_digits():
    # GUM H.2, second approach (from memory): R, X, Z from each set, then type A
    # statistics of the five values; every published digit
    rk, xk, zk = [], [], []
    for v, i, p in H2:
        vv, ii = cb.Q_(v).to("V").m, cb.Q_(i).to("A").m
        rk.append(vv * math.cos(p) / ii)
        xk.append(vv * math.sin(p) / ii)
        zk.append(vv / ii)
    R, X, Z = (U.type_a(k, name) for k, name in ((rk, "R"), (xk, "X"), (zk, "Z")))
    assert (round(R.n, 3), round(R.s, 3)) == (127.732, 0.071)
    assert (round(X.n, 3), round(X.s, 3)) == (219.847, 0.295)
    assert (round(Z.n, 3), round(Z.s, 3)) == (254.260, 0.236)
    r = np.corrcoef([rk, xk, zk])
    assert (round(r[0, 1], 3), round(r[0, 2], 3), round(r[1, 2], 3)) == (-0.588, -0.485, 0.993)


def test_h2_first_and_second_approach_agree(h2):
    # GUM H.2: the two approaches agree to the published digits (f(mean) and mean(f)
    # differ at second order, 4e-6 of R here)
    *_, R, _X, _Z = h2
    rk = [cb.Q_(v).to("V").m * math.cos(p) / cb.Q_(i).to("A").m for v, i, p in H2]
    assert round(R.magnitude.n, 3) == round(statistics.fmean(rk), 3)
    assert round(R.magnitude.s, 3) == round(statistics.stdev(rk) / math.sqrt(len(rk)), 3)


def test_h2_budget_rows_and_correlation_term(h2):
    *_, R, _X, _Z = h2
    b = U.budget(R, "R")
    assert {r.name for r in b.rows} == {"V", "I", "phi"}
    # sensitivity coefficients against the analytic derivatives of R = V cos(phi) / I
    v, i, p = 4.999, 19.661e-3, 1.04446
    assert b.row("V").sensitivity == pytest.approx(math.cos(p) / i, rel=1e-9)
    assert b.row("I").sensitivity == pytest.approx(-v * math.cos(p) / i**2 / 1e3, rel=1e-9)
    assert b.row("phi").sensitivity == pytest.approx(-v * math.sin(p) / i, rel=1e-9)
    # shares of the rows plus the correlation term make up the variance (GUM 5.2.2)
    assert b.shares_total == pytest.approx(1.0, abs=1e-12)
    assert b.correlation_share < 0  # the correlations reduce u(R) here
    assert b.u == pytest.approx(R.magnitude.s, rel=1e-12)
    # five sets: n - 1 = 4 degrees of freedom for the correlated group
    assert b.dof == pytest.approx(4.0)


def test_shares_sum_to_one_for_independent_inputs():
    # common practice, no source: the shares of an uncorrelated budget sum to 100 %
    t = U.type_a(["2.012 mm", "2.015 mm", "2.013 mm", "2.011 mm", "2.014 mm"], "thickness")
    spec = U.AccuracySpec.parse("0.05 % of reading + 0.002 pF")
    c = spec.apply(cb.Q_(20.7, "pF"), "bridge")
    r = U.type_b("25 mm", half_width="0.01 mm", name="radius")
    y = c * t / (cb.Q_(cb.EPS0, "F/m") * math.pi * r**2)
    b = U.budget(y.to(""), "eps")
    assert sum(row.share for row in b.rows) == pytest.approx(1.0, abs=1e-12)
    assert b.correlation_share == 0.0
    # second method: u_c from the rows' contributions in quadrature, computed here
    uc = math.sqrt(sum(row.contribution**2 for row in b.rows))
    assert uc == pytest.approx(y.to("").magnitude.s, rel=1e-12)


def test_type_a_against_statistics_module():
    # GUM 4.2: mean, s(q)/sqrt(n), nu = n - 1; second method: Python's statistics module
    readings = [2.012, 2.015, 2.013, 2.011, 2.014, 2.016]
    t = U.type_a([f"{x} mm" for x in readings], "thickness")
    assert t.units == cb.ureg.mm
    assert t.magnitude.n == pytest.approx(statistics.fmean(readings), rel=1e-15)
    assert t.magnitude.s == pytest.approx(statistics.stdev(readings) / math.sqrt(6), rel=1e-12)
    assert t.magnitude.source.dof == 5
    assert t.magnitude.source.kind == "A"


def test_type_b_divisors():
    # GUM 4.3.7 (rectangular a/sqrt 3), 4.3.9 (triangular a/sqrt 6); arcsine a/sqrt 2
    # (common practice, no source); u = U/k for a certificate (GUM 4.3.3)
    assert U.type_b(0.0, half_width=1.0, name="r").s == pytest.approx(1 / math.sqrt(3))
    assert U.type_b(0.0, half_width=1.0, distribution="triangular", name="t").s == (
        pytest.approx(1 / math.sqrt(6))
    )
    assert U.type_b(0.0, half_width=1.0, distribution="arcsine", name="a").s == (
        pytest.approx(1 / math.sqrt(2))
    )
    q = U.type_b("10 pF", expanded="0.02 pF", k=2, name="std capacitor")
    assert q.magnitude.s == pytest.approx(0.01)


def test_accuracy_spec_half_width():
    # "x % of reading + y": a = x/100 |reading| + y, rectangular (GUM 4.3.7)
    spec = U.AccuracySpec.parse("0.05 % of reading + 0.002 pF")
    a = spec.half_width(cb.Q_(20.0, "pF"))
    assert a.to("pF").magnitude == pytest.approx(0.012)
    e = spec.error(cb.Q_(20.0, "pF"), "bridge")
    assert e.magnitude.n == 0.0
    assert e.to("pF").magnitude.s == pytest.approx(0.012 / math.sqrt(3))
    # order of the terms does not matter; a dissipation-factor spec is dimensionless
    assert U.AccuracySpec.parse("0.002 pF + 0.05 %").half_width("20 pF").to("pF").m == (
        pytest.approx(0.012)
    )
    d = U.AccuracySpec.parse("0.0001 + 0.5 % of reading").half_width(0.002)
    assert d == pytest.approx(0.0001 + 0.00001)


def test_shared_spec_cancels_in_a_ratio():
    # readings on one range with common gain and offset errors: the gain error cancels in
    # their ratio (common practice, no source)
    spec = U.AccuracySpec.parse("0.1 % of reading")
    c0, c1 = spec.shared([cb.Q_(10.0, "pF"), cb.Q_(20.0, "pF")], "bridge range 1")
    ratio = (c1 / c0).to("").magnitude
    assert ratio.n == pytest.approx(2.0)
    assert ratio.s < 1e-15


def test_welch_satterthwaite_gum_g41_example():
    # GUM G.4.1 example (from memory): Y = b X1 X2 X3, relative u 0.25 %, 0.57 %, 0.82 %
    # from n = 10, 5, 15 readings: u_c/y = 1.03 %, nu_eff = 19, t_95(19) = 2.09
    x1 = U.type_b(1.0, u=0.0025, name="X1", dof=9)
    x2 = U.type_b(1.0, u=0.0057, name="X2", dof=4)
    x3 = U.type_b(1.0, u=0.0082, name="X3", dof=14)
    b = U.budget(x1 * x2 * x3, "Y")
    assert round(100 * b.u, 2) == 1.03
    assert round(b.dof) == 19
    U95, k = b.expanded(p=0.95)
    assert round(k, 2) == 2.09
    assert round(100 * U95, 1) == 2.2


@pytest.mark.parametrize(
    ("dof", "k"),
    [
        (1, 12.71),
        (2, 4.30),
        (3, 3.18),
        (4, 2.78),
        (5, 2.57),
        (10, 2.23),
        (20, 2.09),
        (50, 2.01),
        (math.inf, 1.96),
    ],
)
def test_coverage_factor_gum_table_g2(dof, k):
    # GUM table G.2, p = 95 % (from memory)
    assert round(U.coverage_factor(dof, 0.95), 2) == k


def test_expanded_default_is_the_one_rule_95_percent_from_the_dof():
    """One statement for one value (issue 14): the default k is the t quantile for 95 %
    at the effective degrees of freedom (GUM G.4): 1.959964 for infinite dof (the normal
    quantile) and 2.262157 for 9 (t table, e.g. GUM Table G.2 gives 2.26 for nu = 9);
    an explicit k is still honoured."""
    b = U.budget(U.type_b(1.0, u=0.1, name="x"), "x")
    U95, k = b.expanded()
    assert k == pytest.approx(1.959964, abs=1e-6)
    assert U95 == pytest.approx(0.1959964, abs=1e-7)
    a = U.budget(U.type_a([1.0, 1.1, 0.9, 1.05, 0.95, 1.02, 0.98, 1.01, 0.99, 1.0], "r"), "r")
    assert a.dof == pytest.approx(9)
    assert a.expanded()[1] == pytest.approx(2.262157, abs=1e-6)
    assert b.expanded(k=2.0) == (pytest.approx(0.2), 2.0)


def test_numerical_tolerance_jcgm101_792():
    # JCGM 101 7.9.2: u = c 10^l with n_dig digits in c, delta = 10^l / 2
    assert U.numerical_tolerance(0.0754, 2) == pytest.approx(0.0005)
    assert U.numerical_tolerance(2.0, 2) == pytest.approx(0.05)
    assert U.numerical_tolerance(2.0, 1) == pytest.approx(0.5)
    assert U.numerical_tolerance(0.0996, 1) == pytest.approx(0.05)  # rounds up a decade


def test_coverage_intervals_of_an_exponential_sample():
    # exponential(1) quantiles (closed form): shortest 95 % interval [0, -ln 0.05],
    # probabilistically symmetric [-ln 0.975, -ln 0.025]
    rng = np.random.default_rng(7)
    y = rng.exponential(1.0, 2_000_000)
    lo, hi = U.coverage_interval(y, 0.95, "shortest")
    assert lo == pytest.approx(0.0, abs=1e-4)
    assert hi == pytest.approx(-math.log(0.05), abs=0.01)
    lo, hi = U.coverage_interval(y, 0.95, "symmetric")
    assert lo == pytest.approx(-math.log(0.975), abs=0.001)
    assert hi == pytest.approx(-math.log(0.025), abs=0.02)


def _irwin_hall_cdf(x: float, n: int) -> float:
    return sum(
        (-1) ** k * math.comb(n, k) * max(x - k, 0.0) ** n for k in range(n + 1)
    ) / math.factorial(n)


def _sum_of_rectangles(seed=1, widths=(1.0, 1.0, 1.0, 1.0), **kw):
    xs = [
        U.type_b(0.0, half_width=w * math.sqrt(3), name=f"X{i + 1}") for i, w in enumerate(widths)
    ]
    args = {f"X{i + 1}": x for i, x in enumerate(xs)}
    y = sum(xs)
    return U.monte_carlo(lambda a: sum(a.values()), args, rng=seed, linear=y, **kw)


def test_jcgm101_92_normal_inputs():
    # JCGM 101 9.2.2 (from memory): four N(0, 1) inputs; GUF and MCM both 0.0, 2.0,
    # [-3.9, 3.9]; exact: u = 2, interval +-1.95996 * 2
    xs = [U.type_b(0.0, u=1.0, name=f"X{i}") for i in range(4)]
    res = U.monte_carlo(
        lambda a: sum(a.values()),
        {f"X{i}": x for i, x in enumerate(xs)},
        rng=3,
        linear=sum(xs),
    )
    assert res.converged
    assert abs(res.u - 2.0) <= res.delta
    assert res.low == pytest.approx(-3.92, abs=2 * res.delta)
    assert res.high == pytest.approx(3.92, abs=2 * res.delta)
    assert res.adequate is True


def test_jcgm101_92_rectangular_inputs():
    # JCGM 101 9.2.3 (from memory): four rectangular inputs of unit standard deviation;
    # MCM y = 0.00, u = 2.00, shortest interval [-3.88, 3.88]; GUF [-3.92, 3.92].
    # Second method: the exact 97.5 % quantile of the sum (Irwin-Hall distribution).
    a = math.sqrt(3.0)
    q_exact = optimize.brentq(lambda y: _irwin_hall_cdf((y + 4 * a) / (2 * a), 4) - 0.975, 0, 4 * a)
    assert round(q_exact, 2) == 3.88  # the published digits follow from the exact value
    res = _sum_of_rectangles(seed=11, adaptive=False, trials=4_000_000)
    # Monte Carlo scatter at 4e6 trials: about 0.002 in a 2.5 % quantile (its standard
    # error sqrt(p(1-p)/M)/f with density f ~ 0.035 there); the width is better fixed
    assert res.high - res.low == pytest.approx(2 * q_exact, abs=0.01)
    assert res.low == pytest.approx(-q_exact, abs=0.02)
    assert res.high == pytest.approx(q_exact, abs=0.02)
    assert round((res.high - res.low) / 2, 2) == 3.88
    assert res.u == pytest.approx(2.0, abs=0.005)
    _y, U95, _k = res.linear
    assert round(U95, 2) == 3.92
    adaptive = _sum_of_rectangles(seed=12)
    assert adaptive.converged
    assert adaptive.u == pytest.approx(2.0, abs=adaptive.delta)


def test_jcgm101_92_rectangular_inputs_different_widths():
    # JCGM 101 9.2.4 (from memory): X4 with standard deviation 10, the others 1:
    # GUF [-19.9, 19.9], MCM [-17.0, 17.0]; the linear result is not validated.
    # Second method: exact quantile by numerical convolution of the sum's distribution.
    a = math.sqrt(3.0)
    A = 10 * a

    def cdf3(x):
        return _irwin_hall_cdf((x + 3 * a) / (2 * a), 3) if -3 * a < x < 3 * a else float(x > 0)

    def cdf(y):
        return integrate.quad(
            lambda x: cdf3(y - x) / (2 * A), -A, A, points=[y - 3 * a, y + 3 * a], limit=200
        )[0]

    q_exact = optimize.brentq(lambda y: cdf(y) - 0.975, 10, 25)
    assert round(q_exact, 1) == 17.0
    res = _sum_of_rectangles(seed=5, widths=(1, 1, 1, 10))
    assert res.u == pytest.approx(math.sqrt(103), abs=res.delta)
    assert res.high == pytest.approx(q_exact, abs=2 * res.delta)
    assert res.low == pytest.approx(-q_exact, abs=2 * res.delta)
    _y, U95, _k = res.linear
    assert round(U95, 1) == 19.9
    assert res.adequate is False


# JCGM 101 9.3, calibration of a 100 g weight against a reference (values in mg, kg/m3)
M_NOMINAL = 100_000.0


def _mass_inputs():
    return {
        "mRc": U.type_b(100_000.000, u=0.050, name="m_R,c"),
        "dmRc": U.type_b(1.234, u=0.020, name="dm_R,c"),
        "rho_a": U.type_b(1.20, half_width=0.10, name="rho_a"),
        "rho_W": U.type_b(8000.0, half_width=1000.0, name="rho_W"),
        "rho_R": U.type_b(8000.0, half_width=50.0, name="rho_R"),
    }


def _mass_model(a):
    return (a["mRc"] + a["dmRc"]) * (1 + (a["rho_a"] - 1.2) * (1 / a["rho_W"] - 1 / a["rho_R"])) - (
        M_NOMINAL
    )


def _mass_exact():
    """Exact mean, u and symmetric 95 % half-width of the output (second method).

    Y = W (1 + A B) - m with W ~ N(100001.234, 0.05^2 + 0.02^2), A = rho_a - 1.2
    rectangular on +-0.1, B = 1/rho_W - 1/rho_R: A is symmetric, so Y is symmetric
    about 1.234; E[1/rho] = ln(b/a)/(b-a), E[1/rho^2] = 1/(ab) for rho rectangular on
    [a, b]. The CDF given B is that of a normal plus a rectangle (closed form through
    G(x) = x Phi(x) + phi(x)); B is integrated by Gauss-Legendre quadrature.
    """
    M = 100_001.234
    sw2 = 0.05**2 + 0.02**2
    e1w, e2w = math.log(9000 / 7000) / 2000, 1 / (7000 * 9000)
    e1r, e2r = math.log(8050 / 7950) / 100, 1 / (7950 * 8050)
    eb2 = e2w - 2 * e1w * e1r + e2r
    var = (M**2 + sw2) * (1 + 0.1**2 / 3 * eb2) - M**2
    sw = math.sqrt(sw2)
    x, w = leggauss(200)
    RW, RR = np.meshgrid(8000 + 1000 * x, 8000 + 50 * x, indexing="ij")
    W = np.outer(w, w) / 4
    half = np.maximum(0.1 * M * np.abs(1 / RW - 1 / RR), 1e-12)

    def G(z):
        return z * sst.norm.cdf(z) + sst.norm.pdf(z)

    def cdf(z):
        return float(np.sum(W * sw / (2 * half) * (G((z + half) / sw) - G((z - half) / sw))))

    q = optimize.brentq(lambda z: cdf(z) - 0.975, 0.05, 0.3, xtol=1e-12)
    return 1.234, math.sqrt(var), q


@pytest.fixture(scope="module")
def mass_mc():
    inputs = _mass_inputs()
    y = (inputs["mRc"] + inputs["dmRc"]) * (
        1 + (inputs["rho_a"] - 1.2) * (1 / inputs["rho_W"] - 1 / inputs["rho_R"])
    ) - M_NOMINAL
    fixed = U.monte_carlo(_mass_model, inputs, rng=2008, adaptive=False, trials=4_000_000, linear=y)
    adaptive = U.monte_carlo(_mass_model, inputs, rng=101, linear=y)
    return y, fixed, adaptive


def test_jcgm101_93_gum_framework(mass_mc):
    # JCGM 101 9.3 (from memory): GUF delta_m = 1.2340 mg, u = 0.0539 mg,
    # 95 % interval [1.1285, 1.3395] mg (the rho terms have zero first-order effect)
    y, fixed, _ = mass_mc
    assert round(y.n, 4) == 1.2340
    assert round(y.s, 4) == 0.0539
    yy, U95, k = fixed.linear
    assert k == pytest.approx(1.959964, abs=1e-6)
    assert round(yy - U95, 4) == 1.1285
    assert round(yy + U95, 4) == 1.3395


def test_jcgm101_93_monte_carlo(mass_mc):
    # JCGM 101 9.3 (from memory): MCM 1.2341 mg, u = 0.0754 mg, shortest 95 % interval
    # [1.0834, 1.3825] mg, from 10^6 trials. The published figures carry their own Monte
    # Carlo scatter; the tolerances are their rounding plus three combined standard errors
    # (of a 10^6-trial run and of ours). The exact values (second method) are held tighter.
    _y, res, _ = mass_mc
    mean_x, u_x, q_x = _mass_exact()
    M = res.trials
    se_u = u_x * math.sqrt(1.5 / (4 * 1e6))  # kurtosis of Y below 2.5 (checked: ~2.2)
    assert abs(res.u - 0.0754) <= 0.5e-4 + 3 * se_u * math.sqrt(1 + 1e6 / M)
    assert abs(res.value - 1.2341) <= 0.5e-4 + 3 * u_x / math.sqrt(1e6) * math.sqrt(1 + 1e6 / M)
    assert res.u == pytest.approx(u_x, abs=4 * se_u * math.sqrt(1e6 / M))
    assert res.value == pytest.approx(mean_x, abs=4 * u_x / math.sqrt(M))
    width_pub = 1.3825 - 1.0834
    assert res.high - res.low == pytest.approx(width_pub, abs=0.0005)
    assert res.high - res.low == pytest.approx(2 * q_x, abs=0.0005)
    # the shortest interval of a symmetric distribution is centred; its location in a
    # sample is poorly fixed (first-order insensitive), hence the wider tolerance
    assert (res.low + res.high) / 2 == pytest.approx(mean_x, abs=0.002)


def test_jcgm101_93_validation_and_adaptive_run(mass_mc):
    # JCGM 101 9.3 (from memory): n_dig = 2, delta = 0.0005 mg; d_low = 0.0451 mg,
    # d_high = 0.0430 mg: the GUM framework is not validated
    _y, fixed, res = mass_mc
    assert res.converged
    assert res.delta == pytest.approx(0.0005)
    assert res.linear_delta == pytest.approx(0.0005)
    assert res.trials % 10_000 == 0 and res.runs >= 2  # M = max(J, 10^4) per run (7.9.2)
    assert res.adequate is False and fixed.adequate is False
    for r in (fixed, res):
        # d_low + d_high = MC width - GUF width, published 0.0451 + 0.0430
        assert r.d_low + r.d_high == pytest.approx(0.0451 + 0.0430, abs=0.0015)
    _mean_x, u_x, _q = _mass_exact()
    assert abs(res.u - u_x) <= 2 * res.delta


def test_monte_carlo_correlated_group_and_t_inputs():
    # the H.2 inputs sampled as a multivariate normal reproduce the linear u(R) (the model
    # is nearly linear there): u within 1 % (common practice, no source)
    V, I, phi = U.type_a_correlated(H2, ["V", "I", "phi"], ["V", "A", ""])
    args = {"V": V, "I": I * 1e-3, "phi": phi}

    def model(a):
        return a["V"] * np.cos(a["phi"]) / a["I"]

    res = U.monte_carlo(model, args, rng=4, adaptive=False, trials=400_000)
    R = V.magnitude * cos(phi) / (I.magnitude * 1e-3)
    assert res.u == pytest.approx(R.s, rel=0.01)
    # a type A input is sampled from t with n - 1 dof (JCGM 101 6.4.9): variance
    # nu/(nu - 2) times u^2 (closed form of the t distribution)
    t = U.type_a([1.0, 1.2, 0.9, 1.1, 1.05, 0.95, 1.0], "x")
    res = U.monte_carlo(lambda a: a["x"], {"x": t}, rng=9, adaptive=False, trials=2_000_000)
    nu = 6
    assert res.u == pytest.approx(t.s * math.sqrt(nu / (nu - 2)), rel=0.01)


def test_bad_inputs_raise_clear_errors():
    with pytest.raises(cb.InputError, match="at least 2 readings"):
        U.type_a(["2 mm"], "t")
    with pytest.raises(cb.InputError, match="compatible"):
        U.type_a(["2 mm", "3 pF"], "t")
    with pytest.raises(cb.InputError, match="exactly one"):
        U.type_b(1.0, name="x")
    with pytest.raises(cb.InputError, match="of reading"):
        U.AccuracySpec.parse("half a percent")
    with pytest.raises(cb.InputError, match="0 < p < 1"):
        U.coverage_factor(10, 1.5)
    with pytest.raises(ValueError, match="positive semi-definite"):
        U.correlated([1, 2], [[1, 2], [2, 1]], ["a", "b"])
    with pytest.raises(cb.InputError, match="non-finite"), np.errstate(invalid="ignore"):
        U.monte_carlo(
            lambda a: np.log(a["x"]),
            {"x": U.type_b(0.0, u=1.0, name="x")},
            rng=1,
            adaptive=False,
            trials=1000,
        )
