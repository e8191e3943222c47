"""A minimal reader of bench measurement files (``capbench-measurement/1``).

A measurement is a TOML file (the set-up, readable and commented, every value with its
unit: ``thickness = ["2.012 mm", ...]``) beside a CSV of readings, one row per reading:
frequency, capacitance and, optionally, dissipation factor; repeated readings at one
frequency are repeated rows. See ``fixtures/quillfield/`` for an example.

This reader only checks and converts; it builds no uncertainty model (the example in
``examples/extract_permittivity.py`` does that with :mod:`capbench.uncertainty`). Every
error is a :class:`~capbench.errors.FileFormatError` naming the file, the key (or row and
column) and the value.

TOML layout::

    schema = "capbench-measurement/1"
    [lab]         name, bench, date                      (text)
    [specimen]    id, description, thickness (list of lengths), micrometer (half-width)
    [fixture]     kind (a builder of capbench.rigs) and its arguments, with units
    [tolerances]  half-widths (rectangular) of fixture dimensions, e.g. electrode_radius
    [instrument]  name, capacitance_accuracy, dissipation_accuracy ("x % of reading + y")
    [conditions]  temperature, temperature_uncertainty
    [method]      name (contacting, ...), readings (CSV file, relative to the TOML file)
"""

from __future__ import annotations

import csv
import datetime
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .errors import CapbenchError, FileFormatError
from .geometry import Fixture
from .uncertainty import AccuracySpec
from .units import to_si

SCHEMA = "capbench-measurement/1"
METHODS = ("contacting", "air_gap", "micrometer", "two_fluid", "liquid")

# columns of the readings CSV: header text -> (field, kind of quantity, default unit)
_COLUMNS = {
    "frequency": ("frequency", "frequency", "Hz"),
    "capacitance": ("capacitance", "capacitance", "F"),
    "dissipation factor": ("dissipation", "dimensionless", ""),
}


@dataclass(frozen=True)
class Reading:
    """One row of the readings file, in SI: Hz, F, and D (None when not read)."""

    frequency: float
    capacitance: float
    dissipation: float | None


@dataclass(frozen=True)
class Measurement:
    """A measurement file's contents, checked and in SI units (lengths in m,
    temperature in degC)."""

    path: Path
    lab: str
    bench: str
    date: str
    specimen_id: str
    description: str
    fixture: Fixture
    thickness_readings: tuple[float, ...]
    micrometer_half_width: float
    tolerances: tuple[tuple[str, float], ...]
    instrument: str
    capacitance_accuracy: AccuracySpec
    dissipation_accuracy: AccuracySpec | None
    temperature: float
    temperature_uncertainty: float
    method: str
    readings: tuple[Reading, ...]

    @property
    def frequencies(self) -> tuple[float, ...]:
        """The distinct frequencies, ascending."""
        return tuple(sorted({r.frequency for r in self.readings}))

    def at(self, frequency: float) -> tuple[Reading, ...]:
        """The readings taken at ``frequency`` (Hz)."""
        rows = tuple(r for r in self.readings if r.frequency == frequency)
        if not rows:
            raise FileFormatError(
                f"{self.path.name}: no readings at {frequency:g} Hz; the file has "
                f"{list(self.frequencies)} Hz",
                value=frequency,
            )
        return rows


class _Table:
    """A TOML table with errors that name the file and the key."""

    def __init__(self, data: dict, path: Path, section: str):
        self.data = data
        self.path = path
        self.section = section

    def where(self, key: str) -> str:
        return f"{self.path.name}: [{self.section}] {key}"

    def get(self, key: str, default: Any = ...) -> Any:
        if key not in self.data:
            if default is ...:
                raise FileFormatError(
                    f"{self.where(key)} is missing; valid keys here: {sorted(self.data) or 'none'}",
                    file=str(self.path),
                    key=f"{self.section}.{key}",
                )
            return default
        return self.data[key]

    def text(self, key: str, default: Any = ...) -> str:
        value = self.get(key, default)
        if isinstance(value, (datetime.date, datetime.datetime)):
            return value.isoformat()
        if not isinstance(value, str):
            raise FileFormatError(
                f"{self.where(key)} = {value!r} must be text", file=str(self.path), value=value
            )
        return value

    def quantity(self, key: str, kind: str, value: Any = ..., default: Any = ...) -> float:
        raw = self.get(key, default) if value is ... else value
        if raw is None:
            return None  # type: ignore[return-value]
        if not isinstance(raw, (str, int, float)) or isinstance(raw, bool):
            raise FileFormatError(
                f"{self.where(key)} = {raw!r} must be a number with its unit, e.g. '2.0 mm'",
                file=str(self.path),
                value=raw,
            )
        try:
            return to_si(raw, kind, key)
        except CapbenchError as exc:
            raise FileFormatError(
                f"{self.where(key)} = {raw!r}: {exc}", file=str(self.path), value=raw
            ) from None


