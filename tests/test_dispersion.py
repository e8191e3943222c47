"""Relaxation fits and the Kramers-Kronig check (issue 19).

Sources: the Debye function (P. Debye, Polar Molecules, 1929): eps'' peaks at w tau = 1
with the value delta / 2; Cole-Cole (K. S. and R. H. Cole, J. Chem. Phys. 9, 341, 1941):
at w tau = 1, eps'' = (delta / 2) tan(alpha pi / 4) (worked by hand from the function);
Havriliak-Negami (Polymer 8, 161, 1967) contains both; the linear Kramers-Kronig test of
B. A. Boukamp (J. Electrochem. Soc. 142, 1885, 1995). Synthetic spectra carry bench-like
scatter: 0.2 % of eps' on each value, seeded.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from uncertainties import ufloat

from capbench import dispersion as D
from capbench.errors import InputError

F = np.logspace(1, 7, 25)


def _noisy(eps, seed=3, rel=0.002):
    rng = np.random.default_rng(seed)
    u = rel * eps.real
    return D.Spectrum.from_values(
        F, eps.real + rng.normal(0, 1, F.size) * u, -eps.imag + rng.normal(0, 1, F.size) * u, u, u
    )


def test_debye_peak_at_w_tau_1_with_half_the_strength():
    tau, delta = 2e-5, 4.0
    f_peak = 1 / (2 * math.pi * tau)
    e = D.permittivity([f_peak], 2.5, delta, tau)[0]
    assert -e.imag == pytest.approx(delta / 2, rel=1e-14)
    assert e.real == pytest.approx(2.5 + delta / 2, rel=1e-14)
    f = np.logspace(2, 7, 2001)
    assert f[np.argmax(-D.permittivity(f, 2.5, delta, tau).imag)] == pytest.approx(f_peak, rel=0.01)


@pytest.mark.parametrize("alpha", [0.3, 0.6, 0.9])
def test_cole_cole_depresses_the_peak(alpha):
    tau, delta = 1e-3, 3.0
    e = D.permittivity([1 / (2 * math.pi * tau)], 2.0, delta, tau, alpha=alpha)[0]
    assert -e.imag == pytest.approx(delta / 2 * math.tan(alpha * math.pi / 4), rel=1e-12)


def test_havriliak_negami_contains_the_others():
    w = 2 * math.pi * F
    tau = 1e-4
    debye = 2 + 5 / (1 + 1j * w * tau)
    assert np.allclose(D.permittivity(F, 2, 5, tau), debye, rtol=1e-14, atol=0)
    cd = 2 + 5 / (1 + 1j * w * tau) ** 0.4
    assert np.allclose(D.permittivity(F, 2, 5, tau, beta=0.4), cd, rtol=1e-14, atol=0)


def test_a_havriliak_negami_fit_recovers_its_parameters_within_their_uncertainty():
    truth = {"eps_inf": 3.0, "delta": 5.0, "tau": 1e-4, "alpha": 0.7, "beta": 0.6}
    s = _noisy(D.permittivity(F, **truth))
    r = D.fit(s, "havriliak-negami")
    for k, v in truth.items():
        assert abs(r.params[k].nominal_value - v) <= 3.5 * r.params[k].std_dev, (k, r.params[k])
    assert r.chi2 / r.dof < 2.0  # the right model fits to the noise


def test_model_choice_prefers_the_simple_model_when_it_suffices():
    s = _noisy(D.permittivity(F, 2.2, 1.5, 3e-6), seed=5)
    best = D.choose(s, criterion="bic")[0]
    assert best.model == "debye" and not best.conductivity
    hn = _noisy(D.permittivity(F, 3.0, 5.0, 1e-4, alpha=0.7, beta=0.6))
    assert D.choose(hn)[0].model == "havriliak-negami"


def test_a_conductivity_term_is_found():
    sigma = 2e-9  # S/m: a leaky polymer
    s = _noisy(D.permittivity(F, 3.0, 2.0, 1e-5, sigma=sigma), seed=8)
    r = D.fit(s, "debye", conductivity=True)
    assert abs(r.params["sigma"].nominal_value - sigma) <= 3.5 * r.params["sigma"].std_dev


def test_correlated_errors_reach_the_parameters():
    """eps' at every frequency shares one 1 % scale error (the thickness and the area of
    one specimen): the fit cannot average it away, so eps_inf keeps about 1 %; weighting
    by the diagonal alone would claim far less."""
    e = D.permittivity(F, 3.0, 5.0, 1e-4)
    scale = ufloat(1.0, 0.01)
    u = 0.001 * e.real
    rng = np.random.default_rng(4)
    er = [scale * ufloat(x + rng.normal() * ui, ui) for x, ui in zip(e.real, u, strict=True)]
    el = [scale * ufloat(x + rng.normal() * ui, ui) for x, ui in zip(-e.imag, u, strict=True)]
    s = D.Spectrum.from_values(F, er, el)
    r = D.fit(s, "debye")
    assert r.params["eps_inf"].std_dev / 3.0 == pytest.approx(0.01, rel=0.15)
    diag = D.Spectrum(s.frequency, s.eps_real, s.eps_loss, np.diag(np.diag(s.covariance)))
    assert D.fit(diag, "debye").params["eps_inf"].std_dev < 0.5 * r.params["eps_inf"].std_dev


def test_kramers_kronig_passes_consistent_data_and_flags_a_bump_in_eps_real_alone():
    e = D.permittivity(F, 3.0, 5.0, 1e-4, alpha=0.7, beta=0.6)
    good = _noisy(e)
    assert D.kramers_kronig(good).consistent
    bump = 1 + 0.03 * np.exp(-(np.log10(F / 1e4) ** 2))  # eps' moved, eps'' not: not causal
    bad = D.Spectrum(F, good.eps_real * bump, good.eps_loss, good.covariance)
    check = D.kramers_kronig(bad)
    assert not check.consistent
    assert "NOT consistent" in check.text()


def test_bad_spectra_are_refused_with_what_is_valid():
    e = D.permittivity(F[:2], 3, 1, 1e-4)
    with pytest.raises(InputError, match="at least 3"):
        D.fit(D.Spectrum.from_values(F[:2], e.real, -e.imag, [0.01] * 2, [0.01] * 2))
    with pytest.raises(InputError, match="standard uncertainty above 0"):
        D.fit(D.Spectrum.from_values(F, [3.0] * 25, [0.1] * 25, [0.0] * 25, [0.01] * 25))
    with pytest.raises(InputError, match="valid: debye, cole-cole"):
        D.fit(_noisy(D.permittivity(F, 3, 1, 1e-4)), "lorentz")
    with pytest.raises(InputError, match="u_real and u_loss"):
        D.Spectrum.from_values(F, [3.0] * 25, [0.1] * 25)


def test_the_command_fits_a_measurements_spectrum(tmp_path, capsys):
    """capbench relax on the demo measurement (invented polyethylene readings, closed
    form for speed): every model is fitted and ranked, the Kramers-Kronig check runs, and
    a parameter the nearly lossless spectrum cannot fix is said to be at its limit."""
    import json
    from pathlib import Path

    from capbench.cli import main

    demo = Path(__file__).resolve().parents[1] / "fixtures" / "quillfield" / "qf-pe-03.toml"
    assert main(["relax", str(demo), "--closed-form"]) == 0
    text = capsys.readouterr().out
    assert "Kramers-Kronig check" in text and "havriliak-negami" in text
    assert main(["relax", str(demo), "--closed-form", "--json", "--model", "debye"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [f["model"] for f in data["fits"]] == ["debye", "debye"]
    assert data["fits"][0]["bic"] <= data["fits"][1]["bic"]
    # the demo readings come from a field solve of one invented material plus scatter: a
    # causal response, so the test must pass it
    assert data["kramers_kronig"]["consistent"] is True


# --------------------------------------------------------------------------- closed forms


def test_cole_cole_points_lie_on_a_depressed_arc():
    """Cole & Cole (1941): eps'' against eps' is a circular arc through eps_inf and eps_s
    whose centre lies below the eps' axis. Worked by hand from the function: the arc
    leaves eps_inf at an angle alpha pi / 2, so its radius is (delta / 2) / sin(alpha pi / 2)
    and its centre is (delta / 2) cot(alpha pi / 2) below the axis."""
    eps_inf, delta, alpha = 2.0, 3.0, 0.6
    e = D.permittivity(np.logspace(-3, 3, 61), eps_inf, delta, 1.0, alpha=alpha)
    centre = complex(eps_inf + delta / 2, -delta / 2 / math.tan(alpha * math.pi / 2))
    radius = delta / 2 / math.sin(alpha * math.pi / 2)
    points = e.real + 1j * (-e.imag)  # (eps', eps'')
    assert np.allclose(np.abs(points - centre), radius, rtol=1e-12, atol=0)
    # and the arc's top is depressed below a Debye semicircle's delta / 2
    assert np.max(-e.imag) < delta / 2 - 0.1


@pytest.mark.parametrize("alpha", [0.4, 0.8, 1.0])
def test_cole_cole_against_its_real_form(alpha):
    """Cole & Cole (1941), the real and imaginary parts written out: with x = w tau and
    c = cos(alpha pi / 2), s = sin(alpha pi / 2), D = 1 + 2 x^a c + x^(2a),
    eps' = eps_inf + delta (1 + x^a c) / D, eps'' = delta x^a s / D."""
    x = np.logspace(-3, 3, 31)
    tau = 2e-6
    e = D.permittivity(x / (2 * math.pi * tau), 2.5, 4.0, tau, alpha=alpha)
    c, s = math.cos(alpha * math.pi / 2), math.sin(alpha * math.pi / 2)
    den = 1 + 2 * x**alpha * c + x ** (2 * alpha)
    assert np.allclose(e.real, 2.5 + 4.0 * (1 + x**alpha * c) / den, rtol=1e-13, atol=0)
    assert np.allclose(-e.imag, 4.0 * x**alpha * s / den, rtol=1e-12, atol=0)


