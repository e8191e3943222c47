"""What the workbench page needs from the library: entry forms, readings, results as text.

The web page (``app.py`` and ``bench_pages/``) only wires widgets to the functions here
and to the rest of capbench; everything that decides (which fields a rig has, what a
typed value means, which readings make an uncertain input, how a result is rounded) lives
here, so it is tested without a browser.

Typed values
    Every box takes text. A length may carry any length unit ("25 mm", "0.98 in",
    "2500 um"); a bare number is read in the unit the box's label shows (mm for lengths,
    pF for capacitances, Hz for frequencies), which is what a technician at the bench
    types. A reading box takes one value ("20.613 pF"), a value with its standard
    uncertainty ("20.613 pF +- 0.004 pF", also with the sign ``±``), or repeated readings
    separated by commas, semicolons or new lines ("20.618, 20.619, 20.620 pF": their mean
    with a type A uncertainty, GUM 4.2). Repeated readings that differ by more than 10 %
    of their mean are refused: they are not repeats of one quantity, and the usual cause
    is a decimal comma ("20,618") read as a separator.

Every refusal is a :class:`~capbench.errors.CapbenchError` whose message starts with
the box's label and says what would be valid; :func:`read_fixture_form` and
:func:`read_method_form` collect them per box instead of stopping at the first.

Caution: fixtures and bridges can carry high voltage, and the field at electrode edges
can reach breakdown levels; the page shows capbench's cautions and defers to local codes
and licensed practice.
"""

from __future__ import annotations

import csv
import io
import math
import re
import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pint

from . import files, rigs
from . import validate as v
from .cautions import ELECTRICAL
from .errors import CapbenchError, FileFormatError, InputError
from .geometry import Fixture
from .uncertainty import AccuracySpec, type_a, type_b
from .units import NUMBER_PATTERN, Q_, frequency_text, parse_quantity, to_si

#: largest readings table accepted from the page (bytes); a bench table is a few kB
MAX_TABLE_BYTES = 1_000_000
#: repeated readings whose spread exceeds this fraction of their mean are refused
MAX_REPEAT_SPREAD = 0.10

# --------------------------------------------------------------------------- numbers


def sig(x: float, digits: int = 5) -> str:
    """``x`` with ``digits`` significant digits, without a trailing exponent for
    everyday magnitudes (1e-4 to 1e6)."""
    if x is None or not math.isfinite(x):
        return "-"
    if x == 0:
        return "0"
    mag = math.floor(math.log10(abs(x)))
    if -4 <= mag < 6:
        decimals = max(digits - 1 - mag, 0)
        return f"{x:.{decimals}f}"
    return f"{x:.{digits - 1}e}"


def compact(x: float, digits: int = 6) -> str:
    """``x`` to ``digits`` significant digits without trailing zeros ("25", "0.0015",
    "2.5e-07")."""
    if x is None or not math.isfinite(x):
        return "-"
    return f"{x:.{digits}g}".replace("e+0", "e+").replace("e-0", "e-")


def with_uncertainty(x: float, u: float, digits_u: int = 2, power: int | None = None) -> str:
    """ "x ± u" with u rounded to ``digits_u`` significant digits and x to the same
    decimal place (GUM 7.2.6: an uncertainty needs at most two significant digits).
    ``power`` writes the pair as "(x' ± u')eN" with that N (one N for a whole column);
    by default a small value (a loss tangent) gets its own, as a column of one would:
    (2.58 ± 0.26)e-4."""
    if not (math.isfinite(x) and math.isfinite(u)):
        return "-"
    if u <= 0:
        return f"{sig(x, 7)} (exact)"
    if power is None:
        power = _column_power([x]) if u < abs(x) * 10 else 0
    if power:
        inner = with_uncertainty(x / 10.0**power, u / 10.0**power, digits_u, power=0)
        return f"({inner})e{power}"
    place = math.floor(math.log10(u)) - (digits_u - 1)
    if round(u / 10.0**place) >= 10**digits_u:  # 0.0996 rounds up a decade
        place += 1
    if -12 <= place <= 0:
        decimals = -place
        return f"{x:.{decimals}f} ± {u:.{decimals}f}"
    if place > 0 and abs(x) < 1e9:
        step = 10.0**place
        return f"{round(x / step) * step:.0f} ± {round(u / step) * step:.0f}"
    return f"{x:.{digits_u - 1}e} ± {u:.{digits_u - 1}e}"


def capacitance_text(farads: float, digits: int = 7) -> str:
    """A capacitance in the unit that suits it (aF to uF)."""
    a = abs(farads)
    for unit, scale in (("uF", 1e-6), ("nF", 1e-9), ("pF", 1e-12), ("fF", 1e-15)):
        if a >= scale:
            return f"{sig(farads / scale, digits)} {unit}"
    return f"{sig(farads / 1e-18, digits)} aF"


# --------------------------------------------------------------------------- typed values

# the one number pattern (units.NUMBER_PATTERN): "\d+\.?\d*" backtracks quadratically on
# a long run of digits that fails to match (20,000 digits and a letter: 7 s here)
_NUMBER = re.compile(rf"^{NUMBER_PATTERN}$")

#: kind of entry -> (kind of quantity for units.to_si, unit of a bare number)
_UNITS = {
    "length": ("length", "mm"),
    "capacitance": ("capacitance", "pF"),
    "frequency": ("frequency", "Hz"),
    "voltage": ("voltage", "V"),
    "number": ("dimensionless", ""),
}


def plain(label: str) -> str:
    """A box's label without its unit hint: "Guard gap [mm]" -> "Guard gap"."""
    return re.sub(r"\s*\[[^\]]*\]", "", label).strip()


def _label_error(label: str, exc: Exception) -> InputError:
    """The error re-worded so that it starts with the box's label (once)."""
    name = plain(label)
    text = str(exc)
    if not text.startswith(name):
        text = f"{name}: {text}"
    return InputError(text, name=name, value=getattr(exc, "value", None))


def _with_unit(text: str, unit: str) -> str:
    return f"{text} {unit}" if unit and _NUMBER.match(text) else text


def parse_value(text: Any, label: str, kind: str, *, limits: str | None = None) -> float:
    """One typed value in SI (a temperature in degC), range-checked with
    :mod:`capbench.validate` when ``limits`` names a range.

    ``kind``: "length", "capacitance", "frequency", "voltage" or "number". A bare number
    is read in the page's unit for the kind (mm, pF, Hz, V).
    """
    qkind, unit = _UNITS[kind]
    name = plain(label)
    raw = "" if text is None else str(text).strip()
    if not raw:
        example = f"12.5 {unit}".strip()
        raise InputError(f"{name}: the box is empty; give a value such as '{example}'", name=label)
    try:
        q = parse_quantity(_with_unit(raw, unit), name)
        if qkind == "dimensionless":
            if not q.dimensionless:
                raise InputError(f"{raw!r} is not a plain number", name=label, value=raw)
            value = float(q.to("").magnitude)
        else:
            value = to_si(q, qkind, name)
        if limits is not None:
            v.check(value, limits, name, positive=v.LIMITS[limits][0] > 0)
        elif not math.isfinite(value):
            raise InputError(f"{raw!r} is not a finite number", name=label, value=raw)
    except CapbenchError as exc:
        raise _label_error(label, exc) from None
    return value


# --------------------------------------------------------------------------- fixture forms


@dataclass(frozen=True)
class Entry:
    """One box of an entry form.

    ``key``: the builder argument it fills (``specimen.thickness`` and
    ``specimen.eps_r`` build a :class:`~capbench.rigs.Specimen`); ``kind``: "length"
    (> 0), "length0" (0 allowed: a thin electrode, no air gap), "eps" (relative
    permittivity), "count" (a whole number); ``optional``: blank means "not used";
    ``default``: the text shown at first.
    """

    key: str
    label: str
    kind: str
    default: str
    optional: bool = False
    help: str = ""


