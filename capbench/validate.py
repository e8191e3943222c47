"""The one validation layer at capbench's edges: physical ranges and their messages.

Every public entry point (builders, extraction, file readers, CLI, page) converts user
values through these functions. Each refusal names the value, its unit and the valid
range; suspicious but legal values raise a :class:`CapbenchWarning`.

Limits (documented in README, "Valid input"):

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
========================  =====================  =========================================
"""

from __future__ import annotations

import math
import warnings
from typing import Any

from .errors import InputError
from .units import to_si

LIMITS: dict[str, tuple[float, float, str]] = {
    "length": (1e-6, 10.0, "m"),
    "eps_r": (1.0, 1e4, ""),
    "loss": (0.0, 10.0, ""),
    "capacitance": (1e-18, 1e-6, "F"),
    "frequency": (1e-3, 1e9, "Hz"),
    "temperature": (-200.0, 500.0, "degC"),
    "conductance": (0.0, 1.0, "S"),
}

_KIND = {
    "length": "length",
    "eps_r": "dimensionless",
    "loss": "dimensionless",
    "capacitance": "capacitance",
    "frequency": "frequency",
    "temperature": "temperature",
    "conductance": "conductance",
}

_SHOWN = {
    "length": lambda v: f"{v * 1e3:.6g} mm",
    "capacitance": lambda v: f"{v * 1e12:.6g} pF",
    "frequency": lambda v: f"{v:.6g} Hz",
    "temperature": lambda v: f"{v:.6g} degC",
    "conductance": lambda v: f"{v:.6g} S",
    "eps_r": lambda v: f"{v:.6g}",
    "loss": lambda v: f"{v:.6g}",
}

_RANGE_TEXT = {
    "length": "1 um to 10 m",
    "capacitance": "1 aF to 1 uF",
    "frequency": "1 mHz to 1 GHz",
    "temperature": "-200 degC to 500 degC",
    "conductance": "0 S to 1 S",
    "eps_r": "1 to 10000",
    "loss": "0 to 10",
}


class CapbenchWarning(UserWarning):
    """A legal but suspicious input (a gap a thousand times smaller than its electrode)."""


def check(value: Any, what: str, name: str, *, positive: bool = True) -> float:
    """Convert ``value`` to capbench's unit for ``what`` and check it is in range.

    ``what`` is a key of :data:`LIMITS`. ``positive``: zero is refused even where the
    range starts at 0.
    """
    v = to_si(value, _KIND[what], name)
    lo, hi, _unit = LIMITS[what]
    if not math.isfinite(v) or v < lo or v > hi or (positive and v <= 0):
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


def warn(message: str) -> None:
    warnings.warn(message, CapbenchWarning, stacklevel=3)
