"""Kramers-Kronig consistency of a measured eps*(f).

A causal, linear response has eps'(w) - eps_inf = (2/pi) P int_0^inf x eps''(x) /
(x^2 - w^2) dx (the Kramers-Kronig relations; e.g. A. K. Jonscher, Dielectric Relaxation
in Solids, Chelsea 1983, chapter 2). A bench measures only a band, so the integral cannot
be taken as it stands. Two ways are given here:

:func:`kramers_kronig`
    The linear test of B. A. Boukamp (J. Electrochem. Soc. 142, 1885, 1995): a sum of
    Debye terms with fixed time constants is Kramers-Kronig consistent by construction.
    One time constant per measured frequency, plus one a decade beyond each end of the
    band (the tails of relaxations outside the band), a constant eps_inf and a DC
    conductivity are fitted to eps' and eps'' together by linear least squares,
    weighted by the spectrum's full covariance. The residuals, each with its own standard
    uncertainty (the covariance of the residuals of a linear fit, (I - H) C (I - H)^T),
    show where eps' and eps'' cannot belong to one causal response: a bad point, a
    drifting reading, or a term that is not a polarisation at all.
:func:`kk_transform`
    The integral itself, with ln eps'' interpolated by a cubic spline in ln f between
    measured points and continued beyond each end as the power law of the last two
    points (integrated in closed form far out), the usual treatment of band-limited
    data. It gives eps'(f) - eps_inf predicted from eps''; its error is that of the
    continuation and of the interpolation (fourth order in the spacing of the points).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from ..units import EPS0, frequency_text
from .spectrum import Spectrum


@dataclass(frozen=True)
class KKCheck:
    """Result of the linear Kramers-Kronig test.

    ``residual_real``, ``residual_loss``: data minus the consistent fit per frequency;
    ``u_real``, ``u_loss``: the standard uncertainty of each residual; ``z``: residuals
    over their uncertainties (eps' then eps''); ``consistent``: every |z| <= ``limit``;
    ``chi2`` with ``dof`` degrees of freedom, the whitened residuals' sum of squares.
    """

    frequency: np.ndarray
    residual_real: np.ndarray
    residual_loss: np.ndarray
    z: np.ndarray
    limit: float
    u_real: np.ndarray | None = None
    u_loss: np.ndarray | None = None
    chi2: float = float("nan")
    dof: int = 0
    #: the DC conductivity (S/m) the consistent fit needed, and its standard uncertainty:
    #: a loss with no eps' partner (conduction) shows here rather than in the residuals
    conductivity: float = 0.0
    u_conductivity: float = 0.0

    @property
    def consistent(self) -> bool:
        return bool(np.all(np.abs(self.z) <= self.limit))

    @property
    def flagged(self) -> list[tuple[str, float, float]]:
        """(part, frequency in Hz, z) of every residual beyond the limit."""
        n = self.frequency.size
        return [
            ("eps'" if i < n else "eps''", float(self.frequency[i % n]), float(self.z[i]))
            for i in np.flatnonzero(np.abs(self.z) > self.limit)
        ]

    def text(self) -> str:
        worst = int(np.argmax(np.abs(self.z)))
        n = self.frequency.size
        part = "eps'" if worst < n else "eps''"
        f = self.frequency[worst % n]
        verdict = "consistent" if self.consistent else "NOT consistent"
        out = (
            f"Kramers-Kronig check (linear test, Boukamp 1995): {verdict}; largest residual "
            f"{abs(self.z[worst]):.2g} standard uncertainties ({part} at {frequency_text(f)}), "
            f"limit {self.limit:g}"
        )
        flagged = self.flagged
        if len(flagged) > 1:
            out += f"; {len(flagged)} values beyond it"
        if self.u_conductivity > 0 and abs(self.conductivity) > 3 * self.u_conductivity:
            out += (
                f"; the loss includes a DC conduction of {self.conductivity:.3g} S/m "
                f"(u = {self.u_conductivity:.2g} S/m), which has no eps' partner"
            )
        return out

    def rows(self) -> list[dict[str, Any]]:
        """One row per frequency: the residuals, their uncertainties and z."""
        n = self.frequency.size
        ur = self.u_real if self.u_real is not None else np.full(n, np.nan)
        ul = self.u_loss if self.u_loss is not None else np.full(n, np.nan)
        return [
            {
                "frequency": float(self.frequency[i]),
                "residual eps'": float(self.residual_real[i]),
                "u eps'": float(ur[i]),
                "z eps'": float(self.z[i]),
                "residual eps''": float(self.residual_loss[i]),
                "u eps''": float(ul[i]),
                "z eps''": float(self.z[n + i]),
            }
            for i in range(n)
        ]


def _basis(f: np.ndarray) -> np.ndarray:
    """Columns: eps_inf, Debye terms at tau = 1/w_k and a decade beyond the band, a DC
    conductivity (per S/m); rows: eps' then eps''."""
    w = 2 * np.pi * f
    taus = np.concatenate([[10 / w.min()], 1 / np.sort(w), [0.1 / w.max()]])
    wt = np.outer(w, taus)
    n = f.size
    re = np.column_stack([np.ones(n), 1 / (1 + wt**2), np.zeros(n)])
    im = np.column_stack([np.zeros(n), wt / (1 + wt**2), 1 / (EPS0 * w)])
    return np.vstack([re, im])


def kramers_kronig(spectrum: Spectrum, limit: float = 4.0) -> KKCheck:
    """The linear Kramers-Kronig test (see the module's notes).

    Parameters
    ----------
    spectrum : Spectrum
        At least 5 frequencies.
    limit : float
        A residual beyond ``limit`` of its standard uncertainties is flagged (4 by
        default: with 2n residuals of normal errors, chance alone passes 4 for n up to
        a few hundred with probability above 0.97).

    Returns
    -------
    KKCheck
    """
    spectrum.check()
    if not (math.isfinite(limit) and limit > 0):
        raise InputError(f"limit = {limit!r}; valid: a number of standard uncertainties > 0")
    f = spectrum.frequency
    n = f.size
    if n < 5:
        raise InputError(f"{n} frequencies; the Kramers-Kronig test needs at least 5", value=n)
    A = _basis(f)
    W = spectrum.whitener()
    Aw = W @ A
    # columns scaled to unit length first: the conductivity column is ~1e10 times the others
    scale = np.linalg.norm(Aw, axis=0)
    scale[scale == 0] = 1.0
    U, s, vt = np.linalg.svd(Aw / scale, full_matrices=False)
    keep = s > 1e-10 * s[0]
    Ur = U[:, keep]
    yw = W @ spectrum.values
    rw = yw - Ur @ (Ur.T @ yw)
    # the conductivity column's coefficient and its standard uncertainty (covariance of
    # the scaled coefficients V S^-2 V^T over the kept directions)
    v_sigma = vt[keep, -1] / s[keep]
    sigma = float(v_sigma @ (Ur.T @ yw)) / scale[-1]
    u_sigma = float(np.sqrt(v_sigma @ v_sigma)) / scale[-1]
    L = np.linalg.inv(W)
    r = L @ rw
    Q = L - (L @ Ur) @ Ur.T  # r = Q y_w; cov(y_w) = I, so cov(r) = Q Q^T
    u = np.sqrt(np.maximum(np.einsum("ij,ij->i", Q, Q), 0.0))
    z = np.divide(r, u, out=np.zeros_like(r), where=u > 0)
    return KKCheck(
        frequency=f,
        residual_real=r[:n],
        residual_loss=r[n:],
        z=z,
        limit=float(limit),
        u_real=u[:n],
        u_loss=u[n:],
        chi2=float(rw @ rw),
        dof=int(2 * n - keep.sum()),
        conductivity=sigma,
        u_conductivity=u_sigma,
    )


def kk_transform(
    frequency: Any, eps_loss: Any, points_per_decade: int = 200, tail_decades: float = 6.0
) -> np.ndarray:
    """eps'(f) - eps_inf at the measured frequencies, from eps''(f) by the
    Kramers-Kronig integral.

    Parameters
    ----------
    frequency, eps_loss : array_like
        The measured band (Hz, ascending or not) and eps'' > 0 there, at least 3 points.
    points_per_decade : int
        Quadrature points per decade (trapezoid rule in ln f).
    tail_decades : float
        How far beyond each end the power-law continuation is integrated numerically;
        beyond that it is integrated in closed form.

    Returns
    -------
    numpy.ndarray
        The predicted eps' - eps_inf at each frequency (in the order given).

    Notes
    -----
    With g(x) = x eps''(x), eps'(w) - eps_inf = (2/pi) int_0^inf (g(x) - g(w)) /
    (x^2 - w^2) dx, since P int_0^inf dx / (x^2 - w^2) = 0; the integrand is then
    regular at x = w. ln eps'' is a cubic spline in ln f between the measured points and
    is continued past each end as the power law through the two end points.
    The low end needs a slope above -2 and the high end one below 0 for the integral to
    converge; a DC conductivity (slope -1) contributes nothing to eps', as it should.
    """
    f = np.asarray(frequency, float).ravel()
    e = np.asarray(eps_loss, float).ravel()
    if f.size != e.size or f.size < 3:
        raise InputError(
            f"{f.size} frequencies and {e.size} eps'' values; give at least 3 of each, "
            "one per frequency"
        )
    if not (np.all(np.isfinite(f)) and np.all(f > 0) and np.all(np.isfinite(e))):
        raise InputError("frequencies and eps'' must be finite, frequencies > 0 Hz")
    if np.any(e <= 0):
        raise InputError(
            "the Kramers-Kronig transform needs eps'' > 0 at every frequency (it is "
            "continued as a power law); valid: positive losses"
        )
    order = np.argsort(f)
    fs, es = f[order], e[order]
    if np.any(np.diff(fs) <= 0):
        raise InputError("a frequency appears twice; give one eps'' per frequency")
    lx, le = np.log(2 * np.pi * fs), np.log(es)
    s_lo = (le[1] - le[0]) / (lx[1] - lx[0])
    s_hi = (le[-1] - le[-2]) / (lx[-1] - lx[-2])
    if not s_lo > -2:
        raise InputError(
            f"eps'' falls as f^{s_lo:.3g} at the low end of the band; the continuation "
            "needs a slope above -2 (the integral does not converge)"
        )
    if not s_hi < 0:
        raise InputError(
            f"eps'' rises as f^{s_hi:.3g} at the high end of the band; the continuation "
            "needs a falling loss there (measure past the loss peak, or use the linear "
            "test, kramers_kronig())"
        )
    tail = tail_decades * math.log(10)
    a, b = lx[0] - tail, lx[-1] + tail
    m = math.ceil((b - a) / math.log(10) * points_per_decade) + 1
    u = np.linspace(a, b, m)

    from scipy.interpolate import CubicSpline

    shape = CubicSpline(lx, le)

    def log_loss(v: np.ndarray) -> np.ndarray:
        inside = np.nan_to_num(shape(np.clip(v, lx[0], lx[-1])))
        return np.where(
            v < lx[0],
            le[0] + s_lo * (v - lx[0]),
            np.where(v > lx[-1], le[-1] + s_hi * (v - lx[-1]), inside),
        )

    x = np.exp(u)
    g = x * np.exp(log_loss(u))
    Y, X = x[0], x[-1]
    eY, eX = float(np.exp(log_loss(np.array([a]))[0])), float(np.exp(log_loss(np.array([b]))[0]))
    out = np.empty(fs.size)
    for i, lw in enumerate(lx):
        w = math.exp(lw)
        gw = w * es[i]
        d = x - w
        near = np.abs(d) < 1e-9 * w
        with np.errstate(divide="ignore", invalid="ignore"):
            integrand = (g - gw) * x / (d * (x + w))
        if near.any():
            h = 1e-5
            gp = (
                math.exp(lw + h) * math.exp(log_loss(np.array([lw + h]))[0])
                - math.exp(lw - h) * math.exp(log_loss(np.array([lw - h]))[0])
            ) / (2 * h * w)  # dg/dx at w
            integrand[near] = gp * w / (2 * w)
        body = np.trapezoid(integrand, u)
        # beyond X >> w: integrand ~ eps''(x) - g(w)/x (in d ln x); beyond Y << w:
        # ~ (g(w) x - x^2 eps''(x)) / w^2; each integrated in closed form
        high = eX / (-s_hi) - gw / X
        low = (gw * Y - Y * Y * eY / (2 + s_lo)) / (w * w)
        out[i] = 2 / math.pi * (body + high + low)
    result = np.empty_like(out)
    result[order] = out
    return result
