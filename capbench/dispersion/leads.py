"""What the leads add to a reading, removed before extraction.

At the high end of a bench's range the test leads and the fixture's wiring are no
longer a bare connection: their series inductance L and resistance R (read with the
leads shorted at the fixture) sit between the instrument and the specimen, and their
stray admittance G_o + j w C_o (read with the leads open at the fixture) sits across
it. The instrument reads

    Z_m = R + j w L + 1 / (Y_x + G_o + j w C_o)

for a specimen admittance Y_x = G_x + j w C_x, so

    Y_x = 1 / (Z_m - R - j w L) - (G_o + j w C_o)

(the open-short compensation of impedance meters; common practice, no source). A
reading is a parallel capacitance C_p and dissipation factor D, Y_m = w C_p (D + j).
Without the correction the apparent capacitance of a lossless C behind L is
C / (1 - w^2 L C): it rises toward the series resonance at w^2 L C = 1, by 0.1 % where
w^2 L C = 1e-3, which is where :class:`LeadCorrection` warns.

The correction is written in real arithmetic so that uncertain readings (ufloats) and
uncertain lead values stay correlated: L, R, C_o and G_o are one input each, shared by
every frequency, and appear in the extraction's budget under their own names.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..errors import ExtractionError, InputError

#: w^2 L C above this: the warning that the apparent capacitance is rising toward the
#: leads' series resonance (0.1 % of the reading; common practice, no source)
RESONANCE_WARNING = 1e-3

_FIELDS = (
    # field, LIMITS kind, unit shown, budget name
    ("inductance", "inductance", "nH", "lead inductance (short reading)"),
    ("resistance", "resistance", "ohm", "lead resistance (short reading)"),
    ("open_capacitance", "capacitance", "pF", "open capacitance of the leads (open reading)"),
    ("open_conductance", "conductance", "nS", "open conductance of the leads (open reading)"),
)
_SCALE = {"nH": 1e-9, "ohm": 1.0, "pF": 1e-12, "nS": 1e-9}
_SI = {"nH": "H", "ohm": "ohm", "pF": "F", "nS": "S"}


def check_value(value: Any, kind: str, name: str) -> float:
    """One lead value in SI, range-checked: 0 is always valid (nothing to correct)."""
    from .. import validate

    if validate.LIMITS[kind][0] == 0:
        return validate.check(value, kind, name, positive=False)
    return validate.check_or_zero(value, kind, name)


@dataclass(frozen=True)
class LeadCorrection:
    """The leads' series impedance R + j w L and stray admittance G_o + j w C_o, with
    standard uncertainties (SI: H, ohm, F, S), taken as independent of frequency.

    Make one with :meth:`from_values` (quantities or strings with units, range-checked);
    correct readings with :meth:`correct`.
    """

    inductance: float = 0.0
    resistance: float = 0.0
    open_capacitance: float = 0.0
    open_conductance: float = 0.0
    u_inductance: float = 0.0
    u_resistance: float = 0.0
    u_open_capacitance: float = 0.0
    u_open_conductance: float = 0.0

    @classmethod
    def from_values(cls, **values: Any) -> LeadCorrection:
        """From ``inductance``, ``resistance``, ``open_capacitance``, ``open_conductance``
        and their standard uncertainties ``u_inductance``, ... (each a quantity, a string
        with a unit, or an SI number; left out: 0). Values are range-checked
        (:data:`capbench.validate.LIMITS`: 0 to 100 uH, 0 to 100 ohm, 0 or 1 aF to 1 uF,
        0 to 1 S); an uncertainty must lie in the same range."""
        known = {f for f, *_ in _FIELDS} | {f"u_{f}" for f, *_ in _FIELDS}
        for key in values:
            if key not in known:
                raise InputError(
                    f"lead correction: {key!r} is not one of its values; valid: "
                    f"{', '.join(sorted(known))}",
                    value=key,
                )
        out = {}
        for name, kind, _unit, _label in _FIELDS:
            for key in (name, f"u_{name}"):
                v = values.get(key, 0.0)
                what = key.replace("_", " ").replace("u ", "uncertainty of the ", 1)
                out[key] = check_value(v, kind, f"lead {what}")
        return cls(**out)

    @property
    def active(self) -> bool:
        """Whether anything is corrected."""
        return any(getattr(self, f) for f, *_ in _FIELDS)

    def inputs(self) -> dict[str, Any]:
        """The four values as inputs for the budget: an uncertain input (normal, type B)
        where an uncertainty is given, else the plain value. Make them once per
        measurement so every frequency shares them."""
        from ..uncertainty import type_b

        out: dict[str, Any] = {}
        for name, _kind, unit, label in _FIELDS:
            v, u = getattr(self, name), getattr(self, f"u_{name}")
            if u > 0:
                s = _SCALE[unit]
                q = type_b(f"{v / s!r} {unit}", u=f"{u / s!r} {unit}", name=label)
                out[name] = q.to(_SI[unit]).magnitude
            else:
                out[name] = v
        return out

    def resonance_ratio(self, frequency: float, capacitance: float) -> float:
        """w^2 L C for a reading of ``capacitance`` (F) at ``frequency`` (Hz)."""
        w = 2 * math.pi * frequency
        return w * w * self.inductance * capacitance

    def correct(
        self,
        frequency: float,
        capacitance: Any,
        dissipation: Any = None,
        *,
        inputs: dict[str, Any] | None = None,
        where: str = "",
    ) -> tuple[Any, Any]:
        """The specimen's C_p and D from a reading through the leads.

        Parameters
        ----------
        frequency : float
            Hz.
        capacitance : float, ufloat or pint Quantity of either
            The reading's parallel capacitance (F when a bare number).
        dissipation : float or ufloat, optional
            The reading's dissipation factor; None: taken as 0 and no corrected D is
            returned (a reading without D).
        inputs : dict, optional
            :meth:`inputs`, made once for all the readings of one measurement (default:
            made here).
        where : str
            Named in the warning and the refusal (e.g. "at 1 MHz").

        Returns
        -------
        (capacitance, dissipation)
            The corrected values, the capacitance in the form given (a Quantity in the
            same unit), the dissipation None when none was given.

        Raises
        ------
        ExtractionError
            When no positive capacitance remains after the correction (a reading below
            the open reading). A reading above the series resonance is inductive and
            reads as a negative capacitance, which the readings' range refuses first.
        """
        import pint

        p = self.inputs() if inputs is None else inputs
        unit = None
        c = capacitance
        if isinstance(c, pint.Quantity):
            unit = c.units
            c = c.to("F").magnitude
        c_nominal = float(getattr(c, "nominal_value", c))
        ratio = self.resonance_ratio(frequency, c_nominal)
        if ratio > RESONANCE_WARNING:
            from ..units import frequency_text
            from ..validate import warn

            f_res = 1 / (2 * math.pi * math.sqrt(self.inductance * c_nominal))
            warn(
                f"{where or frequency_text(frequency)}: w^2 L C = {ratio:.2g} for the leads' "
                f"{self.inductance * 1e9:.4g} nH: the apparent capacitance is about "
                f"{100 * ratio / (1 - ratio) if ratio < 1 else math.inf:.2g} % above the "
                f"specimen's, rising toward the series resonance near "
                f"{frequency_text(f_res)}; the correction removes it, and its uncertainty "
                "grows with it"
            )
        w = 2 * math.pi * frequency
        d = 0.0 if dissipation is None else dissipation
        g, b = w * c * d, w * c
        den = g * g + b * b
        zr = g / den - p["resistance"]
        zi = -b / den - w * p["inductance"]
        den2 = zr * zr + zi * zi
        yr = zr / den2 - p["open_conductance"]
        yi = -zi / den2 - w * p["open_capacitance"]
        if float(getattr(yi, "nominal_value", yi)) <= 0:
            from ..units import frequency_text

            raise ExtractionError(
                f"{where or frequency_text(frequency)}: the reading of "
                f"{c_nominal * 1e12:.6g} pF leaves no positive capacitance once the leads' "
                f"open capacitance of {self.open_capacitance * 1e12:.4g} pF is removed; "
                "valid: a reading above the open reading (check both and their units)",
                frequency=frequency,
            )
        c_x = yi / w
        d_x = None if dissipation is None else yr / yi
        if unit is not None:
            from ..units import Q_

            c_x = Q_(c_x, "F").to(unit)
        return c_x, d_x

    def text(self) -> str:
        """The correction in one line, with the standard uncertainties."""
        parts = []
        for name, _kind, unit, label in _FIELDS:
            v, u = getattr(self, name), getattr(self, f"u_{name}")
            if v or u:
                s = _SCALE[unit]
                parts.append(f"{label.split(' (')[0]} {v / s:.4g} {unit} (u = {u / s:.2g} {unit})")
        return "leads: " + ("; ".join(parts) if parts else "no correction")
