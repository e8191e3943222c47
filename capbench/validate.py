"""The one validation layer at capbench's edges: physical ranges and their messages.

Every public entry point (builders, extraction, file readers, CLI, page) converts user
values through these functions. Each refusal names the value, its unit and the valid
range; suspicious but legal values raise a :class:`CapbenchWarning`.

Limits (documented in README, "Valid input"; :data:`LIMITS` is the one source):

========================  =====================  =========================================
quantity                  valid range            why
========================  =====================  =========================================
length                    1 um to 10 m           bench fixtures; below 1 um the field is
                                                 not that of bulk electrodes
relative permittivity     1 to 1e4               static dielectrics (vacuum to ceramics)
loss tangent / D          0 to 10                beyond 10 the reading is a conductance
capacitance               1 aF to 1 uF           bridges and LCR meters
frequency                 1 mHz to 1 GHz         quasi-static range of bench fixtures; a
                                                 warning when the fixture exceeds 1/20 of
                                                 the wavelength
temperature               -200 degC to 500 degC  dielectric test cells
conductance               0 to 1 S               parallel loss of a specimen
area                      1 um^2 to 100 m^2      the squares of the length limits
time budget of a solve    0 s to 86400 s         a solve that needs more than a day is a
                                                 sign of a wrong geometry
unknowns of a solve       100 to 1e8             beyond 1e8 the factorisation needs more
                                                 memory than a workstation has
lead inductance           0 to 100 uH            test leads and fixture wiring (a few
                                                 hundred nH per metre)
lead resistance           0 to 100 ohm           leads and contacts; more is a fault
========================  =====================  =========================================

Suspicious but legal input (each a :class:`CapbenchWarning`): a gap over 1000 times
smaller than its electrode (:mod:`capbench.rigs`), a fixture larger than 1/20 of the
wavelength in its dielectric (:func:`quasi_static`), a dissipation factor above
:data:`SUSPICIOUS_D` (:func:`dissipation`), a permittivity above
:data:`SUSPICIOUS_EPS_R` (:func:`permittivity_result`), thickness readings more than
10 % apart (:mod:`capbench.files`).
"""

from __future__ import annotations

import math
import warnings
from typing import Any

from .errors import CapbenchWarning, InputError, SolverError  # the warning: re-exported
from .options import SOLVERS  # re-exported: the choices validate checks
from .units import to_si

LIMITS: dict[str, tuple[float, float, str]] = {
    "length": (1e-6, 10.0, "m"),
    "eps_r": (1.0, 1e4, ""),
    "loss": (0.0, 10.0, ""),
    "capacitance": (1e-18, 1e-6, "F"),
    "frequency": (1e-3, 1e9, "Hz"),
    "temperature": (-200.0, 500.0, "degC"),
    "conductance": (0.0, 1.0, "S"),
    "area": (1e-12, 100.0, "m^2"),
    "time": (0.0, 86400.0, "s"),
    "dofs": (100.0, 1e8, ""),
    "inductance": (0.0, 1e-4, "H"),
    "resistance": (0.0, 100.0, "ohm"),
}

_KIND = {
    "length": "length",
    "eps_r": "dimensionless",
    "loss": "dimensionless",
    "capacitance": "capacitance",
    "frequency": "frequency",
    "temperature": "temperature",
    "conductance": "conductance",
    "area": "area",
    "time": "time",
    "dofs": "dimensionless",
    "inductance": "inductance",
    "resistance": "resistance",
}

_SHOWN = {
    "length": lambda v: f"{v * 1e3:.6g} mm",
    "capacitance": lambda v: f"{v * 1e12:.6g} pF",
    "frequency": lambda v: f"{v:.6g} Hz",
    "temperature": lambda v: f"{v:.6g} degC",
    "conductance": lambda v: f"{v:.6g} S",
    "eps_r": lambda v: f"{v:.6g}",
    "loss": lambda v: f"{v:.6g}",
    "area": lambda v: f"{v * 1e6:.6g} mm^2",
    "time": lambda v: f"{v:.6g} s",
    "dofs": lambda v: f"{v:.6g}",
    "inductance": lambda v: f"{v * 1e9:.6g} nH",
    "resistance": lambda v: f"{v:.6g} ohm",
}