@dataclass(frozen=True)
class RigForm:
    """The entry form of one fixture builder of :mod:`capbench.rigs`."""

    builder: str
    title: str
    family: str
    entries: tuple[Entry, ...]
    note: str = ""

    def entry(self, key: str) -> Entry:
        for e in self.entries:
            if e.key == key:
                return e
        raise InputError(
            f"the {self.title} form has no box {key!r}; valid: {[e.key for e in self.entries]}",
            value=key,
        )

    @property
    def defaults(self) -> dict[str, str]:
        return {e.key: e.default for e in self.entries}


_SPEC_T = Entry(
    "specimen.thickness",
    "Specimen thickness [mm]",
    "length",
    "2 mm",
    optional=True,
    help="Blank: no specimen (air between the electrodes).",
)
_SPEC_EPS = Entry("specimen.eps_r", "Specimen relative permittivity", "eps", "2.3")

RIG_FORMS: dict[str, RigForm] = {
    "guarded_cell": RigForm(
        "guarded_cell",
        "Guarded cell (three-terminal)",
        "Guarded cell",
        (
            Entry("electrode_radius", "Guarded electrode radius [mm]", "length", "25 mm"),
            Entry("guard_gap", "Guard gap [mm]", "length", "0.5 mm"),
            Entry("guard_width", "Guard ring width [mm]", "length", "10 mm"),
            Entry("specimen_thickness", "Specimen thickness [mm]", "length", "2 mm"),
            Entry("specimen_eps_r", "Specimen relative permittivity", "eps", "2.3"),
            Entry(
                "unguarded_radius",
                "Unguarded (top) electrode radius [mm]",
                "length",
                "50 mm",
                optional=True,
                help="Blank: as wide as the guard ring's outer edge.",
            ),
            Entry(
                "air_gap",
                "Air gap above the specimen [mm]",
                "length0",
                "0 mm",
                help="0 for contacting electrodes; > 0 for the air-gap method.",
            ),
            Entry("electrode_thickness", "Electrode thickness [mm]", "length0", "0 mm"),
        ),
        "Guarded electrode and guard ring under the specimen, unguarded electrode on top; "
        "the bridge reads the direct capacitance.",
    ),
    "parallel_discs": RigForm(
        "parallel_discs",
        "Parallel discs (two-terminal)",
        "Parallel discs",
        (
            Entry("radius", "Disc radius [mm]", "length", "25 mm"),
            Entry("gap", "Electrode spacing [mm]", "length", "2 mm"),
            Entry("thickness", "Disc thickness [mm]", "length0", "0 mm", help="0: thin discs."),
            Entry(
                "radius2",
                "Lower disc radius [mm]",
                "length",
                "",
                optional=True,
                help="Blank: equal to the upper disc.",
            ),
            _SPEC_T,
            _SPEC_EPS,
        ),
        "Two coaxial discs; the specimen rests on the lower one.",
    ),
    "coaxial_cell": RigForm(
        "coaxial_cell",
        "Coaxial cell (liquids)",
        "Coaxial cell",
        (
            Entry("inner_radius", "Inner electrode radius [mm]", "length", "5 mm"),
            Entry("outer_radius", "Outer electrode inner radius [mm]", "length", "8 mm"),
            Entry("length", "Measuring electrode length [mm]", "length", "40 mm"),
            Entry("fill_eps_r", "Liquid relative permittivity", "eps", "2.0243"),
            Entry(
                "guard_length",
                "Guard tube length [mm]",
                "length",
                "10 mm",
                optional=True,
                help="Blank: no guard tubes (two-terminal cell).",
            ),
            Entry("guard_gap", "Guard gap [mm]", "length", "0.5 mm", optional=True),
        ),
        "Inner rod in an outer tube, the annulus filled with the liquid.",
    ),
    "parallel_strips": RigForm(
        "parallel_strips",
        "Planar: facing strips",
        "Planar electrodes",
        (
            Entry("width", "Strip width [mm]", "length", "10 mm"),
            Entry("gap", "Electrode spacing [mm]", "length", "1 mm"),
            Entry("thickness", "Strip thickness [mm]", "length0", "0 mm"),
            Entry("length", "Strip length [mm]", "length", "100 mm", optional=True),
            Entry(
                "specimen.thickness",
                "Specimen thickness [mm]",
                "length",
                "1 mm",
                optional=True,
                help="Blank: no specimen.",
            ),
            Entry("specimen.eps_r", "Specimen relative permittivity", "eps", "3.0"),
        ),
        "Cross-section of two long strips facing each other; blank length gives F/m.",
    ),
    "coplanar_strips": RigForm(
        "coplanar_strips",
        "Planar: side-by-side strips",
        "Planar electrodes",
        (
            Entry("width", "Strip width [mm]", "length", "1 mm"),
            Entry("gap", "Gap between the strips [mm]", "length", "0.2 mm"),
            Entry(
                "substrate_thickness",
                "Substrate thickness [mm]",
                "length",
                "0.635 mm",
                optional=True,
                help="Blank: no substrate.",
            ),
            Entry("substrate_eps_r", "Substrate relative permittivity", "eps", "9.8"),
            Entry("length", "Strip length [mm]", "length", "", optional=True),
        ),
        "Two coplanar strips on a substrate; blank length gives F/m.",
    ),
    "interdigitated": RigForm(
        "interdigitated",
        "Planar: interdigitated comb",
        "Planar electrodes",
        (
            Entry("finger_width", "Finger width [mm]", "length", "0.1 mm"),
            Entry("finger_gap", "Gap between fingers [mm]", "length", "0.1 mm"),
            Entry("n_fingers", "Number of fingers", "count", "8"),
            Entry(
                "substrate_thickness",
                "Substrate thickness [mm]",
                "length",
                "0.5 mm",
                optional=True,
            ),
            Entry("substrate_eps_r", "Substrate relative permittivity", "eps", "4.5"),
            Entry("finger_length", "Finger length [mm]", "length", "", optional=True),
        ),
        "Cross-section of a comb of fingers on a substrate; blank finger length gives F/m.",
    ),
}

#: the page's first choice: the trade's families of fixtures, each with its builders
FAMILIES: dict[str, tuple[str, ...]] = {
    "Parallel discs": ("parallel_discs",),
    "Guarded cell": ("guarded_cell",),
    "Coaxial cell": ("coaxial_cell",),
    "Planar electrodes": ("parallel_strips", "coplanar_strips", "interdigitated"),
}


@dataclass(frozen=True)
class FormResult:
    """What a form's text made: the fixture (None if any box is invalid), one message per
    invalid box (key "" for a problem of the whole form) and the warnings raised."""

    fixture: Fixture | None
    errors: dict[str, str] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()

    @property
    def ok(self) -> bool:
        return self.fixture is not None and not self.errors


def parse_entry(text: Any, entry: Entry) -> Any:
    """The value of one fixture box (SI metres for lengths; None for a blank optional
    box). Raises :class:`InputError` starting with the box's label."""
    raw = "" if text is None else str(text).strip()
    if not raw:
        if entry.optional:
            return None
        if entry.kind == "length0":
            return 0.0
        raise InputError(
            f"{plain(entry.label)}: the box is empty; give a value such as "
            f"'{entry.default or '1 mm'}'",
            name=entry.key,
        )
    if entry.kind in ("length", "length0"):
        value = parse_value(raw, entry.label, "length")
        if entry.kind == "length0" and value == 0:
            return 0.0
        try:
            return v.length(value, plain(entry.label))
        except CapbenchError as exc:
            raise _label_error(entry.label, exc) from None
    if entry.kind == "eps":
        return parse_value(raw, entry.label, "number", limits="eps_r")
    if entry.kind == "count":
        if not re.fullmatch(r"\d+", raw):
            raise InputError(
                f"{plain(entry.label)} = {raw!r}; give a whole number such as '8'", name=entry.key
            )
        return int(raw)
    raise InputError(f"unknown entry kind {entry.kind!r}", value=entry.kind)