@pytest.mark.parametrize("beta", [0.3, 0.55, 0.9])
def test_cole_davidson_against_its_real_form_and_its_peak(beta):
    """Davidson & Cole (1951): with tan(phi) = w tau, eps' = eps_inf + delta cos(phi)^b
    cos(b phi), eps'' = delta cos(phi)^b sin(b phi); the loss peaks at
    w tau = tan(pi / (2 b + 2))."""
    tau = 1e-3
    w = np.logspace(-3, 3, 41) / tau
    phi = np.arctan(w * tau)
    e = D.permittivity(w / (2 * math.pi), 3.0, 6.0, tau, beta=beta)
    assert np.allclose(e.real, 3 + 6 * np.cos(phi) ** beta * np.cos(beta * phi), rtol=1e-13)
    assert np.allclose(-e.imag, 6 * np.cos(phi) ** beta * np.sin(beta * phi), rtol=1e-12)
    f_peak = math.tan(math.pi / (2 * beta + 2)) / (2 * math.pi * tau)
    assert D.loss_peak_frequency(tau, 1.0, beta) == pytest.approx(f_peak, rel=1e-14)
    # the peak found numerically from the function (a second method)
    from scipy.optimize import minimize_scalar

    r = minimize_scalar(
        lambda lf: D.permittivity([10**lf], 3, 6, tau, beta=beta)[0].imag,
        bracket=(math.log10(f_peak) - 1, math.log10(f_peak) + 1),
        tol=1e-12,
    )
    assert 10**r.x == pytest.approx(f_peak, rel=1e-6)


