"""The Kramers-Kronig checks of capbench.dispersion against analytic pairs.

Sources: the Kramers-Kronig relation eps'(w) - eps_inf = (2/pi) P int_0^inf x eps''(x) /
(x^2 - w^2) dx (A. K. Jonscher, Dielectric Relaxation in Solids, 1983, chapter 2; any
electrodynamics text); the Debye function (P. Debye, Polar Molecules, 1929) and the
Havriliak-Negami function (Polymer 8, 161, 1967) are causal, so their eps' and eps''
are exact Kramers-Kronig pairs, written out in the test; the linear test of B. A.
Boukamp (J. Electrochem. Soc. 142, 1885, 1995).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from capbench import dispersion as D
from capbench.errors import InputError


def _debye(f, eps_inf, delta, tau):
    x = 2 * np.pi * np.asarray(f) * tau
    return eps_inf + delta / (1 + x**2), delta * x / (1 + x**2)


def _hn(f, eps_inf, delta, tau, a, b):
    """Havriliak-Negami in real form: with x = w tau, theta = atan(x^a sin(a pi/2) /
    (1 + x^a cos(a pi/2))), r = (1 + 2 x^a cos(a pi/2) + x^(2a))^(-b/2):
    eps' = eps_inf + delta r cos(b theta), eps'' = delta r sin(b theta)."""
    x = 2 * np.pi * np.asarray(f) * tau
    c, s = math.cos(a * math.pi / 2), math.sin(a * math.pi / 2)
    theta = np.arctan2(x**a * s, 1 + x**a * c)
    r = (1 + 2 * x**a * c + x ** (2 * a)) ** (-b / 2)
    return eps_inf + delta * r * np.cos(b * theta), delta * r * np.sin(b * theta)


def test_the_transform_of_debye_loss_gives_debye_eps_real():
    """Debye's eps'' transformed over 6 decades at 10 points per decade gives its eps' to
    1e-5 of the strength: the interpolation is a cubic spline (error of order h^4, h =
    ln(10)/10 = 0.23 -> about 3e-3 times a curvature term of order 1e-3 here) and the
    power-law continuation is exact for Debye's tails (slopes +1 and -1)."""
    f = np.logspace(0, 6, 61)
    er, el = _debye(f, 3.0, 5.0, 1e-3 / (2 * math.pi))
    got = D.kk_transform(f, el)
    assert np.max(np.abs(got - (er - 3.0))) < 1e-5 * 5.0


def test_the_transform_converges_at_fourth_order_in_the_spacing():
    """Error against the Debye pair at 5, 10 and 20 points per decade: the fitted slope of
    log(error) against log(h) lies in [3.5, 4.5] (cubic spline interpolation)."""
    errs, hs = [], []
    for ppd in (5, 10, 20):
        f = np.logspace(0, 6, 6 * ppd + 1)
        er, el = _debye(f, 3.0, 5.0, 1e-3 / (2 * math.pi))
        got = D.kk_transform(f, el, points_per_decade=400)
        errs.append(np.max(np.abs(got - (er - 3.0))))
        hs.append(1 / ppd)
    slope = np.polyfit(np.log(hs), np.log(errs), 1)[0]
    assert 3.5 <= slope <= 4.5, (slope, errs)


def test_the_transform_of_havriliak_negami_loss_over_a_wide_band():
    """The HN pair (alpha 0.7, beta 0.6) over 14 decades at 10 points per decade: within
    1e-5 of the strength. HN tails approach their power laws slowly (slopes 0.7 and
    -0.42), so the band is wide; over 8 decades the continuation error is 6e-5 of it."""
    f = np.logspace(-3, 11, 141)
    er, el = _hn(f, 3.0, 5.0, 1e-4, 0.7, 0.6)
    assert np.allclose(D.permittivity(f, 3.0, 5.0, 1e-4, 0.7, 0.6).real, er, rtol=1e-13)
    got = D.kk_transform(f, el)
    assert np.max(np.abs(got - (er - 3.0))) < 1e-5 * 5.0


def test_a_dc_conductivity_adds_nothing_to_eps_real():
    """sigma / (eps0 w) in eps'' has no eps' partner (P int_0^inf dx / (x^2 - w^2) = 0):
    a pure conduction loss of 18 at 1 Hz transforms to zero (to rounding, 1e-10)."""
    f = np.logspace(0, 6, 61)
    sigma_loss = 1e-9 / (8.8541878188e-12 * 2 * np.pi * f)
    assert np.max(np.abs(D.kk_transform(f, sigma_loss))) < 1e-10


def test_the_transform_refuses_what_it_cannot_continue():
    f = np.logspace(0, 3, 10)
    with pytest.raises(InputError, match="eps'' > 0"):
        D.kk_transform(f, -np.ones(10))
    with pytest.raises(InputError, match="rises"):
        D.kk_transform(f, f * 1e-3)  # still rising at the top of the band
    with pytest.raises(InputError, match="at least 3"):
        D.kk_transform(f[:2], [1.0, 0.5])