def read_fixture_form(builder: str, texts: Mapping[str, Any], name: str = "") -> FormResult:
    """Build the fixture a form describes, collecting one message per invalid box.

    Parameters
    ----------
    builder : str
        A key of :data:`RIG_FORMS` (a builder of :mod:`capbench.rigs`).
    texts : mapping
        Box key -> typed text (missing keys take the form's default).
    name : str
        The fixture's name.
    """
    if builder not in RIG_FORMS:
        return FormResult(
            None, {"": f"Fixture type {builder!r} is not known; valid: {sorted(RIG_FORMS)}"}
        )
    form = RIG_FORMS[builder]
    values: dict[str, Any] = {}
    errors: dict[str, str] = {}
    for e in form.entries:
        try:
            values[e.key] = parse_entry(texts.get(e.key, e.default), e)
        except CapbenchError as exc:
            errors[e.key] = str(exc)
    if errors:
        return FormResult(None, errors)
    kwargs: dict[str, Any] = {}
    spec: dict[str, Any] = {}
    for key, val in values.items():
        if key.startswith("specimen."):
            spec[key.split(".", 1)[1]] = val
        elif val is not None:
            kwargs[key] = val
    if spec.get("thickness") is not None:
        kwargs["specimen"] = rigs.Specimen(spec["thickness"], spec.get("eps_r", 1.0))
    if builder == "coaxial_cell" and "guard_length" not in kwargs:
        kwargs.pop("guard_gap", None)  # a gap without guard tubes has no meaning
    caught: list[str] = []
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always", v.CapbenchWarning)
        try:
            fx = rigs.BUILDERS[builder](name=name or form.title, **kwargs)
        except CapbenchError as exc:
            return FormResult(None, {_culprit(form, exc): f"{form.title}: {exc}"})
    caught = [str(w.message) for w in seen if issubclass(w.category, v.CapbenchWarning)]
    return FormResult(fx, {}, tuple(caught))


def _culprit(form: RigForm, exc: CapbenchError) -> str:
    """The box a builder's refusal is about, if its message or attributes name one."""
    name = str(getattr(exc, "name", "") or "")
    keys = [e.key for e in form.entries]
    if name in keys:
        return name
    text = str(exc).lower()
    for e in form.entries:
        words = e.key.replace("specimen.", "specimen ").replace("_", " ")
        if words in text:
            return e.key
    return ""


def _length_text(metres: float) -> str:
    return f"{metres * 1e3:.6g} mm"


def form_texts(fixture: Fixture) -> tuple[str, dict[str, str]]:
    """The builder and box texts that describe ``fixture`` (to show a loaded fixture)."""
    if fixture.kind not in RIG_FORMS:
        raise InputError(
            f"the page has no form for fixtures of kind {fixture.kind!r}; valid: "
            f"{sorted(RIG_FORMS)}",
            value=fixture.kind,
        )
    form = RIG_FORMS[fixture.kind]
    p = fixture.param_dict
    out: dict[str, str] = {}
    for e in form.entries:
        if e.key.startswith("specimen."):
            spec = p.get("specimen")
            attr = e.key.split(".", 1)[1]
            val = None if spec is None else getattr(spec, attr)
        else:
            val = p.get(e.key)
        if val is None:
            out[e.key] = "" if e.optional else e.default
        elif e.kind in ("length", "length0"):
            out[e.key] = _length_text(float(val))
        elif e.kind == "eps":
            z = complex(val)
            out[e.key] = f"{z.real:.7g}"
        else:
            out[e.key] = str(val)
    return fixture.kind, out


# --------------------------------------------------------------------------- readings


def _split(raw: str) -> list[str]:
    return [p.strip() for p in re.split(r"[,;\n]+", raw) if p.strip()]


def parse_reading(
    text: Any,
    label: str,
    kind: str,
    *,
    name: str | None = None,
    accuracy: AccuracySpec | None = None,
    optional: bool = False,
    limits: str | None = None,
) -> Any:
    """A reading typed in a box, as a value with uncertainty for extraction.

    Parameters
    ----------
    text : str
        "20.613 pF" (one value), "20.613 pF +- 0.004 pF" (value and standard
        uncertainty, normal), or repeated readings "20.618, 20.619, 20.620 pF" (the
        last unit applies to bare numbers before it).
    label : str
        The box's label (starts every message).
    kind : str
        "length", "capacitance", "frequency" or "number".
    name : str, optional
        The input's name in the uncertainty budget (default: the label).
    accuracy : AccuracySpec, optional
        The instrument's specification, added as a type B input.
    optional : bool
        A blank box gives None instead of an error.
    limits : str, optional
        A key of :data:`capbench.validate.LIMITS` the nominal value must respect.

    Returns
    -------
    pint.Quantity (ufloat or float magnitude), a plain ufloat/float for "number",
    or None.

    Notes
    -----
    Repeated readings: mean and s/sqrt(n) with n - 1 degrees of freedom (GUM 4.2.1 to
    4.2.3, by :func:`capbench.uncertainty.type_a`).
    """
    qkind, unit = _UNITS[kind]
    raw = "" if text is None else str(text).strip()
    name = name or plain(label)
    if not raw:
        if optional:
            return None
        raise InputError(
            f"{plain(label)}: the box is empty; give a reading such as '12.5 {unit}'",
            name=plain(label),
        )
    try:
        value = _reading_value(raw, plain(label), qkind, unit, name, limits)
        if accuracy is not None:
            value = accuracy.apply(value, f"{name}: instrument accuracy")
    except CapbenchError as exc:
        raise _label_error(label, exc) from None
    return value


def _reading_value(raw: str, label: str, qkind: str, unit: str, name: str, limits):
    base = {"length": "mm", "capacitance": "pF", "frequency": "Hz", "dimensionless": ""}[qkind]
    pm = re.split(r"\s*(?:\+-|\+/-|±)\s*", raw)
    if len(pm) == 2:
        value_text, u_text = pm
        trailing = _trailing_unit(u_text)
        value_q = parse_quantity(_with_unit(value_text, trailing or unit), label)
        u_q = parse_quantity(_with_unit(u_text, trailing or unit), label)
        nominal = _in_base(value_q, qkind, base, label)
        u = _in_base(u_q, qkind, base, label)
        if u < 0:
            raise InputError(f"the standard uncertainty {u_text!r} must be >= 0", name=label)
        _check_range(nominal, base, qkind, label, limits)
        if u == 0:
            return _wrap_si(nominal, base)
        return type_b(_wrap_si(nominal, base), u=_wrap_si(u, base), name=name)
    if len(pm) > 2:
        raise InputError(
            f"{raw!r} has more than one '±'; write 'value ± standard uncertainty'", name=label
        )
    parts = _split(raw)
    if len(parts) == 1:
        q = parse_quantity(_with_unit(parts[0], unit), label)
        nominal = _in_base(q, qkind, base, label)
        _check_range(nominal, base, qkind, label, limits)
        return _wrap_si(nominal, base)
    trailing = _trailing_unit(parts[-1]) or unit
    numbers = []
    for i, p in enumerate(parts):
        q = parse_quantity(_with_unit(p, trailing), f"reading {i + 1}")
        numbers.append(_in_base(q, qkind, base, f"{label}, reading {i + 1}"))
    mean = float(np.mean(numbers))
    spread = max(numbers) - min(numbers)
    if qkind != "dimensionless" and spread > MAX_REPEAT_SPREAD * abs(mean):
        raise InputError(
            f"the {len(numbers)} readings {parts} differ by {spread:.4g} {base}, more than "
            f"{MAX_REPEAT_SPREAD:.0%} of their mean: they are not repeats of one quantity. "
            "Use a decimal point (20.618, not 20,618) and separate readings with commas, "
            "semicolons or new lines",
            name=label,
            value=parts,
        )
    for x in numbers:
        _check_range(x, base, qkind, label, limits)
    return type_a([_wrap_si(x, base) for x in numbers], name)


