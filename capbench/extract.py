"""Relative permittivity and loss from bench readings, corrected with the fixture's own field.

Five methods of the trade, each a function taking a fixture (a
:class:`~capbench.geometry.Fixture` built by :mod:`capbench.rigs`) and readings, and
returning an :class:`Extraction`:

=====================  ==================================================================
:func:`contacting`     electrodes on the specimen (guarded cell or unguarded discs)
:func:`air_gap`        non-contacting electrodes at a fixed spacing, empty and loaded
:func:`micrometer`     micrometer-electrode re-set (equal-capacitance) method
:func:`two_fluid`      four readings in two fluids of known permittivity
:func:`liquid`         a liquid in a cell (coaxial or parallel-plate), empty and filled
=====================  ==================================================================

Each has a closed parallel-plate form (``ideal_*`` functions, the textbook formula) and
a finite-element form that finds the eps_r for which the solved fixture reproduces the
reading(s). Readings may be numbers (SI), strings with units, quantities, or values with
uncertainty (ufloats or quantities of ufloats, see :mod:`capbench.uncertainty`); a
sequence gives one result per frequency.

How the FEM form works
    C(eps_r) of a fixture is a smooth, increasing, concave function of the specimen's
    permittivity (a Stieltjes-type function), and its derivative comes free with each
    solve (:meth:`capbench.capacitance.Solution.sensitivity`). Newton's method from the
    closed-form estimate converges in two to four solves; several frequencies share the
    mesh and the assembly (only the factorisation is repeated), and each frequency starts
    from its neighbour's root. Solves are cached per (geometry, eps) within a call.

Loss
    With a dissipation factor D (or a parallel conductance G, D = G / (2 pi f C)) the
    reading is the complex capacitance C* = C (1 - j D), and the root is found in complex
    eps* = eps' - j eps'' by the same Newton iteration on complex solves: C*(eps*) is
    analytic, so the complex sensitivity is the Newton slope. This is exact for any loss
    (not only tan delta << 1) and it accounts for the dilution of the specimen's loss by
    the fringing field in air (D < tan delta when part of the field runs in air) and, in
    the air-gap and re-set methods, for the series air gap. The sensitivity-ratio route
    (tan delta = D C / (eps' dC/deps')) is the first-order form of the same correction;
    it is used only where the complex root cannot be (a reading whose loss falls below
    the empty cell's, which would need eps'' < 0, and the two-fluid method, whose four
    complex equations over-determine eps*).

Uncertainty
    The result is linearised at the root: eps* + (dT - C delta - sum_p dC/dp dp) / S,
    with T the complex target built from the readings, S = dC/deps, dC/dp the
    derivatives with respect to uncertain dimensions (central differences of solves on
    rebuilt fixtures) and delta the FEM's relative error (type B, rectangular, half-width
    ``Solution.rel_error``). Correlations between readings, dimensions and frequencies
    survive (one ufloat expression per result), and each :class:`Point` carries its
    :class:`~capbench.uncertainty.Budget`. :meth:`Extraction.monte_carlo` cross-checks
    the linear result by JCGM 101 with the closed form carrying the nonlinearity.

Caution: bridges and fixtures can carry high voltage; capbench computes permittivities,
it does not make a set-up safe. Follow local electrical-safety codes and licensed
practice.

References
----------
.. [1] ASTM D150, Standard Test Methods for AC Loss Characteristics and Permittivity
   (Dielectric Constant) of Solid Electrical Insulation (contacting, micrometer-electrode
   and two-fluid methods, guarded-electrode effective area; section numbers from memory).
.. [2] IEC 62631-2-1, Dielectric and resistive properties of solid insulating materials -
   Relative permittivity and dissipation factor - Technical frequencies.
.. [3] JCGM 100:2008 (GUM) and JCGM 101:2008, see :mod:`capbench.uncertainty`.
"""

from __future__ import annotations

import math
import time
import warnings
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pint
from threadpoolctl import threadpool_limits
from uncertainties.core import AffineScalarFunc

from . import validate
from .capacitance import solve
from .errors import CapbenchError, ExtractionError, GeometryError, InputError
from .geometry import MEDIUM, Fixture
from .rigs import Specimen
from .uncertainty import (
    Budget,
    InputVariable,
    MonteCarloResult,
    Source,
    budget,
    exact,
    monte_carlo,
    si_value,
)
from .units import EPS0, Q_, frequency_text
from .validate import CapbenchWarning

#: the range a permittivity root must lie in
EPS_MIN, EPS_MAX = 1.0, 1e4


def _in_eps_range(eps: float) -> bool:
    """eps within 1 to 1e4, allowing the last digits a closed form rounds away (a true
    eps_r of exactly 1e4 computed back as 10000.000000000002 is still at the limit)."""
    return math.isfinite(eps) and EPS_MIN * (1 - 1e-12) <= eps <= EPS_MAX * (1 + 1e-12)


#: relative step of the central differences with respect to dimensions
FD_STEP = 2e-3
#: micrometer method: an air film between the loaded electrode and the specimen (s1 - t)
#: within this fraction of the spacing is modelled to first order on the touching
#: geometry (a film that thin needs more mesh than a fixture's size allows); a specimen
#: up to this much thicker than s1 (micrometers that disagree by a micron) likewise
FILM_TIE = 2e-3
#: Newton stops when |C(eps) - target| <= NEWTON_TOL_PER_RTOL * rtol * |target|
NEWTON_TOL_PER_RTOL = 1e-2
_MAX_NEWTON = 40

_SOLID_KINDS = ("guarded_cell", "parallel_discs", "parallel_strips")
_LIQUID_KINDS = ("coaxial_cell", "parallel_discs", "parallel_strips", "guarded_cell")
# builder arguments set by the methods themselves, not by ``dimensions``
_RESERVED = {
    "specimen",
    "specimen_thickness",
    "air_gap",
    "gap",
    "specimen_eps_r",
    "fill_eps_r",
    "substrate_eps_r",
    "medium_eps_r",
    "shield",
    "n_fingers",
}


def _shown(eps: float) -> str:
    """eps_r for a message: 6 digits, more where 6 would round onto a limit (a result of
    0.9999999 shown as "1, outside 1 to 10000" reads as a contradiction)."""
    text = f"{eps:.6g}"
    if text in (f"{EPS_MIN:.6g}", f"{EPS_MAX:.6g}") and eps not in (EPS_MIN, EPS_MAX):
        text = f"{eps:.12g}"
    return text


def _n(x: Any) -> float:
    return float(x.n) if isinstance(x, AffineScalarFunc) else float(x)


def _s(x: Any) -> float:
    return float(x.s) if isinstance(x, AffineScalarFunc) else 0.0


# --------------------------------------------------------------------------- complex ufloats


class _Cx:
    """A complex number whose real and imaginary parts may be ufloats (the
    ``uncertainties`` package is real-valued)."""

    __slots__ = ("im", "re")

    def __init__(self, re: Any, im: Any = 0.0):
        self.re = re
        self.im = im

    @staticmethod
    def of(z: Any) -> _Cx:
        if isinstance(z, _Cx):
            return z
        if isinstance(z, complex):
            return _Cx(z.real, z.imag)
        return _Cx(z, 0.0)

    @property
    def nominal(self) -> complex:
        return complex(_n(self.re), _n(self.im))

    def __add__(self, o: Any) -> _Cx:
        o = _Cx.of(o)
        return _Cx(self.re + o.re, self.im + o.im)

    __radd__ = __add__

    def __neg__(self) -> _Cx:
        return _Cx(-self.re, -self.im)

    def __sub__(self, o: Any) -> _Cx:
        return self + (-_Cx.of(o))

    def __rsub__(self, o: Any) -> _Cx:
        return _Cx.of(o) - self

    def __mul__(self, o: Any) -> _Cx:
        o = _Cx.of(o)
        return _Cx(self.re * o.re - self.im * o.im, self.re * o.im + self.im * o.re)

    __rmul__ = __mul__

    def __truediv__(self, o: Any) -> _Cx:
        o = _Cx.of(o)
        den = o.re * o.re + o.im * o.im
        return _Cx((self.re * o.re + self.im * o.im) / den, (self.im * o.re - self.re * o.im) / den)

    def __rtruediv__(self, o: Any) -> _Cx:
        return _Cx.of(o) / self


def _complex_reading(c: Any, d: Any | None) -> _Cx:
    """C* = C (1 - j D)."""
    return _Cx(c, 0.0) if d is None else _Cx(c, -c * d)


# --------------------------------------------------------------------------- closed forms


def _guard_area(r1: Any, g: Any, t: Any) -> Any:
    from .guard import _gap_factor  # the one home of B (d1 + B g)

    d = 2 * r1 + _gap_factor(g, t) * g
    return np.pi * d**2 / 4


def guard_effective_area(electrode_radius: Any, guard_gap: Any, thickness: Any) -> pint.Quantity:
    """Effective area of a guarded electrode on a specimen, with the guard-gap correction.

    Notes
    -----
    d_eff = d1 + B g, B = 1 - 2 delta / g, delta = (2 t / pi) ln cosh(pi g / (4 t)),
    A = pi d_eff^2 / 4, for electrode diameter d1 = 2 r1, guard gap g, specimen
    thickness t. It is the exact result of a two-dimensional conformal map that assumes no
    flux leaves through the gap into the outside air.

    References
    ----------
    ASTM D150 and IEC 62631-2-1 (the table form and its attribution are from memory).
    """
    r1 = si_value(electrode_radius, "length", "electrode_radius", limits="length")
    g = si_value(guard_gap, "length", "guard_gap", limits="length")
    t = si_value(thickness, "length", "thickness", limits="length")
    return Q_(_guard_area(r1, g, t), "m**2")


def _contacting_formula(c: Any, t: Any, area: Any) -> Any:
    return c * t / (EPS0 * area)


def _air_gap_formula(c0: Any, c: Any, t: Any, s: Any, eps_gap: Any = 1.0) -> Any:
    return eps_gap * t / (t - s * (1 - c0 / c))


def _micrometer_formula(t: Any, s1: Any, s2: Any, ratio: Any = 1.0) -> Any:
    return t / (t - s1 + s2 * ratio)


def _two_fluid_formula(c1: Any, c1s: Any, c2: Any, c2s: Any, e1: Any, e2: Any):
    cv = (c2 - c1) / (e2 - e1)
    cp = c1 - e1 * cv
    y1 = cv / (c1s - cp) - 1 / e1
    y2 = cv / (c2s - cp) - 1 / e2
    x = (y1 - y2) / (1 / e2 - 1 / e1)
    eps = 1 / (1 / e1 + y1 / x)
    return eps, x, cv, cp


def _liquid_formula(c_empty: Any, c_filled: Any, eps_empty: Any = 1.0, stray: Any = 0.0) -> Any:
    return eps_empty * (c_filled - stray) / (c_empty - stray)


def ideal_contacting(capacitance: Any, thickness: Any, area: Any) -> Any:
    """Closed form of the contacting-electrode method: eps_r = C t / (eps0 A).

    ``area``: the electrode area (the effective area of a guarded electrode, see
    :func:`guard_effective_area`). Arguments may carry uncertainty; so does the result.

    Notes
    -----
    eps_r = C_x / C_v with C_v = eps0 A / t, the vacuum capacitance of the electrodes
    (parallel-plate idealisation, no fringing). ASTM D150 [1]_.
    """
    c = si_value(capacitance, "capacitance", "capacitance", limits="capacitance")
    t = si_value(thickness, "length", "thickness", limits="length")
    a = _area(area)
    return _closed_result(_contacting_formula(c, t, a), "contacting")


def _closed_result(eps: Any, label: str) -> Any:
    """A closed form's eps_r, refused outside the valid range 1 to 1e4 (a plausible but
    wrong number from readings or dimensions in the wrong unit)."""
    e = _n(eps)
    if not _in_eps_range(e):
        raise ExtractionError(
            f"the {label} readings give eps_r = {_shown(e)}, outside the valid range "
            f"{EPS_MIN:g} to {EPS_MAX:g}: check the readings' units and order, the thickness "
            "and the area",
            eps_r=e,
            valid=(EPS_MIN, EPS_MAX),
        )
    validate.permittivity_result(e, f"{label}: eps_r")
    return eps


def _area(area: Any) -> Any:
    """An electrode area in m**2 (a quantity, "500 mm**2", a number in m**2, or a ufloat),
    its nominal value in the range of :data:`capbench.validate.LIMITS` ["area"]."""
    if isinstance(area, pint.Quantity) and isinstance(area.magnitude, AffineScalarFunc):
        try:
            a = area.to("m**2").magnitude
        except pint.DimensionalityError:
            raise InputError(
                f"area = {area:~P} is not an area; give it in m**2 or mm**2", name="area"
            ) from None
        validate.check(a.n, "area", "area")
        return a
    if isinstance(area, AffineScalarFunc):
        validate.check(area.n, "area", "area")
        return area
    return validate.check(area, "area", "area")


