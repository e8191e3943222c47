"""Measurement uncertainty after the GUM (JCGM 100:2008) and its Supplement 1 (JCGM 101:2008).

Every input of a measurement is a value with a standard uncertainty: an
:class:`InputVariable`, a subclass of the ``uncertainties`` package's ``Variable`` that
also carries its :class:`Source` (name, unit, distribution, type A or B, degrees of
freedom). Arithmetic with them is ordinary ``uncertainties`` arithmetic, so correlations
survive end to end, and :func:`budget` reads the contributions straight from the
result's derivatives (the sensitivity coefficients of the linearised model).

Inputs
    :func:`type_a` (mean of repeated readings), :func:`type_a_correlated` (means of
    simultaneous readings of several quantities, with their covariance),
    :func:`type_b` (a stated half-width or standard uncertainty), :func:`correlated`
    (values with a given covariance), :class:`AccuracySpec` ("x % of reading + y pF").
Budget
    :func:`budget`: input, value, standard uncertainty, distribution, sensitivity
    coefficient, contribution, share of variance; Welch-Satterthwaite effective degrees
    of freedom; expanded uncertainty with k = 2 or from the t distribution.
Monte Carlo
    :func:`monte_carlo`: propagation of distributions (JCGM 101), a seedable numpy
    Generator, the adaptive procedure of JCGM 101 clause 7.9, probabilistically
    symmetric or shortest coverage intervals, and the validation of the linear (GUM)
    result of JCGM 101 clause 8.

Values with a unit travel as pint quantities whose magnitude is a ufloat; a quantity
of ufloat does not support ``np.sqrt``: write ``q**0.5``. Never order ufloats with
``<``: compare nominal values (``x.n``).

References
----------
.. [1] JCGM 100:2008, Evaluation of measurement data - Guide to the expression of
   uncertainty in measurement (GUM), clauses 4 (type A and B evaluation), 5.1 and 5.2
   (law of propagation of uncertainty, correlated inputs), G.4 (Welch-Satterthwaite).
.. [2] JCGM 101:2008, Evaluation of measurement data - Supplement 1 to the GUM -
   Propagation of distributions using a Monte Carlo method, clauses 6.4 (sampling),
   7.7 (coverage intervals), 7.9 (adaptive procedure), 8 (validation).
"""

from __future__ import annotations

import math
import re
import warnings
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pint
from scipy import stats
from uncertainties.core import AffineScalarFunc, LinearCombination, Variable

from .errors import InputError
from .units import Q_, parse_quantity, to_si
from .validate import LIMITS, check

#: distributions an input may carry (JCGM 101 clause 6.4)
DISTRIBUTIONS = ("normal", "rectangular", "triangular", "arcsine", "t")

# half-width a of a bounded distribution = divisor * standard uncertainty (GUM 4.3.7, 4.3.9)
_HALF_WIDTH_PER_U = {"rectangular": math.sqrt(3.0), "triangular": math.sqrt(6.0), "arcsine": 2**0.5}


# --------------------------------------------------------------------------- inputs


@dataclass(frozen=True)
class Source:
    """What is known about one input quantity, for the budget table and Monte Carlo.

    ``unit`` is the unit the input's value is held in (its sensitivity coefficient is
    per this unit); ``kind`` is "A" (statistical evaluation of repeated readings) or
    "B" (any other); ``dof`` the degrees of freedom of its standard uncertainty
    (infinite for a type B input known exactly); ``half_width`` the bound of a bounded
    distribution.
    """

    name: str
    unit: str = ""
    distribution: str = "normal"
    kind: str = "B"
    dof: float = math.inf
    half_width: float | None = None
    note: str = ""

    def __post_init__(self):
        if self.distribution not in DISTRIBUTIONS:
            raise InputError(
                f"distribution of {self.name!r} = {self.distribution!r}; valid: {DISTRIBUTIONS}",
                name=self.name,
                value=self.distribution,
            )
        if self.kind not in ("A", "B"):
            raise InputError(
                f"kind of {self.name!r} = {self.kind!r}; valid: 'A' or 'B'", value=self.kind
            )
        if not (self.dof > 0):
            raise InputError(
                f"degrees of freedom of {self.name!r} = {self.dof!r}; must be > 0",
                value=self.dof,
            )


class InputVariable(Variable):
    """An independent input of a measurement: a ``uncertainties`` Variable with a
    :class:`Source`. Arithmetic is that of ``uncertainties``; the source rides along so
    that :func:`budget` and :func:`monte_carlo` know the input's name, distribution and
    degrees of freedom."""

    __slots__ = ("source",)

    def __init__(self, value: float, std_dev: float, source: Source):
        super().__init__(value, std_dev, tag=source.name)
        self.source = source


@dataclass(frozen=True, eq=False)
class CorrelatedGroup:
    """Inputs with a joint (multivariate normal) distribution.

    The members are x = mean + Q z, where Q holds the eigenvectors of the covariance
    and z independent normal components (:class:`GroupComponent`) with the eigenvalues
    as variances; :func:`budget` maps sensitivities back to the members with Q.
    """

    sources: tuple[Source, ...]
    mean: np.ndarray
    covariance: np.ndarray
    transform: np.ndarray  # Q, columns: eigenvectors


class GroupComponent(Variable):
    """One independent normal component of a :class:`CorrelatedGroup`."""

    __slots__ = ("group", "index")

    def __init__(self, std_dev: float, group: CorrelatedGroup, index: int):
        super().__init__(0.0, std_dev, tag=f"{group.sources[0].name} ... component {index}")
        self.group = group
        self.index = index


def _wrap(value: Any, unit: str) -> Any:
    return Q_(value, unit) if unit else value