def _trailing_unit(text: str) -> str:
    """The unit at the end of "0.004 pF" ('' for a bare number)."""
    m = re.match(rf"^\s*{NUMBER_PATTERN}\s*(.*)$", text, re.DOTALL)
    return m.group(1).strip() if m else ""


def _in_base(q: pint.Quantity, qkind: str, base: str, label: str) -> float:
    if not base:
        if not q.dimensionless:
            raise InputError(f"{q:~P} is not a plain number", name=label)
        return float(q.to("").magnitude)
    try:
        return float(q.to(base).magnitude)
    except pint.DimensionalityError:
        raise InputError(
            f"{q:~P} is not a {qkind}; give it in {base} or another {qkind} unit", name=label
        ) from None


def _wrap_si(x: float, base: str) -> Any:
    return Q_(x, base) if base else x


def _check_range(x: float, base: str, qkind: str, label: str, limits: str | None) -> None:
    if not math.isfinite(x):
        raise InputError(f"{x!r} is not a finite number", name=label)
    if limits is None:
        return
    si = Q_(x, base).to(v.LIMITS[limits][2] or "").magnitude if base else x
    v.check(float(si), limits, label, positive=v.LIMITS[limits][0] > 0)


def parse_accuracy(text: Any, label: str) -> AccuracySpec | None:
    """An instrument specification "0.05 % of reading + 0.002 pF" (blank: None)."""
    raw = "" if text is None else str(text).strip()
    if not raw:
        return None
    try:
        return AccuracySpec.parse(raw)
    except CapbenchError as exc:
        raise _label_error(label, exc) from None


def read_table(data: bytes | str, label: str = "Readings table") -> tuple[files.Reading, ...]:
    """Readings from the text of a readings CSV (the format of
    :func:`capbench.files.read_readings`: "frequency [Hz]", "capacitance [pF]",
    "dissipation factor"; '#' comments), refused above :data:`MAX_TABLE_BYTES`."""
    raw = data.encode("utf-8") if isinstance(data, str) else bytes(data)
    if len(raw) > MAX_TABLE_BYTES:
        raise FileFormatError(
            f"{label}: {len(raw):,} bytes is over the limit of {MAX_TABLE_BYTES:,} bytes; "
            "a bench table is a few kB",
            value=len(raw),
        )
    try:
        raw.decode("utf-8")
    except UnicodeDecodeError:
        raise FileFormatError(
            f"{label}: not UTF-8 text; save the table as CSV (UTF-8)", value=None
        ) from None
    if not raw.strip():
        raise FileFormatError(
            f"{label}: the table is empty; give a header row such as 'frequency [Hz],"
            "capacitance [pF],dissipation factor' and one row per reading"
        )
    try:
        return files.readings_from_csv(raw.decode("utf-8"), source=label)
    except CapbenchError as exc:
        raise FileFormatError(str(exc), value=None) from None