def ideal_air_gap(
    empty: Any, loaded: Any, thickness: Any, spacing: Any, gap_eps_r: Any = 1.0
) -> Any:
    """Closed form of the air-gap (non-contacting) method at a fixed electrode spacing.

    Notes
    -----
    Per unit area the loaded cell is two capacitors in series, the gap (spacing s -
    thickness t, permittivity eps_g) and the specimen:
    1/C = (s - t)/(eps0 eps_g) + t/(eps0 eps_r), C_0 = eps0 eps_g / s; eliminating the
    area, eps_r = eps_g t / (t - s (1 - C_0 / C)). Works with complex readings
    C* = C (1 - j D) (the series air gap corrected in the loss too). ASTM D150 [1]_.
    """
    c0 = si_value(empty, "capacitance", "empty reading", limits="capacitance")
    c = si_value(loaded, "capacitance", "loaded reading", limits="capacitance")
    t = si_value(thickness, "length", "thickness", limits="length")
    s = si_value(spacing, "length", "spacing", limits="length")
    _check_air_gap(c0, c, t, s)
    return _air_gap_formula(c0, c, t, s, gap_eps_r)


def ideal_micrometer(
    thickness: Any, loaded_spacing: Any, empty_spacing: Any, capacitance_ratio: Any = 1.0
) -> Any:
    """Closed form of the micrometer-electrode re-set (equal-capacitance) method.

    The specimen (thickness t) sits between the electrodes at spacing s1 (s1 = t when
    they touch it); without it the electrodes are re-set to spacing s2 for the same
    reading.

    Notes
    -----
    Series model per unit area: (s1 - t) + t/eps_r = s2 C_2 / C_1, so
    eps_r = t / (t - s1 + s2 C_2/C_1); for equal readings eps_r = t / (t - delta_s) with
    delta_s = s1 - s2 the micrometer's change. ``capacitance_ratio`` = C_2/C_1 corrects
    a residual difference of the two readings (complex for loss). ASTM D150 [1]_.
    """
    t = si_value(thickness, "length", "thickness", limits="length")
    s1 = si_value(loaded_spacing, "length", "loaded spacing", limits="length")
    s2 = si_value(empty_spacing, "length", "empty spacing", limits="length")
    _check_micrometer(t, s1, s2, capacitance_ratio)
    return _micrometer_formula(t, s1, s2, capacitance_ratio)


@dataclass(frozen=True)
class TwoFluidIdeal:
    """The closed form's results: eps_r, the filling fraction x = t/s of the specimen,
    the cell's vacuum capacitance and its stray capacitance (SI)."""

    eps_r: Any
    fraction: Any
    vacuum_capacitance: Any
    stray: Any


def ideal_two_fluid(
    fluid1: Any,
    fluid1_with_specimen: Any,
    fluid2: Any,
    fluid2_with_specimen: Any,
    eps_fluid1: Any,
    eps_fluid2: Any,
) -> TwoFluidIdeal:
    """Closed form of the two-fluid method (parallel-plate idealisation).

    Notes
    -----
    Four readings: the cell in fluid i (permittivity e_i) without and with the specimen,
    C_i and C_is. Unknowns: the vacuum capacitance C_v = eps0 A / s of the electrodes,
    a stray capacitance C_p in parallel, the fraction x = t/s of the spacing the specimen
    fills, and its eps_r. Model (series layers under the electrodes)::

        C_i  = e_i C_v + C_p
        C_is = C_v / ((1 - x)/e_i + x/eps_r) + C_p

    The first pair gives C_v = (C_2 - C_1)/(e_2 - e_1), C_p = C_1 - e_1 C_v. With
    y_i = C_v/(C_is - C_p) - 1/e_i = x (1/eps_r - 1/e_i), subtracting the two gives
    x = (y_1 - y_2)/(1/e_2 - 1/e_1) and then 1/eps_r = 1/e_1 + y_1/x. Neither the
    electrode area, the spacing, the specimen's thickness nor the stray capacitance
    needs to be known (derived here; the method is that of ASTM D150 [1]_).
    """
    c1 = si_value(fluid1, "capacitance", "fluid 1 reading", limits="capacitance")
    c1s = si_value(
        fluid1_with_specimen, "capacitance", "fluid 1 with specimen reading", limits="capacitance"
    )
    c2 = si_value(fluid2, "capacitance", "fluid 2 reading", limits="capacitance")
    c2s = si_value(
        fluid2_with_specimen, "capacitance", "fluid 2 with specimen reading", limits="capacitance"
    )
    e1 = si_value(eps_fluid1, "dimensionless", "eps_r of fluid 1", limits="eps_r")
    e2 = si_value(eps_fluid2, "dimensionless", "eps_r of fluid 2", limits="eps_r")
    _check_two_fluid_inputs(c1, c2, e1, e2)
    _two_fluid_nominal(c1, c1s, c2, c2s, e1, e2)
    eps, x, cv, cp = _two_fluid_formula(c1, c1s, c2, c2s, e1, e2)
    return TwoFluidIdeal(eps, x, cv, cp)


def _two_fluid_nominal(c1: Any, c1s: Any, c2: Any, c2s: Any, e1: Any, e2: Any):
    """The closed form at nominal values, refusing readings it cannot invert."""
    vals = [_n(v) for v in (c1, c1s, c2, c2s, e1, e2)]
    try:
        eps, x, cv, cp = _two_fluid_formula(*vals)
    except ZeroDivisionError:
        shown = ", ".join(f"{c * 1e12:.6g} pF" for c in vals[:4])
        raise ExtractionError(
            f"the four two-fluid readings ({shown}) are inconsistent with a specimen "
            "between the electrodes (a zero denominator: the specimen fills no fraction of "
            "the spacing, or a reading equals the stray capacitance); check their order "
            "(fluid 1, fluid 1 with specimen, fluid 2, fluid 2 with specimen)",
            readings=vals[:4],
        ) from None
    _check_two_fluid_result(eps, x)
    return eps, x, cv, cp


def ideal_liquid(empty: Any, filled: Any, empty_eps_r: Any = 1.0, stray: Any = 0.0) -> Any:
    """Closed form of the liquid cell: eps_r = e_0 (C_f - C_p) / (C_e - C_p).

    Notes
    -----
    C_e = e_0 C_v + C_p empty (filled with air of permittivity e_0), C_f = eps_r C_v +
    C_p filled, C_p the stray (lead) capacitance outside the liquid; eliminate C_v
    (common practice, no source).
    """
    ce = si_value(empty, "capacitance", "empty reading", limits="capacitance")
    cf = si_value(filled, "capacitance", "filled reading", limits="capacitance")
    cp = _stray_value(stray)
    e0 = si_value(empty_eps_r, "dimensionless", "empty_eps_r", limits="eps_r")
    _check_liquid(ce, cf, cp)
    return _closed_result(_liquid_formula(ce, cf, e0, cp), "liquid cell")


# --------------------------------------------------------------------------- checks


def _check_air_gap(c0: Any, c: Any, t: Any, s: Any) -> None:
    if _n(t) >= _n(s) * (1 + 1e-12):
        raise ExtractionError(
            f"the specimen ({_n(t) * 1e3:.6g} mm) is thicker than the electrode spacing "
            f"({_n(s) * 1e3:.6g} mm); the air-gap method needs thickness < spacing "
            "(use contacting() when the electrodes touch the specimen)",
            thickness=_n(t),
            spacing=_n(s),
        )
    if _n(c) <= _n(c0):
        raise ExtractionError(
            f"the reading with the specimen ({_n(c) * 1e12:.6g} pF) is not above the empty "
            f"reading ({_n(c0) * 1e12:.6g} pF): a specimen with eps_r > 1 must raise the "
            "capacitance; check the order of the readings",
            empty=_n(c0),
            loaded=_n(c),
        )
    den = _n(t) - _n(s) * (1 - _n(c0) / _n(c))
    if den <= 0 or _n(t) / den > EPS_MAX:
        raise ExtractionError(
            f"the readings ({_n(c0) * 1e12:.6g} pF empty, {_n(c) * 1e12:.6g} pF loaded) "
            f"imply eps_r beyond {EPS_MAX:g} for a {_n(t) * 1e3:.6g} mm specimen in a "
            f"{_n(s) * 1e3:.6g} mm gap; check the spacing and thickness",
            empty=_n(c0),
            loaded=_n(c),
        )


def _check_micrometer(t: Any, s1: Any, s2: Any, ratio: Any) -> None:
    tn, s1n, s2n = _n(t), _n(s1), _n(s2)
    if tn > s1n * (1 + FILM_TIE):
        raise ExtractionError(
            f"the specimen ({tn * 1e3:.6g} mm) is thicker than the loaded spacing "
            f"({s1n * 1e3:.6g} mm); valid: thickness <= loaded spacing (within "
            f"{FILM_TIE:.1%}, two micrometers' disagreement)",
            thickness=tn,
            spacing=s1n,
        )
    r = ratio.real if isinstance(ratio, complex) else _n(ratio)
    den = tn - s1n + s2n * r
    if s2n > s1n * (1 + 1e-9) or den <= 0 or den > tn * (1 + 1e-9) or tn / den > EPS_MAX:
        raise ExtractionError(
            f"re-set spacing {s2n * 1e3:.6g} mm after {s1n * 1e3:.6g} mm with a "
            f"{tn * 1e3:.6g} mm specimen has no root eps_r in {EPS_MIN:g} to {EPS_MAX:g}: "
            "the empty re-set must close the electrodes by less than the specimen's "
            "thickness (0 <= s1 - s2 < t)",
            thickness=tn,
            loaded_spacing=s1n,
            empty_spacing=s2n,
        )


def _check_two_fluid_inputs(c1: Any, c2: Any, e1: Any, e2: Any) -> None:
    if abs(_n(e2) - _n(e1)) < 1e-6 * _n(e1):
        raise ExtractionError(
            f"the two fluids have the same permittivity ({_n(e1):.6g}, {_n(e2):.6g}); the "
            "two-fluid method needs two different fluids",
            eps1=_n(e1),
            eps2=_n(e2),
        )
    if (_n(c2) - _n(c1)) * (_n(e2) - _n(e1)) <= 0:
        raise ExtractionError(
            f"the fluid readings ({_n(c1) * 1e12:.6g} pF in eps_r {_n(e1):.6g}, "
            f"{_n(c2) * 1e12:.6g} pF in eps_r {_n(e2):.6g}) do not rise with the fluid's "
            "permittivity; check the order of the readings",
            c1=_n(c1),
            c2=_n(c2),
        )


def _check_two_fluid_result(eps: float, x: float) -> None:
    if not (math.isfinite(x) and 0 < x <= 1 + 1e-9):
        raise ExtractionError(
            f"the four readings imply a specimen filling {x:.6g} of the spacing; a "
            "specimen fills a fraction 0 to 1. Check the readings' order (fluid 1, fluid 1 "
            "with specimen, fluid 2, fluid 2 with specimen)",
            fraction=x,
        )
    if not _in_eps_range(eps):
        raise ExtractionError(
            f"the four readings imply eps_r = {_shown(eps)}, outside the valid range "
            f"{EPS_MIN:g} to {EPS_MAX:g}",
            eps_r=eps,
        )


def _check_liquid(ce: Any, cf: Any, cp: Any) -> None:
    if _n(cf) <= _n(ce):
        raise ExtractionError(
            f"the filled reading ({_n(cf) * 1e12:.6g} pF) is not above the empty reading "
            f"({_n(ce) * 1e12:.6g} pF); a liquid with eps_r above the empty cell's must "
            "raise the capacitance; check the order of the readings",
            empty=_n(ce),
            filled=_n(cf),
        )
    if _n(cp) >= _n(ce):
        raise ExtractionError(
            f"the stray capacitance ({_n(cp) * 1e12:.6g} pF) is not below the empty "
            f"reading ({_n(ce) * 1e12:.6g} pF); valid: 0 pF to below the empty reading",
            stray=_n(cp),
            empty=_n(ce),
        )


# --------------------------------------------------------------------------- inputs


def _as_list(value: Any) -> list[Any]:
    if isinstance(value, pint.Quantity) and np.ndim(value.magnitude) > 0:
        return [value[i] for i in range(len(value.magnitude))]
    if isinstance(value, (list, tuple, np.ndarray)):
        return list(value)
    return [value]


def _readings(value: Any, kind: str, name: str, limits: str) -> list[Any]:
    items = _as_list(value)
    if not items:
        raise InputError(f"{name}: no readings given", name=name)
    many = len(items) > 1
    return [
        si_value(x, kind, f"{name}[{i}]" if many else name, limits=limits)
        for i, x in enumerate(items)
    ]


def _broadcast(values: list[Any] | None, n: int, name: str) -> list[Any] | None:
    if values is None:
        return None
    if len(values) == n:
        return values
    if len(values) == 1:
        return values * n
    raise InputError(
        f"{name}: {len(values)} values for {n} readings; give one, or one per reading",
        name=name,
        value=len(values),
    )


def _frequencies(frequency: Any, n: int) -> list[float | None]:
    if frequency is None:
        return [None] * n
    f = _broadcast(_readings(frequency, "frequency", "frequency", "frequency"), n, "frequency")
    return [_n(x) for x in f]