def _magnitudes(values: Iterable[Any], unit: str | None, name: str) -> tuple[np.ndarray, str]:
    """Readings (quantities, strings with units or numbers) as floats in one unit."""
    items = list(values)
    if not items:
        raise InputError(f"{name}: no readings given; give at least two", name=name)
    qs = []
    for i, item in enumerate(items):
        q = parse_quantity(item, f"{name} reading {i + 1}")
        if isinstance(q.magnitude, AffineScalarFunc):
            raise InputError(
                f"{name} reading {i + 1} = {item!r} already carries an uncertainty; "
                "give the plain readings",
                name=name,
                value=item,
            )
        qs.append(q)
    target = unit if unit is not None else f"{qs[0].units}"
    out = []
    for i, q in enumerate(qs):
        try:
            m = float(q.to(target).magnitude) if target else float(q.to("").magnitude)
        except pint.DimensionalityError:
            raise InputError(
                f"{name} reading {i + 1} = {items[i]!r} is not in a unit compatible with "
                f"{target or 'a plain number'}",
                name=name,
                value=items[i],
            ) from None
        if not math.isfinite(m):
            raise InputError(f"{name} reading {i + 1} = {items[i]!r} is not finite", name=name)
        out.append(m)
    return np.asarray(out), target


def type_a(readings: Iterable[Any], name: str, unit: str | None = None, note: str = "") -> Any:
    """Type A evaluation: the mean of repeated readings, its standard uncertainty and
    degrees of freedom.

    Parameters
    ----------
    readings : iterable of quantities, strings with units ("2.012 mm") or numbers
        At least two independent readings of the same quantity.
    name : str
        The input's name in budgets.
    unit : str, optional
        Unit of the result; default the unit of the first reading.

    Returns
    -------
    pint.Quantity or InputVariable
        mean +- s/sqrt(n), n - 1 degrees of freedom (a plain InputVariable for
        dimensionless readings).

    Notes
    -----
    q_bar = (1/n) sum q_k, s^2(q) = 1/(n-1) sum (q_k - q_bar)^2, u(q_bar) = s(q)/sqrt(n),
    nu = n - 1 (GUM 4.2.1 to 4.2.3, 4.2.6). For Monte Carlo the input is a scaled and
    shifted t distribution with n - 1 degrees of freedom (JCGM 101 6.4.9); its variance
    is (n-1)/(n-3) u^2, finite only for n > 3, so with 2 or 3 readings a Monte Carlo u(y)
    dominated by this input is not defined (its coverage interval still is).
    """
    x, target = _magnitudes(readings, unit, name)
    n = x.size
    if n < 2:
        raise InputError(
            f"{name}: a type A evaluation needs at least 2 readings, got {n}; for one "
            "reading use type_b with the instrument's specification",
            name=name,
            value=n,
        )
    mean = float(np.mean(x))
    u = float(np.std(x, ddof=1) / math.sqrt(n))
    src = Source(name, target, "t", "A", float(n - 1), note=note or f"mean of {n} readings")
    return _wrap(InputVariable(mean, u, src), target)


def type_a_correlated(
    table: Sequence[Sequence[Any]], names: Sequence[str], units: Sequence[str] | None = None
) -> tuple[Any, ...]:
    """Means of simultaneous repeated readings of several quantities, with the
    covariance of the means.

    ``table``: one row per set of simultaneous readings, one column per quantity.
    Returns one value per column, correlated as the readings are.

    Notes
    -----
    u(x_i_bar, x_j_bar) = 1/(n(n-1)) sum_k (x_ik - x_i_bar)(x_jk - x_j_bar) (GUM 5.2.3,
    C.3.4); n - 1 degrees of freedom each. Monte Carlo samples the group as a
    multivariate normal distribution.
    """
    rows = [list(r) for r in table]
    if len(rows) < 2:
        raise InputError(
            f"type_a_correlated needs at least 2 sets of readings, got {len(rows)}",
            value=len(rows),
        )
    m = len(names)
    if any(len(r) != m for r in rows):
        raise InputError(
            f"every set of readings must hold {m} values ({list(names)}); got lengths "
            f"{[len(r) for r in rows]}",
            value=[len(r) for r in rows],
        )
    cols = []
    used_units = []
    for j in range(m):
        unit = None if units is None else units[j]
        x, target = _magnitudes([r[j] for r in rows], unit, names[j])
        cols.append(x)
        used_units.append(target)
    data = np.vstack(cols)
    n = data.shape[1]
    cov = np.atleast_2d(np.cov(data, ddof=1)) / n
    return correlated(
        data.mean(axis=1), cov, names, used_units, dof=float(n - 1), kind="A", note="means"
    )


def correlated(
    values: Sequence[float],
    covariance: Any,
    names: Sequence[str],
    units: Sequence[str] | None = None,
    *,
    dof: float = math.inf,
    kind: str = "B",
    note: str = "",
) -> tuple[Any, ...]:
    """Values with a joint normal distribution of the given covariance matrix."""
    mean = np.asarray(values, dtype=float)
    cov = np.asarray(covariance, dtype=float)
    m = mean.size
    if cov.shape != (m, m) or not np.all(np.isfinite(cov)):
        raise InputError(
            f"covariance must be a finite {m} x {m} matrix; got shape {cov.shape}",
            value=cov.shape,
        )
    if len(names) != m:
        raise InputError(f"give {m} names, got {len(names)}", value=list(names))
    cov = 0.5 * (cov + cov.T)
    lam, Q = np.linalg.eigh(cov)
    scale = max(float(np.max(np.abs(np.diag(cov)))), 1e-300)
    if lam.min() < -1e-10 * scale:
        raise InputError(
            "the covariance matrix is not positive semi-definite (smallest eigenvalue "
            f"{lam.min():.3g}); check the correlation coefficients (each in -1..1)",
            value=float(lam.min()),
        )
    lam = np.clip(lam, 0.0, None)
    units = list(units) if units is not None else [""] * m
    sources = tuple(
        Source(nm, un, "normal", kind, dof, note=note) for nm, un in zip(names, units, strict=True)
    )
    group = CorrelatedGroup(sources, mean, cov, Q)
    comps = [GroupComponent(math.sqrt(lam[k]), group, k) for k in range(m)]
    out = []
    for i in range(m):
        x = mean[i] + sum(Q[i, k] * comps[k] for k in range(m))
        out.append(_wrap(x, units[i]))
    return tuple(out)