def table_text(readings: Sequence[files.Reading]) -> str:
    """Readings back to the CSV text :func:`read_table` reads."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    loss = any(r.dissipation is not None for r in readings)
    w.writerow(["frequency [Hz]", "capacitance [pF]"] + (["dissipation factor"] if loss else []))
    for r in readings:
        row = [f"{r.frequency:.10g}", f"{r.capacitance * 1e12:.10g}"]
        if loss:
            row.append("" if r.dissipation is None else f"{r.dissipation:.6g}")
        w.writerow(row)
    return buf.getvalue()


@dataclass(frozen=True)
class BridgeInputs:
    """Per frequency (ascending): the capacitance and dissipation inputs made from a
    readings table, as uncertain quantities (pF) and numbers."""

    frequencies: tuple[float, ...]
    capacitance: tuple[Any, ...]
    dissipation: tuple[Any, ...] | None
    repeats: tuple[int, ...]


def bridge_inputs(
    readings: Sequence[files.Reading],
    c_accuracy: AccuracySpec | None = None,
    d_accuracy: AccuracySpec | None = None,
) -> BridgeInputs:
    """Group a table's readings by frequency: the mean of repeated readings (type A,
    GUM 4.2) or the single reading, plus the bridge's accuracy specification (type B,
    rectangular), taken as independent between frequencies.

    Raises
    ------
    InputError
        A frequency with D on some rows but not on others.
    """
    if not readings:
        raise InputError("Readings table: no readings")
    freqs = sorted({r.frequency for r in readings})
    caps, losses, repeats = [], [], []
    have_d = all(r.dissipation is not None for r in readings)
    if not have_d and any(r.dissipation is not None for r in readings):
        raise InputError(
            "Readings table: some rows have a dissipation factor and some do not; give it "
            "on every row or on none"
        )
    for f in freqs:
        rows = [r for r in readings if r.frequency == f]
        repeats.append(len(rows))
        tag = frequency_text(f)
        pf = [Q_(r.capacitance * 1e12, "pF") for r in rows]
        c = type_a(pf, f"C readings {tag}") if len(rows) > 1 else pf[0]
        if c_accuracy is not None:
            c = c_accuracy.apply(c, f"bridge C accuracy {tag}")
        caps.append(c)
        if have_d:
            ds = [float(r.dissipation) for r in rows]
            d = type_a(ds, f"D readings {tag}") if len(rows) > 1 else ds[0]
            if d_accuracy is not None:
                d = d_accuracy.apply(d, f"bridge D accuracy {tag}")
            losses.append(d)
    return BridgeInputs(
        tuple(freqs), tuple(caps), tuple(losses) if have_d else None, tuple(repeats)
    )


# --------------------------------------------------------------------------- method forms

#: the fixture dimension whose drawing tolerance the page asks for, per fixture kind
TOLERANCE_KEY = {
    "guarded_cell": "electrode_radius",
    "parallel_discs": "radius",
    "parallel_strips": "width",
    "coaxial_cell": "inner_radius",
}


@dataclass(frozen=True)
class MethodForm:
    """The entry form of one extraction method of :mod:`capbench.extract`.

    Entry kinds: "c" (a capacitance reading, the bridge's C accuracy added), "d" (a
    dissipation factor, the bridge's D accuracy added), "len" (a length reading, the
    micrometer's calibration added to ``thickness``), "eps" (a permittivity with its
    uncertainty), "cap" (a plain capacitance, no accuracy). ``table``: the argument a
    readings table (several frequencies) fills, with its D going to ``dissipation``.
    """

    method: str
    title: str
    entries: tuple[Entry, ...]
    table: str | None
    note: str

    def entry(self, key: str) -> Entry:
        for e in self.entries:
            if e.key == key:
                return e
        raise InputError(f"the {self.title} form has no box {key!r}", value=key)


def _c(key: str, label: str, default: str = "", optional: bool = False, help: str = "") -> Entry:
    return Entry(key, label, "c", default, optional, help)


def _d(key: str, label: str) -> Entry:
    return Entry(key, label, "d", "", True, "Blank: no loss reading.")


_READING_HELP = (
    "One value ('20.613 pF'), a value with its standard uncertainty ('20.613 pF ± 0.004 "
    "pF') or repeated readings ('20.618, 20.619, 20.620 pF')."
)

METHOD_FORMS: dict[str, MethodForm] = {
    "contacting": MethodForm(
        "contacting",
        "Contacting electrodes",
        (
            Entry("thickness", "Specimen thickness readings [mm]", "len", "", help=_READING_HELP),
            _c("capacitance", "Capacitance reading [pF]", help=_READING_HELP),
            _d("dissipation", "Dissipation factor D"),
            Entry("stray", "Stray capacitance in parallel [pF]", "cap", "", True),
        ),
        "capacitance",
        "Electrodes on the specimen: eps' from C = eps0 eps' A_eff / t, corrected by the "
        "cell's own field.",
    ),
    "air_gap": MethodForm(
        "air_gap",
        "Air gap (non-contacting)",
        (
            Entry("thickness", "Specimen thickness readings [mm]", "len", "", help=_READING_HELP),
            Entry(
                "spacing",
                "Electrode spacing [mm]",
                "len",
                "",
                True,
                "Blank: the fixture's spacing.",
            ),
            _c("empty", "Reading without the specimen [pF]"),
            _c("loaded", "Reading with the specimen [pF]", help=_READING_HELP),
            _d("dissipation", "D with the specimen"),
            _d("empty_dissipation", "D without the specimen"),
        ),
        "loaded",
        "Electrodes at a fixed spacing, read empty and with the specimen resting on the "
        "low electrode.",
    ),
    "micrometer": MethodForm(
        "micrometer",
        "Micrometer re-set",
        (
            Entry("thickness", "Specimen thickness readings [mm]", "len", "", help=_READING_HELP),
            Entry("loaded_spacing", "Spacing with the specimen [mm]", "len", ""),
            Entry("empty_spacing", "Re-set spacing without the specimen [mm]", "len", ""),
            _c("capacitance", "Reading with the specimen [pF]", optional=True),
            _c("empty_capacitance", "Reading after the re-set [pF]", optional=True),
            _d("dissipation", "D with the specimen"),
            _d("empty_dissipation", "D after the re-set"),
        ),
        None,
        "The specimen is read, removed, and the electrodes closed until the reading is "
        "the same: eps' = t / (t - s1 + s2).",
    ),
    "two_fluid": MethodForm(
        "two_fluid",
        "Two fluids",
        (
            Entry("eps_fluid1", "Relative permittivity of fluid 1", "eps", "1.00054"),
            Entry("eps_fluid2", "Relative permittivity of fluid 2", "eps", "2.0243 ± 0.0005"),
            _c("fluid1", "Cell in fluid 1 [pF]"),
            _c("fluid1_with_specimen", "Cell in fluid 1 with the specimen [pF]"),
            _c("fluid2", "Cell in fluid 2 [pF]"),
            _c("fluid2_with_specimen", "Cell in fluid 2 with the specimen [pF]"),
            _d("dissipation1", "D in fluid 1 with the specimen"),
            _d("dissipation2", "D in fluid 2 with the specimen"),
        ),
        None,
        "Four readings in two fluids of known permittivity; neither the electrode area "
        "nor the stray capacitance need be known.",
    ),
    "liquid": MethodForm(
        "liquid",
        "Liquid cell",
        (
            _c("empty", "Empty cell reading [pF]"),
            _c("filled", "Filled cell reading [pF]", help=_READING_HELP),
            _d("dissipation", "D of the filled cell"),
            _d("empty_dissipation", "D of the empty cell"),
            Entry(
                "empty_eps_r",
                "Relative permittivity in the empty cell",
                "eps",
                "",
                True,
                "Blank: the fixture's medium (air, 1).",
            ),
        ),
        "filled",
        "The cell read empty and filled; the stray capacitance comes from the empty reading.",
    ),
}

#: boxes every method shows besides its own
COMMON_ENTRIES: tuple[Entry, ...] = (
    Entry("frequency", "Frequency [Hz]", "f", "1 kHz", True, "Blank: not recorded."),
    Entry(
        "c_accuracy",
        "Bridge capacitance accuracy",
        "spec",
        "",
        True,
        "For example '0.05 % of reading + 0.002 pF'; blank: none.",
    ),
    Entry(
        "d_accuracy",
        "Bridge D accuracy",
        "spec",
        "",
        True,
        "For example '0.00002 + 1 % of reading'; blank: none.",
    ),
    Entry(
        "micrometer",
        "Micrometer calibration half-width [mm]",
        "length0",
        "",
        True,
        "Added to the thickness readings (rectangular); blank: none.",
    ),
    Entry(
        "tolerance",
        "Electrode size tolerance, half-width [mm]",
        "length0",
        "",
        True,
        "Drawing tolerance of the electrode radius (or width), rectangular; blank: none.",
    ),
)


@dataclass(frozen=True)
class MethodCall:
    """A method's arguments made from a form (``kwargs`` for the function in
    :mod:`capbench.extract`), or the messages of the invalid boxes."""

    method: str
    kwargs: dict[str, Any]
    errors: dict[str, str]
    frequencies: tuple[float, ...] = ()

    @property
    def ok(self) -> bool:
        return not self.errors


def read_method_form(
    method: str,
    fixture: Fixture,
    texts: Mapping[str, Any],
    table: Sequence[files.Reading] | None = None,
) -> MethodCall:
    """Turn a method form's text (and, optionally, a readings table) into the method's
    keyword arguments, with one message per invalid box.

    With ``table``, the method's table argument and ``dissipation`` (if the table has
    a D column) come from the table, one value per frequency, and ``frequency`` from
    its frequencies; the boxes for them are not read.
    """
    if method not in METHOD_FORMS:
        return MethodCall(
            method, {}, {"": f"Method {method!r} is not known; valid: {sorted(METHOD_FORMS)}"}
        )
    form = METHOD_FORMS[method]
    errors: dict[str, str] = {}
    common: dict[str, Any] = {}
    for e in COMMON_ENTRIES:
        try:
            raw = texts.get(e.key, e.default)
            if e.kind == "spec":
                common[e.key] = parse_accuracy(raw, e.label)
            elif e.kind == "f":
                common[e.key] = (
                    parse_value(raw, e.label, "frequency", limits="frequency")
                    if str(raw or "").strip()
                    else None
                )
            else:
                common[e.key] = parse_entry(raw, e)
        except CapbenchError as exc:
            errors[e.key] = str(exc)
    c_acc = common.get("c_accuracy")
    d_acc = common.get("d_accuracy")
    from_table = {form.table, "dissipation"} if (table and form.table) else set()
    kwargs: dict[str, Any] = {}
    for e in form.entries:
        if e.key in from_table:
            continue
        raw = texts.get(e.key, e.default)
        try:
            kwargs[e.key] = _method_value(e, raw, c_acc, d_acc, common.get("micrometer"))
        except CapbenchError as exc:
            errors[e.key] = str(exc)
    freqs: tuple[float, ...] = ()
    if table and form.table:
        try:
            b = bridge_inputs(table, c_acc, d_acc)
            kwargs[form.table] = list(b.capacitance)
            if b.dissipation is not None:
                kwargs["dissipation"] = list(b.dissipation)
            kwargs["frequency"] = list(b.frequencies)
            freqs = b.frequencies
        except CapbenchError as exc:
            errors["table"] = str(exc)
    elif common.get("frequency") is not None:
        kwargs["frequency"] = common["frequency"]
        freqs = (common["frequency"],)
    elif table and not form.table:
        errors["table"] = (
            f"Readings table: the {form.title} method takes single readings; clear the "
            "table or choose contacting, air gap or liquid cell"
        )
    tol = common.get("tolerance")
    key = TOLERANCE_KEY.get(fixture.kind) if fixture is not None else None
    if tol and key:
        nominal = float(fixture.param_dict[key])
        kwargs["dimensions"] = {
            key: type_b(
                Q_(nominal * 1e3, "mm"),
                half_width=Q_(tol * 1e3, "mm"),
                name=f"{key.replace('_', ' ')} (drawing tolerance)",
            )
        }
    kwargs = {k: val for k, val in kwargs.items() if val is not None}
    return MethodCall(method, kwargs, errors, freqs)


def _method_value(e: Entry, raw: Any, c_acc, d_acc, micrometer: float | None) -> Any:
    name = plain(e.label)
    if e.kind == "c":
        return parse_reading(
            raw, e.label, "capacitance", accuracy=c_acc, optional=e.optional, limits="capacitance"
        )
    if e.kind == "cap":
        return parse_reading(raw, e.label, "capacitance", optional=True)
    if e.kind == "d":
        return parse_reading(raw, e.label, "number", accuracy=d_acc, optional=True, limits="loss")
    if e.kind == "eps":
        return parse_reading(raw, e.label, "number", optional=e.optional, limits="eps_r")
    if e.kind == "len":
        value = parse_reading(raw, e.label, "length", optional=e.optional, limits="length")
        if value is not None and micrometer and e.key == "thickness":
            value = value + type_b(
                Q_(0.0, "mm"), half_width=Q_(micrometer * 1e3, "mm"), name="micrometer calibration"
            )
        return value
    raise InputError(f"{name}: unknown entry kind {e.kind!r}", value=e.kind)


def run_method(call: MethodCall, fixture: Fixture, rtol: float = 1e-6) -> Any:
    """Run the extraction a :class:`MethodCall` describes on ``fixture``.

    Returns
    -------
    capbench.extract.Extraction

    Raises
    ------
    CapbenchError
        From the method (readings that give no physical root, a fixture of the wrong
        kind, ...), unchanged.
    """
    from . import extract

    if not call.ok:
        raise InputError(
            "the form has invalid boxes: " + "; ".join(call.errors.values()), value=None
        )
    func: Callable[..., Any] = getattr(extract, call.method)
    kwargs = dict(call.kwargs)
    if call.method in ("micrometer",):
        return func(fixture, rtol=rtol, **kwargs)
    if call.method == "two_fluid":
        args = [kwargs.pop(k) for k in ("fluid1", "fluid1_with_specimen", "fluid2")]
        args.append(kwargs.pop("fluid2_with_specimen"))
        return func(fixture, *args, rtol=rtol, **kwargs)
    if call.method == "contacting":
        return func(fixture, kwargs.pop("capacitance"), rtol=rtol, **kwargs)
    if call.method == "air_gap":
        return func(fixture, kwargs.pop("empty"), kwargs.pop("loaded"), rtol=rtol, **kwargs)
    return func(fixture, kwargs.pop("empty"), kwargs.pop("filled"), rtol=rtol, **kwargs)


# --------------------------------------------------------------------------- the demo

#: the invented demo measurement (fixtures/quillfield/): Quillfield bench 3, QF-PE-03
DEMO_DIR = Path(__file__).resolve().parents[1] / "fixtures" / "quillfield"
DEMO_FILE = DEMO_DIR / "qf-pe-03.toml"


@dataclass(frozen=True)
class Demo:
    """The demo fixture and readings as the page's box texts."""

    title: str
    builder: str
    fixture_texts: dict[str, str]
    fixture_name: str
    method: str
    method_texts: dict[str, str]
    table: str
    #: the demo's measurement record (lab, operator, specimen, ...): shown and reported
    #: only while the page holds the demo's own fixture and readings
    record: dict[str, str] = field(default_factory=dict)


