"""Generalised least squares fits of the relaxation models, model choice, and a Monte
Carlo cross-check of the fitted parameters' uncertainties.

The residuals of eps' and eps'' at every frequency are whitened by the full covariance
C = L L^T of the spectrum (r_w = L^-1 (model - data)), so correlated errors (one
thickness, one area for every frequency) weigh as they should. The parameter covariance
is (J_w^T J_w)^-1 at the optimum (J_w the whitened Jacobian), and the parameters come
back as ``uncertainties.correlated_values``. tau, sigma and the electrode-polarisation
amplitude are fitted as their base-10 logarithms (decades apart are alike to the data);
their uncertainties are carried back linearly.

Models are compared by AIC = chi2 + 2 k and BIC = chi2 + k ln(N) (N = 2n values, k free
parameters; the terms common to every model are left out): H. Akaike, IEEE Trans. Autom.
Control 19, 716 (1974); G. Schwarz, Ann. Stat. 6, 461 (1978).

The Monte Carlo cross-check draws spectra from the fitted model plus correlated normal
errors of the spectrum's covariance, refits each, and compares the spread of the
parameters with the linearised uncertainties (a parametric bootstrap, in the spirit of
JCGM 101:2008 clause 8's validation of the linear result).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import ExtractionError, InputError
from ..options import RELAXATION_CRITERIA
from ..units import EPS0
from .models import EP_EXPONENT_MAX, MODELS, PARAMETERS, parameter_names, permittivity
from .spectrum import Spectrum

#: parameters fitted as log10 of their value
_LOG = ("tau", "sigma", "ep_amplitude")
#: bounds of the fitted (internal) parameters
_LOWER = {
    "eps_inf": 1.0,
    "delta": 0.0,
    "tau": -15.0,
    "alpha": 0.05,
    "beta": 0.05,
    "sigma": -20.0,
    "ep_amplitude": -6.0,
    "ep_exponent": 0.05,
}
_UPPER = {
    "eps_inf": 1e4,
    "delta": 1e5,
    "tau": 5.0,
    "alpha": 1.0,
    "beta": 1.0,
    "sigma": 3.0,
    "ep_amplitude": 12.0,
    "ep_exponent": EP_EXPONENT_MAX,
}
CRITERIA = RELAXATION_CRITERIA


def _unpack(names: Sequence[str], x: np.ndarray) -> dict[str, float]:
    return {k: (10.0**v if k in _LOG else float(v)) for k, v in zip(names, x, strict=True)}


class _Problem:
    """One model on one spectrum: the whitened residuals and the solver."""

    def __init__(self, spectrum: Spectrum, names: Sequence[str]):
        self.spectrum = spectrum
        self.names = list(names)
        self.f = spectrum.frequency
        self.W = spectrum.whitener()
        self.lo = np.array([_LOWER[k] for k in self.names])
        self.hi = np.array([_UPPER[k] for k in self.names])

    def model(self, x: np.ndarray) -> np.ndarray:
        e = permittivity(self.f, **_unpack(self.names, x))
        return np.concatenate([e.real, -e.imag])

    def residuals(self, x: np.ndarray, y: np.ndarray) -> np.ndarray:
        return self.W @ (self.model(x) - y)

    def jacobian(self, x: np.ndarray) -> np.ndarray:
        """Whitened Jacobian by central differences (steps inside the bounds)."""
        J = np.empty((2 * self.f.size, x.size))
        for i in range(x.size):
            h = 1e-6 * max(1.0, abs(x[i]))
            up, dn = x.copy(), x.copy()
            up[i] = min(x[i] + h, self.hi[i])
            dn[i] = max(x[i] - h, self.lo[i])
            J[:, i] = self.W @ (self.model(up) - self.model(dn)) / (up[i] - dn[i])
        return J

    def clip(self, x: np.ndarray) -> np.ndarray:
        span = self.hi - self.lo
        return np.clip(x, self.lo + 1e-9 * span, self.hi - 1e-9 * span)

    def solve(self, y: np.ndarray, starts: Sequence[np.ndarray], tol: float = 1e-12):
        from scipy.optimize import least_squares

        best = None
        for s0 in starts:
            r = least_squares(
                self.residuals,
                self.clip(np.asarray(s0, float)),
                args=(y,),
                bounds=(self.lo, self.hi),
                x_scale="jac",
                method="trf",
                xtol=tol,
                ftol=tol,
                gtol=tol,
                max_nfev=200 * (len(self.names) + 1),
            )
            if best is None or r.cost < best.cost:
                best = r
        return best

    def starts(self) -> list[np.ndarray]:
        """Starting points: eps_inf at the smallest eps', delta the spread of eps', tau
        at the loss peak and a decade either side (the fit is not convex in tau)."""
        s = self.spectrum
        f, loss = s.frequency, s.eps_loss
        w_min = 2 * math.pi * f[0]
        x0 = {
            "eps_inf": max(float(np.min(s.eps_real)), 1.0),
            "delta": max(float(np.ptp(s.eps_real)), 1e-6),
            "tau": -math.log10(2 * math.pi * f[int(np.argmax(loss))]),
            "alpha": 0.8,
            "beta": 0.8,
            "sigma": math.log10(max(1e-20, float(abs(loss[0]) * EPS0 * w_min))),
            "ep_amplitude": math.log10(max(1e-6, float(abs(loss[0])) * w_min**0.7)),
            "ep_exponent": 0.7,
        }
        base = np.array([x0[k] for k in self.names])
        out = []
        i = self.names.index("tau")
        mid = -math.log10(2 * math.pi * math.sqrt(f[0] * f[-1]))
        for t in (base[i], base[i] - 1.0, base[i] + 1.0, mid):
            x = base.copy()
            x[i] = t
            out.append(x)
        return out


@dataclass(frozen=True)
class Fit:
    """A fitted relaxation model.

    ``params``: name -> ufloat, correlated (tau in s, sigma in S/m); ``chi2`` and ``dof``
    of the whitened residuals (chi2/dof near 1 when the model and the stated
    uncertainties both hold); ``aic``, ``bic``; ``residuals``: the whitened residuals
    (eps' then eps''); ``at_bounds``: parameters the fit pushed to a limit of their
    range (the data do not fix them, and their uncertainties mean little).
    """

    model: str
    conductivity: bool
    params: dict[str, Any]
    chi2: float
    dof: int
    aic: float
    bic: float
    residuals: np.ndarray
    at_bounds: tuple[str, ...] = ()
    electrode: bool = False
    #: the fitted internal parameters (log10 of tau, sigma, ep_amplitude) and their
    #: covariance, for the model band and the Monte Carlo check
    x: np.ndarray = field(default_factory=lambda: np.zeros(0), repr=False)
    x_covariance: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)), repr=False)

    @property
    def names(self) -> list[str]:
        return list(self.params)

    @property
    def label(self) -> str:
        terms = [self.model]
        if self.conductivity:
            terms.append("conductivity")
        if self.electrode:
            terms.append("electrode polarisation")
        return " + ".join(terms)

    @property
    def p_value(self) -> float:
        """Probability of a chi2 at least this large if the model and the stated
        covariance both hold (goodness of fit)."""
        from scipy.stats import chi2

        return float(chi2.sf(self.chi2, self.dof)) if self.dof > 0 else float("nan")

    @property
    def eps_static(self) -> Any:
        """eps_s = eps_inf + delta, with its uncertainty (correlations kept)."""
        return self.params["eps_inf"] + self.params["delta"]

    @property
    def loss_peak(self) -> Any:
        """Frequency (Hz) of the relaxation's loss peak, with its uncertainty."""
        from .models import loss_peak_frequency

        p = self.params
        return loss_peak_frequency(p["tau"], p.get("alpha", 1.0), p.get("beta", 1.0))

    def nominal(self) -> dict[str, float]:
        return {k: float(v.nominal_value) for k, v in self.params.items()}

    def permittivity(self, f: Any) -> np.ndarray:
        """The fitted eps*(f) = eps' - j eps''."""
        return permittivity(f, **self.nominal())

    def band(self, f: Any, coverage: float = 0.95) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The fitted eps*(f) and the expanded uncertainties of its eps' and eps'' from
        the parameters' covariance (linear propagation; k for ``coverage`` from the
        normal distribution, since the covariance is taken as known)."""
        from ..uncertainty import coverage_factor

        f = np.asarray(f, float)
        names = self.names
        e = self.permittivity(f)
        J = np.empty((2 * f.size, len(names)))
        hi = np.array([_UPPER[k] for k in names])
        lo = np.array([_LOWER[k] for k in names])
        for i in range(len(names)):
            h = 1e-6 * max(1.0, abs(self.x[i]))
            up, dn = self.x.copy(), self.x.copy()
            up[i] = min(up[i] + h, hi[i])
            dn[i] = max(dn[i] - h, lo[i])
            eu = permittivity(f, **_unpack(names, up))
            ed = permittivity(f, **_unpack(names, dn))
            d = (eu - ed) / (up[i] - dn[i])
            J[:, i] = np.concatenate([d.real, -d.imag])
        var = np.einsum("ij,jk,ik->i", J, self.x_covariance, J)
        u = np.sqrt(np.maximum(var, 0.0))
        k = coverage_factor(math.inf, coverage)
        return e, k * u[: f.size], k * u[f.size :]

    def correlation(self) -> np.ndarray:
        """Correlation matrix of the parameters (in the order of ``params``)."""
        from uncertainties import correlation_matrix

        return np.array(correlation_matrix(list(self.params.values())))

    def rows(self) -> list[dict[str, Any]]:
        """The parameters as table rows: name, meaning, value, standard uncertainty,
        unit and a note where a parameter sits at a limit of its range."""
        out = []
        for k, v in self.params.items():
            what, unit = PARAMETERS[k]
            out.append(
                {
                    "parameter": k,
                    "meaning": what,
                    "value": float(v.nominal_value),
                    "u": float(v.std_dev),
                    "unit": unit,
                    "note": "at the limit of its range: not fixed by the data"
                    if k in self.at_bounds
                    else "",
                }
            )
        return out

    def table(self) -> str:
        lines = [
            f"{self.label}: chi2 = {self.chi2:.4g} for {self.dof} degrees of freedom "
            f"(p = {self.p_value:.2g}), AIC {self.aic:.4g}, BIC {self.bic:.4g}"
        ]
        for r in self.rows():
            note = f"  ({r['note']})" if r["note"] else ""
            lines.append(
                f"  {r['parameter']:12s} = {r['value']:.6g} +- {r['u']:.2g} {r['unit']}{note}"
            )
        return "\n".join(lines)


def fit(
    spectrum: Spectrum,
    model: str = "havriliak-negami",
    conductivity: bool = False,
    electrode: bool = False,
) -> Fit:
    """Fit one relaxation ``model`` (a key of :data:`MODELS`) to ``spectrum`` by
    generalised least squares over its full covariance.

    Parameters
    ----------
    spectrum : Spectrum
        eps*(f) with its covariance.
    model : str
        "debye", "cole-cole", "cole-davidson" or "havriliak-negami".
    conductivity : bool
        Add a DC conductivity sigma (S/m): eps'' += sigma / (eps0 w).
    electrode : bool
        Add an electrode-polarisation term A (j w)^-n (see :mod:`.models`).

    Returns
    -------
    Fit

    Raises
    ------
    InputError
        An unknown model, or a spectrum with too few or unweighted values.
    ExtractionError
        The model's parameters are not determined by the spectrum.
    """
    from uncertainties import correlated_values

    names = parameter_names(model, conductivity, electrode)
    spectrum.check(len(names))
    prob = _Problem(spectrum, names)
    y = spectrum.values
    best = prob.solve(y, prob.starts())
    x = best.x
    J = prob.jacobian(x)
    _, s, vt = np.linalg.svd(J, full_matrices=False)
    if s[-1] <= 1e-13 * s[0]:
        raise ExtractionError(
            f"the {model} model is not determined by this spectrum (its parameters trade off "
            "exactly); try a simpler model or more frequencies",
            model=model,
        )
    cov_x = (vt.T / s**2) @ vt
    chi2 = float(np.sum(best.fun**2))
    n_values = y.size
    k = len(names)
    xs = correlated_values(x, cov_x)
    params = {n: (10.0**v if n in _LOG else v) for n, v in zip(names, xs, strict=True)}
    at_bounds = tuple(
        n
        for n, xi, lo, hi in zip(names, x, prob.lo, prob.hi, strict=True)
        if xi - lo <= 1e-6 * max(1.0, abs(lo)) or hi - xi <= 1e-6 * max(1.0, abs(hi))
    )
    return Fit(
        model=model,
        conductivity=conductivity,
        params=params,
        chi2=chi2,
        dof=n_values - k,
        aic=chi2 + 2 * k,
        bic=chi2 + k * math.log(n_values),
        residuals=best.fun,
        at_bounds=at_bounds,
        electrode=electrode,
        x=x,
        x_covariance=cov_x,
    )


def choose(
    spectrum: Spectrum,
    models: Sequence[str] = tuple(MODELS),
    conductivity: bool | None = None,
    criterion: str = "bic",
    electrode: bool | None = False,
) -> list[Fit]:
    """Fit every model in ``models``, with and without a conductivity term (unless
    ``conductivity`` says which) and with or without an electrode-polarisation term
    (``electrode``: False, True, or None for both), and return the fits ordered by
    ``criterion`` ("aic" or "bic"), best first. Models the spectrum cannot determine
    are left out."""
    if criterion not in CRITERIA:
        raise InputError(f"criterion {criterion!r}; valid: 'aic', 'bic'", value=criterion)
    for m in models:
        parameter_names(m)  # refuses an unknown model
    c_opts = (False, True) if conductivity is None else (bool(conductivity),)
    e_opts = (False, True) if electrode is None else (bool(electrode),)
    spectrum.check()
    fits = []
    for m in models:
        for c in c_opts:
            for e in e_opts:
                if len(parameter_names(m, c, e)) >= 2 * spectrum.size:
                    continue  # more parameters than values: left out, not refused
                try:
                    fits.append(fit(spectrum, m, c, e))
                except ExtractionError:  # not determined by this spectrum: left out
                    continue
    if not fits:
        raise ExtractionError(
            f"no relaxation model could be fitted to this spectrum ({spectrum.size} "
            "frequencies); measure more frequencies or choose a simpler model"
        )
    return sorted(fits, key=lambda r: getattr(r, criterion))


@dataclass(frozen=True)
class MonteCarloCheck:
    """The spread of refitted parameters over spectra drawn from the fitted model with
    the spectrum's covariance, against the linearised uncertainties.

    ``std``: the Monte Carlo standard deviations; ``ratio``: std / linearised u per
    parameter; ``bias``: (Monte Carlo mean - fitted value) / linearised u; ``tolerance``:
    how far a ratio may stray from 1 by chance with this many draws (3 standard
    errors of a standard deviation, 3 / sqrt(2 (N - 1)), and at least 0.1).
    """

    draws: int
    failed: int
    names: tuple[str, ...]
    std: dict[str, float]
    ratio: dict[str, float]
    bias: dict[str, float]
    correlation: np.ndarray = field(repr=False)
    tolerance: float = 0.1

    @property
    def agrees(self) -> bool:
        """Whether every ratio is within ``tolerance`` of 1."""
        return all(abs(r - 1) <= self.tolerance for r in self.ratio.values())

    def text(self) -> str:
        verdict = (
            "agrees with the linearised uncertainties"
            if self.agrees
            else "does NOT agree with the linearised uncertainties (trust the Monte Carlo spread)"
        )
        parts = ", ".join(f"{k} {self.ratio[k]:.2f}" for k in self.names)
        worst = max(self.names, key=lambda k: abs(self.bias[k]))
        return (
            f"Monte Carlo check ({self.draws} refits of spectra drawn from the fitted model "
            f"with the spectrum's covariance): {verdict}; spread / linearised u: {parts} "
            f"(chance allows 1 +- {self.tolerance:.2f}); largest shift of the mean "
            f"{self.bias[worst]:+.2f} u ({worst})"
        )


def monte_carlo(
    result: Fit, spectrum: Spectrum, draws: int = 200, seed: int | None = None
) -> MonteCarloCheck:
    """Cross-check ``result``'s parameter uncertainties: draw ``draws`` spectra from the
    fitted model plus normal errors with ``spectrum``'s covariance, refit each (from the
    fitted parameters), and compare the spread with the linearised uncertainties.

    Parameters
    ----------
    result : Fit
        A fit of ``spectrum``.
    spectrum : Spectrum
        The spectrum it was fitted to (its frequencies and covariance are used).
    draws : int
        Number of simulated spectra, 20 to 100000.
    seed : int, optional
        Seed of numpy's generator, for a repeatable check.
    """
    if isinstance(draws, bool) or not isinstance(draws, int) or not (20 <= draws <= 100_000):
        raise InputError(f"draws = {draws!r}; valid: a whole number from 20 to 100000", value=draws)
    names = result.names
    if spectrum.size != result.residuals.size // 2:
        raise InputError(
            f"the spectrum has {spectrum.size} frequencies but the fit was made on "
            f"{result.residuals.size // 2}; pass the spectrum the fit was made from"
        )
    prob = _Problem(spectrum, names)
    rng = np.random.default_rng(seed)
    L = np.linalg.cholesky(
        spectrum.covariance
        + 1e-12 * np.max(np.diag(spectrum.covariance)) * np.eye(2 * spectrum.size)
    )
    y0 = prob.model(result.x)
    xs, failed = [], 0
    for _ in range(draws):
        y = y0 + L @ rng.standard_normal(y0.size)
        r = prob.solve(y, [result.x], tol=1e-10)
        if r.success:
            xs.append(r.x)
        else:
            failed += 1
    if len(xs) < 10:
        raise ExtractionError(
            f"the Monte Carlo check failed: only {len(xs)} of {draws} refits converged"
        )
    X = np.array(xs)
    P = np.where(np.isin(names, _LOG), 10.0**X, X)
    std = P.std(axis=0, ddof=1)
    mean = P.mean(axis=0)
    out_std, ratio, bias = {}, {}, {}
    for i, k in enumerate(names):
        u = result.params[k].std_dev
        v = result.params[k].nominal_value
        out_std[k] = float(std[i])
        ratio[k] = float(std[i] / u) if u > 0 else float("inf")
        bias[k] = float((mean[i] - v) / u) if u > 0 else 0.0
    n = len(xs)
    corr = np.corrcoef(P.T) if len(names) > 1 else np.ones((1, 1))
    return MonteCarloCheck(
        draws=n,
        failed=failed,
        names=tuple(names),
        std=out_std,
        ratio=ratio,
        bias=bias,
        correlation=corr,
        tolerance=max(0.1, 3 / math.sqrt(2 * (n - 1))),
    )