def type_b(
    value: Any,
    *,
    name: str,
    half_width: Any = None,
    u: Any = None,
    expanded: Any = None,
    k: float | None = None,
    distribution: str | None = None,
    dof: float = math.inf,
    note: str = "",
) -> Any:
    """Type B evaluation: a value with a stated uncertainty.

    Give exactly one of ``half_width`` (bounds of a rectangular, triangular or arcsine
    distribution, default rectangular), ``u`` (a standard uncertainty, normal) or
    ``expanded`` with its coverage factor ``k`` (normal, e.g. from a calibration
    certificate).

    Notes
    -----
    u = a/sqrt(3) (rectangular), a/sqrt(6) (triangular), a/sqrt(2) (arcsine) for
    half-width a; u = U/k for an expanded uncertainty (GUM 4.3.3, 4.3.7, 4.3.9).
    """
    q = parse_quantity(value, name)
    if isinstance(q.magnitude, AffineScalarFunc):
        raise InputError(
            f"{name} = {value!r} already carries an uncertainty; give the plain value",
            name=name,
        )
    unit = "" if q.dimensionless and not isinstance(value, pint.Quantity) else f"{q.units}"
    given = [x is not None for x in (half_width, u, expanded)]
    if sum(given) != 1:
        raise InputError(
            f"{name}: give exactly one of half_width, u or expanded (with k)", name=name
        )

    offset_unit = unit and not q._is_multiplicative  # degC: a width is a difference

    def mag(x: Any, what: str) -> float:
        qx = parse_quantity(x, f"{name} {what}")
        if not qx._is_multiplicative:  # "0.2 degC" as a width is a difference
            qx = Q_(qx.magnitude, f"delta_{qx.units}")
        target = f"delta_{unit}" if offset_unit else unit
        try:
            m = float(qx.to(target).magnitude) if target else float(qx.to("").magnitude)
        except pint.DimensionalityError:
            raise InputError(
                f"{name} {what} = {x!r} is not in a unit compatible with {unit or 'a number'}",
                name=name,
                value=x,
            ) from None
        if not (math.isfinite(m) and m >= 0):
            raise InputError(
                f"{name} {what} = {x!r} must be a finite number >= 0", name=name, value=x
            )
        return m

    a = None
    if half_width is not None:
        dist = distribution or "rectangular"
        if dist not in _HALF_WIDTH_PER_U:
            raise InputError(
                f"{name}: a half-width needs a bounded distribution "
                f"{tuple(_HALF_WIDTH_PER_U)}, got {dist!r}",
                name=name,
                value=dist,
            )
        a = mag(half_width, "half-width")
        std = a / _HALF_WIDTH_PER_U[dist]
    elif u is not None:
        dist = distribution or "normal"
        std = mag(u, "standard uncertainty")
    else:
        dist = distribution or "normal"
        if k is None or not (k > 0):
            raise InputError(f"{name}: an expanded uncertainty needs its coverage factor k > 0")
        std = mag(expanded, "expanded uncertainty") / k
    src = Source(name, unit, dist, "B", dof, a, note)
    return _wrap(InputVariable(float(q.magnitude), std, src), unit)


# "0.05 % of reading"; the number written so that no two parts match the same digits
# (the former "\d*\.?\d+" backtracked quadratically on a long run of digits)
_SPEC = re.compile(
    r"^\s*(?P<pct>[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*%"
    r"\s*(?:of\s+(?:the\s+)?reading)?\s*$"
)