def demo() -> Demo:
    """The Quillfield Dielectrics Lab's (invented) measurement of specimen QF-PE-03, as
    the page's first content: a newcomer sees a full result in one click."""
    m = files.read_measurement(DEMO_FILE)
    builder, texts = form_texts(m.fixture)
    if "specimen_eps_r" not in dict(m.fixture.params) or not _given(m, "specimen_eps_r"):
        # the file leaves the unknown's permittivity open; a polyethylene-like start
        # value makes the solve page's first picture that of the real specimen
        texts["specimen_eps_r"] = DEMO_START_EPS
    thick = ", ".join(f"{t * 1e3:.6g}" for t in m.thickness_readings) + " mm"
    mtexts = {
        "thickness": thick,
        "micrometer": f"{m.micrometer_half_width * 1e6:.4g} um",
        "c_accuracy": _spec_text(m.capacitance_accuracy),
        "d_accuracy": _spec_text(m.dissipation_accuracy) if m.dissipation_accuracy else "",
        "tolerance": "",
        "frequency": "",
    }
    key = TOLERANCE_KEY.get(m.fixture.kind)
    for k, half in m.tolerances:
        if k == key:
            mtexts["tolerance"] = f"{half * 1e3:.4g} mm"
    csv_path = m.path.parent / "qf-pe-03_readings.csv"
    return Demo(
        f"{m.lab}, {m.bench}: specimen {m.specimen_id} ({m.description})",
        builder,
        texts,
        m.fixture.name,
        m.method,
        mtexts,
        csv_path.read_text(encoding="utf-8"),
        {
            "lab": m.lab,
            "bench": m.bench,
            "operator": m.operator,
            "specimen": m.specimen_id,
            "instrument": m.instrument,
            "date of measurement": m.date,
        },
    )


#: start value of the demo specimen's permittivity (polyethylene is about 2.3; from memory)
DEMO_START_EPS = "2.3"


def _given(m: files.Measurement, key: str) -> bool:
    """Whether the measurement file's [fixture] table sets ``key`` itself."""
    import tomllib

    with m.path.open("rb") as fh:
        return key in tomllib.load(fh).get("fixture", {})


def _spec_text(spec: AccuracySpec) -> str:
    parts = []
    if spec.percent:
        parts.append(f"{spec.percent:g} % of reading")
    if spec.offset.magnitude:
        off = spec.offset
        parts.append(f"{off.magnitude:g} {off.units:~P}".strip())
    return " + ".join(parts)


# --------------------------------------------------------------------------- results


def matrix_rows(solution: Any, unit: str = "pF") -> tuple[list[str], list[list[str]]]:
    """The Maxwell capacitance matrix as text cells (rows and columns: terminals)."""
    m = solution.matrix
    per_length = solution.unit == "F/m"
    shown = f"{unit}/m" if per_length else unit
    vals = np.real(m.to(shown).magnitude)
    cells = [[sig(float(x), 6) for x in row] for row in vals]
    return [f"{t} [{shown}]" for t in solution.terminals], cells


def budget_rows(b: Any) -> list[dict[str, str]]:
    """An uncertainty budget as rows of text for a table, largest share first."""
    rows = []
    for r in sorted(b.rows, key=lambda r: -r.share):
        rows.append(
            {
                "input": r.name,
                "value": compact(r.value, 7) + (f" {r.unit}" if r.unit else ""),
                "u(x)": sig(r.u, 3) + (f" {r.unit}" if r.unit else ""),
                "distribution": r.distribution,
                "type": r.kind,
                "dof": "∞" if math.isinf(r.dof) else f"{r.dof:.0f}",
                "sensitivity c": sig(r.sensitivity, 3) + (f" per {r.unit}" if r.unit else ""),
                "c·u(x)": sig(r.contribution, 3),
                "share": f"{100 * r.share:.2f} %",
            }
        )
    if b.correlation_share:
        rows.append({"input": "(correlation terms)", "share": f"{100 * b.correlation_share:.2f} %"})
    return rows


def _column_power(values: Sequence[float]) -> int:
    """One power of ten for a column of small values (eps'', tan delta), so that every row
    reads in the same form; 0 (plain decimals) where the largest is 0.01 or more."""
    finite = [abs(v) for v in values if math.isfinite(v) and v != 0]
    if not finite or max(finite) >= 1e-2:
        return 0
    return math.floor(math.log10(max(finite)))


def eps_statement(point: Any, monte_carlo: Any = None) -> tuple[str, str]:
    """The one statement of eps' at a point: (value text, how it was stated).

    The GUM framework's interval (eps' ± U, k from the effective degrees of freedom, 95 %
    coverage) unless a Monte Carlo check of this point (JCGM 101) found it not adequate;
    then the Monte Carlo coverage interval is the result, as JCGM 101 clause 8 says.
    """
    U, k = point.budget.expanded()
    if monte_carlo is not None and monte_carlo.adequate is False:
        lo, hi = monte_carlo.low, monte_carlo.high
        digits = _interval_digits(lo, hi)
        value = f"{lo:.{digits}f} to {hi:.{digits}f}"
        how = (
            f"95 % coverage interval from the Monte Carlo method (JCGM 101, "
            f"{monte_carlo.trials:,} trials): the GUM framework's ± {sig(U, 2)} "
            f"(k = {k:.2f}) was not adequate here"
        )
        return value, how
    how = (
        f"expanded uncertainty, k = {k:.2f} for 95 % coverage, "
        f"{compact(point.budget.dof, 3)} effective degrees of freedom"
    )
    return with_uncertainty(point.eps_r.n, U), how