def _loss(
    dissipation: Any, conductance: Any, caps: list[Any], freqs: list[float | None], name: str
) -> list[Any] | None:
    n = len(caps)
    if dissipation is not None and conductance is not None:
        raise InputError(
            f"{name}: give the dissipation factor or the conductance, not both", name=name
        )
    if dissipation is not None:
        d = _readings(dissipation, "dimensionless", f"{name} dissipation factor", "loss")
        for x in d:
            if validate.dissipation(_n(x), f"{name} dissipation factor"):
                break
        return _broadcast(d, n, f"{name} dissipation factor")
    if conductance is not None:
        g = _broadcast(
            _readings(conductance, "conductance", f"{name} conductance", "conductance"),
            n,
            f"{name} conductance",
        )
        if any(f is None for f in freqs):
            raise InputError(
                f"{name}: a conductance reading needs its frequency (D = G / (2 pi f C))",
                name=name,
            )
        out = [gi / (2 * math.pi * f * c) for gi, f, c in zip(g, freqs, caps, strict=True)]
        for i, x in enumerate(out):
            # D from G: the same limits as a D read directly
            validate.check(_n(x), "loss", f"{name} D = G / (2 pi f C) [{i}]", positive=False)
        for x in out:
            if validate.dissipation(_n(x), f"{name} D = G / (2 pi f C)"):
                break
        return out
    return None


def _stray_value(stray: Any) -> Any:
    if stray is None:
        return 0.0
    c = si_value(stray, "capacitance", "stray capacitance")
    validate.check_or_zero(_n(c), "capacitance", "stray capacitance")
    return c


def _dimensions(dimensions: Mapping[str, Any] | None, fixture: Fixture) -> dict[str, Any]:
    out: dict[str, Any] = {}
    if not dimensions:
        return out
    params = fixture.param_dict
    valid = sorted(
        k for k, val in params.items() if k not in _RESERVED and isinstance(val, float) and val > 0
    )
    for key, value in dimensions.items():
        if key not in valid:
            raise InputError(
                f"dimensions: {key!r} is not an uncertain dimension of a {fixture.kind}; "
                f"valid: {valid} (thickness and spacing have their own arguments)",
                name=key,
            )
        out[key] = si_value(value, "length", key, limits="length")
    return out


def _geometry(fixture: Fixture) -> dict[str, float]:
    """Specimen thickness and electrode spacing of a flat-specimen fixture."""
    p = fixture.param_dict
    if fixture.kind == "guarded_cell":
        return {
            "thickness": p["specimen_thickness"],
            "spacing": p["specimen_thickness"] + p["air_gap"],
        }
    spec = p.get("specimen")
    if spec is None:
        raise ExtractionError(
            f"the {fixture.kind} has no specimen region; build it with specimen=Specimen("
            "thickness, eps_r)",
            kind=fixture.kind,
        )
    if spec.lift:
        raise ExtractionError(
            f"the specimen is lifted {spec.lift * 1e3:.6g} mm off the electrode; the methods "
            "assume it rests on the low electrode (lift = 0)",
            lift=spec.lift,
        )
    return {"thickness": spec.thickness, "spacing": p["gap"]}


def _require(fixture: Fixture, kinds: tuple[str, ...], method: str) -> None:
    if not isinstance(fixture, Fixture):
        raise InputError(
            f"{method}: fixture = {fixture!r}; give a Fixture from capbench.rigs", value=fixture
        )
    if fixture.kind not in kinds:
        raise ExtractionError(
            f"{method}() supports fixtures {list(kinds)}; got a {fixture.kind!r}",
            kind=fixture.kind,
        )
    if fixture.specimen is None:
        raise ExtractionError(
            f"{method}(): the fixture has no specimen region (Fixture.specimen is None)",
            kind=fixture.kind,
        )
    if not fixture.axisymmetric and fixture.length is None:
        raise ExtractionError(
            f"{method}(): the planar {fixture.kind} has no length, so its capacitance is per "
            "metre; build it with length= to compare with bench readings in F",
            kind=fixture.kind,
        )


def _build(fixture: Fixture, values: Mapping[str, float], tie: bool = False) -> Fixture:
    """The fixture rebuilt with ``thickness``/``spacing`` (metres) and builder arguments
    changed. ``tie``: the spacing equals the thickness (contacting electrodes, or an
    empty re-set cell filled by the medium)."""
    changes: dict[str, Any] = {}
    vals = dict(values)
    t = vals.pop("thickness", None)
    s = vals.pop("spacing", None)
    if tie:
        t = s = t if t is not None else s
    if t is not None or s is not None:
        geo = _geometry(fixture)
        t = geo["thickness"] if t is None else t
        s = geo["spacing"] if s is None else s
        if t > s * (1 + 1e-12):
            raise ExtractionError(
                f"the specimen ({t * 1e3:.6g} mm) is thicker than the electrode spacing "
                f"({s * 1e3:.6g} mm)",
                thickness=t,
                spacing=s,
            )
        if fixture.kind == "guarded_cell":
            gap = s - t
            changes["specimen_thickness"] = t
            changes["air_gap"] = 0.0 if gap <= 1e-9 * s else gap
        else:
            spec = fixture.param_dict["specimen"]
            changes["specimen"] = Specimen(min(t, s), spec.eps_r, spec.radius, 0.0)
            changes["gap"] = s
    changes.update(vals)
    if not changes:
        return fixture
    try:
        return fixture.with_changes(**changes)
    except GeometryError as exc:
        raise ExtractionError(
            f"cannot build the {fixture.kind} with {changes}: {exc}", changes=str(changes)
        ) from None


# --------------------------------------------------------------------------- solves


@dataclass(frozen=True)
class _Solved:
    C: complex  # terminal capacitance, SI (F)
    S: complex  # dC/d eps_r(specimen)
    S_medium: complex  # dC/d eps_r(medium)
    rel: float


class _Fem:
    """The solves of one extraction call, cached per (geometry, eps)."""

    def __init__(self, rtol: float):
        if not (isinstance(rtol, (int, float)) and 1e-9 <= rtol <= 1e-2):
            raise InputError(f"rtol = {rtol!r}; valid: 1e-9 to 1e-2", value=rtol)
        self.rtol = float(rtol)
        self.tol = NEWTON_TOL_PER_RTOL * self.rtol
        self._fixtures: dict[tuple, Fixture] = {}
        self._solves: dict[tuple, _Solved] = {}
        self._grads: dict[tuple, tuple[complex, complex, complex]] = {}
        self.rel: dict[str, float] = {}
        self.count = 0

    def fixture(self, base: Fixture, values: Mapping[str, float], tie: bool = False) -> Fixture:
        key = (id(base), tuple(sorted(values.items())), tie)
        if key not in self._fixtures:
            self._fixtures[key] = _build(base, values, tie)
        return self._fixtures[key]

    def solve(self, fx: Fixture, eps: complex, medium: complex, role: str) -> _Solved:
        e = complex(eps)
        m = complex(medium)
        e_arg: complex | float = e.real if e.imag == 0 else e
        m_arg: complex | float = m.real if m.imag == 0 else m
        f2 = fx.with_permittivity(MEDIUM, m_arg).with_permittivity(fx.specimen, e_arg)
        key = (f2.geometry, f2.high, f2.low, f2.connection, f2.length)
        if key not in self._solves:
            if e.imag or m.imag:
                # SuperLU's complex kernels call BLAS on small blocks; with OpenBLAS
                # threads they ran 10 to 60 times slower here than on one thread (42k
                # unknowns: 17 s against 0.27 s; benchmarks/extraction_speed.py), so
                # complex factorisations run single-threaded
                with threadpool_limits(limits=1, user_api="blas"):
                    sol = solve(f2, self.rtol)
            else:
                sol = solve(f2, self.rtol)
            self.count += 1
            self._solves[key] = _Solved(
                complex(sol.terminal) * (f2.length or 1.0),
                complex(sol.sensitivity(fx.specimen)),
                complex(sol.sensitivity(MEDIUM)),
                float(sol.rel_error),
            )
        out = self._solves[key]
        self.rel[role] = max(self.rel.get(role, 0.0), out.rel)
        return out

    def gradient(
        self,
        base: Fixture,
        values: Mapping[str, float],
        name: str,
        eps: complex,
        medium: complex,
        role: str,
        tie: bool = False,
    ) -> tuple[complex, complex, complex]:
        """Differences dC/dp, dS/dp and dS_medium/dp with respect to the dimension
        ``name`` (rebuilding the fixture at p +- h): central, or one-sided where one side
        cannot be built (a specimen as thick as the spacing cannot grow)."""
        key = (id(base), tuple(sorted(values.items())), name, complex(eps), complex(medium), tie)
        if key not in self._grads:
            p0 = values[name]
            h = FD_STEP * abs(p0)

            def at(p: float) -> _Solved | None:
                try:
                    fx = self.fixture(base, {**values, name: p}, tie)
                except ExtractionError:
                    return None
                return self.solve(fx, eps, medium, role)

            sp, sm, den = at(p0 + h), at(p0 - h), 2 * h
            if sp is None or sm is None:
                den = h
                sp = sp if sp is not None else at(p0)
                sm = sm if sm is not None else at(p0)
            if sp is None or sm is None:
                raise ExtractionError(
                    f"cannot vary {name} = {p0:.6g} m by +-{h:.3g} m to find the capacitance's "
                    "sensitivity to it",
                    name=name,
                )
            self._grads[key] = (
                (sp.C - sm.C) / den,
                (sp.S - sm.S) / den,
                (sp.S_medium - sm.S_medium) / den,
            )
        return self._grads[key]

    def error_input(self, role: str) -> Any:
        """The FEM's relative error for solves of ``role``, a type B input (rectangular,
        half-width the largest estimated relative error)."""
        rel = self.rel.get(role, 0.0)
        src = Source(
            f"FEM discretisation ({role})",
            "",
            "rectangular",
            "B",
            half_width=rel,
            note="relative error of the solved capacitance; Solution.rel_error as bound",
        )
        return InputVariable(0.0, rel / math.sqrt(3.0), src)


def _clip(eps: complex) -> complex:
    re = min(max(eps.real, EPS_MIN), EPS_MAX)
    return complex(re, min(eps.imag, 0.0))


def _newton(
    fem: _Fem, fx: Fixture, target: complex, start: complex, medium: complex, role: str
) -> tuple[complex, _Solved]:
    """Root eps* of C(eps*) = target. Complex solves when the target is lossy
    (Im < 0); real solves otherwise, with a first-order imaginary part for a target
    with Im > 0 (which would need eps'' < 0)."""
    lossy = target.imag < 0
    eps = _clip(start) if lossy else complex(_clip(start).real, 0.0)
    scale = abs(target)
    for _ in range(_MAX_NEWTON):
        s = fem.solve(fx, eps, medium, role)
        r = s.C - target if lossy else complex(s.C.real - target.real, 0.0)
        if abs(r) <= fem.tol * scale:
            final = eps - (s.C - target) / s.S
            if not (EPS_MIN <= final.real <= EPS_MAX):
                break
            return final, s
        new = eps - r / s.S
        if not lossy:
            new = complex(new.real, 0.0)
        if new.real < EPS_MIN:
            if eps.real <= EPS_MIN * (1 + 1e-12):
                raise ExtractionError(
                    f"no permittivity root: the target capacitance {target.real * 1e12:.7g} pF "
                    f"is below the fixture's capacitance with eps_r = {EPS_MIN:g} "
                    f"({s.C.real * 1e12:.7g} pF); check the reading, the thickness and the "
                    "stray capacitance",
                    target=target.real,
                    at_minimum=s.C.real,
                )
            new = complex(EPS_MIN, new.imag)
        if new.real > EPS_MAX:
            if eps.real >= EPS_MAX * (1 - 1e-12):
                raise ExtractionError(
                    f"no permittivity root: the target capacitance {target.real * 1e12:.7g} pF "
                    f"is above the fixture's capacitance with eps_r = {EPS_MAX:g} "
                    f"({s.C.real * 1e12:.7g} pF)",
                    target=target.real,
                    at_maximum=s.C.real,
                )
            new = complex(EPS_MAX, new.imag)
        if lossy and new.imag > 0:
            new = complex(new.real, 0.5 * eps.imag)
        eps = new
    raise ExtractionError(
        f"no permittivity root in {EPS_MIN:g} to {EPS_MAX:g} for the target "
        f"{target.real * 1e12:.7g} pF after {_MAX_NEWTON} solves",
        target=target.real,
    )


def _gain_warning(eps: complex, what: str) -> None:
    if eps.imag > 0:
        warnings.warn(
            f"{what}: the readings imply eps'' = {-eps.imag:.3g} < 0 (a loss below the "
            "empty or reference reading); it is reported to first order from the "
            "sensitivity and is probably zero within its uncertainty",
            CapbenchWarning,
            stacklevel=3,
        )


# --------------------------------------------------------------------------- results