def read_measurement(path: str | Path, *, with_readings: bool = True) -> Measurement:
    """Read and check a ``capbench-measurement/1`` TOML file and its readings CSV
    (``with_readings=False``: the set-up only, ``readings`` empty).

    Raises
    ------
    FileFormatError
        Naming the file, key and value of the first problem found.
    """
    path = Path(path)
    try:
        with path.open("rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError:
        raise FileFormatError(f"{path}: no such file", file=str(path)) from None
    except tomllib.TOMLDecodeError as exc:
        raise FileFormatError(f"{path.name}: not valid TOML: {exc}", file=str(path)) from None
    if data.get("schema") != SCHEMA:
        raise FileFormatError(
            f"{path.name}: schema = {data.get('schema')!r}; this reader knows {SCHEMA!r}",
            file=str(path),
            value=data.get("schema"),
        )

    def table(name: str, required: bool = True) -> _Table:
        sec = data.get(name, None)
        if sec is None and not required:
            sec = {}
        if not isinstance(sec, dict):
            raise FileFormatError(
                f"{path.name}: [{name}] is missing or not a table", file=str(path), key=name
            )
        return _Table(sec, path, name)

    lab = table("lab")
    spec = table("specimen")
    fix = table("fixture")
    tol = table("tolerances", required=False)
    inst = table("instrument")
    cond = table("conditions")
    meth = table("method")

    thickness = spec.get("thickness")
    if not isinstance(thickness, list) or not thickness:
        raise FileFormatError(
            f"{spec.where('thickness')} = {thickness!r} must be a list of readings with units, "
            "e.g. ['2.012 mm', '2.015 mm']",
            file=str(path),
            value=thickness,
        )
    readings_t = tuple(
        spec.quantity(f"thickness[{i}]", "length", value=v) for i, v in enumerate(thickness)
    )
    fixture = _fixture(fix)
    tolerances = tuple((key, tol.quantity(key, "length")) for key in sorted(tol.data))
    for key, _v in tolerances:
        if key not in fixture.param_dict:
            raise FileFormatError(
                f"{tol.where(key)}: the {fixture.kind} has no dimension {key!r}; valid: "
                f"{sorted(fixture.param_dict)}",
                file=str(path),
                key=key,
            )
    cap_acc = _accuracy(inst, "capacitance_accuracy")
    d_acc = _accuracy(inst, "dissipation_accuracy", required=False)
    method = meth.text("name")
    if method not in METHODS:
        raise FileFormatError(
            f"{meth.where('name')} = {method!r}; valid: {list(METHODS)}",
            file=str(path),
            value=method,
        )
    csv_path = path.parent / meth.text("readings")
    return Measurement(
        path=path,
        lab=lab.text("name"),
        bench=lab.text("bench", ""),
        date=lab.text("date", ""),
        specimen_id=spec.text("id"),
        description=spec.text("description", ""),
        fixture=fixture,
        thickness_readings=readings_t,
        micrometer_half_width=spec.quantity("micrometer", "length", default="0 m"),
        tolerances=tolerances,
        instrument=inst.text("name", ""),
        capacitance_accuracy=cap_acc,
        dissipation_accuracy=d_acc,
        temperature=cond.quantity("temperature", "temperature"),
        temperature_uncertainty=_kelvin(cond, "temperature_uncertainty"),
        method=method,
        readings=read_readings(csv_path) if with_readings else (),
    )


def _kelvin(table: _Table, key: str) -> float:
    """A temperature difference in K ('0.3 K' or '0.3 delta_degC')."""
    raw = table.get(key, "0 K")
    from .units import Q_, parse_quantity

    try:
        q = parse_quantity(raw, key)
        return (
            float(q.to("K").magnitude)
            if q._is_multiplicative
            else float(Q_(q.magnitude, f"delta_{q.units}").to("K").magnitude)
        )
    except Exception as exc:  # pint raises several unrelated types here
        raise FileFormatError(
            f"{table.where(key)} = {raw!r} is not a temperature difference (e.g. '0.3 K'): {exc}",
            file=str(table.path),
            value=raw,
        ) from None


def _accuracy(table: _Table, key: str, required: bool = True) -> AccuracySpec | None:
    raw = table.get(key, ... if required else None)
    if raw is None:
        return None
    try:
        return AccuracySpec.parse(raw)
    except CapbenchError as exc:
        raise FileFormatError(
            f"{table.where(key)} = {raw!r}: {exc}", file=str(table.path), value=raw
        ) from None


def _fixture(table: _Table) -> Fixture:
    from .rigs import BUILDERS

    kind = table.text("kind")
    if kind not in BUILDERS:
        raise FileFormatError(
            f"{table.where('kind')} = {kind!r}; valid: {sorted(BUILDERS)}",
            file=str(table.path),
            value=kind,
        )
    args = {k: v for k, v in table.data.items() if k != "kind"}
    try:
        return BUILDERS[kind](**args)
    except TypeError as exc:
        raise FileFormatError(
            f"{table.path.name}: [fixture] arguments of {kind}: {exc}", file=str(table.path)
        ) from None
    except CapbenchError as exc:
        raise FileFormatError(
            f"{table.path.name}: [fixture]: {exc}", file=str(table.path)
        ) from None


def read_readings(path: str | Path) -> tuple[Reading, ...]:
    """Read a readings CSV: a header row naming the columns with units in brackets
    ("frequency [Hz]", "capacitance [pF]", "dissipation factor"), then one row per
    reading. Lines starting with '#' are comments."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise FileFormatError(f"{path}: readings file not found", file=str(path)) from None
    numbered = [
        (i, ln)
        for i, ln in enumerate(text.splitlines(), start=1)
        if ln.strip() and not ln.lstrip().startswith("#")
    ]
    rows = list(csv.reader([ln for _, ln in numbered]))
    line_of = [i for i, _ in numbered]
    if len(rows) < 2:
        raise FileFormatError(
            f"{path.name}: needs a header row and at least one reading", file=str(path)
        )
    columns = []
    for j, head in enumerate(rows[0]):
        name, _, unit = head.strip().partition("[")
        name = name.strip().lower()
        unit = unit.rstrip("]").strip()
        if name not in _COLUMNS:
            raise FileFormatError(
                f"{path.name}: column {j + 1} is {head.strip()!r}; valid columns: "
                f"{[f'{k} [unit]' for k in _COLUMNS]}",
                file=str(path),
                value=head,
            )
        columns.append((_COLUMNS[name], unit))
    fields = [c[0][0] for c in columns]
    for need in ("frequency", "capacitance"):
        if need not in fields:
            raise FileFormatError(f"{path.name}: no {need!r} column", file=str(path))
    out = []
    for k, row in enumerate(rows[1:], start=1):
        i = line_of[k]
        if len(row) != len(columns):
            raise FileFormatError(
                f"{path.name}: line {i} has {len(row)} values, the header {len(columns)}",
                file=str(path),
                row=i,
            )
        vals: dict[str, float] = {}
        for (spec, unit), cell in zip(columns, row, strict=True):
            field_name, kind, default = spec
            text_value = cell.strip()
            try:
                value = to_si(f"{text_value} {unit or default}".strip(), kind, field_name)
            except CapbenchError as exc:
                raise FileFormatError(
                    f"{path.name}: line {i}, {field_name} = {text_value!r}: {exc}",
                    file=str(path),
                    row=i,
                    value=text_value,
                ) from None
            vals[field_name] = value
        if vals["capacitance"] <= 0 or vals["frequency"] <= 0:
            raise FileFormatError(
                f"{path.name}: line {i}: frequency and capacitance must be > 0 (got {row})",
                file=str(path),
                row=i,
            )
        out.append(Reading(vals["frequency"], vals["capacitance"], vals.get("dissipation")))
    return tuple(out)
