"""One pint registry for the whole package, and conversion of user values to SI floats.

Public functions accept a pint Quantity, a string with a unit (``"25 mm"``, ``"4.7 pF"``)
or a plain number, which is taken in the SI unit of the quantity (metres, farads, ...).
Inside the package every value is an SI float; quantities reappear only at the edges.
"""

from __future__ import annotations

import math
import re
from numbers import Real
from typing import Any

import pint

from .errors import InputError

ureg = pint.UnitRegistry()
ureg.formatter.default_format = "~P"
pint.set_application_registry(ureg)  # quantities pickle into worker processes
Q_ = ureg.Quantity

#: a decimal number; written so that no two parts can match the same digits (the form
#: "\d+\.?\d*" backtracks quadratically on a long run of digits that fails to match)
NUMBER_PATTERN = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_NUMBER_UNIT = re.compile(rf"^({NUMBER_PATTERN})\s*(.*)$", re.DOTALL)
# what a unit may be made of before pint sees it: names, "*", "/", brackets, small
# exponents and a "1" over something ("1/s"). pint evaluates number arithmetic in unit
# text: "9**9**9 m" kept it computing a number of 370 million digits, and a chain of
# exponents on a unit ("mm**9**9**9") did the same, so each exponent must follow a name
# or a bracket, and the exponent each name ends up with is bounded before pint is called
_UNIT_TOKEN = re.compile(
    r"\s*(?:(?P<name>[^\W\d]\w*|%|\u00b0\w*)|(?P<exp>(?:\*\*|\^)\s*[-+]?\d{1,2}(?:\.\d{1,3})?)"
    r"|(?P<op>[*/])|(?P<open>\()|(?P<close>\))|(?P<one>1(?=\s*/)))"
)
MAX_UNIT_CHARS = 64
#: the largest power any unit name may reach ("mm**3" is fine, "(mm**4)**4" is not)
MAX_UNIT_POWER = 12
_MAX_BRACKETS = 3

#: Vacuum permittivity, F/m (CODATA 2022).
EPS0 = 8.8541878188e-12

# kind of quantity -> the unit a plain number is taken in (SI, but degC for temperature)
_BASE_UNIT = {
    "length": "m",
    "capacitance": "F",
    "capacitance per length": "F/m",
    "frequency": "Hz",
    "conductance": "S",
    "voltage": "V",
    "temperature": "degC",
    "pressure": "Pa",
    "dimensionless": "",
    "area": "m**2",
    "time": "s",
    "inductance": "H",
    "resistance": "ohm",
}


# an example of each kind, for messages
_EXAMPLE = {
    "length": "25 mm",
    "capacitance": "4.7 pF",
    "frequency": "1 kHz",
    "temperature": "23 degC",
    "conductance": "1 nS",
    "voltage": "100 V",
    "pressure": "101.325 kPa",
    "area": "500 mm**2",
    "time": "60 s",
    "inductance": "0.2 uH",
    "resistance": "30 mohm",
}


def echo(value: Any) -> str:
    """A value as a message should echo it: text as typed (quoted), a quantity as its
    number and unit ('1e+308 km', not pint's ``<Quantity(1e+308, 'kilometer')>``)."""
    if isinstance(value, pint.Quantity):
        try:
            return repr(f"{value.magnitude:g} {value.units:~P}".strip())
        except (TypeError, ValueError):
            return repr(f"{value.magnitude} {value.units:~P}".strip())
    return repr(value)


def _plain_unit(unit: str) -> bool:
    """Whether ``unit`` is names joined by * and /, in at most a few brackets, each name
    raised to at most :data:`MAX_UNIT_POWER` (exponents follow a name or a bracket, never
    another exponent). The work is linear in the length, which is bounded first."""
    if len(unit) > MAX_UNIT_CHARS:
        return False
    pos = 0
    prev = None  # kind of the previous token
    # the powers of the names in each open bracket, so an exponent on ")" can scale them
    groups: list[list[float]] = [[]]
    last: list[float] | None = None  # the powers the next exponent applies to
    while pos < len(unit):
        m = _UNIT_TOKEN.match(unit, pos)
        if m is None or m.end() == pos:
            if unit[pos:].strip() == "":
                break
            return False
        kind = m.lastgroup
        pos = m.end()
        if kind == "exp":
            if prev not in ("name", "close") or last is None:
                return False
            power = float(m.group("exp").lstrip("*^ \t"))
            for i in range(len(last)):
                last[i] *= power
            if any(abs(p) > MAX_UNIT_POWER for p in last):
                return False
            last = None
        elif kind == "name":
            groups[-1].append(1.0)
            last = _Slot(groups[-1], len(groups[-1]) - 1)
        elif kind == "open":
            if len(groups) > _MAX_BRACKETS:
                return False
            groups.append([])
            last = None
        elif kind == "close":
            if len(groups) == 1:
                return False
            inner = groups.pop()
            start = len(groups[-1])
            groups[-1].extend(inner)
            last = _Slot(groups[-1], start, len(groups[-1]))
        else:
            last = None
        prev = kind
    return len(groups) == 1


class _Slot:
    """A window onto some of a list's items, so an exponent can scale them in place."""

    def __init__(self, items: list[float], start: int, stop: int | None = None):
        self.items, self.start = items, start
        self.stop = start + 1 if stop is None else stop

    def __len__(self) -> int:
        return self.stop - self.start

    def __getitem__(self, i: int) -> float:
        return self.items[self.start + i]

    def __setitem__(self, i: int, value: float) -> None:
        self.items[self.start + i] = value

    def __iter__(self):
        return iter(self.items[self.start : self.stop])