@dataclass(frozen=True, eq=False)
class _Model:
    """A closed-form measurement model for the Monte Carlo cross-check: ``func`` maps
    arrays of SI arguments to complex eps* (eps' - j eps'')."""

    func: Callable[[dict[str, np.ndarray]], np.ndarray]
    arguments: tuple[tuple[str, Any], ...]


@dataclass(frozen=True, eq=False)
class Point:
    """The result at one frequency.

    ``eps_r``: eps' (a ufloat: dimensionless results are not wrapped in quantities);
    ``eps_loss``: eps'' and ``tan_delta`` = eps''/eps' where loss was read;
    ``*_ideal``: the closed parallel-plate form's values from the same readings;
    ``budget`` / ``loss_budget``: uncertainty budgets of eps' and tan delta;
    ``capacitance``: the solved fixture's complex capacitance at the root (SI),
    ``sensitivity``: dC/d eps_r there.
    """

    frequency: float | None
    eps_r: Any
    eps_r_ideal: Any
    eps_loss: Any | None
    tan_delta: Any | None
    tan_delta_ideal: Any | None
    budget: Budget
    loss_budget: Budget | None
    capacitance: complex | None = None
    sensitivity: complex | None = None
    model: _Model | None = None

    def expanded(self, quantity: str = "eps_r") -> tuple[float, float]:
        """Expanded uncertainty U and coverage factor k of ``quantity`` ("eps_r",
        "tan_delta" or "eps_loss") by the one rule (Budget.expanded: k from the t
        distribution with the effective degrees of freedom, 95 % coverage). eps'' takes
        the k of tan delta's budget (the same inputs)."""
        if quantity == "eps_r":
            return self.budget.expanded()
        if self.loss_budget is None:
            raise InputError(f"no loss was read at this point, so no {quantity}", value=quantity)
        U, k = self.loss_budget.expanded()
        if quantity == "tan_delta":
            return U, k
        if quantity == "eps_loss":
            return k * self.eps_loss.s, k
        raise InputError(
            f"quantity {quantity!r}; valid: 'eps_r', 'tan_delta', 'eps_loss'", value=quantity
        )

    @property
    def correction(self) -> float:
        """The FEM correction relative to the closed form: eps'_FEM / eps'_ideal - 1."""
        return self.eps_r.n / self.eps_r_ideal.n - 1.0

    @property
    def loss_correction(self) -> float | None:
        """tan delta_FEM / tan delta_ideal - 1 (None without loss or with zero loss)."""
        if self.tan_delta is None or self.tan_delta_ideal is None or self.tan_delta_ideal.n == 0:
            return None
        return self.tan_delta.n / self.tan_delta_ideal.n - 1.0


@dataclass(frozen=True, eq=False)
class Extraction:
    """Result of an extraction: one :class:`Point` per frequency (or reading).

    ``fixture``: the fixture as solved (nominal dimensions from the readings);
    ``fem``: whether the FEM form was used; ``rel_error``: the largest estimated relative
    error of the solves; ``solves`` and ``seconds``: their number and the wall time;
    ``extras``: method-specific results (see each method).
    """

    method: str
    fixture: Fixture
    points: tuple[Point, ...]
    fem: bool
    rel_error: float
    solves: int
    seconds: float
    extras: tuple[tuple[str, Any], ...] = ()

    def __len__(self) -> int:
        return len(self.points)

    def __getitem__(self, i: int) -> Point:
        return self.points[i]

    @property
    def eps_r(self) -> tuple[Any, ...]:
        return tuple(p.eps_r for p in self.points)

    @property
    def tan_delta(self) -> tuple[Any, ...] | None:
        if self.points[0].tan_delta is None:
            return None
        return tuple(p.tan_delta for p in self.points)

    @property
    def frequency(self) -> pint.Quantity | None:
        if self.points[0].frequency is None:
            return None
        return Q_(np.array([p.frequency for p in self.points]), "Hz")

    def extra(self, name: str) -> Any:
        for k, val in self.extras:
            if k == name:
                return val
        raise InputError(
            f"{self.method} has no result {name!r}; valid: {[k for k, _ in self.extras]}",
            value=name,
        )

    def arrays(self) -> dict[str, np.ndarray]:
        """eps'(f), eps''(f), tan delta(f) and their standard uncertainties as arrays."""
        out: dict[str, np.ndarray] = {
            "frequency": np.array(
                [np.nan if p.frequency is None else p.frequency for p in self.points]
            ),
            "eps_r": np.array([p.eps_r.n for p in self.points]),
            "u_eps_r": np.array([p.eps_r.s for p in self.points]),
            "eps_r_ideal": np.array([p.eps_r_ideal.n for p in self.points]),
            "U_eps_r": np.array([p.expanded("eps_r")[0] for p in self.points]),
        }
        if self.points[0].tan_delta is not None:
            out["eps_loss"] = np.array([p.eps_loss.n for p in self.points])
            out["u_eps_loss"] = np.array([p.eps_loss.s for p in self.points])
            out["U_eps_loss"] = np.array([p.expanded("eps_loss")[0] for p in self.points])
            out["tan_delta"] = np.array([p.tan_delta.n for p in self.points])
            out["u_tan_delta"] = np.array([p.tan_delta.s for p in self.points])
            out["U_tan_delta"] = np.array([p.expanded("tan_delta")[0] for p in self.points])
        return out

    def solution(self, rtol: float = 1e-4) -> Any:
        """The fixture solved at the extracted eps' of the first point (a picture of the
        field the result stands on: ``rtol`` 1e-4 by default); None where it cannot be
        solved. What a report's field plot shows; the report itself never solves."""
        from threadpoolctl import threadpool_limits

        fx = self.fixture
        if fx.specimen is not None:
            fx = fx.with_permittivity(fx.specimen, float(self.points[0].eps_r.n))
        try:
            with threadpool_limits(limits=1, user_api="blas"):
                return solve(fx, rtol=rtol)
        except CapbenchError:
            return None

    def table(self) -> str:
        """eps'(f) and tan delta(f) with their expanded uncertainties for 95 % coverage
        and the coverage factor of each (k from each budget's effective degrees of
        freedom, the one rule of :meth:`Point.expanded`)."""
        loss = self.points[0].tan_delta is not None
        head = f"{'f':>12} {'eps_r':>10} {'U(eps_r)':>9} {'k':>5} {'ideal':>10} {'corr.':>9}"
        if loss:
            head += f" {'eps_loss':>10} {'tan delta':>10} {'U(tan d)':>9} {'k':>5} {'ideal':>10}"
        title = f"{self.method}: FEM-corrected" if self.fem else self.method
        lines = [f"{title} (expanded uncertainties, 95 % coverage)", head]
        for p in self.points:
            f = "-" if p.frequency is None else frequency_text(p.frequency)
            U, k = p.expanded("eps_r")
            row = (
                f"{f:>12} {p.eps_r.n:>10.6f} {U:>9.2g} {k:>5.2f} {p.eps_r_ideal.n:>10.6f} "
                f"{100 * p.correction:>8.3f}%"
            )
            if loss:
                Ut, kt = p.expanded("tan_delta")
                row += (
                    f" {p.eps_loss.n:>10.4g} {p.tan_delta.n:>10.4g} {Ut:>9.2g} {kt:>5.2f} "
                    f"{p.tan_delta_ideal.n:>10.4g}"
                )
            lines.append(row)
        return "\n".join(lines)

    def monte_carlo(
        self,
        index: int = 0,
        quantity: str = "eps_r",
        *,
        rng: np.random.Generator | int | None = None,
        p: float = 0.95,
        n_dig: int = 2,
        interval: str = "shortest",
        adaptive: bool = True,
        trials: int | None = None,
        max_trials: int = 5_000_000,
    ) -> MonteCarloResult:
        """Cross-check the linear uncertainty of point ``index`` by Monte Carlo (JCGM 101).

        The model is the method's closed form, which carries the nonlinearity (ratios,
        differences of readings), plus the linear difference between the FEM result and
        the closed form: y(x) = M(x) - M(x0) + y0 + sum_i (a_i - b_i)(x_i - x_i0), with
        a_i the FEM result's and b_i the closed form's sensitivity coefficients. Its
        linearisation is the reported result exactly, so the comparison (JCGM 101
        clause 8) asks whether the linear propagation is adequate for the nonlinearity of
        the measurement model; the FEM correction itself is linear to within its own
        error over the inputs' ranges.

        ``quantity``: "eps_r" or "tan_delta".
        """
        pt = self.points[index]
        if quantity == "eps_r":
            y = pt.eps_r

            def q(z):
                return np.real(z)
        elif quantity == "tan_delta":
            if pt.tan_delta is None:
                raise InputError("this extraction has no loss; quantity='tan_delta' needs D or G")
            y = pt.tan_delta

            def q(z):
                return -np.imag(z) / np.real(z)
        else:
            raise InputError(f"quantity = {quantity!r}; valid: 'eps_r', 'tan_delta'")
        if pt.model is None:
            raise InputError(f"{self.method}: no closed-form model to sample")
        if y.s == 0:
            raise InputError(
                f"{self.method}: the result has no uncertainty (every reading and dimension "
                "was given as exact); give them with their uncertainties to cross-check"
            )
        args = dict(pt.model.arguments)
        x0 = {k: _n(v) for k, v in args.items()}

        def g(a: dict[str, np.ndarray]) -> np.ndarray:
            return q(pt.model.func(a))

        g0 = float(g({k: np.array([v]) for k, v in x0.items()})[0])
        lin = y - y.n
        for k, v in args.items():
            if not isinstance(v, AffineScalarFunc) or v.s == 0:
                continue
            h = 1e-6 * max(abs(x0[k]), 10 * v.s)
            up = {kk: np.array([vv]) for kk, vv in x0.items()}
            dn = {kk: np.array([vv]) for kk, vv in x0.items()}
            up[k] = up[k] + h
            dn[k] = dn[k] - h
            b = float((g(up)[0] - g(dn)[0]) / (2 * h))
            lin = lin - b * (v - x0[k])
        args["_fem_linear"] = lin
        y0 = y.n

        def model(a: dict[str, np.ndarray]) -> np.ndarray:
            return g(a) - g0 + y0 + a["_fem_linear"]

        return monte_carlo(
            model,
            args,
            p=p,
            interval=interval,
            rng=rng,
            adaptive=adaptive,
            n_dig=n_dig,
            trials=trials,
            max_trials=max_trials,
            linear=y,
        )

    def plot(self, axes: Any = None) -> Any:
        """Plot eps'(f) and, with loss, tan delta(f) with error bars of the expanded
        uncertainty (95 % coverage, :meth:`Point.expanded`); returns the figure."""
        from matplotlib.figure import Figure

        a = self.arrays()
        loss = "tan_delta" in a
        if axes is None:  # a Figure of its own: no pyplot state, no window
            fig = Figure(figsize=(10 if loss else 5.5, 4))
            axes = fig.subplots(1, 2 if loss else 1)
        axes = np.atleast_1d(axes)
        fig = axes[0].figure
        f = a["frequency"]
        x = f if np.all(np.isfinite(f)) else np.arange(len(f))
        axes[0].errorbar(
            x,
            a["eps_r"],
            yerr=a["U_eps_r"],
            fmt="o-",
            capsize=3,
            label="FEM-corrected" if self.fem else self.method,
        )
        if self.fem:
            axes[0].plot(x, a["eps_r_ideal"], "s--", label="parallel-plate formula")
        axes[0].set_ylabel("eps_r'")
        axes[0].legend()
        if loss:
            axes[1].errorbar(x, a["tan_delta"], yerr=a["U_tan_delta"], fmt="o-", capsize=3)
            axes[1].set_ylabel("tan delta")
        for ax in axes:
            if np.all(np.isfinite(f)):
                ax.set_xscale("log")
                ax.set_xlabel("frequency (Hz)")
            ax.grid(True, alpha=0.3)
        fig.suptitle(f"{self.method}: {self.fixture.name} (error bars: U, 95 % coverage)")
        fig.tight_layout()
        return fig


def _q_eps(z: Any) -> Any:
    return np.real(z)


def _q_tan(z: Any) -> Any:
    return -np.imag(z) / np.real(z)


def _linearised(
    func: Callable[[dict[str, Any]], Any], args: Mapping[str, Any]
) -> tuple[complex, Any, Any]:
    """Nominal complex value of a closed form and its real part and tan delta as ufloats
    linearised by central differences in each uncertain argument."""
    x0 = {k: _n(v) for k, v in args.items()}
    z0 = complex(func({k: np.array([v]) for k, v in x0.items()})[0])
    re = exact(z0.real)
    tan = exact(-z0.imag / z0.real)
    for k, v in args.items():
        if not isinstance(v, AffineScalarFunc) or v.s == 0:
            continue
        h = 1e-6 * max(abs(x0[k]), 10 * v.s)
        up = {kk: np.array([vv]) for kk, vv in x0.items()}
        dn = {kk: np.array([vv]) for kk, vv in x0.items()}
        up[k] = up[k] + h
        dn[k] = dn[k] - h
        zu = complex(func(up)[0])
        zd = complex(func(dn)[0])
        dv = v - x0[k]
        re = re + ((zu.real - zd.real) / (2 * h)) * dv
        tan = tan + ((_q_tan(zu) - _q_tan(zd)) / (2 * h)) * dv
    return z0, re, tan