@pytest.mark.parametrize(("alpha", "beta"), [(0.5, 0.5), (0.8, 0.3), (0.3, 0.9)])
def test_havriliak_negami_loss_peak_matches_the_function(alpha, beta):
    """The Havriliak-Negami loss-peak frequency in closed form (R. Diaz-Calleja,
    Macromolecules 33, 8924, 2000, from memory) against the maximum of eps'' found
    numerically (the second method)."""
    from scipy.optimize import minimize_scalar

    tau = 1e-5
    f0 = D.loss_peak_frequency(tau, alpha, beta)
    r = minimize_scalar(
        lambda lf: D.permittivity([10**lf], 3, 6, tau, alpha=alpha, beta=beta)[0].imag,
        bracket=(math.log10(f0) - 0.5, math.log10(f0) + 0.5),
        tol=1e-12,
    )
    assert 10**r.x == pytest.approx(f0, rel=1e-6)
    assert D.loss_peak_frequency(tau) == pytest.approx(1 / (2 * math.pi * tau), rel=1e-15)


# --------------------------------------------------------------------------- fits


@pytest.mark.parametrize(
    ("model", "truth", "terms"),
    [
        ("debye", {"eps_inf": 2.4, "delta": 3.0, "tau": 5e-6}, {}),
        ("cole-cole", {"eps_inf": 3.0, "delta": 8.0, "tau": 2e-4, "alpha": 0.55}, {}),
        ("cole-davidson", {"eps_inf": 4.1, "delta": 40.0, "tau": 3e-5, "beta": 0.5}, {}),
        (
            "debye",
            {"eps_inf": 3.0, "delta": 5.0, "tau": 1e-4, "sigma": 1e-9},
            {"conductivity": True},
        ),
        (
            "cole-cole",
            {
                "eps_inf": 3.0,
                "delta": 5.0,
                "tau": 1e-5,
                "alpha": 0.8,
                "ep_amplitude": 50.0,
                "ep_exponent": 0.6,
            },
            {"electrode": True},
        ),
    ],
)
def test_each_model_recovers_its_parameters_within_their_uncertainty(model, truth, terms):
    f = np.logspace(0, 6, 40)
    e = D.permittivity(f, **truth)
    rng = np.random.default_rng(11)
    u = 0.002 * np.abs(e)  # bench scatter, 0.2 % of |eps*|, on each part
    s = D.Spectrum.from_values(
        f, e.real + rng.normal(0, 1, f.size) * u, -e.imag + rng.normal(0, 1, f.size) * u, u, u
    )
    r = D.fit(s, model, **terms)
    assert set(r.params) == set(truth)
    for k, v in truth.items():
        assert abs(r.params[k].nominal_value - v) <= 3.5 * r.params[k].std_dev, (k, r.params[k])
    assert 0.5 < r.chi2 / r.dof < 1.6
    assert not r.at_bounds


