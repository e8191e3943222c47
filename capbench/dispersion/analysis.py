"""One relaxation analysis of a spectrum: the ranked fits, the chosen model, the
Kramers-Kronig check and, when asked, the Monte Carlo cross-check; and its content for
reports, the command line and the page (plain data, no physics)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from ..errors import InputError
from ..units import frequency_text
from .fitting import CRITERIA, Fit, MonteCarloCheck, choose, fit, monte_carlo
from .kk import KKCheck, kramers_kronig
from .models import MODELS, parameter_names
from .spectrum import Spectrum


@dataclass(frozen=True)
class Relaxation:
    """A spectrum's relaxation analysis. ``fits`` ranked by ``criterion`` (best first);
    ``kk`` the linear Kramers-Kronig test (None below 5 frequencies); ``monte_carlo``
    the cross-check of the best fit (None unless asked for)."""

    spectrum: Spectrum
    fits: tuple[Fit, ...]
    criterion: str
    kk: KKCheck | None = None
    monte_carlo: MonteCarloCheck | None = None

    @property
    def best(self) -> Fit:
        return self.fits[0]

    def statement(self) -> str:
        """One sentence: the chosen model and its main parameters with expanded
        uncertainties (95 %, the parameters' covariance taken as known: normal k)."""
        b = self.best
        p = b.params
        parts = [
            f"eps_s = {_pm(b.eps_static)}",
            f"eps_inf = {_pm(p['eps_inf'])}",
            f"tau = {_pm(p['tau'])} s",
        ]
        for k in ("alpha", "beta"):
            if k in p:
                parts.append(f"{k} = {_pm(p[k])}")
        if "sigma" in p:
            parts.append(f"sigma = {_pm(p['sigma'])} S/m")
        runner = ""
        if len(self.fits) > 1:
            d = getattr(self.fits[1], self.criterion) - getattr(b, self.criterion)
            runner = f"; next best {self.fits[1].label} by {d:.3g}"
        limits = (
            f" Not fixed by the data (at the limit of its range): {', '.join(b.at_bounds)}; "
            "its value and uncertainty mean little, and a simpler model or a wider band "
            "would say more."
            if b.at_bounds
            else ""
        )
        return (
            f"Relaxation model chosen by {self.criterion.upper()}: {b.label} "
            f"(chi2/dof = {b.chi2 / max(b.dof, 1):.3g}{runner}). "
            + ", ".join(parts)
            + f" (expanded uncertainties, k = {_k95():.2f} for 95 % coverage)."
            + limits
        )

    def content(self) -> dict[str, Any]:
        """The analysis as plain data: for JSON, reports and the page."""
        b = self.best
        peak = b.loss_peak
        return {
            "statement": self.statement(),
            "criterion": self.criterion,
            "model": b.label,
            "parameters": b.rows(),
            "eps_static": {"value": float(b.eps_static.n), "u": float(b.eps_static.s)},
            "loss_peak_hz": {"value": float(peak.n), "u": float(peak.s)},
            "correlation": {
                "names": b.names,
                "matrix": [[round(float(v), 6) for v in row] for row in b.correlation()],
            },
            "fits": [
                {
                    "model": r.model,
                    "conductivity": r.conductivity,
                    "electrode": r.electrode,
                    "label": r.label,
                    "chi2": r.chi2,
                    "dof": r.dof,
                    "p_value": r.p_value,
                    "aic": r.aic,
                    "bic": r.bic,
                    "at_bounds": list(r.at_bounds),
                    "params": {
                        k: {"value": float(v.nominal_value), "u": float(v.std_dev)}
                        for k, v in r.params.items()
                    },
                }
                for r in self.fits
            ],
            "kramers_kronig": None
            if self.kk is None
            else {
                "consistent": self.kk.consistent,
                "max_z": float(abs(self.kk.z).max()),
                "limit": self.kk.limit,
                "text": self.kk.text(),
                "conductivity": {"value": self.kk.conductivity, "u": self.kk.u_conductivity},
                "flagged": [
                    {"part": part, "frequency": f, "z": z} for part, f, z in self.kk.flagged
                ],
            },
            "monte_carlo": None
            if self.monte_carlo is None
            else {
                "draws": self.monte_carlo.draws,
                "agrees": self.monte_carlo.agrees,
                "ratio": self.monte_carlo.ratio,
                "text": self.monte_carlo.text(),
            },
        }

    def table_rows(self) -> list[list[str]]:
        """The ranking as rows of text: model, chi2/dof, p, AIC, BIC, delta criterion."""
        best = getattr(self.best, self.criterion)
        return [
            [
                r.label,
                f"{r.chi2 / max(r.dof, 1):.3g}",
                f"{r.p_value:.2g}",
                f"{r.aic:.5g}",
                f"{r.bic:.5g}",
                f"{getattr(r, self.criterion) - best:.3g}",
                ", ".join(r.at_bounds),
            ]
            for r in self.fits
        ]

    TABLE_HEADER = ("model", "chi2/dof", "p", "AIC", "BIC", "delta", "at a limit")

    def parameter_rows(self) -> list[list[str]]:
        """The chosen model's parameters as rows of text (u: standard uncertainty)."""
        return [
            [
                r["parameter"],
                r["meaning"],
                f"{r['value']:.6g}",
                f"{r['u']:.2g}",
                r["unit"],
                r["note"],
            ]
            for r in self.best.rows()
        ]

    PARAMETER_HEADER = ("parameter", "meaning", "value", "u", "unit", "note")

    def text(self) -> str:
        """The analysis as the command line prints it."""
        lines = [
            f"{self.spectrum.size} frequencies, {frequency_text(self.spectrum.frequency[0])} "
            f"to {frequency_text(self.spectrum.frequency[-1])}",
            f"models ranked by {self.criterion.upper()} (best first; u = standard uncertainty):",
        ]
        lines += [r.table() for r in self.fits]
        lines.append(self.statement())
        lines.append(
            self.kk.text() if self.kk else "Kramers-Kronig check: needs at least 5 frequencies"
        )
        if self.monte_carlo is not None:
            lines.append(self.monte_carlo.text())
        return "\n".join(lines)


def _k95() -> float:
    """k for 95 % coverage with the parameters' covariance taken as known (normal)."""
    from ..uncertainty import coverage_factor

    return coverage_factor(math.inf, 0.95)


def _pm(v: Any) -> str:
    """``value +- U`` with U = k u (k for 95 %), U to two significant digits."""
    U = _k95() * float(v.std_dev)
    n = float(v.nominal_value)
    if not (U > 0 and math.isfinite(U)):
        return f"{n:.6g}"
    if abs(n) >= 1e4 or abs(n) < 1e-3:
        return f"{n:.3e} +- {U:.2g}"
    digits = max(0, 1 - math.floor(math.log10(U)))
    return f"{n:.{digits}f} +- {U:.2g}"


def analyse(
    spectrum: Spectrum,
    models: Sequence[str] | str = "auto",
    *,
    conductivity: bool | None = None,
    electrode: bool | None = False,
    criterion: str = "bic",
    monte_carlo_draws: int = 0,
    seed: int | None = None,
    kk_limit: float = 4.0,
) -> Relaxation:
    """Fit, rank, check: the one workflow the command line, the page and reports use.

    Parameters
    ----------
    spectrum : Spectrum
    models : "auto" or a model name or names
        "auto": every model of :data:`MODELS`.
    conductivity, electrode : bool or None
        Whether to include the DC conductivity / electrode-polarisation term; None:
        try with and without.
    criterion : "bic" or "aic"
    monte_carlo_draws : int
        0 for none, else the draws of :func:`monte_carlo` on the best fit.
    seed : int, optional
        Seed of the Monte Carlo check.
    """
    if criterion not in CRITERIA:
        raise InputError(f"criterion {criterion!r}; valid: 'aic', 'bic'", value=criterion)
    if models == "auto":
        names: tuple[str, ...] = tuple(MODELS)
    elif isinstance(models, str):
        names = (models,)
    else:
        names = tuple(models)
    for m in names:
        parameter_names(m)
    if len(names) == 1 and conductivity is not None and electrode is not None:
        fits = [fit(spectrum, names[0], conductivity, electrode)]
    else:
        fits = choose(spectrum, names, conductivity, criterion, electrode)
    kk = kramers_kronig(spectrum, kk_limit) if spectrum.size >= 5 else None
    mc = monte_carlo(fits[0], spectrum, monte_carlo_draws, seed) if monte_carlo_draws else None
    return Relaxation(spectrum, tuple(fits), criterion, kk, mc)