def _point(
    freq: float | None,
    eps_u: _Cx,
    ideal_re: Any,
    ideal_tan: Any | None,
    lossy: bool,
    label: str,
    model: _Model,
    solved: _Solved | None = None,
) -> Point:
    re = eps_u.re
    where = f" at {frequency_text(freq)}" if freq is not None else ""
    if not EPS_MIN <= _n(re) <= EPS_MAX:
        raise ExtractionError(
            f"the {label} readings{where} give eps_r = {_shown(_n(re))}, outside {EPS_MIN:g} to "
            f"{EPS_MAX:g}: check the readings' units and order, the thickness and the area",
            eps_r=_n(re),
            valid=(EPS_MIN, EPS_MAX),
        )
    validate.permittivity_result(_n(re), f"{label}: eps_r{where}")
    if lossy:
        loss = -eps_u.im
        tan = loss / re
        lb = budget(tan, f"tan delta{where}")
    else:
        loss = tan = lb = None
        ideal_tan = None
    return Point(
        freq,
        re,
        ideal_re,
        loss,
        tan,
        ideal_tan,
        budget(re, f"eps_r'{where}"),
        lb,
        None if solved is None else solved.C,
        None if solved is None else solved.S,
        model,
    )


def _points(
    freqs: list[float | None], ideal: list, func: Any, lossy: bool, label: str
) -> list[Point]:
    """The closed form's result at each reading (``ideal`` holds its arguments and value)."""
    return [_ideal_point(freqs[i], entry, func, lossy, label) for i, entry in enumerate(ideal)]


def _ideal_point(
    freq: float | None,
    entry: tuple[dict, tuple[Any, Any, Any]],
    func: Any,
    lossy: bool,
    label: str,
    eps_u: _Cx | None = None,
    solved: _Solved | None = None,
) -> Point:
    """One reading's Point: the FEM-corrected ``eps_u`` where given, else the closed form's."""
    args, (_z0, z_re, z_tan) = entry
    if eps_u is None:
        eps_u = _Cx(z_re, -z_tan * z_re if lossy else 0.0)
    return _point(freq, eps_u, z_re, z_tan, lossy, label, _Model(func, tuple(args.items())), solved)


def _roots(
    solver: _Fem,
    fx: Fixture,
    targets: list[complex],
    start: complex,
    medium: complex,
    role: str,
    label: str,
) -> list[tuple[complex, _Solved]]:
    """The permittivity that reproduces each target capacitance, each root starting from the
    previous one stepped along its slope (readings at nearby frequencies differ little)."""
    roots: list[tuple[complex, _Solved]] = []
    for i, target in enumerate(targets):
        if roots:
            prev_eps, prev = roots[-1]
            start = prev_eps + (target - targets[i - 1]) / prev.S
        roots.append(_newton(solver, fx, target, start, medium, role))
        _gain_warning(roots[-1][0], label)
    return roots


def _linear_root(eps_k: complex, s_k: _Solved, reading_shift: Any, delta: Any, dims: Any) -> _Cx:
    """The root carried to first order through the reading's uncertainty (``reading_shift``:
    the uncertain target minus its nominal), the FEM's own error ``delta`` (relative) and the
    dimensions' (``dims``: capacitance change), over the slope dC/d(eps)."""
    num = reading_shift - _Cx.of(s_k.C) * delta - dims
    return _Cx.of(eps_k) + num / _Cx.of(s_k.S)


def _nominal_dims(dims: Mapping[str, Any]) -> dict[str, float]:
    return {k: _n(v) for k, v in dims.items()}


def _fd_sum(
    fem: _Fem,
    base: Fixture,
    dims: Mapping[str, Any],
    eps_k: complex,
    eps_ref: complex,
    medium: complex,
    role: str,
    tie: bool = False,
    skip: tuple[str, ...] = (),
) -> Any:
    """sum_p dC/dp (p - p0) at eps_k, from differences taken at eps_ref:
    dC/dp(eps_k) = dC/dp(eps_ref) + (eps_k - eps_ref) dS/dp."""
    nominal = _nominal_dims(dims)
    total: Any = _Cx(0.0)
    for name, val in dims.items():
        if name in skip or _s(val) == 0:
            continue
        dC, dS, _dSm = fem.gradient(base, nominal, name, eps_ref, medium, role, tie)
        g = dC + (eps_k - eps_ref) * dS
        total = total + _Cx.of(g) * (val - nominal[name])
    return total


def _electrode_radius(fixture: Fixture) -> float:
    """The radius (or half-width) of the electrode a specimen lies under."""
    p = fixture.param_dict
    for key in ("electrode_radius", "radius", "width"):
        if isinstance(p.get(key), float) and p[key] > 0:
            return p[key] / (2.0 if key == "width" else 1.0)
    return 0.5 * fixture.geometry.size()


def _touching(dims: Mapping[str, Any], radius: float | None = None) -> bool:
    """Whether the loaded electrode is modelled as resting on the specimen: spacing and
    thickness equal, or apart by an air film within ``FILM_TIE`` of the spacing; and, on
    a cell of electrode ``radius``, films up to FILM_MESH_MIN of the radius (no mesh of
    a reasonable size resolves them: a 2.3 um film on 19 mm discs asked for 300,000 seed
    points) as long as they stay within FILM_MODEL_MAX of the spacing."""
    t, s = _n(dims["thickness"]), _n(dims["spacing"])
    limit = FILM_TIE * s
    if radius:
        limit = max(limit, min(FILM_MESH_MIN * radius, FILM_MODEL_MAX * s))
    return abs(s - t) <= limit


def _through_film(
    fem: _Fem,
    base: Fixture,
    dims: Mapping[str, Any],
    target: complex,
    eps: complex,
    film: float,
    medium: complex,
    role: str,
) -> tuple[complex, _Solved]:
    """The root on the touching geometry (spacing = thickness = t) of a reading taken at
    spacing t + ``film``: C(t, s1) = C(t, t) + dC/ds1 film with dC/ds1 = eps dC/dL (the
    split of :func:`_touching_fd`), so the root solves C(t, t) = target - eps dC/dL film.
    ``eps`` is the root without the film; two passes leave an error of the order of the
    film's share cubed."""
    nominal = _nominal_dims(dims)
    fx = fem.fixture(base, nominal, True)
    for _ in range(2):
        dC, _dS, _dSm = fem.gradient(base, nominal, "thickness", eps, medium, role, True)
        eps, solved = _newton(fem, fx, target - eps * dC * film, eps, medium, role)
    return eps, solved


#: films below this fraction of the electrode radius are modelled, not meshed
FILM_MESH_MIN = 5e-4
#: ... but never films above this fraction of the spacing (the model is first order)
FILM_MODEL_MAX = 0.01


def film_model_half_width(thickness: float, radius: float) -> float:
    """Half-width (relative, rectangular) of the first-order film model's error, as a
    fraction of the film's effect on the reading, for a specimen of ``thickness`` under
    an electrode of ``radius`` (m).

    Notes
    -----
    Measured against solves that mesh the film (films of 0.15 % to 1 % of the spacing),
    the model's error was 22 % of the film's effect at radius/thickness 1.36, 9 % at
    2.7, 2.0 % at 9.1 and 0.7 % at 10 (a 2 mm specimen): about 0.3 t / a, from the
    fringing field the film also changes. The bound is 0.35 t / a, at least 1 % and at
    most 50 % (a fixed 5 % was exceeded on small discs).
    """
    return min(0.5, max(0.01, 0.35 * thickness / radius))


def _film_model(film_c: complex, half_width: float) -> Any:
    """The first-order film correction's error as an input (capacitance, F): zero for
    no film."""
    if not film_c:
        return _Cx(0.0)
    src = Source(
        "air film, first-order model",
        "",
        "rectangular",
        "B",
        half_width=half_width,
        note="relative error of the film's share of the reading (extract.film_model_half_width)",
    )
    return _Cx.of(film_c) * InputVariable(0.0, half_width / math.sqrt(3.0), src)


def _touching_fd(
    fem: _Fem,
    base: Fixture,
    dims: Mapping[str, Any],
    eps_k: complex,
    eps_ref: complex,
    medium: complex,
    role: str,
) -> Any:
    """:func:`_fd_sum` for electrodes resting on the specimen (spacing s = thickness t).

    The thickness cannot be varied alone there (thicker does not fit; thinner opens an
    air film of the difference step, far below what a mesh of the fixture resolves), so
    the field is varied along the one length they share, L = s = t, and that derivative
    is split between the two readings as the series model of the uniform-field region
    splits it: C = eps0 A eps / (t + eps (s - t)) gives, at s = t,
    dC/dt = (1 - eps) dC/dL and dC/ds = eps dC/dL (they sum to dC/dL; the fringing
    field enters through dC/dL, its small share of the split does not).
    """
    nominal = _nominal_dims(dims)
    total: Any = _Cx(0.0)
    if _s(dims["thickness"]) or _s(dims["spacing"]):
        dC, dS, _dSm = fem.gradient(base, nominal, "thickness", eps_ref, medium, role, True)
        g = dC + (eps_k - eps_ref) * dS
        for name, share in (("thickness", 1 - eps_k), ("spacing", eps_k)):
            if _s(dims[name]):
                total = total + _Cx.of(g * share) * (dims[name] - nominal[name])
    rest = {k: v for k, v in dims.items() if k not in ("thickness", "spacing")}
    return total + _fd_sum(
        fem,
        base,
        {**rest, "thickness": nominal["thickness"]},
        eps_k,
        eps_ref,
        medium,
        role,
        tie=True,
    )


def _medium_of(fixture: Fixture) -> complex:
    return complex(fixture.geometry.medium_eps_r)


def _quasi_static(fx: Fixture, points: list[Point]) -> None:
    """Warn at each frequency where the fixture is over 1/20 of the wavelength in its
    densest dielectric (:func:`capbench.validate.quasi_static`). This is the one place
    in an extraction where the frequency and the fixture's size are both known."""
    size = fx.geometry.size()
    regions = max(complex(e).real for e in fx.geometry.permittivities().values())
    for p in points:
        if p.frequency is None:
            continue
        eps = max(regions, _n(p.eps_r))
        if validate.quasi_static(p.frequency, size, eps, fx.name or fx.kind):
            break  # one warning names the frequency above which results fail


def _finish(
    method: str,
    fx: Fixture,
    points: list[Point],
    fem: _Fem | None,
    t0: float,
    extras: tuple[tuple[str, Any], ...] = (),
) -> Extraction:
    rel = max(fem.rel.values(), default=0.0) if fem else 0.0
    _quasi_static(fx, points)
    return Extraction(
        method,
        fx,
        tuple(points),
        fem is not None,
        rel,
        fem.count if fem else 0,
        time.perf_counter() - t0,
        extras,
    )


# --------------------------------------------------------------------------- methods