def test_water_published_debye_parameters_are_recovered_with_a_correlated_scale():
    """Water at 25 degC is a single Debye relaxation with eps_s = 78.36, eps_inf = 5.2 and
    tau = 8.27 ps (U. Kaatze, J. Chem. Eng. Data 34, 371, 1989; values from memory, as
    listed in the project's references). Synthetic readings from 0.5 to 50 GHz with 0.3 %
    independent scatter and a 1 % cell-constant error common to every value (one cell,
    one calibration): the fit must return the published values within its stated
    uncertainties, and eps_s must carry the 1 % scale, which no number of frequencies
    averages away."""
    truth = {"eps_inf": 5.2, "delta": 78.36 - 5.2, "tau": 8.27e-12}
    f = np.logspace(np.log10(5e8), np.log10(5e10), 30)
    e = D.permittivity(f, **truth)
    rng = np.random.default_rng(2024)
    scale = ufloat(1.0 + 0.01 * rng.normal(), 0.01)
    ur, ul = 0.003 * e.real, 0.003 * -e.imag
    er = [scale * ufloat(x + rng.normal() * u, u) for x, u in zip(e.real, ur, strict=True)]
    el = [scale * ufloat(x + rng.normal() * u, u) for x, u in zip(-e.imag, ul, strict=True)]
    s = D.Spectrum.from_values(f, er, el)
    best = D.choose(s, conductivity=False)[0]
    assert best.model == "debye"
    eps_s = best.eps_static
    assert abs(eps_s.n - 78.36) <= 3 * eps_s.s
    assert eps_s.s / 78.36 == pytest.approx(0.01, rel=0.1)
    for k, v in truth.items():
        assert abs(best.params[k].n - v) <= 3 * best.params[k].s, (k, best.params[k])
    # the relaxation time is not moved by a common scale: its uncertainty stays small
    assert best.params["tau"].s / 8.27e-12 < 0.003


def test_electrode_polarisation_is_chosen_where_it_is_in_the_data():
    f = np.logspace(0, 6, 40)
    e = D.permittivity(f, 3.0, 5.0, 1e-4, sigma=1e-9, ep_amplitude=50.0, ep_exponent=0.6)
    rng = np.random.default_rng(7)
    u = 0.002 * np.abs(e)
    s = D.Spectrum.from_values(
        f, e.real + rng.normal(0, 1, 40) * u, -e.imag + rng.normal(0, 1, 40) * u, u, u
    )
    best = D.choose(s, electrode=None, criterion="bic")[0]
    assert best.electrode and best.conductivity and best.model == "debye"
    plain = D.choose(s, electrode=False)[0]
    assert plain.chi2 / plain.dof > 10  # without the term the low end cannot be fitted


