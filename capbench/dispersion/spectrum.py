"""A measured eps*(f) with the full covariance of its values."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError


@dataclass(frozen=True)
class Spectrum:
    """A measured eps*(f) = eps' - j eps''.

    ``frequency`` (Hz, ascending), ``eps_real`` (eps'), ``eps_loss`` (eps''), and
    ``covariance``: the covariance of the 2n values [eps'_1..eps'_n, eps''_1..eps''_n].
    The points of one extraction share the specimen's thickness, the electrode area and
    the field correction, so their errors are correlated across frequencies; the
    covariance keeps that.
    """

    frequency: np.ndarray
    eps_real: np.ndarray
    eps_loss: np.ndarray
    covariance: np.ndarray

    @property
    def size(self) -> int:
        return int(self.frequency.size)

    @property
    def u_real(self) -> np.ndarray:
        """Standard uncertainties of eps'."""
        return np.sqrt(np.diag(self.covariance)[: self.size])

    @property
    def u_loss(self) -> np.ndarray:
        """Standard uncertainties of eps''."""
        return np.sqrt(np.diag(self.covariance)[self.size :])

    @classmethod
    def from_values(
        cls,
        frequency: Sequence[float],
        eps_real: Sequence[Any],
        eps_loss: Sequence[Any],
        u_real: Sequence[float] | None = None,
        u_loss: Sequence[float] | None = None,
    ) -> Spectrum:
        """From numbers (with standard uncertainties ``u_real``, ``u_loss``, taken as
        independent) or from ufloats, whose correlations are kept
        (``uncertainties.covariance_matrix``). Sorted by frequency."""
        f = np.asarray(frequency, float).ravel()
        n = f.size
        eps_real, eps_loss = list(eps_real), list(eps_loss)
        values = [*eps_real, *eps_loss]
        if len(eps_real) != n or len(eps_loss) != n:
            raise InputError(
                f"{n} frequencies but {len(eps_real)} eps' and {len(eps_loss)} eps'' values; "
                "give one of each per frequency",
                value=len(values),
            )
        if values and all(hasattr(v, "std_dev") for v in values):
            from uncertainties import covariance_matrix

            cov = np.array(covariance_matrix(values), float)
            nominal = np.array([v.nominal_value for v in values], float)
        elif any(hasattr(v, "std_dev") for v in values):
            raise InputError(
                "some eps values carry uncertainties and some do not; give all as ufloats "
                "or all as numbers with u_real and u_loss"
            )
        else:
            if u_real is None or u_loss is None:
                raise InputError(
                    "give the standard uncertainties u_real and u_loss (or ufloats): a fit "
                    "without them has no uncertainty"
                )
            u = np.asarray([*u_real, *u_loss], float)
            if u.size != 2 * n:
                raise InputError(
                    f"{u.size} standard uncertainties for {2 * n} values; give one per eps' "
                    "and one per eps''",
                    value=u.size,
                )
            nominal = np.array(values, float)
            cov = np.diag(np.square(u))
        order = np.argsort(f, kind="stable")
        idx = np.concatenate([order, order + n])
        return cls(f[order], nominal[:n][order], nominal[n:][order], cov[np.ix_(idx, idx)])

    @classmethod
    def from_extraction(cls, extraction: Any) -> Spectrum:
        """The spectrum of an extraction with loss, correlations across frequencies kept
        (every point's eps' and eps'' are ufloats of the same inputs)."""
        pts = extraction.points
        if any(p.frequency is None for p in pts) or any(p.eps_loss is None for p in pts):
            raise InputError(
                "the extraction needs a frequency and a loss reading (dissipation factor) at "
                "every point for a relaxation fit"
            )
        return cls.from_values(
            [p.frequency for p in pts], [p.eps_r for p in pts], [p.eps_loss for p in pts]
        )

    def check(self, parameters: int = 0) -> None:
        """Refuse a spectrum that cannot be fitted (with ``parameters`` free ones)."""
        n = self.size
        if n < 3:
            raise InputError(f"{n} frequencies; a relaxation fit needs at least 3", value=n)
        if np.any(~np.isfinite(self.frequency)) or np.any(self.frequency <= 0):
            raise InputError("every frequency must be a positive number of Hz")
        if len(np.unique(self.frequency)) != n:
            raise InputError(
                "a frequency appears twice; give one value per frequency (average repeats first)"
            )
        for name, v in (("eps'", self.eps_real), ("eps''", self.eps_loss)):
            if not np.all(np.isfinite(v)):
                raise InputError(f"an {name} value is not finite; valid: finite numbers")
        if self.covariance.shape != (2 * n, 2 * n):
            raise InputError(f"the covariance must be {2 * n} x {2 * n}")
        if not np.all(np.isfinite(self.covariance)):
            raise InputError("the covariance holds a value that is not finite")
        bad = np.flatnonzero(np.diag(self.covariance) <= 0)
        if bad.size:
            from ..units import frequency_text

            i = int(bad[0])
            part = "eps'" if i < n else "eps''"
            raise InputError(
                f"{part} at {frequency_text(self.frequency[i % n])} has u = "
                f"{math.sqrt(max(self.covariance[i, i], 0.0)):g}; every eps' and eps'' needs "
                "a standard uncertainty above 0 to weight the fit (give the instrument's "
                "dissipation accuracy, or repeated readings)",
                value=float(self.covariance[i, i]),
            )
        if parameters and parameters >= 2 * n:
            raise InputError(
                f"{parameters} parameters from {2 * n} values ({n} frequencies); measure "
                f"at least {math.ceil((parameters + 1) / 2)} frequencies",
                value=n,
            )

    def whitener(self) -> np.ndarray:
        """L^-1 with C = L L^T (Cholesky of the covariance): L^-1 r has unit covariance.

        A covariance that is singular (a value fully determined by others, e.g. rounded
        away) is regularised by 1e-12 of its largest variance on the diagonal."""
        c = self.covariance
        try:
            L = np.linalg.cholesky(c)
        except np.linalg.LinAlgError:
            jitter = 1e-12 * float(np.max(np.diag(c)))
            try:
                L = np.linalg.cholesky(c + jitter * np.eye(c.shape[0]))
            except np.linalg.LinAlgError:
                raise InputError(
                    "the covariance of the spectrum is not positive definite; check the "
                    "correlations given"
                ) from None
        from scipy.linalg import solve_triangular

        return solve_triangular(L, np.eye(L.shape[0]), lower=True)

    @property
    def values(self) -> np.ndarray:
        """[eps'_1..eps'_n, eps''_1..eps''_n]."""
        return np.concatenate([self.eps_real, self.eps_loss])