def contacting(
    fixture: Fixture,
    capacitance: Any,
    *,
    thickness: Any = None,
    dissipation: Any = None,
    conductance: Any = None,
    frequency: Any = None,
    stray: Any = None,
    dimensions: Mapping[str, Any] | None = None,
    fem: bool = True,
    rtol: float = 1e-6,
) -> Extraction:
    """Permittivity and loss of a specimen with electrodes on (touching) it.

    Parameters
    ----------
    fixture : Fixture
        ``guarded_cell`` (three-terminal, ``air_gap`` 0), ``parallel_discs`` or
        ``parallel_strips`` with a specimen filling the gap (two-terminal, unguarded).
    capacitance : reading or sequence of readings
        Parallel capacitance C_p, one per frequency.
    thickness : length, optional
        The specimen's thickness (e.g. the mean of micrometer readings with its
        uncertainty); default: the fixture's. The fixture is rebuilt at its nominal value.
    dissipation, conductance : optional
        Loss readings, one per capacitance reading (D, or G with ``frequency``).
    frequency : optional
        Frequencies of the readings.
    stray : capacitance, optional
        Capacitance in parallel with the fixture's (leads), subtracted from each reading.
    dimensions : mapping, optional
        Other uncertain builder arguments, e.g. ``{"electrode_radius": r}``.
    fem : bool
        False: the closed form only.
    rtol : float
        Relative accuracy of the field solves.

    Returns
    -------
    Extraction
        ``extras``: ``vacuum_capacitance_ideal`` (the closed form's C_v at the nominal
        dimensions, pF).

    Notes
    -----
    Closed form: eps* = (C - C_stray)(1 - j D) t / (eps0 A), A = pi r^2 for discs, the
    guarded electrode's effective area (:func:`guard_effective_area`) for a guarded cell,
    width x length for strips; tan delta = D (the specimen fills the field region).
    FEM form: eps* with C_FEM(eps*) = (C - C_stray)(1 - j D).
    """
    t_start = time.perf_counter()
    _require(fixture, _SOLID_KINDS, "contacting")
    geo = _geometry(fixture)
    if geo["spacing"] > geo["thickness"] * (1 + 1e-9):
        raise ExtractionError(
            f"the fixture has an air gap ({(geo['spacing'] - geo['thickness']) * 1e3:.6g} mm) "
            "above the specimen; use air_gap() for non-contacting electrodes",
            gap=geo["spacing"] - geo["thickness"],
        )
    caps = _readings(capacitance, "capacitance", "capacitance", "capacitance")
    freqs = _frequencies(frequency, len(caps))
    d = _loss(dissipation, conductance, caps, freqs, "capacitance")
    cs = _stray_value(stray)
    for c in caps:
        if _n(c) <= _n(cs):
            raise ExtractionError(
                f"the reading {_n(c) * 1e12:.6g} pF is not above the stray capacitance "
                f"{_n(cs) * 1e12:.6g} pF (valid: a reading above the stray capacitance)",
                reading=_n(c),
            )
    t = (
        geo["thickness"]
        if thickness is None
        else si_value(thickness, "length", "thickness", limits="length")
    )
    dims = {"thickness": t, **_dimensions(dimensions, fixture)}
    nominal = _nominal_dims(dims)
    p = fixture.param_dict

    def dim(name: str) -> Any:
        return dims.get(name, p.get(name))

    if fixture.kind == "guarded_cell":
        geom_args = {"r1": dim("electrode_radius"), "g": dim("guard_gap")}

        def area(a: dict) -> Any:
            return _guard_area(a["r1"], a["g"], a["t"])
    elif fixture.kind == "parallel_discs":
        geom_args = {"a": dim("radius")}

        def area(a: dict) -> Any:
            return np.pi * a["a"] ** 2
    else:
        geom_args = {"w": dim("width"), "L": p.get("length") or 1.0}

        def area(a: dict) -> Any:
            return a["w"] * a["L"]

    def func(a: dict) -> Any:
        cstar = (a["C"] - a["Cs"]) * (1 - 1j * a["D"])
        return _contacting_formula(cstar, a["t"], area(a))

    fx0 = _build(fixture, nominal, tie=True)
    medium = _medium_of(fixture)
    lossy = d is not None
    ideal = []
    for i, c in enumerate(caps):
        args = {"C": c, "Cs": cs, "D": d[i] if lossy else 0.0, "t": t, **geom_args}
        ideal.append((args, _linearised(func, args)))
    cv = _contacting_formula(1.0, _n(t), area({k: _n(v) for k, v in {**geom_args, "t": t}.items()}))
    extras = (("vacuum_capacitance_ideal", Q_(1.0 / cv * 1e12, "pF")),)
    if not fem:
        points = _points(freqs, ideal, func, lossy, "contacting")
        return _finish("contacting", fx0, points, None, t_start, extras)

    solver = _Fem(rtol)
    role = "with specimen"
    targets = [
        ((_n(c) - _n(cs)) * complex(1.0, -(_n(d[i]) if lossy else 0.0))) for i, c in enumerate(caps)
    ]
    roots = _roots(solver, fx0, targets, ideal[0][1][0], medium, role, "contacting")
    eps_ref = complex(float(np.mean([e.real for e, _ in roots])), 0.0)
    fd = [_fd_sum(solver, fixture, dims, e, eps_ref, medium, role, tie=True) for e, _ in roots]
    delta = solver.error_input(role)
    points = []
    for i, (eps_k, s_k) in enumerate(roots):
        t_u = _complex_reading(caps[i] - cs, d[i] if lossy else None)
        eps_u = _linear_root(eps_k, s_k, t_u - targets[i], delta, fd[i])
        points.append(_ideal_point(freqs[i], ideal[i], func, lossy, "contacting", eps_u, s_k))
    return _finish("contacting", fx0, points, solver, t_start, extras)


def air_gap(
    fixture: Fixture,
    empty: Any,
    loaded: Any,
    *,
    thickness: Any = None,
    spacing: Any = None,
    dissipation: Any = None,
    conductance: Any = None,
    empty_dissipation: Any = None,
    frequency: Any = None,
    stray: Any = None,
    dimensions: Mapping[str, Any] | None = None,
    fem: bool = True,
    rtol: float = 1e-6,
) -> Extraction:
    """Permittivity and loss from readings with and without the specimen between
    electrodes at a fixed spacing (non-contacting, air-gap method).

    Parameters
    ----------
    fixture : Fixture
        ``guarded_cell`` (with ``air_gap`` > 0) or ``parallel_discs`` /
        ``parallel_strips`` with a specimen thinner than the gap, resting on the low
        electrode. The medium is the gap's fluid (air: eps_r 1 or
        :func:`capbench.materials.air_eps_r`).
    empty, loaded : readings
        Capacitance without and with the specimen (one empty reading for all, or one
        per loaded reading).
    thickness, spacing : lengths, optional
        Specimen thickness and electrode spacing; default the fixture's.
    dissipation, conductance : optional
        Loss of the loaded readings; ``empty_dissipation`` that of the empty ones.
    stray : capacitance, optional
        Subtracted from both readings.

    Notes
    -----
    Closed form: :func:`ideal_air_gap` with complex readings. FEM form: the ratio of the
    readings is kept, as in the closed form (it cancels the bridge's scale error and most
    of the area's uncertainty): C_FEM(eps*) = C_FEM,empty C*/C0*, with the empty cell
    solved with the specimen region at the medium's permittivity.
    """
    t_start = time.perf_counter()
    _require(fixture, _SOLID_KINDS, "air_gap")
    geo = _geometry(fixture)
    loads = _readings(loaded, "capacitance", "loaded reading", "capacitance")
    n = len(loads)
    empties = _broadcast(
        _readings(empty, "capacitance", "empty reading", "capacitance"), n, "empty reading"
    )
    freqs = _frequencies(frequency, n)
    d = _loss(dissipation, conductance, loads, freqs, "loaded reading")
    d0 = _loss(empty_dissipation, None, empties, freqs, "empty reading")
    cs = _stray_value(stray)
    t = (
        geo["thickness"]
        if thickness is None
        else si_value(thickness, "length", "thickness", limits="length")
    )
    s = (
        geo["spacing"]
        if spacing is None
        else si_value(spacing, "length", "spacing", limits="length")
    )
    for c0, c in zip(empties, loads, strict=True):
        _check_air_gap(c0 - cs, c - cs, t, s)
    dims = {"thickness": t, "spacing": s, **_dimensions(dimensions, fixture)}
    nominal = _nominal_dims(dims)
    medium = _medium_of(fixture)
    eps_gap = medium.real
    lossy = d is not None

    def func(a: dict) -> Any:
        cstar = (a["C"] - a["Cs"]) * (1 - 1j * a["D"])
        c0star = (a["C0"] - a["Cs"]) * (1 - 1j * a["D0"])
        return _air_gap_formula(c0star, cstar, a["t"], a["s"], eps_gap)

    ideal = []
    for i in range(n):
        args = {
            "C": loads[i],
            "C0": empties[i],
            "Cs": cs,
            "t": t,
            "s": s,
            "D": d[i] if lossy else 0.0,
            "D0": d0[i] if d0 is not None else 0.0,
        }
        ideal.append((args, _linearised(func, args)))
    fx0 = _build(fixture, nominal)
    if not fem:
        points = _points(freqs, ideal, func, lossy, "air gap")
        return _finish("air gap", fx0, points, None, t_start)

    solver = _Fem(rtol)
    role, erole = "with specimen", "empty cell"
    se = solver.solve(fx0, medium, medium, erole)
    ratios = []
    targets = []
    for i in range(n):
        cstar = _complex_reading(loads[i] - cs, d[i] if lossy else None)
        c0star = _complex_reading(empties[i] - cs, d0[i] if d0 is not None else None)
        ratios.append(cstar / c0star)
        targets.append(se.C * ratios[-1].nominal)
    roots = _roots(solver, fx0, targets, ideal[0][1][0], medium, role, "air gap")
    eps_ref = complex(float(np.mean([e.real for e, _ in roots])), 0.0)
    # the empty cell does not depend on the specimen's thickness
    empty_fd = _fd_sum(solver, fixture, dims, medium, medium, medium, erole, skip=("thickness",))
    fd = [_fd_sum(solver, fixture, dims, e, eps_ref, medium, role) for e, _ in roots]
    delta = solver.error_input(role)
    delta_e = solver.error_input(erole)
    ce_u = _Cx.of(se.C) * (1 + delta_e) + empty_fd
    points = []
    for i, (eps_k, s_k) in enumerate(roots):
        t_u = ce_u * ratios[i]
        eps_u = _linear_root(eps_k, s_k, t_u - targets[i], delta, fd[i])
        points.append(_ideal_point(freqs[i], ideal[i], func, lossy, "air gap", eps_u, s_k))
    extras = (("empty_capacitance_fem", Q_(se.C.real * 1e12, "pF")),)
    return _finish("air gap", fx0, points, solver, t_start, extras)


def micrometer(
    fixture: Fixture,
    *,
    thickness: Any,
    loaded_spacing: Any,
    empty_spacing: Any,
    capacitance: Any = None,
    empty_capacitance: Any = None,
    dissipation: Any = None,
    empty_dissipation: Any = None,
    frequency: Any = None,
    dimensions: Mapping[str, Any] | None = None,
    fem: bool = True,
    rtol: float = 1e-6,
) -> Extraction:
    """Permittivity (and loss) by the micrometer-electrode re-set (equal-capacitance)
    method.

    The specimen (thickness t) is read between the electrodes at spacing s1 (s1 = t when
    they touch it); then it is removed and the electrodes are closed to spacing s2 where
    the reading is the same. One set of values, or one per frequency.

    Parameters
    ----------
    fixture : Fixture
        ``parallel_discs`` (or ``guarded_cell`` / ``parallel_strips``) with a specimen.
    thickness, loaded_spacing, empty_spacing : lengths
        t, s1 and s2 (micrometer readings, with their uncertainty; share an input
        between s1 and s2 for the micrometer's common zero error).
    capacitance, empty_capacitance : optional
        The readings C1 (loaded) and C2 (empty, re-set); their difference corrects an
        imperfect re-set. Needed with ``dissipation``.
    dissipation, empty_dissipation : optional
        D1 and D2: the specimen's loss from their difference.

    Notes
    -----
    Closed form: :func:`ideal_micrometer`, eps* = t / (t - s1 + s2 C2*/C1*). FEM form:
    C_FEM(loaded at s1, eps*) = C_FEM(empty at s2) + (C1* - C2*): the two
    configurations have different fringing, which the closed form ignores.

    Electrodes resting on the specimen: where s1 and t differ by at most ``FILM_TIE``
    (0.2 %) of s1, or by a film thinner than ``FILM_MESH_MIN`` of the electrode radius
    and at most ``FILM_MODEL_MAX`` of s1 (an air film too thin to mesh, or two
    micrometers that disagree), the touching cell (s1 = t) is solved and the film added
    to first order, with the model's error (:func:`film_model_half_width`, 0.35 t / a of
    the film's effect, 1 % to 50 %) in the budget; the
    thickness's and the spacing's sensitivities split dC/dL by the series model.
    A thicker film is meshed as it is (slower: a 50 um film takes tens of seconds).
    """
    t_start = time.perf_counter()
    _require(fixture, _SOLID_KINDS, "micrometer")
    t = si_value(thickness, "length", "thickness", limits="length")
    s1_list = _readings(loaded_spacing, "length", "loaded spacing", "length")
    s2_list = _readings(empty_spacing, "length", "empty spacing", "length")
    n = max(len(s1_list), len(s2_list))
    c1 = (
        None
        if capacitance is None
        else _readings(capacitance, "capacitance", "capacitance", "capacitance")
    )
    if c1 is not None:
        n = max(n, len(c1))
    s1_list = _broadcast(s1_list, n, "loaded spacing")
    s2_list = _broadcast(s2_list, n, "empty spacing")
    c1 = _broadcast(c1, n, "capacitance")
    c2 = (
        c1
        if empty_capacitance is None
        else _broadcast(
            _readings(empty_capacitance, "capacitance", "empty capacitance", "capacitance"),
            n,
            "empty capacitance",
        )
    )
    if c1 is None and empty_capacitance is not None:
        raise InputError("micrometer: empty_capacitance needs capacitance (the loaded reading)")
    freqs = _frequencies(frequency, n)
    if (dissipation is not None or empty_dissipation is not None) and c1 is None:
        raise InputError(
            "micrometer: the dissipation factors need the capacitance readings (the loss is "
            "C'' = D C)"
        )
    d1 = _loss(dissipation, None, c1 or [1.0] * n, freqs, "loaded reading")
    d2 = _loss(empty_dissipation, None, c2 or [1.0] * n, freqs, "empty reading")
    lossy = d1 is not None
    if not lossy and d2 is not None:
        raise InputError("micrometer: empty_dissipation needs dissipation (the loaded D)")

    def ratio_of(i: int) -> Any:
        if c1 is None:
            return 1.0
        r1 = _complex_reading(c1[i], d1[i] if lossy else None)
        r2 = _complex_reading(c2[i], d2[i] if d2 is not None else None)
        return r2 / r1

    for i in range(n):
        r = ratio_of(i)
        _check_micrometer(t, s1_list[i], s2_list[i], r.nominal if isinstance(r, _Cx) else r)

    def func(a: dict) -> Any:
        r = (a["C2"] * (1 - 1j * a["D2"])) / (a["C1"] * (1 - 1j * a["D1"]))
        return _micrometer_formula(a["t"], a["s1"], a["s2"], r)

    ideal = []
    for i in range(n):
        args = {
            "t": t,
            "s1": s1_list[i],
            "s2": s2_list[i],
            "C1": c1[i] if c1 else 1.0,
            "C2": c2[i] if c2 else 1.0,
            "D1": d1[i] if lossy else 0.0,
            "D2": d2[i] if d2 is not None else 0.0,
        }
        ideal.append((args, _linearised(func, args)))
    extra_dims = _dimensions(dimensions, fixture)
    base_dims = {"thickness": t, "spacing": s1_list[0], **extra_dims}
    radius = _electrode_radius(fixture)
    fx_show = _build(fixture, _nominal_dims(base_dims), tie=_touching(base_dims, radius))
    if not fem:
        points = _points(freqs, ideal, func, lossy, "micrometer")
        return _finish("micrometer re-set", fx_show, points, None, t_start)

    solver = _Fem(rtol)
    role, erole = "with specimen", "empty cell"
    medium = _medium_of(fixture)
    roots = []
    empties = []
    for i in range(n):
        ldims = {"thickness": t, "spacing": s1_list[i], **extra_dims}
        edims = {"spacing": s2_list[i], **extra_dims}
        touching = _touching(ldims, radius)
        fx_l = solver.fixture(fixture, _nominal_dims(ldims), tie=touching)
        fx_e = solver.fixture(fixture, _nominal_dims(edims), tie=True)
        se = solver.solve(fx_e, medium, medium, erole)
        if c1 is not None:
            dstar = _complex_reading(c1[i], d1[i] if lossy else None) - _complex_reading(
                c2[i], d2[i] if d2 is not None else None
            )
        else:
            dstar = _Cx(0.0)
        target = se.C + dstar.nominal
        start = ideal[i][1][0] if not roots else roots[-1][0]
        eps_k, s_k = _newton(solver, fx_l, target, start, medium, role)
        film = _n(s1_list[i]) - _n(t)
        film_c = 0j
        if touching and film:
            eps_k, s_k = _through_film(solver, fixture, ldims, target, eps_k, film, medium, role)
            film_c = target - s_k.C  # the film's share of the reading, first order
        _gain_warning(eps_k, "micrometer")
        roots.append((eps_k, s_k))
        half = film_model_half_width(_n(t), radius)
        empties.append((touching, se, ldims, edims, dstar - _film_model(film_c, half), target))
    eps_ref = complex(float(np.mean([e.real for e, _ in roots])), 0.0)
    terms = []
    for i in range(n):
        touching, se, ldims, edims, dstar, target = empties[i]
        efd = _fd_sum(solver, fixture, edims, medium, medium, medium, erole, tie=True)
        loaded_fd = _touching_fd if touching else _fd_sum
        lfd = loaded_fd(solver, fixture, ldims, roots[i][0], eps_ref, medium, role)
        terms.append((se, efd, lfd, dstar, target))
    delta = solver.error_input(role)
    delta_e = solver.error_input(erole)
    points = []
    for i, (eps_k, s_k) in enumerate(roots):
        se, efd, lfd, dstar, target = terms[i]
        t_u = _Cx.of(se.C) * (1 + delta_e) + efd + dstar
        eps_u = _linear_root(eps_k, s_k, t_u - target, delta, lfd)
        points.append(_ideal_point(freqs[i], ideal[i], func, lossy, "micrometer", eps_u, s_k))
    return _finish("micrometer re-set", fx_show, points, solver, t_start)