def _interval_digits(lo: float, hi: float) -> int:
    """Decimals that show an interval's width to two significant digits."""
    width = abs(hi - lo)
    if not width or not math.isfinite(width):
        return 6
    return max(0, 1 - math.floor(math.log10(width)))


def point_rows(extraction: Any) -> list[dict[str, str]]:
    """One row of text per frequency: eps' ± U, the closed form, the correction, eps''
    and tan delta ± U (expanded for 95 % coverage, k of each budget: Point.expanded)."""
    rows = []
    loss_power = _column_power([p.eps_loss.n for p in extraction.points if p.tan_delta is not None])
    tan_power = _column_power([p.tan_delta.n for p in extraction.points if p.tan_delta is not None])
    for p in extraction.points:
        row = {
            "frequency": "-" if p.frequency is None else frequency_text(p.frequency),
            "eps'": with_uncertainty(p.eps_r.n, p.expanded("eps_r")[0]),
            "eps' (parallel-plate formula)": sig(p.eps_r_ideal.n, 6),
            "field correction": f"{100 * p.correction:+.3f} %",
        }
        if p.tan_delta is not None:
            U_loss, U_tan = p.expanded("eps_loss")[0], p.expanded("tan_delta")[0]
            row["eps''"] = with_uncertainty(p.eps_loss.n, U_loss, power=loss_power)
            row["tan δ"] = with_uncertainty(p.tan_delta.n, U_tan, power=tan_power)
        rows.append(row)
    return rows


# Markdown and the page's own markup (emoji and icon codes, LaTeX between $) that user
# text must not trigger: a fixture name holding an image link made the browser fetch it,
# and "9**9**9 m" in a message showed as a bold "999 m"
_MARKUP = re.compile(r"([\\`*_{}\[\]()#+\-.!|<>~$:=^])")


def markdown_text(value: object) -> str:
    """``value`` as literal text inside Markdown: every character that Markdown or the
    page's markup would act on is escaped, line breaks kept. Every message and every
    name a user typed goes through this before the page or a summary shows it."""
    text = str(value).replace("\r\n", "\n")
    return "  \n".join(_MARKUP.sub(r"\\\1", line) for line in text.split("\n"))


def markdown_summary(
    *,
    fixture: Fixture,
    solution: Any = None,
    extraction: Any = None,
    index: int = 0,
    monte_carlo: Any = None,
    cautions: Sequence[str] = (),
    title: str = "capbench workbench summary",
) -> str:
    """A Markdown summary of the page's results: fixture, solve, extraction with the
    budget of one point, the Monte Carlo cross-check and the cautions.

    Notes
    -----
    Expanded uncertainties everywhere (table, statement) use the t-distribution factor
    for 95 % coverage with the Welch-Satterthwaite degrees of freedom (GUM 6.2, G.4).
    """
    lines = [f"# {markdown_text(title)}", ""]
    lines += [f"## Fixture: {markdown_text(fixture.name)}", "", f"- kind: `{fixture.kind}`"]
    for key, val in fixture.params:
        if val is None or key == "shield":
            continue
        if key == "specimen":
            lines.append(
                f"- specimen: thickness {compact(val.thickness * 1e3)} mm, eps_r "
                f"{compact(complex(val.eps_r).real)}"
            )
        elif isinstance(val, float) and "eps" not in key and key != "n_fingers":
            lines.append(f"- {key.replace('_', ' ')}: {compact(val * 1e3)} mm")
        else:
            shown = compact(complex(val).real) if isinstance(val, complex) else str(val)
            lines.append(f"- {key.replace('_', ' ')}: {shown}")
    if solution is not None:
        unit = solution.unit
        lines += [
            "",
            "## Field solve",
            "",
            f"- terminal capacitance ({fixture.connection}): "
            + (
                capacitance_text(float(solution.capacitance.magnitude))
                if unit == "F"
                else f"{sig(float(solution.capacitance.to('pF/m').magnitude), 7)} pF/m"
            ),
            f"- estimated relative error: {solution.rel_error:.1e}",
            f"- unknowns: {solution.n_dofs:,}; solve time {solution.seconds:.2f} s",
        ]
        head, cells = matrix_rows(solution)
        lines += ["", "Maxwell capacitance matrix:", ""]
        lines.append("| | " + " | ".join(head) + " |")
        lines.append("|---" * (len(head) + 1) + "|")
        for t, row in zip(solution.terminals, cells, strict=True):
            lines.append(f"| {t} | " + " | ".join(row) + " |")
    if extraction is not None:
        lines += ["", f"## Extraction: {extraction.method}", ""]
        rows = point_rows(extraction)
        keys = list(rows[0])
        lines.append("| " + " | ".join(keys) + " |")
        lines.append("|---" * len(keys) + "|")
        for r in rows:
            lines.append("| " + " | ".join(r.get(k, "") for k in keys) + " |")
        lines.append("")
        lines.append(
            "Uncertainties are expanded for 95 % coverage, k from each budget's effective "
            "degrees of freedom (GUM G.4)."
        )
        p = extraction.points[index]
        where = "" if p.frequency is None else f" at {frequency_text(p.frequency)}"
        value, how = eps_statement(p, monte_carlo)
        lines += ["", f"### Budget of eps'{where}", "", f"eps' = {value} ({how})", ""]
        brows = budget_rows(p.budget)
        bkeys = list(brows[0])
        lines.append("| " + " | ".join(bkeys) + " |")
        lines.append("|---" * len(bkeys) + "|")
        for r in brows:
            lines.append("| " + " | ".join(r.get(kk, "") for kk in bkeys) + " |")
        if p.tan_delta is not None:
            Ut, kt = p.loss_budget.expanded(p=0.95)
            lines += ["", f"tan δ{where} = {with_uncertainty(p.tan_delta.n, Ut)} (k = {kt:.2f})"]
    if monte_carlo is not None:
        lines += ["", "### Monte Carlo cross-check (JCGM 101)", "", monte_carlo.summary()]
    lines += ["", "## Cautions", ""]
    for c in cautions:
        lines.append(f"- {c}")
    lines.append(f"- {SAFETY}")
    return "\n".join(lines) + "\n"


#: the caution every page shows
SAFETY = ELECTRICAL


# --------------------------------------------------------------------------- figures


def edge_window(fixture: Fixture) -> tuple[float, float, float, float] | None:
    """A window (x0, x1, y0, y1) in metres around the electrode edge of a disc-type
    fixture, where the fringing field lives; None for other kinds (show all)."""
    p = fixture.param_dict
    _x0, y0, _x1, y1 = fixture.geometry.bbox()
    height = y1 - y0
    if fixture.kind == "guarded_cell":
        r, g, w = p["electrode_radius"], p["guard_gap"], p["guard_width"]
        half = max(3 * height, 2 * g, 0.2 * w)
        return (max(r - half, 0.0), r + g + w + half, y0 - 1.5 * height, y1 + 1.5 * height)
    if fixture.kind == "parallel_discs":
        r = max(p["radius"], p["radius2"])
        half = max(3 * height, 0.05 * r)
        return (max(r - half, 0.0), r + half, y0 - height, y1 + height)
    return None