def test_monte_carlo_agrees_with_the_linearised_uncertainties():
    """A well-determined Havriliak-Negami fit: the spread of refits matches the
    linearised u within the sampling error of a standard deviation (JCGM 101:2008
    clause 8 compares the two the same way; the tolerance is 3 / sqrt(2 (N - 1)))."""
    truth = {"eps_inf": 3.0, "delta": 5.0, "tau": 1e-4, "alpha": 0.7, "beta": 0.6}
    s = _noisy(D.permittivity(F, **truth))
    r = D.fit(s)
    mc = D.monte_carlo(r, s, draws=300, seed=1)
    assert mc.draws + mc.failed == 300
    assert mc.agrees, mc.text()
    assert mc.tolerance == pytest.approx(3 / math.sqrt(2 * (mc.draws - 1)))
    for k in truth:
        assert abs(mc.bias[k]) < 0.5
    with pytest.raises(InputError, match="20 to 100000"):
        D.monte_carlo(r, s, draws=5)


def test_monte_carlo_sees_the_common_scale_too():
    """With a 1 % scale common to every value the Monte Carlo spread of eps_inf is about
    1 % as the linearised one says (both from the same full covariance)."""
    e = D.permittivity(F, 3.0, 5.0, 1e-4)
    scale = ufloat(1.0, 0.01)
    u = 0.001 * e.real
    er = [scale * ufloat(x, ui) for x, ui in zip(e.real, u, strict=True)]
    el = [scale * ufloat(x, ui) for x, ui in zip(-e.imag, u, strict=True)]
    s = D.Spectrum.from_values(F, er, el)
    r = D.fit(s, "debye")
    mc = D.monte_carlo(r, s, draws=200, seed=3)
    assert mc.std["eps_inf"] / 3.0 == pytest.approx(0.01, rel=0.2)
    assert mc.agrees, mc.text()


def test_the_model_band_is_the_linear_propagation_of_the_parameters():
    """The band at one frequency against the law of propagation written out with the
    parameters' ufloats (GUM 5.2, correlated inputs): a second method."""
    s = _noisy(D.permittivity(F, 3.0, 5.0, 1e-4), seed=9)
    r = D.fit(s, "debye")
    p = r.params
    f0 = 2e3
    x = 2 * math.pi * f0 * p["tau"]
    eps_real = p["eps_inf"] + p["delta"] / (1 + x**2)
    eps_loss = p["delta"] * x / (1 + x**2)
    e, U_real, U_loss = r.band([f0], coverage=0.95)
    assert e[0].real == pytest.approx(eps_real.n, rel=1e-12)
    assert U_real[0] == pytest.approx(1.959964 * eps_real.s, rel=1e-4)
    assert U_loss[0] == pytest.approx(1.959964 * eps_loss.s, rel=1e-4)


def test_analysis_content_is_plain_data():
    import json

    s = _noisy(D.permittivity(F, 3.0, 5.0, 1e-4, alpha=0.7, beta=0.6))
    rel = D.analyse(s, monte_carlo_draws=50, seed=2)
    data = json.loads(json.dumps(rel.content(), allow_nan=False))
    assert data["model"] == "havriliak-negami"
    assert data["kramers_kronig"]["consistent"] is True
    assert data["monte_carlo"]["draws"] >= 45
    assert "k = 1.96" in rel.statement()
    assert rel.table_rows()[0][0] == "havriliak-negami"


def test_choose_leaves_out_models_with_more_parameters_than_values():
    f = np.array([1e3, 1e4, 1e5])
    e = D.permittivity(f, 3.0, 2.0, 1.6e-5)
    u = np.full(3, 0.003)
    s = D.Spectrum.from_values(f, e.real, -e.imag, u, u)
    fits = D.choose(s, electrode=None)
    assert fits and all(len(r.params) < 6 for r in fits)
    with pytest.raises(InputError, match="measure at least 4 frequencies"):
        D.fit(s, "havriliak-negami", conductivity=True)
