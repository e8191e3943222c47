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