@dataclass(frozen=True)
class AccuracySpec:
    """An instrument's accuracy specification "x % of reading + y" (y in the reading's
    unit, e.g. pF; or a plain number for a dissipation factor).

    The specification bounds the error; capbench takes it as a rectangular distribution
    of half-width a = x/100 |reading| + y (GUM 4.3.7; common practice, no source).
    """

    percent: float
    offset: Any = 0.0  # Quantity or plain number
    distribution: str = "rectangular"

    def __post_init__(self):
        if not (math.isfinite(self.percent) and self.percent >= 0):
            raise InputError(
                f"accuracy: {self.percent!r} % of reading must be >= 0 %", value=self.percent
            )
        off = parse_quantity(self.offset, "accuracy offset")
        if not (math.isfinite(off.magnitude) and off.magnitude >= 0):
            raise InputError(f"accuracy offset = {self.offset!r} must be >= 0", value=self.offset)
        object.__setattr__(self, "offset", off)
        if self.distribution not in _HALF_WIDTH_PER_U:
            raise InputError(
                f"accuracy distribution {self.distribution!r}; valid: {tuple(_HALF_WIDTH_PER_U)}",
                value=self.distribution,
            )

    @classmethod
    def parse(cls, text: str, distribution: str = "rectangular") -> AccuracySpec:
        """Read "0.05 % of reading + 0.002 pF" (terms in any order; either may be absent)."""
        if not isinstance(text, str) or not text.strip() or len(text) > 200:
            shown = repr(text) if not isinstance(text, str) else repr(text[:80])
            raise InputError(
                f"accuracy = {shown}; write it as e.g. '0.05 % of reading + 0.002 pF' "
                "(at most 200 characters)",
                value=text,
            )
        pct = 0.0
        offset: Any = 0.0
        seen_pct = seen_off = False
        for term in text.split("+"):
            term = term.strip()
            if not term:
                continue
            m = _SPEC.match(term)
            if m:
                if seen_pct:
                    raise InputError(f"accuracy = {text!r} has two '% of reading' terms")
                pct, seen_pct = float(m.group("pct")), True
            else:
                if seen_off:
                    raise InputError(f"accuracy = {text!r} has two offset terms")
                try:
                    offset, seen_off = parse_quantity(term, f"accuracy term {term!r}"), True
                except InputError:
                    raise InputError(
                        f"accuracy = {text!r}: cannot read the term {term!r}; write the "
                        "specification as e.g. '0.05 % of reading + 0.002 pF'",
                        value=text,
                    ) from None
        if not (seen_pct or seen_off):
            raise InputError(
                f"accuracy = {text!r}; write it as e.g. '0.05 % of reading + 0.002 pF'",
                value=text,
            )
        return cls(pct, offset, distribution)

    def half_width(self, reading: Any) -> Any:
        """Bound of the error of ``reading`` (a quantity or a number, possibly uncertain)."""
        if isinstance(reading, AffineScalarFunc):  # a dimensionless value with uncertainty
            reading = reading.n
        q = parse_quantity(reading, "reading")
        mag = q.magnitude.n if isinstance(q.magnitude, AffineScalarFunc) else q.magnitude
        rel = self.percent / 100.0 * abs(mag)
        if self.offset.dimensionless and q.dimensionless:
            return rel + float(self.offset.magnitude)
        if self.offset.magnitude == 0:
            return Q_(rel, q.units)
        try:
            return Q_(rel, q.units) + self.offset.to(q.units)
        except pint.DimensionalityError:
            raise InputError(
                f"accuracy offset {self.offset:~P} does not match the reading's unit {q.units:~P}",
                value=str(self.offset),
            ) from None

    def error(self, reading: Any, name: str) -> Any:
        """The instrument's error at ``reading`` as a zero-mean type B input."""
        a = self.half_width(reading)
        return type_b(
            _zero_like(a),
            half_width=a,
            distribution=self.distribution,
            name=name,
            note=f"{self.percent:g} % of reading + {self.offset:~P}",
        )

    def apply(self, reading: Any, name: str) -> Any:
        """``reading`` plus the instrument's error (a type B input named ``name``)."""
        return reading + self.error(reading, name)

    def shared(self, readings: Sequence[Any], name: str) -> tuple[Any, ...]:
        """Readings on one instrument range whose errors are common to all of them.

        The "% of reading" part becomes one gain error g and the offset one error o,
        shared: reading_i (1 + g) + o. Use it where the same range of the same instrument
        takes readings that are later divided or subtracted (the common error then
        cancels as it does on the bench).
        """
        r0 = readings[0].n if isinstance(readings[0], AffineScalarFunc) else readings[0]
        first = parse_quantity(r0, "reading")
        g: Any = 0.0
        if self.percent > 0:
            g = type_b(
                0.0,
                half_width=self.percent / 100.0,
                distribution=self.distribution,
                name=f"{name}: gain error",
            )
        if first.dimensionless:
            off: Any = float(self.offset.to("").magnitude)
            zero: Any = 0.0
        else:
            zero = Q_(0.0, first.units)
            try:
                off = zero if self.offset.magnitude == 0 else self.offset.to(first.units)
            except pint.DimensionalityError:
                raise InputError(
                    f"accuracy offset {self.offset:~P} does not match the readings' unit "
                    f"{first.units:~P}",
                    value=str(self.offset),
                ) from None
        o: Any = zero
        if nominal(off) > 0:
            o = type_b(
                zero, half_width=off, distribution=self.distribution, name=f"{name}: offset error"
            )
        return tuple(r * (1 + g) + o for r in readings)


def _zero_like(a: Any) -> Any:
    return Q_(0.0, a.units) if isinstance(a, pint.Quantity) else 0.0


# --------------------------------------------------------------------------- SI values


def si_value(value: Any, kind: str, name: str, *, limits: str | None = None) -> Any:
    """A value, possibly uncertain, as an SI float or ufloat (capbench's internal unit
    for ``kind``), its nominal value range-checked with :func:`capbench.validate.check`.

    Accepts a pint Quantity (of a float or a ufloat), a string with a unit, a plain
    number or a bare ufloat (both taken in the SI unit of ``kind``).
    """
    if isinstance(value, AffineScalarFunc):
        x = value
    elif isinstance(value, pint.Quantity) and isinstance(value.magnitude, AffineScalarFunc):
        from .units import base_unit

        unit = base_unit(kind)
        try:
            x = value.to(unit).magnitude if unit else value.to("").magnitude
        except pint.DimensionalityError:
            raise InputError(
                f"{name} = {value:~P} is not a {kind}; give it in {unit or 'a plain number'} "
                f"or another {kind} unit",
                name=name,
                value=str(value),
                expected_unit=unit,
            ) from None
    else:
        x = to_si(value, kind, name)
    nominal = x.n if isinstance(x, AffineScalarFunc) else x
    if limits is not None:
        check(nominal, limits, name, positive=LIMITS[limits][0] > 0)
    elif not math.isfinite(nominal):
        raise InputError(f"{name} = {value!r} is not finite", name=name)
    if isinstance(x, AffineScalarFunc):
        try:
            s = x.s  # sqrt of a sum of squares: overflows for a deviation near 1e154
        except OverflowError:
            s = math.inf
        if not math.isfinite(s):
            raise InputError(
                f"{name} = {value!r} has a non-finite uncertainty; valid: a finite standard "
                "uncertainty >= 0",
                name=name,
            )
    return x


def nominal(x: Any) -> float:
    """The nominal value of a float, a ufloat, or a quantity of either (magnitude)."""
    if isinstance(x, pint.Quantity):
        x = x.magnitude
    return float(x.n) if isinstance(x, AffineScalarFunc) else float(x)


# --------------------------------------------------------------------------- budget