def two_fluid(
    fixture: Fixture,
    fluid1: Any,
    fluid1_with_specimen: Any,
    fluid2: Any,
    fluid2_with_specimen: Any,
    *,
    eps_fluid1: Any,
    eps_fluid2: Any,
    dissipation1: Any = None,
    dissipation2: Any = None,
    frequency: Any = None,
    dimensions: Mapping[str, Any] | None = None,
    fem: bool = True,
    rtol: float = 1e-6,
) -> Extraction:
    """Permittivity by the two-fluid method: the cell read in two fluids of known
    permittivity, each without and with the specimen.

    Parameters
    ----------
    fixture : Fixture
        ``parallel_discs``, ``guarded_cell`` or ``parallel_strips`` with the specimen
        resting on the low electrode; its spacing is the cell's. The fluid is the
        medium around the specimen (the fixture is solved with medium_eps_r = the
        fluid's eps_r).
    fluid1, fluid1_with_specimen, fluid2, fluid2_with_specimen : readings
        One value each, or one per frequency.
    eps_fluid1, eps_fluid2 : permittivities
        Known fluid permittivities, e.g. ``materials.reference_eps_r("cyclohexane", T)``.
    dissipation1, dissipation2 : optional
        D of the with-specimen readings in each fluid (the fluids taken as lossless).

    Returns
    -------
    Extraction
        ``extras``: ``thickness`` (fitted specimen thickness per point, FEM form) or
        ``fraction`` (t/s, closed form), ``stray`` (stray capacitance per point).

    Notes
    -----
    Closed form: :func:`ideal_two_fluid` (the derivation is there), in complex
    arithmetic for the loss.

    FEM form: the fluid-only readings fix the scale k and stray C_p exactly as in the
    closed form, C_i = k e_i V + C_p with V the solved vacuum capacitance of the cell
    (scaling every permittivity by e scales the capacitance by e). The specimen's eps_r
    and thickness t then solve the two real equations
    k C_FEM(e_i, eps_r; t) = C_is - C_p (i = 1, 2) by Newton's method (dC/deps_r from the
    solve, dC/dt by central differences of rebuilt fixtures), so that, as in the closed
    form, neither the thickness nor the stray capacitance need be known. With loss,
    eps* = eps' - j eps'' and t then solve the four real equations
    Re, Im [k C_FEM(e_i, eps*; t)] = Re, Im [C_is (1 - j D_is)] - C_p by Gauss-Newton in
    complex arithmetic (exact for the discrete model; fitting only the real parts to
    C(eps') would leave an error of second order in eps'').
    """
    t_start = time.perf_counter()
    _require(fixture, _SOLID_KINDS, "two_fluid")
    r1 = _readings(fluid1_with_specimen, "capacitance", "fluid 1 with specimen", "capacitance")
    n = len(r1)
    c1 = _broadcast(_readings(fluid1, "capacitance", "fluid 1", "capacitance"), n, "fluid 1")
    c2 = _broadcast(_readings(fluid2, "capacitance", "fluid 2", "capacitance"), n, "fluid 2")
    r2 = _broadcast(
        _readings(fluid2_with_specimen, "capacitance", "fluid 2 with specimen", "capacitance"),
        n,
        "fluid 2 with specimen",
    )
    e1 = si_value(eps_fluid1, "dimensionless", "eps_r of fluid 1", limits="eps_r")
    e2 = si_value(eps_fluid2, "dimensionless", "eps_r of fluid 2", limits="eps_r")
    freqs = _frequencies(frequency, n)
    d1 = _loss(dissipation1, None, r1, freqs, "fluid 1 with specimen")
    d2 = _loss(dissipation2, None, r2, freqs, "fluid 2 with specimen")
    if (d1 is None) != (d2 is None):
        raise InputError("two_fluid: give both dissipation1 and dissipation2, or neither")
    lossy = d1 is not None
    ideal = []
    for i in range(n):
        _check_two_fluid_inputs(c1[i], c2[i], e1, e2)
        args = {
            "C1": c1[i],
            "C1s": r1[i],
            "C2": c2[i],
            "C2s": r2[i],
            "e1": e1,
            "e2": e2,
            "D1": d1[i] if lossy else 0.0,
            "D2": d2[i] if lossy else 0.0,
        }
        _two_fluid_nominal(c1[i], r1[i], c2[i], r2[i], e1, e2)
        ideal.append((args, _linearised(_two_fluid_model, args)))
    geo = _geometry(fixture)
    extra_dims = _dimensions(dimensions, fixture)
    spacing = geo["spacing"]
    if not fem:
        points = _points(freqs, ideal, _two_fluid_model, lossy, "two fluid")
        fractions = tuple(
            _two_fluid_formula(c1[i], r1[i], c2[i], r2[i], e1, e2)[1] for i in range(n)
        )
        strays = tuple(
            Q_(_two_fluid_formula(c1[i], r1[i], c2[i], r2[i], e1, e2)[3] * 1e12, "pF")
            for i in range(n)
        )
        return _finish(
            "two fluid",
            fixture,
            points,
            None,
            t_start,
            (("fraction", fractions), ("stray", strays)),
        )

    solver = _Fem(rtol)
    points = []
    thicknesses = []
    strays = []
    fx_last = fixture
    for i in range(n):
        res = _two_fluid_fem(
            solver,
            fixture,
            spacing,
            geo["thickness"],
            extra_dims,
            c1[i],
            r1[i],
            c2[i],
            r2[i],
            e1,
            e2,
            d1[i] if lossy else None,
            d2[i] if lossy else None,
            ideal[i][1][0],
            _two_fluid_nominal(c1[i], r1[i], c2[i], r2[i], e1, e2)[1],
        )
        eps_u, t_u, cp_u, fx_last, s_last = res
        points.append(
            _ideal_point(freqs[i], ideal[i], _two_fluid_model, lossy, "two fluid", eps_u, s_last)
        )
        thicknesses.append(Q_(t_u * 1e3, "mm"))
        strays.append(Q_(cp_u * 1e12, "pF"))
    return _finish(
        "two fluid",
        fx_last,
        points,
        solver,
        t_start,
        (("thickness", tuple(thicknesses)), ("stray", tuple(strays))),
    )


def _two_fluid_model(a: dict) -> Any:
    c1s = a["C1s"] * (1 - 1j * a["D1"])
    c2s = a["C2s"] * (1 - 1j * a["D2"])
    return _two_fluid_formula(a["C1"], c1s, a["C2"], c2s, a["e1"], a["e2"])[0]


def _two_fluid_fem(
    solver,
    fixture,
    spacing,
    thickness0,
    extra_dims,
    c1,
    r1,
    c2,
    r2,
    e1,
    e2,
    d1,
    d2,
    start,
    fraction,
):
    """Newton in (eps_r, t) for one set of four readings; returns eps* (as _Cx of
    ufloats), t and C_p (ufloats), the last fixture and its solve in fluid 1."""
    role, vrole = "with specimen", "fluid only"
    e = (_n(e1), _n(e2))
    spec_c = (_n(r1), _n(r2))
    extra0 = _nominal_dims(extra_dims)
    # start from the fixture's thickness (a measured value, usually close); the closed
    # form's fraction is biased by the fringing field the FEM corrects
    t = thickness0 if thickness0 is not None else min(max(fraction, 0.05), 1.0) * spacing
    t_min = 0.02 * spacing
    eps = min(max(complex(start).real, EPS_MIN), EPS_MAX)
    jac_t: tuple[float, float] | None = None
    t_jac = 0.0

    def state(eps_, t_):
        dims0 = {"thickness": t_, "spacing": spacing, **extra0}
        fx = solver.fixture(fixture, dims0)
        v = solver.solve(fx, 1.0, 1.0, vrole)
        k = (_n(c2) - _n(c1)) / ((e[1] - e[0]) * v.C.real)
        cp = _n(c1) - k * e[0] * v.C.real
        sols = [solver.solve(fx, eps_, e[j], role) for j in range(2)]
        res = np.array([k * sols[j].C.real - (spec_c[j] - cp) for j in range(2)])
        return fx, v, k, cp, sols, res

    def t_column(eps_, t_):
        dims0 = {"thickness": t_, "spacing": spacing, **extra0}
        return tuple(
            solver.gradient(fixture, dims0, "thickness", eps_, e[j], role)[0].real for j in range(2)
        )

    for _ in range(_MAX_NEWTON):
        fx, v, k, _cp, sols, res = state(eps, t)
        if jac_t is None or abs(t - t_jac) > 0.01 * t:
            jac_t, t_jac = t_column(eps, t), t
        J = np.array([[k * sols[j].S.real, k * jac_t[j]] for j in range(2)])
        step = np.linalg.solve(J, -res)
        # stop when the next Newton step is negligible; the linearisation below adds it
        if abs(step[0]) <= solver.tol * eps and abs(step[1]) <= solver.tol * t:
            break
        eps = min(max(eps + step[0], EPS_MIN), EPS_MAX)
        t = min(max(t + step[1], t_min), spacing)
    else:
        raise ExtractionError(
            f"two-fluid: no consistent (eps_r, thickness) after {_MAX_NEWTON} solves; the "
            "four readings may not fit the fixture (check the spacing and the fluids)",
        )
    if not (EPS_MIN <= eps <= EPS_MAX):
        raise ExtractionError(
            f"two-fluid: eps_r = {_shown(eps)}, outside the valid range {EPS_MIN:g} to {EPS_MAX:g}",
            eps_r=eps,
            valid=(EPS_MIN, EPS_MAX),
        )
    if d1 is not None:
        return _two_fluid_lossy(
            solver, fixture, spacing, extra_dims, extra0, (c1, r1, c2, r2, e1, e2, d1, d2), eps, t
        )
    # linearised propagation: theta = theta0 - J^-1 R(theta0, x)
    dims0 = {"thickness": t, "spacing": spacing, **extra0}
    delta = solver.error_input(role)
    delta_v = solver.error_input(vrole)
    v_u = v.C.real * (1 + delta_v)
    for name, val in extra_dims.items():
        if _s(val):
            dC, _dS, _dSm = solver.gradient(fixture, dims0, name, 1.0, 1.0, vrole)
            v_u = v_u + dC.real * (val - extra0[name])
    k_u = (c2 - c1) / ((e2 - e1) * v_u)
    cp_u = c1 - k_u * e1 * v_u
    r_u = []
    for j, (ej, rj) in enumerate(((e1, r1), (e2, r2))):
        cfem = sols[j].C.real * (1 + delta) + sols[j].S_medium.real * (ej - e[j])
        for name, val in extra_dims.items():
            if _s(val):
                dC, _dS, _dSm = solver.gradient(fixture, dims0, name, eps, e[j], role)
                cfem = cfem + dC.real * (val - extra0[name])
        r_u.append(k_u * cfem - (rj - cp_u))
    Jinv = np.linalg.inv(J)
    eps_re = eps - (Jinv[0, 0] * r_u[0] + Jinv[0, 1] * r_u[1])
    t_u = t - (Jinv[1, 0] * r_u[0] + Jinv[1, 1] * r_u[1])
    return _Cx(eps_re, 0.0), t_u, cp_u, fx, sols[0]


