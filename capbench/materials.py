"""Reference permittivities: reference liquids for the two-fluid method and the liquid
cell, and reference solids for checking a rig.

Each entry names its source. Where the source gives a formula (water, air) capbench
evaluates it; elsewhere it holds the value at a reference temperature and, where known,
a temperature coefficient. The standard uncertainty attached to each value is
capbench's own assignment (it says so in ``u_note``): a width that covers the spread of
the handbook values and the purity of bench-grade material, not a figure from the
source. Values marked "from memory" were not read in the source while writing this
module; check them against the source before relying on them at that level.

Temperatures may be quantities, strings ("23 degC") or numbers in degC, and may carry an
uncertainty (a ufloat): the returned permittivity is then correlated with the
temperature, so two fluids read at one thermometer stay correlated in a budget.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from uncertainties.core import AffineScalarFunc

from .errors import InputError
from .uncertainty import InputVariable, Source, si_value


def water_eps_r(temperature: Any) -> Any:
    """Static relative permittivity of water, 0 to 100 degC.

    Notes
    -----
    eps = 87.740 - 0.40008 t + 9.398e-4 t^2 - 1.410e-6 t^3, t in degC
    (80.10 at 20 degC, 78.30 at 25 degC).

    References
    ----------
    C. G. Malmberg and A. A. Maryott, "Dielectric constant of water from 0 to 100 C",
    J. Res. Natl. Bur. Stand. 56, 1-8 (1956).
    """
    t = si_value(temperature, "temperature", "water temperature", limits="temperature")
    tn = t.n if isinstance(t, AffineScalarFunc) else t
    if not 0.0 <= tn <= 100.0:
        raise InputError(
            f"water temperature = {tn:.6g} degC is outside the range of the Malmberg and "
            "Maryott formula, 0 degC to 100 degC",
            value=tn,
            valid=(0.0, 100.0),
        )
    return 87.740 - 0.40008 * t + 9.398e-4 * t**2 - 1.410e-6 * t**3


def saturation_vapour_pressure(temperature: Any) -> Any:
    """Saturation vapour pressure of water over a plane water surface, hPa.

    Notes
    -----
    e_w = 6.112 exp(17.62 t / (243.12 + t)) hPa, t in degC (-45 to 60 degC), the Magnus
    form recommended by the WMO (Guide to Instruments and Methods of Observation, annex
    4.B; coefficients from memory).
    """
    t = si_value(temperature, "temperature", "air temperature", limits="temperature")
    from uncertainties import umath

    expo = 17.62 * t / (243.12 + t)
    return 6.112 * (umath.exp(expo) if isinstance(expo, AffineScalarFunc) else math.exp(expo))


def air_eps_r(
    temperature: Any = "20 degC", pressure: Any = "101.325 kPa", relative_humidity: Any = 0.0
) -> Any:
    """Relative permittivity of moist air at radio frequencies.

    Parameters
    ----------
    temperature : quantity or degC
    pressure : quantity or Pa
        Total pressure.
    relative_humidity : float
        0 to 1 (a fraction, not per cent).

    Notes
    -----
    Refractivity N = (77.6 / T)(p + 4810 e / T), T in K, p and e (partial pressure of
    water vapour) in hPa; eps = (1 + 1e-6 N)^2. Dry air at 20 degC and 101.325 kPa:
    1.000536. The formula's own accuracy is about 0.5 % of N (from memory).

    References
    ----------
    E. K. Smith and S. Weintraub, "The constants in the equation for atmospheric
    refractive index at radio frequencies", Proc. IRE 41, 1035-1037 (1953).
    """
    t = si_value(temperature, "temperature", "air temperature", limits="temperature")
    p = si_value(pressure, "pressure", "air pressure")
    rh = si_value(relative_humidity, "dimensionless", "relative humidity")
    pn = p.n if isinstance(p, AffineScalarFunc) else p
    rhn = rh.n if isinstance(rh, AffineScalarFunc) else rh
    if not 1e3 <= pn <= 2e5:
        raise InputError(
            f"air pressure = {pn:.6g} Pa is outside 1 kPa to 200 kPa", value=pn, valid=(1e3, 2e5)
        )
    if not 0.0 <= rhn <= 1.0:
        raise InputError(
            f"relative humidity = {rhn:.6g} must be a fraction 0 to 1 (not per cent)",
            value=rhn,
            valid=(0.0, 1.0),
        )
    T = t + 273.15
    e = rh * saturation_vapour_pressure(t)  # hPa
    N = 77.6 / T * (p / 100.0 + 4810.0 * e / T)
    return (1.0 + 1e-6 * N) ** 2


@dataclass(frozen=True)
class Material:
    """A reference material.

    ``eps_r`` at ``temperature`` (degC); ``coefficient``: d eps_r / dT per K where
    known; ``u``: standard uncertainty assigned by capbench (see ``u_note``);
    ``formula``: a function of temperature (degC) used instead of the coefficient.
    """

    key: str
    name: str
    eps_r: float
    temperature: float
    coefficient: float | None
    u: float
    source: str
    phase: str = "liquid"
    frequency: str = "static to 1 MHz"
    note: str = ""
    u_note: str = "assigned by capbench, not from the source"
    formula: Callable[[Any], Any] | None = None

    @property
    def hazard(self) -> str:
        """The caution for handling this material ('' where none is listed): several
        reference liquids are flammable or toxic (capbench.cautions.FLUIDS)."""
        from .cautions import for_fluids

        return for_fluids([self.key])

    def at(self, temperature: Any = None) -> Any:
        """The permittivity at ``temperature`` (default: the reference temperature), as
        a value with uncertainty: the value's own standard uncertainty is an input named
        after the material; an uncertain temperature propagates through the formula or
        the temperature coefficient.

        Raises
        ------
        InputError
            When the temperature differs from the reference by more than 0.5 K and no
            temperature coefficient is known.
        """
        if temperature is None:
            t: Any = self.temperature
        else:
            t = si_value(
                temperature, "temperature", f"{self.name} temperature", limits="temperature"
            )
        tn = t.n if isinstance(t, AffineScalarFunc) else t
        if self.formula is not None:
            value = self.formula(t)
        elif self.coefficient is not None:
            value = self.eps_r + self.coefficient * (t - self.temperature)
        elif abs(tn - self.temperature) > 0.5:
            raise InputError(
                f"{self.name}: no temperature coefficient is known to capbench; its "
                f"permittivity is {self.eps_r} at {self.temperature:g} degC only (asked "
                f"for {tn:.6g} degC). Give the fluid's permittivity at your temperature "
                "directly",
                name=self.key,
                value=tn,
            )
        else:
            value = self.eps_r
        src = Source(
            f"eps_r of {self.name} (reference value)",
            "",
            "normal",
            "B",
            note=f"{self.source}; u {self.u_note}",
        )
        return value + InputVariable(0.0, self.u, src)


def _air(t: Any) -> Any:
    return air_eps_r(t, "101.325 kPa", 0.0)


_TABLE = (
    Material(
        "water",
        "water",
        80.10,
        20.0,
        None,
        0.05,
        "C. G. Malmberg and A. A. Maryott, J. Res. NBS 56, 1 (1956), fitted formula",
        frequency="static (below about 100 MHz)",
        formula=water_eps_r,
    ),
    Material(
        "air",
        "dry air at 101.325 kPa",
        1.000536,
        20.0,
        None,
        3e-6,
        "E. K. Smith and S. Weintraub, Proc. IRE 41, 1035 (1953), refractivity formula",
        phase="gas",
        note="for other pressures and humidity use air_eps_r()",
        u_note="about 0.5 % of (eps_r - 1), the formula's accuracy (from memory)",
        formula=_air,
    ),
    Material(
        "cyclohexane",
        "cyclohexane",
        2.0243,
        20.0,
        -0.0016,
        0.0005,
        "CRC Handbook of Chemistry and Physics, 'Permittivity (dielectric constant) of "
        "liquids' (from memory)",
    ),
    Material(
        "benzene",
        "benzene",
        2.2825,
        20.0,
        None,
        0.0005,
        "CRC Handbook of Chemistry and Physics, 'Permittivity (dielectric constant) of "
        "liquids' (from memory)",
    ),
    Material(
        "n-hexane",
        "n-hexane",
        1.8865,
        20.0,
        None,
        0.0005,
        "CRC Handbook of Chemistry and Physics, 'Permittivity (dielectric constant) of "
        "liquids' (from memory)",
    ),
    Material(
        "ptfe",
        "PTFE",
        2.10,
        23.0,
        None,
        0.02,
        "common handbook value, about 2.1 from 100 Hz to 1 MHz (from memory)",
        phase="solid",
        frequency="100 Hz to 1 MHz",
        note="grade and density move it by about 0.02",
    ),
    Material(
        "fused silica",
        "fused silica",
        3.805,
        23.0,
        None,
        0.025 / math.sqrt(3),
        "handbook range 3.78 to 3.83 (from memory)",
        phase="solid",
        frequency="1 kHz to 1 GHz",
        u_note="the handbook range taken as a rectangular distribution",
    ),
    Material(
        "sapphire perpendicular",
        "sapphire, field perpendicular to the c axis",
        9.3899,
        22.0,
        None,
        0.01,
        "J. Krupka et al., Meas. Sci. Technol. 10, 387 (1999), near 295 K (from memory, "
        "not read in the paper while writing this entry)",
        phase="solid",
        frequency="microwave (static value within 0.1 %)",
    ),
    Material(
        "sapphire parallel",
        "sapphire, field parallel to the c axis",
        11.586,
        22.0,
        None,
        0.01,
        "J. Krupka et al., Meas. Sci. Technol. 10, 387 (1999), near 295 K (from memory, "
        "not read in the paper while writing this entry)",
        phase="solid",
        frequency="microwave (static value within 0.1 %)",
    ),
)

#: the reference materials by key
MATERIALS: dict[str, Material] = {m.key: m for m in _TABLE}


def material(name: str) -> Material:
    """The reference material called ``name`` (case and surrounding space ignored)."""
    key = str(name).strip().lower()
    if key not in MATERIALS:
        raise InputError(f"no reference material {name!r}; valid: {sorted(MATERIALS)}", value=name)
    return MATERIALS[key]


def reference_eps_r(name: str, temperature: Any = None) -> Any:
    """Permittivity of a reference material at ``temperature``, with uncertainty.

    A shortcut for ``material(name).at(temperature)``.
    """
    return material(name).at(temperature)


def table() -> str:
    """The reference materials as text."""
    lines = [
        f"{'material':<44} {'eps_r':>9} {'at':>8} {'d eps/dT':>10} {'u':>8}  source",
    ]
    for m in _TABLE:
        coef = (
            "formula"
            if m.formula
            else ("-" if m.coefficient is None else f"{m.coefficient:+.4f}/K")
        )
        lines.append(
            f"{m.name:<44} {m.eps_r:>9.6g} {m.temperature:>6g} C {coef:>10} {m.u:>8.2g}  {m.source}"
        )
    return "\n".join(lines)