@dataclass(frozen=True)
class BudgetRow:
    """One input's line in a budget. ``contribution`` = c u (signed, in the output's
    unit); ``share`` = (c u)^2 / u_c^2."""

    name: str
    unit: str
    value: float
    u: float
    distribution: str
    kind: str
    dof: float
    sensitivity: float
    contribution: float
    share: float


@dataclass(frozen=True)
class Budget:
    """An uncertainty budget (GUM 5.1, 5.2, G.4).

    ``rows``: one per input; ``correlation``: the variance from correlated pairs,
    2 sum_{i<j} c_i c_j u(x_i, x_j), and ``correlation_share`` its share of u_c^2 (zero
    for independent inputs), so that the shares of the rows and the correlation term sum
    to one. ``dof``: Welch-Satterthwaite effective degrees of freedom.
    """

    name: str
    unit: str
    value: float
    u: float
    rows: tuple[BudgetRow, ...]
    correlation: float
    correlation_share: float
    dof: float

    @property
    def shares_total(self) -> float:
        return sum(r.share for r in self.rows) + self.correlation_share

    def coverage_factor(self, p: float = 0.95) -> float:
        """k for coverage probability ``p`` from the t distribution with ``dof``."""
        return coverage_factor(self.dof, p)

    def expanded(self, k: float | None = None, p: float | None = None) -> tuple[float, float]:
        """Expanded uncertainty U = k u_c and the k used: ``k`` if given, else from the t
        distribution with the effective degrees of freedom at coverage probability ``p``
        (default :data:`COVERAGE`, 95 %; GUM 6.2, G.4). This is the one rule every
        statement, table, figure and document of capbench uses."""
        if k is None:
            k = self.coverage_factor(COVERAGE if p is None else p)
        if not (k > 0):
            raise InputError(f"coverage factor k = {k!r}; must be > 0", value=k)
        return k * self.u, k

    def row(self, name: str) -> BudgetRow:
        for r in self.rows:
            if r.name == name:
                return r
        raise InputError(
            f"no input named {name!r} in the budget of {self.name}; valid: "
            f"{[r.name for r in self.rows]}",
            value=name,
        )

    def table(self, digits: int = 3) -> str:
        """The budget as aligned text."""
        unit = f" {self.unit}" if self.unit else ""
        head = (
            f"{'input':<40} {'value':>14} {'u(x)':>11} {'distribution':<12} {'type':<4} "
            f"{'dof':>6} {'c':>12} {'c u(x)':>11} {'share':>7}"
        )
        lines = [f"Uncertainty budget of {self.name}", head, "-" * len(head)]
        for r in sorted(self.rows, key=lambda r: -r.share):
            dof = "inf" if math.isinf(r.dof) else f"{r.dof:.0f}"
            cu = f"{r.sensitivity:.{digits}g}"
            lines.append(
                f"{r.name[:40]:<40} {r.value:>14.7g} {r.u:>11.{digits}g} "
                f"{r.distribution:<12} {r.kind:<4} {dof:>6} {cu:>12} "
                f"{r.contribution:>11.{digits}g} {100 * r.share:>6.2f}%"
                + (f"  [{r.unit}]" if r.unit else "")
            )
        if self.correlation_share:
            lines.append(
                f"{'(correlation terms)':<40} {'':>14} {'':>11} {'':<12} {'':<4} {'':>6} "
                f"{'':>12} {'':>11} {100 * self.correlation_share:>6.2f}%"
            )
        dof = "inf" if math.isinf(self.dof) else f"{self.dof:.3g}"
        U, k = self.expanded()
        lines.append("-" * len(head))
        lines.append(
            f"{self.name} = {self.value:.7g}{unit}, u_c = {self.u:.{digits}g}{unit}, "
            f"effective dof = {dof}, U = {U:.{digits}g}{unit} (k = {k:.2f}, "
            f"{100 * COVERAGE:g} % coverage)"
        )
        return "\n".join(lines)


#: the coverage probability of every expanded uncertainty capbench states
COVERAGE = 0.95


def coverage_factor(dof: float, p: float = 0.95) -> float:
    """Coverage factor for probability ``p``: the two-sided t quantile with ``dof``
    degrees of freedom (the normal quantile for infinite dof) (GUM G.3, G.4)."""
    if not (0 < p < 1):
        raise InputError(f"coverage probability p = {p!r}; valid: 0 < p < 1", value=p)
    q = 0.5 * (1 + p)
    if math.isinf(dof):
        return float(stats.norm.ppf(q))
    if not dof > 0:
        raise InputError(f"degrees of freedom = {dof!r}; must be > 0", value=dof)
    return float(stats.t.ppf(q, dof))