_RANGE_TEXT = {
    "length": "1 um to 10 m",
    "capacitance": "1 aF to 1 uF",
    "frequency": "1 mHz to 1 GHz",
    "temperature": "-200 degC to 500 degC",
    "conductance": "0 S to 1 S",
    "eps_r": "1 to 10000",
    "loss": "0 to 10",
    "area": "1 um^2 to 100 m^2",
    "time": "0 s to 86400 s (one day)",
    "dofs": "100 to 100000000",
    "inductance": "0 nH to 100 uH",
    "resistance": "0 ohm to 100 ohm",
}

#: the fixture may span at most this fraction of the wavelength in its dielectric before
#: the quasi-static (electrostatic) field stops describing it (common practice, no source)
QUASI_STATIC_FRACTION = 1.0 / 20.0
#: speed of light in vacuum, m/s (exact, SI)
C_LIGHT = 299_792_458.0
#: a dissipation factor above this is legal but unusual for an insulator: a conductance
#: typed as D, or a percentage typed as a number (common practice, no source)
SUSPICIOUS_D = 0.1
#: a permittivity above this is legal (ferroelectric ceramics) but more often a thickness
#: or area typed in the wrong unit (common practice, no source)
SUSPICIOUS_EPS_R = 5000.0


def check(value: Any, what: str, name: str, *, positive: bool = True) -> float:
    """Convert ``value`` to capbench's unit for ``what`` and check it is in range.

    ``what`` is a key of :data:`LIMITS`. ``positive``: zero is refused even where the
    range starts at 0 (it has no meaning for a range that starts below 0, such as the
    temperature's).

    Raises
    ------
    InputError
        Naming the value with its unit and the valid range.
    """
    v = to_si(value, _KIND[what], name)
    lo, hi, _unit = LIMITS[what]
    # ``positive`` once refused every temperature at or below 0 degC, under a message that
    # named the range -200 degC to 500 degC; it only sharpens a range that starts at 0
    if not math.isfinite(v) or v < lo or v > hi or (positive and lo == 0 and v <= 0):
        raise InputError(
            f"{name} = {_SHOWN[what](v)} is outside the valid range {_RANGE_TEXT[what]}"
            + (" (and must be > 0)" if positive and lo == 0 else ""),
            name=name,
            value=v,
            unit=_unit,
            valid=(lo, hi),
        )
    return v


def length(value: Any, name: str) -> float:
    """A length in metres, 1 um to 10 m."""
    return check(value, "length", name)


def optional_length(value: Any, name: str) -> float | None:
    return None if value is None else length(value, name)


def eps_r(value: Any, name: str) -> complex:
    """A relative permittivity: a number, or a complex eps' - j eps'' (eps' in 1..1e4)."""
    if isinstance(value, complex):
        re = check(value.real, "eps_r", f"{name} (real part)")
        if not math.isfinite(value.imag) or value.imag > 0 or -value.imag > 10 * re:
            raise InputError(
                f"{name} = {value!r}: the imaginary part must be between -10 eps' and 0 "
                "(eps_r = eps' - j eps'')",
                name=name,
                value=value,
            )
        return complex(re, value.imag)
    return check(value, "eps_r", name)


def check_or_zero(value: Any, what: str, name: str) -> float:
    """Like :func:`check`, with 0 also valid: an optional correction left out (a stray or
    lead capacitance of 0 pF)."""
    v = to_si(value, _KIND[what], name)
    if v == 0:
        return 0.0
    lo, hi, unit = LIMITS[what]
    if not math.isfinite(v) or v < lo or v > hi:
        raise InputError(
            f"{name} = {_SHOWN[what](v)} is outside the valid range: 0, or {_RANGE_TEXT[what]}",
            name=name,
            value=v,
            unit=unit,
            valid=(lo, hi),
        )
    return v