def field_strength_figure(solution: Any, window: Sequence[float] | None = None) -> Any:
    """|E| per volt applied over the cross-section (log colour scale), electrodes drawn,
    the largest vertex value inside the window marked (at a sharp edge that value is
    singular and depends on the mesh; :func:`capbench.guard.edge_field` reports the field
    at a stated distance instead).

    The values are the piecewise-linear interpolant's gradient averaged at the mesh
    vertices (a picture; :func:`capbench.guard.edge_field` gives the figures for
    cautions). Returns a :class:`matplotlib.figure.Figure`.
    """
    from matplotlib.colors import LogNorm
    from matplotlib.figure import Figure
    from matplotlib.tri import Triangulation

    from .plots import draw_fixture

    pf = solution.potential
    fx = solution.fixture
    fig = Figure(figsize=(7.0, 4.0), layout="constrained")
    ax = fig.add_subplot()
    e = pf.field_strength()
    x, y = pf.x * 1e3, pf.y * 1e3
    if window is None:
        bx0, by0, bx1, by1 = fx.geometry.bbox()
        pad = 0.1 * max(bx1 - bx0, by1 - by0)
        window = (0.0 if fx.axisymmetric else bx0 - pad, bx1 + pad, by0 - pad, by1 + pad)
    wx0, wx1, wy0, wy1 = (w * 1e3 for w in window)
    inside = (x >= wx0) & (x <= wx1) & (y >= wy0) & (y <= wy1) & (e > 0)
    tri = Triangulation(x, y, pf.triangles)
    # draw only the triangles near the window (the far field is most of the mesh)
    cx, cy = x[pf.triangles].mean(axis=1), y[pf.triangles].mean(axis=1)
    mx, my = 0.1 * (wx1 - wx0), 0.1 * (wy1 - wy0)
    tri.set_mask((cx < wx0 - mx) | (cx > wx1 + mx) | (cy < wy0 - my) | (cy > wy1 + my))
    positive = e[e > 0]
    lo = float(np.percentile(positive, 2)) if positive.size else 1e-3
    # the colour scale stops at 30 times the window's median field: a sharp edge's vertex
    # values are singular (they grow as the mesh is refined towards the edge) and would
    # darken everything else
    hi = 30 * float(np.median(e[inside])) if inside.any() else float(e.max())
    shown = np.clip(e, lo, max(hi, 10 * lo))
    mesh = ax.tripcolor(
        tri, shown, shading="gouraud", cmap="inferno", norm=LogNorm(lo, max(hi, 10 * lo))
    )
    fig.colorbar(mesh, ax=ax, label="|E| (V/m per V applied)", shrink=0.85)
    draw_fixture(fx, ax, labels=False, outline_only=True)
    if inside.any():
        from .guard import edge_field

        k = int(np.argmax(np.where(inside, e, -1.0)))
        ax.plot(x[k], y[k], marker="o", mfc="none", mec="cyan", ms=10, mew=1.5)
        try:  # the figure the caution states, not the mesh-dependent vertex value
            note = edge_field(solution).text()
        except CapbenchError:
            note = "edge field: see the caution"
        ax.annotate(
            note,
            (x[k], y[k]),
            xytext=(-8, 10),
            textcoords="offset points",
            ha="right",
            color="cyan",
            fontsize=8,
        )
    ax.set_xlim(wx0, wx1)
    ax.set_ylim(wy0, wy1)
    ax.set_aspect("equal")
    ax.set_title(f"{fx.name}: field strength per volt", fontsize=10)
    return fig


def spectrum_figure(extraction: Any) -> Any:
    """eps' and eps'' against frequency (log axis) with error bars k u, the closed
    parallel-plate form's eps' beside the corrected one. Returns a Figure."""
    from matplotlib.figure import Figure

    a = extraction.arrays()
    f = a["frequency"]
    if not np.all(np.isfinite(f)):
        raise InputError("the extraction has no frequencies to plot against", value=None)
    loss = "eps_loss" in a
    fig = Figure(figsize=(9.0 if loss else 5.5, 3.6), layout="constrained")
    axes = fig.subplots(1, 2 if loss else 1, squeeze=False)[0]
    axes[0].errorbar(
        f,
        a["eps_r"],
        yerr=a["U_eps_r"],
        fmt="o-",
        color="#1d6f8a",
        capsize=3,
        label="field-corrected",
    )
    axes[0].plot(f, a["eps_r_ideal"], "s:", color="#b5651d", label="parallel-plate formula")
    axes[0].set_ylabel("eps'")
    axes[0].legend(fontsize=8, frameon=False)
    if loss:
        axes[1].errorbar(
            f, a["eps_loss"], yerr=a["U_eps_loss"], fmt="o-", color="#7a3b69", capsize=3
        )
        axes[1].set_ylabel("eps''")
    for ax in axes:
        ax.set_xscale("log")
        ax.set_xlabel("frequency (Hz)")
        ax.grid(True, alpha=0.3)
    fig.suptitle(
        f"{extraction.method}: error bars are the expanded uncertainties (95 % coverage)",
        fontsize=10,
    )
    return fig


def png(fig: Any, dpi: int = 110) -> bytes:
    """A figure as PNG bytes (what the page caches and shows)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


def edge_caution(solution: Any, voltage: Any, label: str = "Test voltage [V]") -> tuple[str, bool]:
    """The edge-field caution of a solved fixture at a typed test voltage, and whether
    it is severe (the edge field reaches half of air's breakdown strength, the level at
    which :meth:`capbench.guard.EdgeField.caution` says HIGH).

    Raises
    ------
    InputError
        A voltage that is not a number with a voltage unit, or outside 0 V to 1 MV,
        the message starting with the box's label.
    """
    from . import guard

    volts = parse_value(voltage, label, "voltage")
    try:
        ef = guard.edge_field(solution, voltage=volts)
    except InputError as exc:
        raise _label_error(label, exc) from None
    severe = ef.governing * volts >= 0.5 * guard.AIR_BREAKDOWN
    return ef.caution(), severe


# --------------------------------------------------------------------------- guard and comparison


def guard_inputs(key: str, text: Any, label: str) -> Any:
    """A box of the guard-check form: "thicknesses" (lengths in m, a bare number in mm),
    "eps" (relative permittivities) or "target" (a percentage, returned as a fraction)."""
    raw = "" if text is None else str(text).strip()
    parts = _split(raw)
    if not parts:
        raise InputError(f"{plain(label)}: the box is empty", name=plain(label))
    if key == "thicknesses":
        unit = _trailing_unit(parts[-1]) or "mm"
        return [parse_value(_with_unit(p, unit), label, "length", limits="length") for p in parts]
    if key == "eps":
        return [parse_value(p, label, "number", limits="eps_r") for p in parts]
    if key == "target":
        pct = parse_value(raw.rstrip("%").strip(), label, "number")
        if not 0.001 <= pct <= 10:
            raise InputError(
                f"{plain(label)} = {raw!r}; valid: 0.001 % to 10 %", name=plain(label), value=pct
            )
        return pct / 100
    raise InputError(f"unknown guard box {key!r}", value=key)


def guard_rows(check: Any) -> list[dict[str, str]]:
    """The cases of a :class:`~capbench.guard.GuardCheck` as text rows."""
    rows = []
    for c in check.cases:
        rows.append(
            {
                "thickness": f"{compact(c.thickness * 1e3, 4)} mm",
                "eps'": compact(c.eps_r, 4),
                "gap / thickness": compact(c.guard_gap / c.thickness, 3),
                "effective diameter (field)": f"{c.diameter * 1e3:.5f} mm",
                "d1 + B g": f"{c.formula_diameter * 1e3:.5f} mm",
                "error with d1 + B g": f"{c.error_formula * 100:+.4f} %",
                "error with bare d1": f"{c.error_bare * 100:+.4f} %",
            }
        )
    return rows


def breakdown_rows(b: Any) -> list[dict[str, str]]:
    """The parts of a :class:`~capbench.compare.Breakdown` in pF and as shares."""
    total = b.measured if b.measured is not None else b.predicted
    rows = [
        {
            "part": name,
            "capacitance": f"{q.magnitude:.5f} pF",
            "share": f"{q.to('F').magnitude / total * 100:+.4f} %",
        }
        for name, q in b.parts().items()
    ]
    rows.append(
        {
            "part": "measured" if b.measured is not None else "predicted",
            "capacitance": f"{total * 1e12:.5f} pF",
            "share": "",
        }
    )
    return rows
