"""From eps*(f) to a material model: relaxation fits with correlated uncertainties and a
Kramers-Kronig check.

The spectrum is eps*(w) = eps' - j eps'' at angular frequencies w = 2 pi f, as the
extraction methods give it (one :class:`~capbench.extract.Point` per frequency). The
models are the classical relaxation functions, each a special case of the
Havriliak-Negami function

    eps*(w) = eps_inf + delta / (1 + (j w tau)^alpha)^beta  [ - j sigma / (eps0 w) ]

Debye (alpha = beta = 1), Cole-Cole (beta = 1), Cole-Davidson (alpha = 1), with an
optional DC-conductivity term. Fits are generalised least squares: the residuals of eps'
and eps'' at every frequency are whitened by the full covariance of the spectrum (the
points of one extraction share the thickness, the area and the instrument's scale, so
their errors are correlated), the parameter covariance is (J^T C^-1 J)^-1 and the
parameters come back as ``uncertainties.correlated_values``. Models are compared by AIC
and BIC. The Kramers-Kronig check is the linear test of Boukamp: a sum of Debye terms
with fixed time constants spread over the measured range is Kramers-Kronig consistent by
construction; fitted to the spectrum by linear least squares, its residuals show where
eps' and eps'' disagree.

References
----------
P. Debye, Polar Molecules (1929). K. S. Cole and R. H. Cole, J. Chem. Phys. 9, 341
(1941). D. W. Davidson and R. H. Cole, J. Chem. Phys. 19, 1484 (1951). S. Havriliak and
S. Negami, Polymer 8, 161 (1967). B. A. Boukamp, J. Electrochem. Soc. 142, 1885 (1995),
a linear Kronig-Kramers transform test. H. Akaike, IEEE Trans. Autom. Control 19, 716
(1974); G. Schwarz, Ann. Stat. 6, 461 (1978).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .errors import ExtractionError, InputError
from .units import EPS0, frequency_text

#: the relaxation functions: name -> which of alpha, beta are free
MODELS = {
    "debye": (False, False),
    "cole-cole": (True, False),
    "cole-davidson": (False, True),
    "havriliak-negami": (True, True),
}


def permittivity(
    f: Any,
    eps_inf: float,
    delta: float,
    tau: float,
    alpha: float = 1.0,
    beta: float = 1.0,
    sigma: float = 0.0,
) -> np.ndarray:
    """eps*(f) = eps' - j eps'' of the Havriliak-Negami function (Debye, Cole-Cole and
    Cole-Davidson as its special cases) with a DC conductivity ``sigma`` (S/m).

    ``f`` in Hz, ``tau`` in s; 0 < alpha <= 1, 0 < beta <= 1."""
    w = 2 * np.pi * np.asarray(f, float)
    eps = eps_inf + delta / (1 + (1j * w * tau) ** alpha) ** beta
    if sigma:
        eps = eps - 1j * sigma / (EPS0 * w)
    return eps


@dataclass(frozen=True)
class Spectrum:
    """A measured eps*(f): frequencies (Hz), eps', eps'' and the covariance of the 2n
    values [eps'_1..eps'_n, eps''_1..eps''_n]."""

    frequency: np.ndarray
    eps_real: np.ndarray
    eps_loss: np.ndarray
    covariance: np.ndarray

    @classmethod
    def from_values(
        cls,
        frequency: Sequence[float],
        eps_real: Sequence[Any],
        eps_loss: Sequence[Any],
        u_real: Sequence[float] | None = None,
        u_loss: Sequence[float] | None = None,
    ) -> Spectrum:
        """From numbers (with standard uncertainties ``u_real``, ``u_loss``) or from
        ufloats, whose correlations are kept (``uncertainties.covariance_matrix``)."""
        f = np.asarray(frequency, float)
        n = f.size
        values = [*eps_real, *eps_loss]
        if len(values) != 2 * n:
            raise InputError(
                f"{n} frequencies but {len(eps_real)} eps' and {len(eps_loss)} eps'' values; "
                "give one of each per frequency",
                value=len(values),
            )
        if all(hasattr(v, "std_dev") for v in values):
            from uncertainties import covariance_matrix

            cov = np.array(covariance_matrix(values), float)
            nominal = np.array([v.nominal_value for v in values])
        else:
            if u_real is None or u_loss is None:
                raise InputError(
                    "give the standard uncertainties u_real and u_loss (or ufloats): a fit "
                    "without them has no uncertainty"
                )
            nominal = np.array(values, float)
            cov = np.diag(np.square(np.asarray([*u_real, *u_loss], float)))
        return cls(f, nominal[:n], nominal[n:], cov)

    @classmethod
    def from_extraction(cls, extraction: Any) -> Spectrum:
        """The spectrum of an extraction with loss, correlations across frequencies kept."""
        pts = extraction.points
        if any(p.eps_loss is None for p in pts) or any(p.frequency is None for p in pts):
            raise InputError(
                "the extraction needs a frequency and a loss reading (dissipation factor) at "
                "every point for a relaxation fit"
            )
        return cls.from_values(
            [p.frequency for p in pts], [p.eps_r for p in pts], [p.eps_loss for p in pts]
        )

    def check(self) -> None:
        n = self.frequency.size
        if n < 3:
            raise InputError(f"{n} frequencies; a relaxation fit needs at least 3", value=n)
        if np.any(~np.isfinite(self.frequency)) or np.any(self.frequency <= 0):
            raise InputError("every frequency must be a positive number of Hz")
        if len(np.unique(self.frequency)) != n:
            raise InputError("a frequency appears twice; give one value per frequency")
        if self.covariance.shape != (2 * n, 2 * n):
            raise InputError(f"the covariance must be {2 * n} x {2 * n}")
        if np.any(np.diag(self.covariance) <= 0):
            raise InputError(
                "every eps' and eps'' needs a standard uncertainty above 0 to weight the fit"
            )


@dataclass(frozen=True)
class Fit:
    """A fitted relaxation model. ``params``: name -> ufloat (correlated); ``chi2`` and
    ``dof`` of the whitened residuals; ``aic``, ``bic``; ``residuals``: the whitened
    residuals (eps' then eps'')."""

    model: str
    conductivity: bool
    params: dict[str, Any]
    chi2: float
    dof: int
    aic: float
    bic: float
    residuals: np.ndarray
    #: parameters the fit pushed to a limit of their range (the data do not fix them)
    at_bounds: tuple[str, ...] = ()

    def permittivity(self, f: Any) -> np.ndarray:
        p = {k: v.nominal_value for k, v in self.params.items()}
        return permittivity(f, **p)

    def table(self) -> str:
        lines = [
            f"{self.model}{' + conductivity' if self.conductivity else ''}: chi2 = "
            f"{self.chi2:.4g} for {self.dof} degrees of freedom, AIC {self.aic:.4g}, "
            f"BIC {self.bic:.4g}"
        ]
        units = {"tau": "s", "sigma": "S/m"}
        for k, v in self.params.items():
            note = (
                "  (at the limit of its range: not fixed by the data)"
                if k in self.at_bounds
                else ""
            )
            lines.append(
                f"  {k:8s} = {v.nominal_value:.6g} +- {v.std_dev:.2g} {units.get(k, '')}{note}"
            )
        return "\n".join(lines)


def _names(model: str, conductivity: bool) -> list[str]:
    a, b = MODELS[model]
    names = ["eps_inf", "delta", "tau"]
    if a:
        names.append("alpha")
    if b:
        names.append("beta")
    if conductivity:
        names.append("sigma")
    return names


def fit(spectrum: Spectrum, model: str = "havriliak-negami", conductivity: bool = False) -> Fit:
    """Fit one relaxation ``model`` (a key of :data:`MODELS`) to ``spectrum`` by
    generalised least squares; see the module's notes."""
    from scipy.optimize import least_squares
    from uncertainties import correlated_values

    if model not in MODELS:
        raise InputError(f"model {model!r}; valid: {', '.join(MODELS)}", value=model)
    spectrum.check()
    f = spectrum.frequency
    n = f.size
    names = _names(model, conductivity)
    if len(names) >= 2 * n:
        raise InputError(
            f"{len(names)} parameters from {2 * n} values; measure more frequencies",
            value=n,
        )
    L = np.linalg.cholesky(spectrum.covariance)
    y = np.concatenate([spectrum.eps_real, spectrum.eps_loss])

    def unpack(x):
        p = dict(zip(names, x, strict=True))
        p["tau"] = 10.0 ** p["tau"]  # fitted as log10(tau): decades apart are alike
        if "sigma" in p:
            p["sigma"] = 10.0 ** p["sigma"]
        return p

    def resid(x):
        e = permittivity(f, **unpack(x))
        return np.linalg.solve(L, np.concatenate([e.real, -e.imag]) - y)

    # start: eps_inf at the high-frequency eps', delta the spread, tau at the loss peak
    loss = spectrum.eps_loss
    x0 = {
        "eps_inf": float(np.min(spectrum.eps_real)),
        "delta": max(float(np.ptp(spectrum.eps_real)), 1e-6),
        "tau": -math.log10(2 * math.pi * f[int(np.argmax(loss))]),
        "alpha": 0.8,
        "beta": 0.8,
        "sigma": math.log10(max(1e-20, float(loss[np.argmin(f)] * EPS0 * 2 * np.pi * f.min()))),
    }
    lo = {"eps_inf": 1.0, "delta": 0.0, "tau": -15.0, "alpha": 0.05, "beta": 0.05, "sigma": -20}
    hi = {"eps_inf": 1e4, "delta": 1e5, "tau": 5.0, "alpha": 1.0, "beta": 1.0, "sigma": 3.0}
    start = np.array([min(max(x0[k], lo[k] + 1e-9), hi[k] - 1e-9) for k in names])
    best = None
    for shift in (0.0, -1.0, 1.0):  # a few starts in tau: the fit is not convex in it
        s0 = start.copy()
        s0[2] = min(max(s0[2] + shift, lo["tau"]), hi["tau"])
        r = least_squares(
            resid,
            s0,
            bounds=([lo[k] for k in names], [hi[k] for k in names]),
            x_scale="jac",
            method="trf",
            xtol=1e-14,
            ftol=1e-14,
            gtol=1e-14,
            max_nfev=4000,
        )
        if best is None or r.cost < best.cost:
            best = r
    J = best.jac
    try:
        cov_x = np.linalg.inv(J.T @ J)
    except np.linalg.LinAlgError:
        raise ExtractionError(
            f"the {model} model is not determined by this spectrum (its parameters trade off "
            "exactly); try a simpler model or more frequencies"
        ) from None
    chi2 = float(2 * best.cost)
    dof = 2 * n - len(names)
    xs = correlated_values(best.x, cov_x)
    params: dict[str, Any] = {}
    for k, v in zip(names, xs, strict=True):
        params[k] = 10.0**v if k in ("tau", "sigma") else v
    k_par = len(names)
    aic = chi2 + 2 * k_par
    bic = chi2 + k_par * math.log(2 * n)
    at_bounds = tuple(
        k
        for k, x in zip(names, best.x, strict=True)
        if min(abs(x - lo[k]), abs(x - hi[k])) <= 1e-6 * max(1.0, abs(x))
    )
    return Fit(model, conductivity, params, chi2, dof, aic, bic, best.fun, at_bounds)


def choose(
    spectrum: Spectrum,
    models: Sequence[str] = tuple(MODELS),
    conductivity: bool | None = None,
    criterion: str = "bic",
) -> list[Fit]:
    """Fit every model (with and without conductivity unless ``conductivity`` says) and
    return the fits ordered by ``criterion`` ("aic" or "bic"), best first."""
    if criterion not in ("aic", "bic"):
        raise InputError(f"criterion {criterion!r}; valid: 'aic', 'bic'", value=criterion)
    options = (False, True) if conductivity is None else (conductivity,)
    fits = []
    for m in models:
        for c in options:
            try:
                fits.append(fit(spectrum, m, c))
            except (ExtractionError, InputError):
                continue
    if not fits:
        raise ExtractionError("no relaxation model could be fitted to this spectrum")
    return sorted(fits, key=lambda r: getattr(r, criterion))


@dataclass(frozen=True)
class KKCheck:
    """Result of the linear Kramers-Kronig test: ``residual_real`` and ``residual_loss``
    are (data - KK-consistent fit) per frequency, ``z`` the same in units of each
    value's standard uncertainty, ``consistent`` whether every |z| <= ``limit``."""

    frequency: np.ndarray
    residual_real: np.ndarray
    residual_loss: np.ndarray
    z: np.ndarray
    limit: float

    @property
    def consistent(self) -> bool:
        return bool(np.all(np.abs(self.z) <= self.limit))

    def text(self) -> str:
        worst = int(np.argmax(np.abs(self.z)))
        n = self.frequency.size
        part = "eps'" if worst < n else "eps''"
        f = self.frequency[worst % n]
        verdict = "consistent" if self.consistent else "NOT consistent"
        return (
            f"Kramers-Kronig check (linear test, Boukamp 1995): {verdict}; largest residual "
            f"{abs(self.z[worst]):.2g} standard uncertainties ({part} at {frequency_text(f)}), "
            f"limit {self.limit:g}"
        )


def kramers_kronig(spectrum: Spectrum, limit: float = 4.0) -> KKCheck:
    """The linear Kramers-Kronig test: fit eps_inf, a DC conductivity and Debye terms with
    fixed time constants tau_k = 1 / w_k at the measured frequencies (and a decade beyond
    each end, Boukamp's choice) to eps' and eps'' together by weighted linear least
    squares. Any such sum satisfies the Kramers-Kronig relations, so residuals larger
    than the measurement's uncertainty (``limit`` standard uncertainties) flag data whose
    real and imaginary parts cannot belong to one causal, linear response."""
    spectrum.check()
    f = spectrum.frequency
    w = 2 * np.pi * f
    n = f.size
    if n < 5:
        raise InputError(f"{n} frequencies; the Kramers-Kronig test needs at least 5", value=n)
    taus = np.concatenate([[10 / w.min()], 1 / np.sort(w), [0.1 / w.max()]])
    cols_re = [np.ones(n)] + [1 / (1 + (w * t) ** 2) for t in taus] + [np.zeros(n)]
    cols_im = [np.zeros(n)] + [w * t / (1 + (w * t) ** 2) for t in taus] + [1 / (EPS0 * w)]
    A = np.vstack([np.column_stack(cols_re), np.column_stack(cols_im)])
    y = np.concatenate([spectrum.eps_real, spectrum.eps_loss])
    u = np.sqrt(np.diag(spectrum.covariance))
    coef, *_ = np.linalg.lstsq(A / u[:, None], y / u, rcond=None)
    r = y - A @ coef
    return KKCheck(f, r[:n], r[n:], r / u, limit)