def budget(y: Any, name: str = "y", unit: str | None = None) -> Budget:
    """The uncertainty budget of ``y`` (a ufloat, or a quantity of one).

    Each row's sensitivity coefficient c_i = dy/dx_i is read from ``y``'s linear part;
    inputs of one :class:`CorrelatedGroup` get c = Q (dy/dz) from the derivatives with
    respect to the group's independent components z.

    Notes
    -----
    u_c^2 = sum_i (c_i u_i)^2 + 2 sum_{i<j} c_i c_j u(x_i, x_j) (GUM 5.2.2);
    nu_eff = u_c^4 / sum_i (c_i u_i)^4 / nu_i (Welch-Satterthwaite, GUM G.4.1). The
    formula assumes independent inputs; a correlated group enters it as one term, its
    total variance c^T V c with the group's degrees of freedom (for means of the same n
    sets of readings that is n - 1, the value a direct evaluation of the output from
    the n sets would have; GUM example H.2, second approach).
    """
    if isinstance(y, pint.Quantity):
        unit = f"{y.units}" if unit is None else unit
        y = y.magnitude
    unit = unit or ""
    if not isinstance(y, AffineScalarFunc):
        y = exact(float(y))
    scale = _power_of_two_scale(y)
    if scale != 1.0:
        # contributions near 1e-160 square to below the smallest normal float (the
        # shares no longer summed to 1) and near 1e-100 their 4th powers vanish (the
        # degrees of freedom became infinite); the budget of y * 2^k, scaled back, is exact
        b = budget(y * scale, name, unit)
        return replace(
            b,
            value=float(y.n),
            u=b.u / scale,
            rows=tuple(
                replace(r, sensitivity=r.sensitivity / scale, contribution=r.contribution / scale)
                for r in b.rows
            ),
            correlation=b.correlation / scale / scale,
        )
    derivs = y.derivatives
    rows: list[tuple[Source, float, float, float]] = []  # source, value, u, c
    groups: dict[int, tuple[CorrelatedGroup, np.ndarray]] = {}
    unnamed = 0
    for var, d in derivs.items():
        if isinstance(var, GroupComponent):
            g = var.group
            entry = groups.setdefault(id(g), (g, np.zeros(len(g.sources))))
            entry[1][var.index] += d
        elif isinstance(var, InputVariable):
            rows.append((var.source, var.n, var.std_dev, float(d)))
        else:
            unnamed += 1
            label = var.tag if var.tag else f"unnamed input {unnamed}"
            rows.append((Source(str(label), "", "normal", "B"), var.n, var.std_dev, float(d)))
    correlation = 0.0
    ws_den = 0.0
    for g, gz in groups.values():
        c = g.transform @ gz
        u = np.sqrt(np.diag(g.covariance))
        for i, src in enumerate(g.sources):
            rows.append((src, float(g.mean[i]), float(u[i]), float(c[i])))
        full = float(c @ g.covariance @ c)
        correlation += full - float(np.sum((c * u) ** 2))
        # a correlated group enters Welch-Satterthwaite as one term with its own dof
        dof_g = min(src.dof for src in g.sources)
        if not math.isinf(dof_g) and full > 0:
            ws_den += full**2 / dof_g
    n_grouped = sum(len(g.sources) for g, _ in groups.values())
    var_rows = sum((c * u) ** 2 for _s, _v, u, c in rows)
    uc2 = var_rows + correlation
    # the same variance from the package's own error components, as a check of the mapping
    uc2_pkg = sum(v**2 for v in y.error_components().values())
    if uc2_pkg > 0 and abs(uc2 - uc2_pkg) > 1e-9 * uc2_pkg + 1e-300:
        raise InputError(
            f"budget of {name}: variance {uc2:.6g} from the rows disagrees with "
            f"{uc2_pkg:.6g} from the error components",
            value=(uc2, uc2_pkg),
        )
    uc = math.sqrt(max(uc2_pkg, 0.0))
    out = []
    n_free = len(rows) - n_grouped  # group members come last in ``rows``
    for i, (src, value, u, c) in enumerate(rows):
        contrib = c * u
        share = contrib**2 / uc2_pkg if uc2_pkg > 0 else 0.0
        out.append(
            BudgetRow(
                src.name, src.unit, value, u, src.distribution, src.kind, src.dof, c, contrib, share
            )
        )
        if i < n_free and not math.isinf(src.dof) and contrib != 0:
            ws_den += contrib**4 / src.dof
    dof = uc**4 / ws_den if ws_den > 0 else math.inf
    corr_share = correlation / uc2_pkg if uc2_pkg > 0 else 0.0
    return Budget(name, unit, float(y.n), uc, tuple(out), correlation, corr_share, dof)


def _power_of_two_scale(y: AffineScalarFunc) -> float:
    """1, or a power of two that brings the largest contribution |c u| of ``y`` near 1
    when it lies outside 1e-50 to 1e50 (Welch-Satterthwaite raises it to the 4th power,
    which leaves the float range below 1e-77 or above 1e77)."""
    biggest = max((abs(d * var.std_dev) for var, d in y.derivatives.items()), default=0.0)
    if biggest == 0 or not math.isfinite(biggest) or 1e-50 <= biggest <= 1e50:
        return 1.0
    # at most 2^1000 at a time (2^1023 is the largest float); budget() repeats if needed
    return math.ldexp(1.0, max(-1000, min(1000, -math.frexp(biggest)[1])))


def exact(x: float) -> AffineScalarFunc:
    """A number as a ufloat with no uncertainty (no input variable at all)."""
    return AffineScalarFunc(float(x), LinearCombination({}))


# --------------------------------------------------------------------------- Monte Carlo


@dataclass(frozen=True)
class MonteCarloResult:
    """Result of :func:`monte_carlo` (JCGM 101 clause 7).

    ``value``, ``u``: mean and standard deviation of the model values; ``low``,
    ``high``: the coverage interval for probability ``p`` (``interval`` "shortest" or
    "symmetric"); ``trials``: model evaluations used; ``runs``: sequences of the
    adaptive procedure (1 when not adaptive); ``delta``: numerical tolerance of u
    (JCGM 101 7.9.2) for ``n_dig`` significant digits; ``converged``: False when the
    adaptive procedure stopped at ``max_trials``.

    Validation of the linear (GUM) result (JCGM 101 clause 8), when one was given:
    ``linear`` = (y, U_p, k) of the GUM uncertainty framework, ``d_low`` and
    ``d_high`` the differences of the interval ends, ``adequate`` True when both are
    within ``linear_delta`` (the tolerance of the GUM u(y)).
    """

    value: float
    u: float
    low: float
    high: float
    p: float
    interval: str
    trials: int
    runs: int
    delta: float
    n_dig: int
    converged: bool
    linear: tuple[float, float, float] | None = None
    linear_delta: float | None = None
    d_low: float | None = None
    d_high: float | None = None

    @property
    def adequate(self) -> bool | None:
        """Whether the linear (GUM framework) result is validated (None: not compared)."""
        if self.d_low is None:
            return None
        return self.d_low <= self.linear_delta and self.d_high <= self.linear_delta

    def summary(self, unit: str = "") -> str:
        u = f" {unit}" if unit else ""
        text = (
            f"Monte Carlo (JCGM 101): y = {self.value:.6g}{u}, u(y) = {self.u:.3g}{u}, "
            f"{100 * self.p:g} % {self.interval} interval [{self.low:.6g}, {self.high:.6g}]"
            f"{u}, {self.trials:,} trials in {self.runs} run(s)"
        )
        if self.linear is not None:
            y, U, k = self.linear
            verdict = "adequate" if self.adequate else "NOT adequate"
            text += (
                f"\nGUM framework: [{y - U:.6g}, {y + U:.6g}]{u} (k = {k:.3g}); d_low = "
                f"{self.d_low:.2g}, d_high = {self.d_high:.2g}, tolerance {self.linear_delta:.2g}"
                f": linear result {verdict} (JCGM 101 clause 8)"
            )
        return text