def solver_budget(time_budget: Any, max_dofs: Any) -> tuple[float, int]:
    """A solve's time budget (s) and its largest number of unknowns, range-checked.

    A budget of NaN, infinity or 0 would let a solve run without end or stop it before it
    starts; a count that is not a whole number is refused rather than rounded.
    """
    t = check(time_budget, "time", "time_budget")
    if isinstance(max_dofs, bool) or not isinstance(max_dofs, (int, float)):
        raise InputError(
            f"max_dofs = {max_dofs!r} is not a whole number; valid: {_RANGE_TEXT['dofs']}",
            name="max_dofs",
            value=max_dofs,
            valid=LIMITS["dofs"][:2],
        )
    n = check(max_dofs, "dofs", "max_dofs")
    if n != int(n):
        raise InputError(
            f"max_dofs = {max_dofs!r} is not a whole number; valid: {_RANGE_TEXT['dofs']}",
            name="max_dofs",
            value=max_dofs,
            valid=LIMITS["dofs"][:2],
        )
    return t, int(n)


def solver(value: Any) -> str:
    """A solver choice, one of SOLVERS."""
    if value not in SOLVERS:
        raise SolverError(
            f"solver = {value!r}; valid: {', '.join(map(repr, SOLVERS))}", value=value
        )
    return value


def quasi_static(frequency: float, size: float, eps_r: float = 1.0, where: str = "") -> bool:
    """Warn when a fixture is too large for the electrostatic field at ``frequency``.

    ``size``: the fixture's largest dimension (m); ``eps_r``: the largest real
    permittivity in it (the wavelength is shortest there). Returns True when it warned.

    Notes
    -----
    lambda = c / (f sqrt(eps_r)); the warning fires when size > lambda / 20
    (:data:`QUASI_STATIC_FRACTION`). Beyond that the phase of the field varies across
    the fixture, so the electrostatic field, and the correction computed from it, no
    longer describe it (common practice, no source).
    """
    f, d, e = float(frequency), float(size), max(float(eps_r), 1.0)
    if not (math.isfinite(f) and f > 0 and math.isfinite(d) and d > 0 and math.isfinite(e)):
        return False
    wavelength = C_LIGHT / (f * math.sqrt(e))
    if d <= QUASI_STATIC_FRACTION * wavelength:
        return False
    at = f" ({where})" if where else ""
    warn(
        f"frequency {f:.6g} Hz{at}: the fixture ({d * 1e3:.4g} mm across) spans more than "
        f"1/20 of the wavelength in its dielectric ({wavelength * 1e3:.4g} mm at eps_r "
        f"{e:.4g}); the field is no longer quasi-static and the result is not trustworthy "
        f"above about {QUASI_STATIC_FRACTION * C_LIGHT / (d * math.sqrt(e)):.3g} Hz"
    )
    return True


def dissipation(value: float, name: str) -> bool:
    """Warn when a dissipation factor is legal (0 to 10) but above :data:`SUSPICIOUS_D`."""
    if math.isfinite(value) and value > SUSPICIOUS_D:
        warn(
            f"{name} = {value:.6g} is above {SUSPICIOUS_D:g}, unusual for an insulator; "
            "check it is D (not a percentage or a conductance)"
        )
        return True
    return False


def permittivity_result(value: float, name: str) -> bool:
    """Warn when a permittivity found from readings lies near the upper limit 1e4."""
    if math.isfinite(value) and value > SUSPICIOUS_EPS_R:
        warn(
            f"{name} = {value:.6g} is above {SUSPICIOUS_EPS_R:g}, near the limit "
            f"{LIMITS['eps_r'][1]:g}; check the thickness and area units (a length in the "
            "wrong unit moves eps_r by a factor of 1000)"
        )
        return True
    return False


def warn(message: str) -> None:
    """Issue a :class:`CapbenchWarning` (a legal but suspicious input)."""
    warnings.warn(message, CapbenchWarning, stacklevel=3)