def _float(value: Real, name: str) -> float:
    """A plain number as a float, refused by name when beyond the float range."""
    try:
        return float(value)
    except OverflowError:  # an integer beyond the float range
        raise InputError(
            f"{name} = {echo(value)} is too large to be a number (at most about 1.8e308)",
            name=name,
            value=value,
        ) from None


def base_unit(kind: str) -> str:
    """The unit in which capbench holds quantities of ``kind`` internally."""
    return _BASE_UNIT[kind]


def parse_quantity(value: Any, name: str = "value") -> pint.Quantity:
    """Turn a Quantity, a string with unit, or a number into a Quantity of this registry."""
    if isinstance(value, pint.Quantity):
        if value._REGISTRY is not ureg:  # a quantity from another registry
            return Q_(value.magnitude, str(value.units))
        return value
    if isinstance(value, str):
        text = value.strip().replace("\u00b5", "u").replace("\u03bc", "u")
        if not text:
            raise InputError(
                f"{name} is empty; give a number with a unit, e.g. '25 mm'", name=name, value=value
            )
        match = _NUMBER_UNIT.match(text)
        try:
            if match is None:
                raise ValueError("no leading number")
            number, unit = match.group(1), match.group(2).strip()
            if not _plain_unit(unit):
                raise ValueError(
                    f"{unit[:MAX_UNIT_CHARS]!r} is not a unit capbench reads (names joined by "
                    f"* and /, small whole exponents, at most {MAX_UNIT_CHARS} characters)"
                )
            q = Q_(float(number), unit or "")
        except Exception as exc:  # pint raises several unrelated types here
            raise InputError(
                f"{name} = {echo(value)} is not a number with a unit "
                f"(e.g. '25 mm', '4.7 pF'): {exc}",
                name=name,
                value=value,
            ) from None
        return q
    if isinstance(value, Real) and not isinstance(value, bool):
        return Q_(_float(value, name), "")
    raise InputError(
        f"{name} = {echo(value)} has type {type(value).__name__}; give a number, "
        "a string such as '25 mm', or a pint Quantity",
        name=name,
        value=value,
    )


def to_si(value: Any, kind: str, name: str = "value") -> float:
    """Convert ``value`` to a float in capbench's internal unit for ``kind``.

    ``kind`` is one of "length", "capacitance", "capacitance per length", "frequency",
    "conductance", "voltage", "temperature" (degC), "pressure", "dimensionless", "area",
    "time". A plain
    number (or a string holding only a number) is taken in that unit. Raises
    :class:`InputError` naming the value and the expected unit when the dimension is
    wrong or the number is not finite.
    """
    unit = _BASE_UNIT[kind]
    if isinstance(value, Real) and not isinstance(value, bool):
        # a plain number is already in the base unit: no pint (a quantity costs ~20 us,
        # which a 100,000-row readings table pays several times a row)
        number = _float(value, name)
        if not math.isfinite(number):
            raise InputError(
                f"{name} = {echo(value)} is not a finite number", name=name, value=value
            )
        return number
    q = parse_quantity(value, name)
    # only a bare number is taken in the base unit; "5 %" or "2 mm/m" are dimensionless
    # but carry a unit, and must convert (0.05), never pass as 5 m or 5 F
    try:
        if q.units == ureg.dimensionless and not isinstance(value, pint.Quantity):
            number = float(q.magnitude)
        else:
            number = float(q.to(unit).magnitude)
    except pint.DimensionalityError:
        shown = unit or "a plain number"
        raise InputError(
            f"{name} = {echo(value)} is not a {kind}; give it in {shown} or another "
            f"{kind} unit (got {q.units:~P})",
            name=name,
            value=value,
            expected_unit=unit,
        ) from None
    except (TypeError, ValueError, OverflowError):
        # a quantity holding an array, a complex number or an uncertain value
        raise InputError(
            f"{name} = {echo(value)} is not a single real number with a unit; give one value, "
            f"e.g. {_EXAMPLE.get(kind, '1')!r}",
            name=name,
            value=value,
        ) from None
    if not math.isfinite(number):
        raise InputError(f"{name} = {echo(value)} is not a finite number", name=name, value=value)
    return number


def length(value: Any, name: str = "length") -> float:
    """A length in metres."""
    return to_si(value, "length", name)


def quantity(magnitude: Any, unit: str) -> pint.Quantity:
    """An output quantity in this package's registry."""
    return Q_(magnitude, unit)


def fmt(q: pint.Quantity | float, unit: str | None = None, digits: int = 6) -> str:
    """Format a quantity with ``digits`` significant digits, in ``unit`` if given."""
    if isinstance(q, pint.Quantity):
        if unit:
            q = q.to(unit)
        return f"{q.magnitude:.{digits}g} {q.units:~P}"
    return f"{q:.{digits}g}" + (f" {unit}" if unit else "")


def frequency_text(hz: float) -> str:
    """A frequency as the trade writes it: "100 Hz", "1 kHz", "2.5 MHz" (never
    "1e+06 Hz"); six significant digits at most."""
    for unit, scale in (("GHz", 1e9), ("MHz", 1e6), ("kHz", 1e3)):
        if abs(hz) >= scale:
            return f"{hz / scale:.6g} {unit}"
    return f"{hz:.6g} Hz"