def numerical_tolerance(u: float, n_dig: int = 2) -> float:
    """delta = 1/2 10^l where u = c 10^l with c an ``n_dig``-digit integer
    (JCGM 101 7.9.2). Example: u = 0.0754, n_dig = 2: c = 75, l = -3, delta = 0.0005."""
    if not (isinstance(n_dig, int) and 1 <= n_dig <= 6):
        raise InputError(f"n_dig = {n_dig!r}; valid: 1 to 6 significant digits", value=n_dig)
    if not (u > 0 and math.isfinite(u)):
        raise InputError(f"standard uncertainty u = {u!r} must be finite and > 0", value=u)
    l = math.floor(math.log10(u)) - (n_dig - 1)
    if round(u / 10.0**l) >= 10**n_dig:  # rounding carried over a decade (e.g. 0.0996)
        l += 1
    return 0.5 * 10.0**l


def coverage_interval(
    values: np.ndarray, p: float = 0.95, interval: str = "shortest", *, presorted: bool = False
) -> tuple[float, float]:
    """Coverage interval from model values (JCGM 101 7.7).

    q = pM rounded to an integer (pM + 1/2 truncated when pM is not an integer); the
    interval is [y_(r), y_(r+q)]: r = (M - q)/2 (truncated after adding 1/2 when not an
    integer) for the probabilistically symmetric interval, the r minimising
    y_(r+q) - y_(r) for the shortest one.
    """
    if interval not in ("shortest", "symmetric"):
        raise InputError(f"interval = {interval!r}; valid: 'shortest', 'symmetric'")
    y = values if presorted else np.sort(values)
    M = y.size
    pm = p * M
    q = int(pm) if float(pm).is_integer() else int(pm + 0.5)
    if q >= M or q < 1:
        raise InputError(f"{M} values are too few for a {100 * p:g} % coverage interval")
    if interval == "symmetric":
        r = (M - q) / 2
        r = int(r) if float(r).is_integer() else int(r + 0.5)
        r = max(r, 1)
    else:
        widths = y[q:] - y[:-q]  # index i <-> r = i + 1
        r = int(np.argmin(widths)) + 1
    return float(y[r - 1]), float(y[r + q - 1])


def _sampler(var: Variable) -> Callable[[np.random.Generator, int], np.ndarray]:
    n, s = float(var.n), float(var.s)
    if s == 0:
        return lambda rng, m: np.full(m, n)
    src = getattr(var, "source", None)
    dist = src.distribution if src is not None else "normal"
    if dist == "rectangular":
        a = s * _HALF_WIDTH_PER_U["rectangular"]
        return lambda rng, m: rng.uniform(n - a, n + a, m)
    if dist == "triangular":
        a = s * _HALF_WIDTH_PER_U["triangular"]
        return lambda rng, m: rng.triangular(n - a, n, n + a, m)
    if dist == "arcsine":
        a = s * _HALF_WIDTH_PER_U["arcsine"]
        return lambda rng, m: n + a * np.cos(np.pi * rng.random(m))
    if dist == "t" and not math.isinf(src.dof):
        nu = src.dof
        # JCGM 101 6.4.9: x_bar + (s/sqrt(n)) t_nu; the GUM's u = s/sqrt(n) is the scale
        return lambda rng, m: n + s * rng.standard_t(nu, m)
    return lambda rng, m: rng.normal(n, s, m)


def _affine_arguments(arguments: Mapping[str, Any]):
    """Nominal values, derivative matrix and variables of affine arguments."""
    names = list(arguments)
    mags = []
    for nm in names:
        v = arguments[nm]
        if isinstance(v, pint.Quantity):
            v = v.magnitude
        if not isinstance(v, (AffineScalarFunc, int, float, np.floating, np.integer)):
            raise InputError(
                f"Monte Carlo argument {nm!r} = {v!r}: give a number, a ufloat or a "
                "quantity of either",
                name=nm,
            )
        mags.append(v)
    variables: dict[int, Variable] = {}
    for v in mags:
        if isinstance(v, AffineScalarFunc):
            for var in v.derivatives:
                variables.setdefault(id(var), var)
    var_list = list(variables.values())
    index = {id(v): i for i, v in enumerate(var_list)}
    D = np.zeros((len(names), len(var_list)))
    nom = np.zeros(len(names))
    for a, v in enumerate(mags):
        if isinstance(v, AffineScalarFunc):
            nom[a] = v.n
            for var, d in v.derivatives.items():
                D[a, index[id(var)]] += d
        else:
            nom[a] = float(v)
    return names, nom, D, var_list