@pytest.mark.parametrize("shape", [{}, {"alpha": 0.7, "beta": 0.6}, {"alpha": 0.5}, {"beta": 0.4}])
def test_the_linear_test_passes_exact_pairs(shape):
    """Exact Debye, Cole-Cole, Cole-Davidson and HN spectra (4 points per decade): the
    fixed-time-constant Debye sum represents each to 2e-4 of the strength (a relaxation
    between two of its time constants is the worst case), well inside a bench's
    uncertainty of 1e-3."""
    f = np.logspace(1, 7, 25)
    e = D.permittivity(f, 3.0, 5.0, 1e-4, **shape)
    u = np.full(f.size, 1e-3)
    check = D.kramers_kronig(D.Spectrum.from_values(f, e.real, -e.imag, u, u))
    assert check.consistent
    assert np.max(np.abs(np.concatenate([check.residual_real, check.residual_loss]))) < 2e-4 * 5


def test_the_linear_test_flags_one_bad_point_where_it_is():
    """One eps' reading 10 standard uncertainties off (a transcription slip) is flagged,
    and the largest residual is at its frequency: eps' alone moved cannot be causal. The
    fit absorbs part of a slip (one time constant per frequency), so a residual keeps
    about 0.7 of its u and a slip shows as about 0.7 of its size in u: the test sees
    slips beyond about 6 u at the default limit of 4."""
    f = np.logspace(1, 7, 25)
    e = D.permittivity(f, 3.0, 5.0, 1e-4, alpha=0.8)
    u = 0.002 * e.real
    rng = np.random.default_rng(5)
    er = e.real + rng.normal(0, 1, f.size) * u
    el = -e.imag + rng.normal(0, 1, f.size) * u
    assert D.kramers_kronig(D.Spectrum.from_values(f, er, el, u, u)).consistent
    er[12] += 10 * u[12]
    check = D.kramers_kronig(D.Spectrum.from_values(f, er, el, u, u))
    assert not check.consistent
    assert int(np.argmax(np.abs(check.z))) == 12  # eps' at f[12]
    assert ("eps'", f[12]) in {(p, fr) for p, fr, _ in check.flagged}
    assert check.u_real[12] / u[12] == pytest.approx(0.7, abs=0.05)
    assert "NOT consistent" in check.text()


def test_the_residual_uncertainties_match_their_scatter():
    """The stated u of every residual, ((I - H) C (I - H)^T)^(1/2), against the scatter of
    the residuals over 400 simulated spectra with correlated errors (a 0.5 % scale common
    to every value plus 0.1 % independent): within 15 % (the sampling error of a standard
    deviation from 400 draws is 3.5 %)."""
    f = np.logspace(1, 6, 12)
    e = D.permittivity(f, 3.0, 5.0, 1e-4, alpha=0.8)
    y0 = np.concatenate([e.real, -e.imag])
    cov = np.diag((0.001 * y0) ** 2) + 0.005**2 * np.outer(y0, y0)
    rng = np.random.default_rng(8)
    L = np.linalg.cholesky(cov)
    base = D.kramers_kronig(D.Spectrum(f, e.real, -e.imag, cov))
    u = np.concatenate([base.u_real, base.u_loss])
    rs = []
    for _ in range(400):
        y = y0 + L @ rng.standard_normal(y0.size)
        c = D.kramers_kronig(D.Spectrum(f, y[:12], y[12:], cov))
        rs.append(np.concatenate([c.residual_real, c.residual_loss]))
    spread = np.std(np.array(rs), axis=0, ddof=1)
    assert np.allclose(spread, u, rtol=0.15)


def test_a_conduction_contribution_is_shown_with_its_uncertainty():
    """A DC conductivity in eps'' has no eps' partner: the linear test carries it in its
    conductivity column, reported with its standard uncertainty. Over 300 simulated
    spectra (a Cole-Cole relaxation plus sigma = 1e-9 S/m, 0.2 % scatter) the estimate
    over its stated u scatters as a standard normal: mean within 0.2 (3 standard errors
    of a mean of 300) and standard deviation within 15 % of 1."""
    f = np.logspace(0, 6, 25)
    e = D.permittivity(f, 3.0, 5.0, 1e-4, alpha=0.8, sigma=1e-9)
    u = 0.002 * np.abs(e)
    rng = np.random.default_rng(5)
    z = []
    for _ in range(300):
        s = D.Spectrum.from_values(
            f, e.real + rng.normal(0, 1, 25) * u, -e.imag + rng.normal(0, 1, 25) * u, u, u
        )
        check = D.kramers_kronig(s)
        z.append((check.conductivity - 1e-9) / check.u_conductivity)
    assert abs(np.mean(z)) < 0.2
    assert np.std(z, ddof=1) == pytest.approx(1.0, rel=0.15)
    assert check.consistent and "DC conduction of" in check.text()