def _two_fluid_lossy(solver, fixture, spacing, extra_dims, extra0, readings, eps_re, t):
    """The two-fluid fit with loss, in complex arithmetic: eps* = eps' - j eps'' and the
    thickness t by Gauss-Newton on the four real equations
    Re, Im [k C_FEM(eps*, e_i; t) - (C_is (1 - j D_is) - C_p)] = 0 (i = 1, 2), the fluids
    and the stray lossless. Fitting only the real parts to C(eps') left out the term of
    second order in eps'' (eps' was 2.3e-4 off at eps' 11.4, tan delta 0.017); here the
    fit is exact for the discrete model. Starts from the lossless solution (eps_re, t)."""
    c1, r1, c2, r2, e1, e2, d1, d2 = readings
    role, vrole = "with specimen", "fluid only"
    e = (_n(e1), _n(e2))
    target = [_n(r1) * (1 - 1j * _n(d1)), _n(r2) * (1 - 1j * _n(d2))]
    t_min = 0.02 * spacing

    def dims(t_):
        return {"thickness": t_, "spacing": spacing, **extra0}

    def state(eps_, t_):
        fx = solver.fixture(fixture, dims(t_))
        v = solver.solve(fx, 1.0, 1.0, vrole)
        k = (_n(c2) - _n(c1)) / ((e[1] - e[0]) * v.C.real)
        cp = _n(c1) - k * e[0] * v.C.real
        sols = [solver.solve(fx, eps_, e[j], role) for j in range(2)]
        res = [k * sols[j].C - (target[j] - cp) for j in range(2)]
        return fx, v, k, sols, np.array([x for r in res for x in (r.real, r.imag)])

    cache: dict[str, Any] = {}

    def jacobian(eps_, t_, k, sols):
        # the thickness column costs two re-meshed solves per fluid: kept while t and eps*
        # move less than 1 % (Gauss-Newton converges with an approximate column); the
        # linearisation below recomputes it at the solution
        old = cache.get("t")
        if old is None or abs(t_ - old[0]) > 0.01 * t_ or abs(eps_ - old[1]) > 0.01 * abs(eps_):
            cols = [
                solver.gradient(fixture, dims(t_), "thickness", eps_, e[j], role)[0]
                for j in range(2)
            ]
            cache["t"] = (t_, eps_, cols)
        cols = cache["t"][2]
        rows = []
        for j in range(2):
            dct = cols[j]
            S = sols[j].S
            # columns: eps', eps'' (eps* = eps' - j eps''), t
            for part in (lambda z: z.real, lambda z: z.imag):
                rows.append([part(k * S), part(-1j * k * S), part(k * dct)])
        return np.array(rows)

    # the first-order loss (sensitivity ratio) as the start
    fx, v, k, sols, res = state(complex(eps_re), t)
    s_ = [sols[j].S.real for j in range(2)]
    loss0 = (_n(r1) * _n(d1) * s_[0] + _n(r2) * _n(d2) * s_[1]) / (k * (s_[0] ** 2 + s_[1] ** 2))
    theta = np.array([eps_re, loss0, t])
    for _ in range(_MAX_NEWTON):
        eps_c = complex(theta[0], -theta[1])
        fx, v, k, sols, res = state(eps_c, theta[2])
        J = jacobian(eps_c, theta[2], k, sols)
        step = np.linalg.lstsq(J, -res, rcond=None)[0]
        if (
            abs(step[0]) <= solver.tol * theta[0]
            and abs(step[1]) <= solver.tol * max(theta[0], 1.0)
            and abs(step[2]) <= solver.tol * theta[2]
        ):
            break
        theta = theta + step
        theta[0] = min(max(theta[0], EPS_MIN), EPS_MAX)
        theta[2] = min(max(theta[2], t_min), spacing)
    else:
        raise ExtractionError(
            f"two-fluid: no consistent (eps*, thickness) after {_MAX_NEWTON} solves; the "
            "four readings and their dissipation factors may not fit the fixture",
        )
    # linearised propagation: theta = theta0 - J^+ R(theta0, x), with the Jacobian's
    # thickness column computed at the solution itself
    eps_c = complex(theta[0], -theta[1])
    t = float(theta[2])
    cache.clear()
    J = jacobian(eps_c, t, k, sols)
    delta = solver.error_input(role)
    delta_v = solver.error_input(vrole)
    v_u = v.C.real * (1 + delta_v)
    for name, val in extra_dims.items():
        if _s(val):
            dC, _dS, _dSm = solver.gradient(fixture, dims(t), name, 1.0, 1.0, vrole)
            v_u = v_u + dC.real * (val - extra0[name])
    k_u = (c2 - c1) / ((e2 - e1) * v_u)
    cp_u = c1 - k_u * e1 * v_u
    r_u = []
    for j, (ej, rj, dj) in enumerate(((e1, r1, d1), (e2, r2, d2))):
        c_re = sols[j].C.real * (1 + delta) + sols[j].S_medium.real * (ej - e[j])
        c_im = sols[j].C.imag * (1 + delta) + sols[j].S_medium.imag * (ej - e[j])
        for name, val in extra_dims.items():
            if _s(val):
                dC, _dS, _dSm = solver.gradient(fixture, dims(t), name, eps_c, e[j], role)
                c_re = c_re + dC.real * (val - extra0[name])
                c_im = c_im + dC.imag * (val - extra0[name])
        r_u.append(k_u * c_re - (rj - cp_u))
        r_u.append(k_u * c_im + rj * dj)
    P = np.linalg.pinv(J)
    eps_u = theta[0] - sum(P[0, m] * r_u[m] for m in range(4))
    loss_u = theta[1] - sum(P[1, m] * r_u[m] for m in range(4))
    t_u = t - sum(P[2, m] * r_u[m] for m in range(4))
    return _Cx(eps_u, -loss_u), t_u, cp_u, fx, sols[0]


def liquid(
    cell: Fixture,
    empty: Any,
    filled: Any,
    *,
    dissipation: Any = None,
    conductance: Any = None,
    empty_dissipation: Any = None,
    frequency: Any = None,
    empty_eps_r: Any = None,
    stray: Any = None,
    dimensions: Mapping[str, Any] | None = None,
    fem: bool = True,
    rtol: float = 1e-6,
) -> Extraction:
    """Permittivity and loss of a liquid from empty-cell and filled-cell readings.

    Parameters
    ----------
    cell : Fixture
        ``coaxial_cell`` (guarded or not) or ``parallel_discs`` / ``guarded_cell`` whose
        specimen region is the liquid.
    empty, filled : readings
        One empty reading for all, or one per filled reading.
    empty_eps_r : optional
        Permittivity of what fills the empty cell (e.g. ``materials.air_eps_r()``);
        default the cell's medium.
    stray : capacitance, optional
        Closed form only: a known stray (lead) capacitance in parallel with the cell.

    Returns
    -------
    Extraction
        ``extras``: ``cell_constant`` (the solved vacuum capacitance of the cell, pF),
        ``stray`` (FEM form: the stray capacitance estimated per point as the empty
        reading minus the solved empty cell, with uncertainty).

    Notes
    -----
    Closed form: :func:`ideal_liquid`. FEM form: the stray capacitance is what the
    empty reading has beyond the solved empty cell, C_p = C_e - C_FEM(e_0); the liquid's
    eps* then solves C_FEM(eps*) = C_f* - C_p (the stray taken as lossless).
    """
    t_start = time.perf_counter()
    _require(cell, _LIQUID_KINDS, "liquid")
    fills = _readings(filled, "capacitance", "filled reading", "capacitance")
    n = len(fills)
    empties = _broadcast(
        _readings(empty, "capacitance", "empty reading", "capacitance"), n, "empty reading"
    )
    freqs = _frequencies(frequency, n)
    d = _loss(dissipation, conductance, fills, freqs, "filled reading")
    d0 = _loss(empty_dissipation, None, empties, freqs, "empty reading")
    medium = _medium_of(cell)
    e0 = (
        medium.real
        if empty_eps_r is None
        else si_value(empty_eps_r, "dimensionless", "empty_eps_r", limits="eps_r")
    )
    cs = _stray_value(stray) if not fem else 0.0
    if fem and stray is not None:
        raise InputError(
            "liquid: with fem=True the stray capacitance is estimated from the empty reading; "
            "give stray only with fem=False"
        )
    lossy = d is not None
    for ce, cf in zip(empties, fills, strict=True):
        _check_liquid(ce, cf, cs)

    def func(a: dict) -> Any:
        cf = a["Cf"] * (1 - 1j * a["D"])
        ce = a["Ce"] * (1 - 1j * a["D0"])
        return _liquid_formula(ce, cf, a["e0"], a["Cs"])

    ideal = []
    for i in range(n):
        args = {
            "Cf": fills[i],
            "Ce": empties[i],
            "e0": e0,
            "Cs": cs,
            "D": d[i] if lossy else 0.0,
            "D0": d0[i] if d0 is not None else 0.0,
        }
        ideal.append((args, _linearised(func, args)))
    dims = _dimensions(dimensions, cell)
    fx0 = _build(cell, _nominal_dims(dims))
    if not fem:
        points = _points(freqs, ideal, func, lossy, "liquid")
        return _finish("liquid cell", fx0, points, None, t_start)

    solver = _Fem(rtol)
    role, erole = "filled cell", "empty cell"
    vac = solver.solve(fx0, 1.0, medium, erole)
    se = solver.solve(fx0, _n(e0), medium, erole)
    empty_fd = _fd_sum(solver, cell, dims, _n(e0), _n(e0), medium, erole)
    strays = []
    targets = []
    for i in range(n):
        cp = _n(empties[i]) - se.C.real
        strays.append(cp)
        targets.append(_complex_reading(_n(fills[i]), _n(d[i]) if lossy else None).nominal - cp)
    roots = _roots(solver, fx0, targets, ideal[0][1][0], medium, role, "liquid")
    eps_ref = complex(float(np.mean([e.real for e, _ in roots])), 0.0)
    fd = [_fd_sum(solver, cell, dims, e, eps_ref, medium, role) for e, _ in roots]
    delta = solver.error_input(role)
    delta_e = solver.error_input(erole)
    ce_fem_u = se.C.real * (1 + delta_e) + se.S.real * (e0 - _n(e0)) + empty_fd.re
    points = []
    stray_u = []
    for i, (eps_k, s_k) in enumerate(roots):
        cp_u = empties[i] - ce_fem_u
        stray_u.append(Q_(cp_u * 1e12, "pF"))
        t_u = _complex_reading(fills[i], d[i] if lossy else None) - cp_u
        eps_u = _linear_root(eps_k, s_k, t_u - targets[i], delta, fd[i])
        points.append(_ideal_point(freqs[i], ideal[i], func, lossy, "liquid", eps_u, s_k))
        if strays[i] < -1e-3 * _n(empties[i]):
            warnings.warn(
                f"liquid: the empty reading ({_n(empties[i]) * 1e12:.6g} pF) is below the "
                f"solved empty cell ({se.C.real * 1e12:.6g} pF): a negative stray "
                "capacitance; check the cell's dimensions",
                CapbenchWarning,
                stacklevel=2,
            )
    extras = (("cell_constant", Q_(vac.C.real * 1e12, "pF")), ("stray", tuple(stray_u)))
    return _finish("liquid cell", fx0, points, solver, t_start, extras)