def monte_carlo(
    model: Callable[[dict[str, np.ndarray]], np.ndarray],
    arguments: Mapping[str, Any],
    *,
    p: float = 0.95,
    interval: str = "shortest",
    rng: np.random.Generator | int | None = None,
    adaptive: bool = True,
    n_dig: int = 2,
    trials: int | None = None,
    max_trials: int = 10_000_000,
    linear: Any = None,
    batch: int = 200_000,
) -> MonteCarloResult:
    """Propagate distributions through ``model`` by Monte Carlo (JCGM 101).

    Parameters
    ----------
    model : callable(dict of name -> ndarray) -> ndarray
        The measurement model, vectorised: it receives arrays of the arguments' values
        (magnitudes in each argument's own unit) and returns the output values.
    arguments : mapping of name -> ufloat, quantity of ufloat, or number
        The model's arguments. Each is an affine function of independent inputs (a
        ufloat expression); the inputs are sampled from their :class:`Source`
        distributions (normal for plain ``uncertainties`` variables), so arguments
        sharing an input are correlated as in the linear propagation.
    p : float
        Coverage probability.
    interval : "shortest" or "symmetric"
    rng : numpy Generator or seed
    adaptive : bool
        The adaptive procedure of JCGM 101 7.9 (sequences of
        M = max(ceil(100/(1-p)), 10^4) trials until twice the standard deviations of the
        sequences' y, u(y), y_low, y_high are within the numerical tolerance of u(y) for
        ``n_dig`` significant digits); else one run of ``trials`` (default 10^6).
    linear : ufloat, quantity of ufloat, or Budget, optional
        The GUM framework's result, to validate (JCGM 101 clause 8): its coverage
        interval y +- k u with k from the t distribution at the effective degrees of
        freedom is compared with the Monte Carlo interval.

    Returns
    -------
    MonteCarloResult
    """
    if not (0 < p < 1):
        raise InputError(f"coverage probability p = {p!r}; valid: 0 < p < 1", value=p)
    if interval not in ("shortest", "symmetric"):
        raise InputError(f"interval = {interval!r}; valid: 'shortest', 'symmetric'")
    gen = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
    names, nom, D, variables = _affine_arguments(arguments)
    samplers = [_sampler(v) for v in variables]
    var_nom = np.array([float(v.n) for v in variables])

    def run(m: int) -> np.ndarray:
        out = np.empty(m)
        done = 0
        while done < m:
            k = min(batch, m - done)
            if variables:
                Z = np.vstack([s(gen, k) for s in samplers]) - var_nom[:, None]
                A = nom[:, None] + D @ Z
            else:
                A = np.repeat(nom[:, None], k, axis=1)
            vals = np.asarray(model({nm: A[i] for i, nm in enumerate(names)}), dtype=float)
            if vals.shape != (k,):
                vals = np.broadcast_to(vals, (k,)).astype(float)
            out[done : done + k] = vals
            done += k
        if not np.all(np.isfinite(out)):
            bad = int(np.sum(~np.isfinite(out)))
            raise InputError(
                f"the model returned {bad} non-finite values of {m}; its inputs reach "
                "outside its domain (check the distributions' bounds)",
                value=bad,
            )
        return out

    converged = True
    if not adaptive:
        M = int(trials or 1_000_000)
        if M < 1 or M > max_trials:
            raise InputError(f"trials = {M}; valid: 1 to max_trials = {max_trials}")
        y_all = np.sort(run(M))
        runs = 1
        value, u = float(np.mean(y_all)), float(np.std(y_all, ddof=1))
        delta = numerical_tolerance(u, n_dig) if u > 0 else 0.0
    else:
        M = max(math.ceil(100.0 / (1.0 - p) - 1e-9), 10_000)
        chunks: list[np.ndarray] = []
        seq: list[tuple[float, float, float, float]] = []
        s1 = s2 = 0.0
        count = 0
        while True:
            y = run(M)
            chunks.append(y)
            ys = np.sort(y)
            lo, hi = coverage_interval(ys, p, interval, presorted=True)
            seq.append((float(np.mean(y)), float(np.std(y, ddof=1)), lo, hi))
            # running moments of all values so far (shifted by the first mean, for accuracy)
            shift = seq[0][0]
            s1 += float(np.sum(y - shift))
            s2 += float(np.sum((y - shift) ** 2))
            count += M
            h = len(seq)
            if h < 2:
                continue
            var_all = (s2 - s1 * s1 / count) / (count - 1)
            u_all = math.sqrt(max(var_all, 0.0))
            if u_all == 0:
                delta = 0.0
                break
            delta = numerical_tolerance(u_all, n_dig)
            sd = np.std(np.array(seq), axis=0, ddof=1) / math.sqrt(h)
            if np.all(2 * sd <= delta):
                break
            if count + M > max_trials:
                converged = False
                warnings.warn(
                    f"adaptive Monte Carlo stopped at {count:,} trials (max_trials) before "
                    f"reaching the tolerance {delta:.2g} for {n_dig} significant digits",
                    stacklevel=2,
                )
                break
        y_all = np.sort(np.concatenate(chunks))
        runs = len(seq)
        value, u = float(np.mean(y_all)), float(np.std(y_all, ddof=1))
    low, high = coverage_interval(y_all, p, interval, presorted=True)
    result = MonteCarloResult(
        value, u, low, high, p, interval, int(y_all.size), runs, delta, n_dig, converged
    )
    if linear is None:
        return result
    b = linear if isinstance(linear, Budget) else budget(linear)
    if not b.u > 0:
        raise InputError("the linear result has zero uncertainty; nothing to validate")
    k = b.coverage_factor(p)
    U = k * b.u
    ldelta = numerical_tolerance(b.u, n_dig)
    return MonteCarloResult(
        value,
        u,
        low,
        high,
        p,
        interval,
        int(y_all.size),
        runs,
        delta,
        n_dig,
        converged,
        linear=(b.value, U, k),
        linear_delta=ldelta,
        d_low=abs(b.value - U - low),
        d_high=abs(b.value + U - high),
    )
