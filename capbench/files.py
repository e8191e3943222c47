"""capbench's own file formats: fixture files, measurement files and readings tables.

Three formats, on open standards, each with a schema name and version written in it:

``capbench-fixture/1`` (TOML)
    One fixture: the builder that makes it (``kind``, a name of :data:`capbench.rigs.BUILDERS`)
    and the builder's arguments, every length with its unit (``gap = "2.5 mm"``); or, with
    ``kind = "custom"``, the cross-section written out as shapes. Written by
    :func:`fixture_to_toml` / :func:`write_fixture`, read by :func:`fixture_from_toml` /
    :func:`read_fixture`.
``capbench-measurement/1`` (TOML)
    A measurement: lab, operator, specimen (thickness readings), the fixture (inline, or
    ``file = "..."`` naming a fixture file), its drawing tolerances, the instrument's
    accuracy, the conditions and the method, with the readings in a CSV file beside it.
    Read by :func:`read_measurement`; :meth:`Measurement.extract` turns it into an
    :class:`~capbench.extract.Extraction` with its GUM budget.
``capbench-readings/1`` (CSV)
    One row per reading; a header row names the columns with units in brackets
    (``frequency [Hz],capacitance [pF],dissipation factor``); lines starting with ``#`` are
    comments (the schema line ``# schema: capbench-readings/1`` is optional). Repeated
    readings at one frequency are repeated rows. Read by :func:`read_readings`.

Every refusal is a :class:`~capbench.errors.FileFormatError` (an ``InputError`` and a
``ValueError``) naming the file, the line where it can be found, the key or column, the
bad value and what would be valid. Files are data only: TOML and CSV are parsed, never
executed or unpickled; files over :data:`MAX_TOML_BYTES` / :data:`MAX_CSV_BYTES`, nesting
deeper than :data:`MAX_DEPTH` and tables over :data:`MAX_ROWS` rows are refused.
:func:`safe_cell` neutralises spreadsheet formulas in exported CSV text.

Caution: the set-ups these files describe can carry high voltage; a file records a
measurement, it does not make one safe. Follow local electrical-safety codes and licensed
practice.
"""

from __future__ import annotations

import csv
import datetime
import inspect
import io
import math
import os
import re
import tempfile
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import CapbenchError, FileFormatError
from .geometry import (
    CONNECTIONS,
    MEDIUM,
    SYMMETRIES,
    Annulus,
    Circle,
    Compound,
    Conductor,
    Dielectric,
    Enclosure,
    Fixture,
    Geometry,
    OpenSpace,
    Plate,
    Polygon,
    Rect,
    RoundedRect,
)
from .uncertainty import AccuracySpec
from .units import NUMBER_PATTERN, parse_quantity, to_si

FIXTURE_SCHEMA = "capbench-fixture/1"
SCHEMA = "capbench-measurement/1"
READINGS_SCHEMA = "capbench-readings/1"
#: methods a measurement file can name, and what each needs in its readings table
METHODS = ("contacting", "air_gap", "liquid")

#: files larger than these are refused before they are parsed
MAX_TOML_BYTES = 1 << 20  # 1 MiB: a fixture or measurement file is a few kB
MAX_CSV_BYTES = 16 << 20  # 16 MiB
MAX_ROWS = 100_000
#: deepest nesting of tables and arrays a fixture or measurement file may have
MAX_DEPTH = 8
#: coordinates of a custom fixture's shapes: |x| at most this (m), like every length
MAX_COORDINATE = 10.0

# columns of the readings CSV: header name -> (field, kind of quantity, default unit)
_COLUMNS = {
    "frequency": ("frequency", "frequency", "Hz"),
    "capacitance": ("capacitance", "capacitance", "F"),
    "dissipation factor": ("dissipation", "dimensionless", ""),
    "empty capacitance": ("empty_capacitance", "capacitance", "F"),
    "empty dissipation factor": ("empty_dissipation", "dimensionless", ""),
}
# columns each method needs and may use
_METHOD_COLUMNS = {
    "contacting": (("frequency", "capacitance"), ("dissipation",)),
    "air_gap": (
        ("frequency", "capacitance", "empty_capacitance"),
        ("dissipation", "empty_dissipation"),
    ),
    "liquid": (
        ("frequency", "capacitance", "empty_capacitance"),
        ("dissipation", "empty_dissipation"),
    ),
}
# [method] keys each method accepts (beyond name and readings): key -> kind
_METHOD_OPTIONS = {
    "contacting": {"stray": "capacitance"},
    "air_gap": {"stray": "capacitance", "spacing": "length"},
    "liquid": {"empty_eps_r": "eps", "stray": "capacitance"},
}


#: longest refusal message; a longer one (quoting a huge value or key) keeps its start
#: and end, so it still names the file, line, key and what would be valid
MAX_MESSAGE_CHARS = 600


def _error(message: str, **details: Any) -> FileFormatError:
    """A FileFormatError whose message quotes a piece of a huge value, not all of it (a
    600 kB array once came back whole in a one-line refusal)."""
    if len(message) > MAX_MESSAGE_CHARS:
        cut = len(message) - 400 - 150
        message = f"{message[:400]} [... {cut:,} characters ...] {message[-150:]}"
    return FileFormatError(message, **details)


# --------------------------------------------------------------------------- reading TOML


def _read_bytes(path: Path, limit: int, what: str) -> bytes:
    try:
        size = path.stat().st_size
    except FileNotFoundError:
        raise _error(f"{path}: no such {what}", file=str(path)) from None
    except OSError as exc:
        raise _error(f"{path}: cannot read the {what}: {exc}", file=str(path)) from None
    if not path.is_file():
        raise _error(f"{path}: is not a file", file=str(path))
    if size > limit:
        raise _error(
            f"{path.name}: {size:,} bytes is over the {limit:,}-byte limit of a {what}",
            file=str(path),
            value=size,
            valid=(0, limit),
        )
    try:
        return path.read_bytes()
    except OSError as exc:
        raise _error(f"{path}: cannot read the {what}: {exc}", file=str(path)) from None


def _decode(data: bytes, source: str) -> str:
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise _error(
            f"{source}: byte {exc.start} is not UTF-8 text; save the file as UTF-8",
            file=source,
            value=exc.start,
        ) from None


def _depth(obj: Any, limit: int = MAX_DEPTH) -> int:
    """Nesting depth of tables and arrays, counted without recursion and stopping once
    past ``limit`` (a recursive count overflowed Python's stack on a file of a few
    hundred nested arrays that tomllib itself could still read)."""
    deepest = 0
    stack = [(obj, 0)]
    while stack:
        item, level = stack.pop()
        if isinstance(item, Mapping):
            children = item.values()
        elif isinstance(item, list):
            children = item
        else:
            deepest = max(deepest, level)
            continue
        deepest = max(deepest, level + 1)
        if deepest > limit:
            return deepest
        stack.extend((child, level + 1) for child in children)
    return deepest


def _parse_toml(text: str, source: str) -> dict:
    if len(text.encode("utf-8")) > MAX_TOML_BYTES:
        raise _error(
            f"{source}: over the {MAX_TOML_BYTES:,}-byte limit of a TOML file",
            file=source,
            valid=(0, MAX_TOML_BYTES),
        )
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise _error(f"{source}: not valid TOML: {exc}", file=source) from None
    except ValueError as exc:
        # tomllib lets Python's own limits through, e.g. an integer of more than 4300
        # digits ("Exceeds the limit ... for integer string conversion")
        raise _error(f"{source}: not a value capbench can read: {exc}", file=source) from None
    except RecursionError:
        raise _error(
            f"{source}: nested too deeply to read; valid: at most {MAX_DEPTH} levels",
            file=source,
            valid=(0, MAX_DEPTH),
        ) from None
    depth = _depth(data)
    if depth > MAX_DEPTH:
        raise _error(
            f"{source}: tables and arrays nested at least {depth} deep; valid: at most "
            f"{MAX_DEPTH} levels",
            file=source,
            value=depth,
            valid=(0, MAX_DEPTH),
        )
    return data


# a [table] or [[array]] header line; no two parts can match the same characters (the
# former "\s*([^\]]+?)\s*" took minutes on a line of "[" and a few thousand spaces)
_HEADER = re.compile(r"^\s*\[\[?([^\]]*)\]\]?\s*(?:#.*)?$")


def _line_of(text: str, section: str, key: str | None) -> int | None:
    """The line (1-based) where ``key`` is set in ``[section]`` ("" = top level), or
    where the section starts when ``key`` is None; None when not found."""
    current = ""
    want = re.compile(rf"^\s*[\"']?{re.escape(key)}[\"']?\s*=") if key else None
    # TOML's only line break is LF (CRLF ends in it); str.splitlines would also break at
    # form feeds and U+2028 inside strings and comments and miscount the lines
    for i, line in enumerate(text.split("\n"), start=1):
        line = line.removesuffix("\r")
        m = _HEADER.match(line)
        if m and "=" not in line.split("]")[0] and m.group(1).strip():
            current = "".join(m.group(1).replace('"', "").split())
            if key is None and current == section:
                return i
            continue
        if want is not None and current == section and want.match(line):
            return i
    return None


class _Doc:
    """A parsed TOML document that can say where a key is (file and line)."""

    def __init__(self, text: str, source: str, path: Path | None = None):
        self.text = text
        self.source = source
        self.path = path
        self.data = _parse_toml(text, source)

    def where(self, section: str, key: str | None = None) -> str:
        line = _line_of(self.text, section, key.split("[")[0] if key else None)
        at = f", line {line}" if line else ""
        if key is None:
            return f"{self.source}{at}: [{section}]" if section else f"{self.source}{at}"
        name = f"[{section}] {key}" if section else key
        return f"{self.source}{at}: {name}"

    def error(self, section: str, key: str | None, message: str, **details: Any) -> FileFormatError:
        return _error(
            f"{self.where(section, key)} {message}",
            file=self.source,
            key=f"{section}.{key}" if section and key else (key or section),
            line=_line_of(self.text, section, key.split("[")[0] if key else None),
            **details,
        )


class _Table:
    """One table of a document, with readers that refuse bad values by file, line, key."""

    def __init__(self, doc: _Doc, data: Mapping, section: str):
        self.doc = doc
        self.data = data
        self.section = section

    def error(self, key: str | None, message: str, **details: Any) -> FileFormatError:
        return self.doc.error(self.section, key, message, **details)

    def has(self, key: str) -> bool:
        return key in self.data

    def get(self, key: str, default: Any = ...) -> Any:
        if key not in self.data:
            if default is ...:
                valid = ", ".join(sorted(self.data)) or "none"
                raise self.error(None, f"has no {key!r}; it is required (keys here: {valid})")
            return default
        return self.data[key]

    def text(self, key: str, default: Any = ...) -> str:
        value = self.get(key, default)
        if isinstance(value, (datetime.date, datetime.datetime)):
            return value.isoformat()
        if not isinstance(value, str):
            raise self.error(key, f"= {value!r} must be text (in quotes)", value=value)
        if len(value) > 10_000:
            raise self.error(key, f"is {len(value):,} characters long; at most 10,000", value=None)
        return value

    def table(self, key: str, required: bool = True) -> _Table:
        value = self.data.get(key)
        if value is None and not required:
            value = {}
        name = f"{self.section}.{key}" if self.section else key
        if not isinstance(value, Mapping):
            raise self.doc.error(
                name if value is None else self.section,
                None if value is None else key,
                "is missing (a table is required here)"
                if value is None
                else f"= {value!r} must be a table [{name}]",
            )
        return _Table(self.doc, value, name)

    def quantity(self, key: str, kind: str, raw: Any = ..., default: Any = ...) -> float | None:
        """A value with its unit, converted to capbench's internal unit for ``kind``
        (no range check: the builders and methods check ranges with their own names)."""
        value = self.get(key, default) if raw is ... else raw
        if value is None:
            return None
        return _quantity(value, kind, lambda msg, **d: self.error(key, msg, **d))

    def eps(self, key: str, raw: Any = ..., default: Any = ...) -> complex | float | None:
        value = self.get(key, default) if raw is ... else raw
        if value is None:
            return None
        return _eps(value, lambda msg, **d: self.error(key, msg, **d))


_UNIT_EXAMPLE = {
    "length": "'2.5 mm'",
    "capacitance": "'20.6 pF'",
    "frequency": "'1 kHz'",
    "temperature": "'23 degC'",
    "dimensionless": "'0.0002'",
}


_UNITLESS = re.compile(rf"^{NUMBER_PATTERN}$")


def _zero(value: Any) -> bool:
    try:
        return float(value) == 0
    except (TypeError, ValueError):
        return False


def _quantity(value: Any, kind: str, fail) -> float:
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        raise fail(
            f"= {value!r} must be a number with its unit, e.g. {_UNIT_EXAMPLE.get(kind, '')}",
            value=repr(value),
        )
    unitless = not isinstance(value, str) or _UNITLESS.match(value.strip()) is not None
    if kind != "dimensionless" and unitless and _zero(value) is False:
        raise fail(
            f"= {value!r} has no unit; write it with its unit, e.g. {_UNIT_EXAMPLE.get(kind, '')}",
            value=value,
        )
    try:
        return to_si(value, kind, "value")
    except CapbenchError as exc:
        text = str(exc).replace("value = ", "", 1)
        raise fail(f"= {value!r}: {text}", value=value) from None


# eps' or eps' - eps''j; each part an unambiguous number (linear-time matching)
_COMPLEX = re.compile(
    rf"^{NUMBER_PATTERN}(?:[-+](?:(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)?[jJ])?$"
)
#: longest text read as a number or a permittivity
MAX_NUMBER_CHARS = 64


def _eps(value: Any, fail) -> complex | float:
    """A relative permittivity: a number, or text "eps' - eps''j" for a lossy one."""
    if isinstance(value, bool):
        raise fail(f"= {value!r} must be a relative permittivity (a number)", value=value)
    if isinstance(value, (int, float)):
        out: complex | float = float(value)
    elif isinstance(value, str):
        compact = value.replace(" ", "")
        try:
            if len(compact) > MAX_NUMBER_CHARS or not _COMPLEX.match(compact):
                raise ValueError(compact)
            z = complex(compact)
        except ValueError:
            raise fail(
                f"= {value!r} is not a relative permittivity; give a number (2.3) or, with "
                "loss, text such as '2.3 - 0.0005j' (eps' - j eps'')",
                value=value,
            ) from None
        out = z.real if z.imag == 0 else z
    else:
        raise fail(f"= {value!r} must be a relative permittivity (a number)", value=repr(value))
    re_part = out.real if isinstance(out, complex) else out
    if not (math.isfinite(re_part) and 1.0 <= re_part <= 1e4):
        raise fail(f"= {value!r}: eps' = {re_part:.6g} is outside the valid range 1 to 10000")
    if isinstance(out, complex) and not (
        math.isfinite(out.imag) and -10 * out.real <= out.imag <= 0
    ):
        raise fail(
            f"= {value!r}: the loss part must be between -10 eps' and 0 "
            "(eps_r = eps' - j eps'', eps'' >= 0)",
            value=value,
        )
    return out


# --------------------------------------------------------------------------- writing TOML


def _num(x: float) -> str:
    """A float as short text that reads back to within 1e-15 (15 significant digits)."""
    if x == 0:
        return "0"
    text = f"{float(f'{x:.15g}')!r}"
    return text[:-2] if text.endswith(".0") else text


def _mm(x: float) -> str:
    return f'"{_num(x * 1e3)} mm"'


def _toml_string(s: str) -> str:
    out = ['"']
    for ch in s:
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif ch == "\n":
            out.append("\\n")
        elif ch == "\t":
            out.append("\\t")
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _eps_text(eps: complex) -> str:
    eps = complex(eps)
    if eps.imag == 0:
        return _num(eps.real)
    return f'"{_num(eps.real)} - {_num(-eps.imag)}j"'


# --------------------------------------------------------------------------- fixtures


def _builder_kind(name: str) -> str:
    """How a builder argument is written: a length, a permittivity, a count, ..."""
    if name == "specimen":
        return "specimen"
    if name == "shield":
        return "shield"
    if name == "n_fingers":
        return "count"
    if name.endswith("eps_r"):
        return "eps"
    return "length"


def _builders() -> dict:
    from .rigs import BUILDERS

    return BUILDERS


# builder argument holding the specimen's permittivity, by builder
_SPECIMEN_EPS = {
    "guarded_cell": "specimen_eps_r",
    "coaxial_cell": "fill_eps_r",
    "coplanar_strips": "substrate_eps_r",
    "interdigitated": "substrate_eps_r",
}


def fixture_to_toml(fixture: Fixture, comment: str = "") -> str:
    """The fixture as a ``capbench-fixture/1`` TOML text.

    A fixture made by a builder is written as the builder's name and arguments, lengths
    in mm with their unit; its current permittivities are written too (a region whose
    permittivity was changed after building goes in a ``[permittivity]`` table). A
    ``kind = "custom"`` fixture is written as its shapes.

    Parameters
    ----------
    fixture : Fixture
    comment : str
        Lines written as TOML comments at the top (e.g. who made the file and why).

    Returns
    -------
    str
        TOML text; :func:`fixture_from_toml` reads it back to an equal fixture (lengths
        to within 1e-15 relative).
    """
    if not isinstance(fixture, Fixture):
        raise _error(
            f"fixture_to_toml needs a capbench Fixture, got {type(fixture).__name__}",
            value=type(fixture).__name__,
        )
    head = [
        f"# capbench fixture file ({FIXTURE_SCHEMA}); read it with capbench.files.read_fixture",
        "# Lengths carry their units; permittivities are relative (eps' - eps''j with loss).",
    ]
    head += [f"# {line}" if line else "#" for line in comment.splitlines()]
    head += [
        "# Caution: fixtures can carry high voltage; follow local codes and licensed practice.",
        "",
        f"schema = {_toml_string(FIXTURE_SCHEMA)}",
        f"kind = {_toml_string(fixture.kind)}",
        f"name = {_toml_string(fixture.name)}",
    ]
    if fixture.kind == "custom":
        return "\n".join(head + _custom_lines(fixture)) + "\n"
    if fixture.kind not in _builders():
        raise _error(
            f"fixture kind {fixture.kind!r} has no builder; valid: {sorted(_builders())} "
            "or 'custom'",
            value=fixture.kind,
        )
    params = dict(fixture.params)
    actual = fixture.geometry.permittivities()
    # the params may lag a later with_permittivity: write the fixture's real values
    eps_key = _SPECIMEN_EPS.get(fixture.kind)
    if fixture.specimen and eps_key in params:
        params[eps_key] = actual[fixture.specimen]
    if fixture.specimen and params.get("specimen") is not None:
        from dataclasses import replace

        params["specimen"] = replace(params["specimen"], eps_r=actual[fixture.specimen])
    if "medium_eps_r" in params:
        params["medium_eps_r"] = actual[MEDIUM]
    lines: list[str] = []
    tables: list[str] = []
    order = list(inspect.signature(_builders()[fixture.kind]).parameters)
    for key, value in sorted(params.items(), key=lambda kv: order.index(kv[0])):
        if value is None:
            continue
        how = _builder_kind(key)
        if how == "specimen":
            tables += ["", "[specimen]"]
            tables.append(f"thickness = {_mm(value.thickness)}")
            tables.append(f"eps_r = {_eps_text(value.eps_r)}")
            if value.radius is not None:
                tables.append(f"radius = {_mm(value.radius)}")
            if value.lift:
                tables.append(f"lift = {_mm(value.lift)}")
        elif how == "shield":
            from . import validate as v

            radius, height = value
            lines.append(
                f"shield = [{_mm(v.length(radius, 'shield radius'))}, "
                f"{_mm(v.length(height, 'shield height'))}]  # grounded can: radius, height"
            )
        elif how == "count":
            lines.append(f"{key} = {int(value)}")
        elif how == "eps":
            lines.append(f"{key} = {_eps_text(value)}")
        else:
            lines.append(f"{key} = {_mm(value)}")
    text = "\n".join(head + lines + tables) + "\n"
    # a permittivity the builder's arguments cannot carry (a changed dielectric of
    # another name) goes in an explicit table, so the file always reads back equal
    rebuilt = fixture_from_toml(text, source="<written fixture>").geometry.permittivities()
    extra = {k: e for k, e in actual.items() if complex(rebuilt.get(k, math.nan)) != complex(e)}
    if extra:
        text += "\n[permittivity]\n" + "".join(
            f"{_toml_string(k)} = {_eps_text(e)}\n" for k, e in sorted(extra.items())
        )
    return text


def _shape_fields(shape: Any) -> list[tuple[str, str]]:
    if isinstance(shape, Rect):
        kind, keys = "rect", ("x0", "y0", "x1", "y1")
    elif isinstance(shape, RoundedRect):
        kind, keys = "rounded_rect", ("x0", "y0", "x1", "y1", "radius")
    elif isinstance(shape, Plate):
        kind, keys = "plate", ("x0", "y0", "x1", "y1")
    elif isinstance(shape, Circle):
        kind, keys = "circle", ("cx", "cy", "radius")
    elif isinstance(shape, Annulus):
        kind, keys = "annulus", ("cx", "cy", "inner", "outer")
    elif isinstance(shape, Polygon):
        pts = ", ".join(f"[{_mm(x)}, {_mm(y)}]" for x, y in shape.points)
        return [("shape", '"polygon"'), ("points", f"[{pts}]")]
    elif isinstance(shape, Compound):
        parts = ", ".join(
            "{" + ", ".join(f"{k} = {v}" for k, v in _shape_fields(s)) + "}" for s in shape.shapes
        )
        return [("shape", '"compound"'), ("parts", f"[{parts}]")]
    else:  # pragma: no cover - every shape of geometry is handled above
        raise _error(f"cannot write a shape of type {type(shape).__name__}")
    return [("shape", f'"{kind}"')] + [(k, _mm(getattr(shape, k))) for k in keys]


def _custom_lines(fx: Fixture) -> list[str]:
    g = fx.geometry
    out = [
        f"symmetry = {_toml_string(g.symmetry)}",
        f"high = {_toml_string(fx.high)}",
        f"low = {_toml_string(fx.low)}",
        f"connection = {_toml_string(fx.connection)}",
        f"medium_eps_r = {_eps_text(g.medium_eps_r)}",
    ]
    if fx.length is not None:
        out.append(f"length = {_mm(fx.length)}")
    if fx.specimen is not None:
        out.append(f"specimen = {_toml_string(fx.specimen)}")
    b = g.boundary
    out += ["", "[boundary]"]
    if isinstance(b, Enclosure):
        out.append('type = "enclosure"')
        out += [f"{k} = {_mm(getattr(b, k))}" for k in ("x0", "y0", "x1", "y1")]
    else:
        out.append('type = "open"')
        if b.ground_plane is not None:
            out.append(f"ground_plane = {_mm(b.ground_plane)}")
    for c in g.conductors:
        out += ["", "[[conductor]]", f"name = {_toml_string(c.name)}"]
        out += [f"{k} = {v}" for k, v in _shape_fields(c.shape)]
    for d in g.dielectrics:
        out += ["", "[[dielectric]]", f"name = {_toml_string(d.name)}"]
        out.append(f"eps_r = {_eps_text(d.eps_r)}")
        out += [f"{k} = {v}" for k, v in _shape_fields(d.shape)]
    return out


def fixture_from_toml(text: str, source: str = "<fixture>") -> Fixture:
    """Read a ``capbench-fixture/1`` TOML text.

    Parameters
    ----------
    text : str
        The file's contents.
    source : str
        The name errors give for the text (a file name).

    Returns
    -------
    Fixture

    Raises
    ------
    FileFormatError
        Naming the source, the line, the key, the bad value and what would be valid.
    """
    if not isinstance(text, str):
        raise _error(f"{source}: fixture text must be str, got {type(text).__name__}", file=source)
    doc = _Doc(text, source)
    top = _Table(doc, doc.data, "")
    schema = top.get("schema", None)
    if schema != FIXTURE_SCHEMA:
        raise top.error(
            "schema",
            f"= {schema!r}; this reader knows {FIXTURE_SCHEMA!r} (write that line at the top)",
            value=schema,
        )
    return _fixture(top, skip=("schema",))


def _fixture(table: _Table, skip: tuple[str, ...] = ()) -> Fixture:
    """A fixture from a table: a builder's kind and arguments, or custom shapes."""
    builders = _builders()
    kind = table.text("kind")
    if kind == "custom":
        return _custom_fixture(table, skip)
    if kind not in builders:
        raise table.error("kind", f"= {kind!r}; valid: {sorted(builders)} or 'custom'", value=kind)
    builder = builders[kind]
    accepted = [p for p in inspect.signature(builder).parameters if p != "name"]
    args: dict[str, Any] = {}
    for key, raw in table.data.items():
        if key in (*skip, "kind", "permittivity"):
            continue
        if key == "name":
            args["name"] = table.text("name")
            continue
        if key not in accepted:
            raise table.error(
                key, f"is not an argument of {kind}; valid: {sorted(accepted)}", value=key
            )
        how = _builder_kind(key)
        if how == "specimen":
            args[key] = _specimen(table.table(key))
        elif how == "shield":
            if not (isinstance(raw, list) and len(raw) == 2):
                raise table.error(
                    key,
                    f"= {raw!r} must be [radius, height] of the grounded can, e.g. "
                    "['45 mm', '9 mm']",
                    value=repr(raw),
                )
            args[key] = tuple(
                table.quantity(f"{key}[{i}]", "length", raw=x) for i, x in enumerate(raw)
            )
        elif how == "count":
            if isinstance(raw, bool) or not isinstance(raw, int):
                raise table.error(key, f"= {raw!r} must be a whole number, e.g. 12", value=raw)
            args[key] = raw
        elif how == "eps":
            args[key] = table.eps(key)
        else:
            args[key] = table.quantity(key, "length")
    try:
        fx = builder(**args)
    except TypeError as exc:
        raise table.error(None, f"arguments of {kind}: {exc}") from None
    except CapbenchError as exc:
        key = getattr(exc, "name", None)
        key = key if isinstance(key, str) and key in table.data else None
        given = f"= {table.data[key]!r} " if key else ""
        raise table.error(
            key, f"{given}({kind}): {exc}", value=getattr(exc, "value", None)
        ) from None
    return _apply_permittivity(table, fx)


def _apply_permittivity(table: _Table, fx: Fixture) -> Fixture:
    if "permittivity" not in table.data:
        return fx
    eps_table = table.table("permittivity")
    regions = fx.geometry.permittivities()
    for region in eps_table.data:
        if region not in regions:
            raise eps_table.error(
                region, f"is not a region of this fixture; valid: {sorted(regions)}"
            )
        fx = fx.with_permittivity(region, eps_table.eps(region))
    return fx


def _specimen(table: _Table):
    from .rigs import Specimen

    allowed = {"thickness", "eps_r", "radius", "lift"}
    for key in table.data:
        if key not in allowed:
            raise table.error(key, f"is not a specimen key; valid: {sorted(allowed)}")
    try:
        return Specimen(
            thickness=table.quantity("thickness", "length"),
            eps_r=table.eps("eps_r", default=2.0),
            radius=table.quantity("radius", "length", default=None),
            lift=table.quantity("lift", "length", default=0.0),
        )
    except FileFormatError:
        raise
    except CapbenchError as exc:
        raise table.error(None, f": {exc}") from None


_SHAPES = {
    "rect": (Rect, ("x0", "y0", "x1", "y1")),
    "rounded_rect": (RoundedRect, ("x0", "y0", "x1", "y1", "radius")),
    "plate": (Plate, ("x0", "y0", "x1", "y1")),
    "circle": (Circle, ("cx", "cy", "radius")),
    "annulus": (Annulus, ("cx", "cy", "inner", "outer")),
    "polygon": (Polygon, ("points",)),
    "compound": (Compound, ("parts",)),
}


def _coordinate(table: _Table, key: str, raw: Any) -> float:
    x = table.quantity(key, "length", raw=raw)
    if not abs(x) <= MAX_COORDINATE:
        raise table.error(
            key,
            f"= {raw!r} is outside the valid range -10 m to 10 m",
            value=x,
            unit="m",
            valid=(-MAX_COORDINATE, MAX_COORDINATE),
        )
    return x


def _shape(table: _Table, data: Mapping, where: str, nested: bool = False):
    kind = data.get("shape")
    if kind not in _SHAPES or (nested and kind == "compound"):
        valid = sorted(k for k in _SHAPES if not (nested and k == "compound"))
        raise table.error(f"{where}shape", f"= {kind!r}; valid: {valid}", value=kind)
    cls, keys = _SHAPES[kind]
    unknown = set(data) - set(keys) - {"shape", "name", "eps_r"}
    if unknown:
        raise table.error(
            f"{where}{sorted(unknown)[0]}",
            f"is not a key of a {kind}; valid: {sorted(keys)}",
        )
    missing = [k for k in keys if k not in data]
    if missing:
        raise table.error(f"{where}shape", f"= {kind!r} needs {missing}")
    try:
        if kind == "polygon":
            pts = data["points"]
            if not isinstance(pts, list) or not all(
                isinstance(p, list) and len(p) == 2 for p in pts
            ):
                raise table.error(
                    f"{where}points",
                    "must be a list of [x, y] pairs with units, e.g. [['0 mm', '0 mm'], ...]",
                )
            if len(pts) > 10_000:
                raise table.error(f"{where}points", f"has {len(pts)} points; at most 10,000")
            return Polygon(
                tuple(
                    (
                        _coordinate(table, f"{where}points[{i}]", x),
                        _coordinate(table, f"{where}points[{i}]", y),
                    )
                    for i, (x, y) in enumerate(pts)
                )
            )
        if kind == "compound":
            parts = data["parts"]
            if not isinstance(parts, list) or not all(isinstance(p, Mapping) for p in parts):
                raise table.error(f"{where}parts", "must be a list of inline shape tables")
            return Compound(
                tuple(
                    _shape(table, p, f"{where}parts[{i}].", nested=True)
                    for i, p in enumerate(parts)
                )
            )
        return cls(*(_coordinate(table, f"{where}{k}", data[k]) for k in keys))
    except FileFormatError:
        raise
    except CapbenchError as exc:
        raise table.error(f"{where}shape", f"({kind}): {exc}") from None


def _custom_fixture(table: _Table, skip: tuple[str, ...]) -> Fixture:
    allowed = {
        *skip,
        "kind",
        "name",
        "symmetry",
        "high",
        "low",
        "connection",
        "medium_eps_r",
        "length",
        "specimen",
        "boundary",
        "conductor",
        "dielectric",
        "permittivity",
    }
    for key in table.data:
        if key not in allowed:
            raise table.error(key, f"is not a key of a custom fixture; valid: {sorted(allowed)}")
    symmetry = table.text("symmetry")
    if symmetry not in SYMMETRIES:
        raise table.error("symmetry", f"= {symmetry!r}; valid: {list(SYMMETRIES)}")
    parts = {}
    for group in ("conductor", "dielectric"):
        items = table.get(group, [])
        if not isinstance(items, list) or not all(isinstance(x, Mapping) for x in items):
            raise table.error(group, f"must be an array of tables [[{group}]]")
        if len(items) > 1000:
            raise table.error(group, f"has {len(items)} parts; at most 1000")
        parts[group] = items
    conductors = []
    for i, data in enumerate(parts["conductor"]):
        sub = _Table(table.doc, data, "conductor")
        conductors.append(Conductor(sub.text("name"), _shape(sub, data, "")))
        del i
    dielectrics = []
    for data in parts["dielectric"]:
        sub = _Table(table.doc, data, "dielectric")
        dielectrics.append(Dielectric(sub.text("name"), _shape(sub, data, ""), sub.eps("eps_r")))
    bt = table.table("boundary", required=False)
    btype = bt.text("type", "open")
    try:
        if btype == "open":
            boundary: Any = OpenSpace(bt.quantity("ground_plane", "length", default=None))
        elif btype == "enclosure":
            boundary = Enclosure(*(_coordinate(bt, k, bt.get(k)) for k in ("x0", "y0", "x1", "y1")))
        else:
            raise bt.error("type", f"= {btype!r}; valid: ['open', 'enclosure']", value=btype)
        geom = Geometry(
            symmetry,
            tuple(conductors),
            tuple(dielectrics),
            medium_eps_r=table.eps("medium_eps_r", default=1.0),
            boundary=boundary,
        )
        connection = table.text("connection", "pair")
        if connection not in CONNECTIONS:
            raise table.error("connection", f"= {connection!r}; valid: {list(CONNECTIONS)}")
        length = table.quantity("length", "length", default=None)
        fx = Fixture(
            geom,
            high=table.text("high"),
            low=table.text("low"),
            connection=connection,
            name=table.text("name", ""),
            kind="custom",
            length=length,
            specimen=table.text("specimen", None) if table.has("specimen") else None,
        )
    except FileFormatError:
        raise
    except CapbenchError as exc:
        raise table.error(None, f"(custom fixture): {exc}") from None
    return _apply_permittivity(table, fx)


def write_fixture(fixture: Fixture, path: str | os.PathLike, comment: str = "") -> Path:
    """Write ``fixture`` to ``path`` as a ``capbench-fixture/1`` file (atomically: a
    crash leaves the old file or the new one, never half of one)."""
    path = Path(path)
    _atomic_write(path, fixture_to_toml(fixture, comment))
    return path


def read_fixture(path: str | os.PathLike) -> Fixture:
    """Read a ``capbench-fixture/1`` file; errors name the file, line, key and value."""
    path = Path(path)
    text = _decode(_read_bytes(path, MAX_TOML_BYTES, "fixture file"), path.name)
    return fixture_from_toml(text, source=path.name)


def _atomic_write(path: Path, text: str) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        with _suppress():
            os.unlink(tmp)
        raise


class _suppress:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return True


# --------------------------------------------------------------------------- readings


@dataclass(frozen=True)
class Reading:
    """One row of a readings table, in SI: Hz, F, and D (None where not read).

    ``line``: the row's line in its file (for messages)."""

    frequency: float
    capacitance: float
    dissipation: float | None = None
    empty_capacitance: float | None = None
    empty_dissipation: float | None = None
    line: int = 0


def read_readings(path: str | os.PathLike) -> tuple[Reading, ...]:
    """Read a ``capbench-readings/1`` CSV file.

    The header row names the columns with units in brackets: ``frequency [Hz]``,
    ``capacitance [pF]``, ``dissipation factor``, ``empty capacitance [pF]``, ``empty
    dissipation factor``; one row per reading follows. Lines starting with ``#`` are
    comments. Decimal points, not commas.

    Raises
    ------
    FileFormatError
        Naming the file, line, column and value of the first problem.
    """
    path = Path(path)
    text = _decode(_read_bytes(path, MAX_CSV_BYTES, "readings file"), path.name)
    return readings_from_csv(text, source=path.name)


def readings_from_csv(text: str, source: str = "<readings>") -> tuple[Reading, ...]:
    """Read a readings table from CSV text (see :func:`read_readings`)."""
    numbered = []
    # the line breaks of CSV (and of editors) only: a form feed or U+2028 inside a cell is
    # part of the cell, not a new line that would shift every line number after it
    for i, line in enumerate(re.split(r"\r\n|\r|\n", text), start=1):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            m = re.match(r"#\s*schema\s*:\s*(\S+)", stripped)
            if m and m.group(1) != READINGS_SCHEMA:
                raise _error(
                    f"{source}, line {i}: schema {m.group(1)!r}; this reader knows "
                    f"{READINGS_SCHEMA!r}",
                    file=source,
                    line=i,
                    value=m.group(1),
                )
            continue
        numbered.append((i, line))
        if len(numbered) > MAX_ROWS + 1:
            raise _error(
                f"{source}: more than {MAX_ROWS:,} readings; split the table",
                file=source,
                valid=(1, MAX_ROWS),
            )
    if len(numbered) < 2:
        raise _error(
            f"{source}: needs a header row (e.g. 'frequency [Hz],capacitance [pF]') and at "
            "least one reading",
            file=source,
        )
    rows = []
    for i, ln in numbered:
        # one line, one row: a quoted cell may not run on to the next line (the row
        # count would no longer match the line numbers the messages give)
        try:
            parsed = list(csv.reader([ln], strict=True))
        except csv.Error as exc:
            raise _error(
                f"{source}, line {i}: not a valid CSV row ({exc}); write one reading per line, "
                "plain numbers separated by commas",
                file=source,
                line=i,
            ) from None
        if len(parsed) != 1:
            raise _error(
                f"{source}, line {i}: a quoted cell runs past the end of the line; write one "
                "reading per line, plain numbers separated by commas",
                file=source,
                line=i,
            )
        rows.append(parsed[0])
    header_line = numbered[0][0]
    columns = []
    seen = set()
    for j, head in enumerate(rows[0], start=1):
        name, _, unit = head.strip().partition("[")
        name = " ".join(name.lower().split())
        unit = unit.rstrip().rstrip("]").strip()
        if name not in _COLUMNS:
            raise _error(
                f"{source}, line {header_line}: column {j} is {head.strip()!r}; valid "
                f"columns: {', '.join(_column_help())}",
                file=source,
                line=header_line,
                value=head,
            )
        spec = _COLUMNS[name]
        if spec[0] in seen:
            raise _error(
                f"{source}, line {header_line}: column {name!r} appears twice",
                file=source,
                line=header_line,
                value=name,
            )
        seen.add(spec[0])
        if unit:
            try:
                to_si(f"1 {unit}", spec[1], name)
            except CapbenchError:
                raise _error(
                    f"{source}, line {header_line}: column {j} {head.strip()!r}: {unit!r} is "
                    f"not a unit of {spec[1]} (e.g. [{spec[2] or '-'}]"
                    f"{', [pF]' if spec[1] == 'capacitance' else ''})",
                    file=source,
                    line=header_line,
                    value=unit,
                ) from None
        elif spec[1] != "dimensionless":
            example = "pF" if spec[1] == "capacitance" else spec[2]
            raise _error(
                f"{source}, line {header_line}: column {j} {head.strip()!r} has no unit; "
                f"write it in brackets, e.g. '{name} [{example}]'",
                file=source,
                line=header_line,
                value=head,
            )
        columns.append((spec, unit))
    for need in ("frequency", "capacitance"):
        if need not in seen:
            raise _error(
                f"{source}, line {header_line}: no {need!r} column; the header has "
                f"{[h.strip() for h in rows[0]]}",
                file=source,
                line=header_line,
            )
    out = []
    for (i, _line), row in zip(numbered[1:], rows[1:], strict=True):
        if len(row) != len(columns):
            hint = " (a decimal comma? write 20.61, not 20,61)" if len(row) > len(columns) else ""
            raise _error(
                f"{source}, line {i}: {len(row)} values, the header has {len(columns)}{hint}",
                file=source,
                line=i,
                value=len(row),
            )
        vals: dict[str, float] = {}
        for (spec, unit), cell in zip(columns, row, strict=True):
            field_name, kind, default = spec
            text_value = cell.strip()
            if field_name != "frequency" and field_name != "capacitance" and text_value == "":
                continue  # an optional reading left blank
            try:
                if len(text_value) > MAX_NUMBER_CHARS or not _UNITLESS.match(text_value):
                    raise ValueError(text_value)
                value = to_si(f"{text_value} {unit or default}".strip(), kind, field_name)
            except (ValueError, CapbenchError):
                formula = text_value.startswith(("=", "@")) or (
                    text_value[:1] in "+-" and not re.match(r"[-+][\d.]", text_value)
                )
                what = (
                    "looks like a spreadsheet formula; capbench reads only"
                    if formula
                    else "is not a number; write"
                )
                raise _error(
                    f"{source}, line {i}: {field_name.replace('_', ' ')} = {text_value[:80]!r} "
                    f"{what} plain numbers such as 20.613 or 1e3 (the unit goes in the header)",
                    file=source,
                    line=i,
                    key=field_name,
                    value=text_value,
                ) from None
            vals[field_name] = value
        _check_row(vals, source, i, row)
        out.append(
            Reading(
                vals["frequency"],
                vals["capacitance"],
                vals.get("dissipation"),
                vals.get("empty_capacitance"),
                vals.get("empty_dissipation"),
                i,
            )
        )
    return tuple(out)


def _column_help() -> list[str]:
    return [
        "frequency [Hz]",
        "capacitance [pF]",
        "dissipation factor",
        "empty capacitance [pF]",
        "empty dissipation factor",
    ]


def _check_row(vals: dict[str, float], source: str, line: int, row: list[str]) -> None:
    from . import validate

    limits = {
        "frequency": "frequency",
        "capacitance": "capacitance",
        "empty_capacitance": "capacitance",
        "dissipation": "loss",
        "empty_dissipation": "loss",
    }
    for key, value in vals.items():
        try:
            validate.check(value, limits[key], key.replace("_", " "), positive=False)
            if key in ("frequency", "capacitance", "empty_capacitance"):
                validate.check(value, limits[key], key.replace("_", " "))
        except CapbenchError as exc:
            raise _error(
                f"{source}, line {line}: {exc}", file=source, line=line, key=key, value=value
            ) from None


# --------------------------------------------------------------------------- measurements


@dataclass(frozen=True)
class Measurement:
    """A measurement file's contents, checked and in SI units (lengths in m,
    temperature in degC, temperature uncertainty in K).

    ``tolerances``: (builder argument, half-width in m) pairs of the fixture's drawing
    tolerances; ``method_options``: the method's extra settings ([method] table) in SI;
    ``text``: the TOML text as read (the bench log keeps it).
    """

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
    operator: str = ""
    method_options: tuple[tuple[str, Any], ...] = ()
    readings_file: str = ""
    text: str = field(default="", repr=False)

    @property
    def frequencies(self) -> tuple[float, ...]:
        """The distinct frequencies, ascending."""
        return tuple(sorted({r.frequency for r in self.readings}))

    def at(self, frequency: float) -> tuple[Reading, ...]:
        """The readings taken at ``frequency`` (Hz)."""
        rows = tuple(r for r in self.readings if r.frequency == frequency)
        if not rows:
            raise _error(
                f"{self.path.name}: no readings at {frequency:g} Hz; the file has "
                f"{list(self.frequencies)} Hz",
                value=frequency,
            )
        return rows

    @property
    def thickness(self):
        """The specimen's thickness: mean of the micrometer readings (type A) plus the
        micrometer's calibration error (type B, rectangular), in mm."""
        from . import uncertainty as unc
        from .units import Q_

        readings = [Q_(t * 1e3, "mm") for t in self.thickness_readings]
        if len(readings) == 1:
            mean = unc.type_b(readings[0], u="0 mm", name="specimen thickness (one reading)")
        else:
            mean = unc.type_a(readings, "specimen thickness (micrometer readings)")
        if self.micrometer_half_width <= 0:
            return mean
        calibration = unc.type_b(
            Q_(0.0, "mm"),
            half_width=Q_(self.micrometer_half_width * 1e3, "mm"),
            name="micrometer calibration",
        )
        return mean + calibration

    def _bridge(self, values: list[float], spec: AccuracySpec | None, what: str, unit: str):
        from . import uncertainty as unc
        from .units import Q_

        scale = 1e12 if unit == "pF" else 1.0
        qs = [Q_(x * scale, unit) if unit else x for x in values]
        if len(qs) == 1:
            mean = unc.type_b(qs[0], u=f"0 {unit}".strip(), name=f"{what} (one reading)")
        else:
            mean = unc.type_a(qs, f"{what} readings")
        return mean if spec is None else spec.apply(mean, f"bridge accuracy, {what}")

    def inputs(self) -> dict[str, Any]:
        """The uncertain inputs of the extraction, built from the file.

        Per frequency: the mean of the repeated readings (type A; a single reading has no
        type A part) plus the bridge's accuracy specification (type B, rectangular,
        taken as independent between frequencies and between empty and loaded
        readings, a conservative choice). The thickness as :attr:`thickness`; each
        toleranced dimension as its nominal value with a rectangular half-width.
        Returns keyword arguments for the method of :mod:`capbench.extract`.
        """
        from . import uncertainty as unc
        from .units import Q_

        caps, losses, empties, empty_losses = [], [], [], []
        for f in self.frequencies:
            rows = self.at(f)
            tag = f"{f:g} Hz"
            caps.append(
                self._bridge(
                    [r.capacitance for r in rows], self.capacitance_accuracy, f"C {tag}", "pF"
                )
            )
            if all(r.dissipation is not None for r in rows):
                losses.append(
                    self._bridge(
                        [r.dissipation for r in rows], self.dissipation_accuracy, f"D {tag}", ""
                    )
                )
            if all(r.empty_capacitance is not None for r in rows):
                empties.append(
                    self._bridge(
                        [r.empty_capacitance for r in rows],
                        self.capacitance_accuracy,
                        f"empty C {tag}",
                        "pF",
                    )
                )
            if all(r.empty_dissipation is not None for r in rows):
                empty_losses.append(
                    self._bridge(
                        [r.empty_dissipation for r in rows],
                        self.dissipation_accuracy,
                        f"empty D {tag}",
                        "",
                    )
                )
        n = len(self.frequencies)
        params = self.fixture.param_dict
        dims = {
            name: unc.type_b(
                Q_(params[name] * 1e3, "mm"),
                half_width=Q_(half * 1e3, "mm"),
                name=f"{name.replace('_', ' ')} (drawing tolerance)",
            )
            for name, half in self.tolerances
        }
        kw: dict[str, Any] = {"frequency": list(self.frequencies), "dimensions": dims or None}
        opts = dict(self.method_options)
        if self.method == "contacting":
            kw.update(capacitance=caps, thickness=self.thickness)
            if len(losses) == n:
                kw["dissipation"] = losses
        elif self.method == "air_gap":
            kw.update(empty=empties, loaded=caps, thickness=self.thickness)
            if len(losses) == n:
                kw["dissipation"] = losses
            if len(empty_losses) == n:
                kw["empty_dissipation"] = empty_losses
            if "spacing" in opts:
                kw["spacing"] = opts["spacing"]
        elif self.method == "liquid":
            kw.update(empty=empties, filled=caps)
            if len(losses) == n:
                kw["dissipation"] = losses
            if len(empty_losses) == n:
                kw["empty_dissipation"] = empty_losses
            if "empty_eps_r" in opts:
                kw["empty_eps_r"] = opts["empty_eps_r"]
        if "stray" in opts:
            kw["stray"] = opts["stray"]
        return kw

    def extract(self, rtol: float = 1e-6, fem: bool = True):
        """Run the file's method on its readings with the uncertain inputs of
        :meth:`inputs`; returns an :class:`~capbench.extract.Extraction`."""
        from . import extract

        method = getattr(extract, self.method)
        return method(self.fixture, **self.inputs(), fem=fem, rtol=rtol)


_MEASUREMENT_TABLES = {
    "schema",
    "lab",
    "specimen",
    "fixture",
    "tolerances",
    "instrument",
    "conditions",
    "method",
}


def read_measurement(path: str | os.PathLike, *, with_readings: bool = True) -> Measurement:
    """Read and check a ``capbench-measurement/1`` TOML file and its readings CSV
    (``with_readings=False``: the set-up only, ``readings`` empty).

    Layout::

        schema = "capbench-measurement/1"
        [lab]         name, bench, date, operator                   (text)
        [specimen]    id, description, thickness (list of lengths), micrometer (half-width)
        [fixture]     kind (a builder of capbench.rigs) and its arguments with units, or
                      file = "cell.toml" (a capbench-fixture/1 file beside this one)
        [tolerances]  half-widths (rectangular) of fixture dimensions, e.g. electrode_radius
        [instrument]  name, capacitance_accuracy, dissipation_accuracy ("x % of reading + y")
        [conditions]  temperature, temperature_uncertainty
        [method]      name (contacting, air_gap, liquid), readings (CSV file, relative to
                      this file), and the method's options: stray (capacitance), spacing
                      (air_gap), empty_eps_r (liquid)

    Raises
    ------
    FileFormatError
        Naming the file, line, key and value of the first problem found.
    """
    path = Path(path)
    text = _decode(_read_bytes(path, MAX_TOML_BYTES, "measurement file"), path.name)
    doc = _Doc(text, path.name, path)
    top = _Table(doc, doc.data, "")
    schema = top.get("schema", None)
    if schema != SCHEMA:
        raise top.error("schema", f"= {schema!r}; this reader knows {SCHEMA!r}", value=schema)
    for key in doc.data:
        if key not in _MEASUREMENT_TABLES:
            raise top.error(
                key, f"is not a part of a measurement file; valid: {sorted(_MEASUREMENT_TABLES)}"
            )
    lab = top.table("lab")
    spec = top.table("specimen")
    fix = top.table("fixture")
    tol = top.table("tolerances", required=False)
    inst = top.table("instrument")
    cond = top.table("conditions")
    meth = top.table("method")

    thickness = spec.get("thickness")
    if not isinstance(thickness, list) or not thickness:
        raise spec.error(
            "thickness",
            f"= {thickness!r} must be a list of readings with units, e.g. ['2.012 mm', '2.015 mm']",
            value=repr(thickness),
        )
    readings_t = tuple(
        _in_range(
            spec, f"thickness[{i}]", spec.quantity(f"thickness[{i}]", "length", raw=v), "length"
        )
        for i, v in enumerate(thickness)
    )
    if len(readings_t) > 1 and (max(readings_t) - min(readings_t)) > 0.1 * min(readings_t):
        from .validate import warn

        warn(
            f"{spec.doc.where('specimen', 'thickness')}: the readings range from "
            f"{min(readings_t) * 1e3:.6g} mm to {max(readings_t) * 1e3:.6g} mm, more than "
            "10 % apart; check their units"
        )
    fixture = _measurement_fixture(fix, path)
    tolerances = []
    for key in sorted(tol.data):
        half = tol.quantity(key, "length")
        if key not in fixture.param_dict or not isinstance(fixture.param_dict[key], float):
            valid = sorted(k for k, v in fixture.param_dict.items() if isinstance(v, float) and v)
            raise tol.error(key, f"is not a dimension of the {fixture.kind}; valid: {valid}")
        nominal = fixture.param_dict[key]
        if not (0 < half < nominal):
            raise tol.error(
                key,
                f"= {tol.get(key)!r}: a half-width must be > 0 mm and below the nominal "
                f"{nominal * 1e3:.6g} mm",
                value=half,
            )
        tolerances.append((key, half))
    cap_acc = _accuracy(inst, "capacitance_accuracy")
    d_acc = _accuracy(inst, "dissipation_accuracy", required=False)
    method = meth.text("name")
    if method not in METHODS:
        raise meth.error(
            "name",
            f"= {method!r}; valid: {list(METHODS)} (micrometer and two-fluid readings have "
            "no file format yet: call capbench.extract directly)",
            value=method,
        )
    options = _method_options(meth, method)
    micrometer = spec.quantity("micrometer", "length", default="0 m")
    if micrometer < 0 or micrometer > 0.1 * min(readings_t):
        # a half-width beyond a tenth of the thickness is a unit typed wrong, not a
        # micrometer's calibration
        raise spec.error(
            "micrometer",
            f"= {spec.get('micrometer')!r}; valid: 0 mm to {0.1 * min(readings_t) * 1e3:.6g} mm "
            "(a tenth of the thinnest reading)",
            value=micrometer,
        )
    temperature = _in_range(
        cond, "temperature", cond.quantity("temperature", "temperature"), "temperature"
    )
    readings_name = meth.text("readings")
    readings: tuple[Reading, ...] = ()
    if with_readings:
        readings = _measurement_readings(meth, path, readings_name, method)
    return Measurement(
        path=path,
        lab=lab.text("name"),
        bench=lab.text("bench", ""),
        date=lab.text("date", ""),
        specimen_id=spec.text("id"),
        description=spec.text("description", ""),
        fixture=fixture,
        thickness_readings=readings_t,
        micrometer_half_width=micrometer,
        tolerances=tuple(tolerances),
        instrument=inst.text("name", ""),
        capacitance_accuracy=cap_acc,
        dissipation_accuracy=d_acc,
        temperature=temperature,
        temperature_uncertainty=_kelvin(cond, "temperature_uncertainty"),
        method=method,
        readings=readings,
        operator=lab.text("operator", ""),
        method_options=options,
        readings_file=readings_name,
        text=text,
    )


def _in_range(table: _Table, key: str, value: float, what: str) -> float:
    from . import validate

    try:
        return validate.check(value, what, key, positive=what != "temperature")
    except CapbenchError as exc:
        raise table.error(key, f"= {table.get(key.split('[')[0])!r}: {exc}", value=value) from None


def _measurement_fixture(fix: _Table, path: Path) -> Fixture:
    if "file" in fix.data:
        if set(fix.data) - {"file"}:
            raise fix.error(
                "file",
                "names a fixture file; give either file = ... or the fixture's kind "
                "and arguments, not both",
            )
        name = fix.text("file")
        target = (path.parent / name).resolve()
        if target.suffix.lower() != ".toml":
            raise fix.error("file", f"= {name!r} must name a .toml fixture file", value=name)
        try:
            return read_fixture(target)
        except FileFormatError as exc:
            raise _error(
                f"{fix.doc.where('fixture', 'file')} = {name!r}: {exc}",
                file=str(target),
                key="fixture.file",
                value=name,
            ) from None
    return _fixture(fix)


def _method_options(meth: _Table, method: str) -> tuple[tuple[str, Any], ...]:
    allowed = _METHOD_OPTIONS[method]
    out = []
    for key in meth.data:
        if key in ("name", "readings"):
            continue
        if key not in allowed:
            raise meth.error(
                key, f"is not an option of the {method} method; valid: {sorted(allowed)}"
            )
        kind = allowed[key]
        out.append((key, meth.eps(key) if kind == "eps" else meth.quantity(key, kind)))
    return tuple(out)


def _measurement_readings(meth: _Table, path: Path, name: str, method: str) -> tuple[Reading, ...]:
    target = path.parent / name
    if target.suffix.lower() != ".csv":
        raise meth.error("readings", f"= {name!r} must name a .csv readings file", value=name)
    try:
        readings = read_readings(target)
    except FileFormatError:
        if not target.exists():
            raise meth.error(
                "readings", f"= {name!r}: no such file beside {path.name}", value=name
            ) from None
        raise
    need, _optional = _METHOD_COLUMNS[method]
    for key in need:
        missing = [r.line for r in readings if getattr(r, key) is None]
        if missing:
            raise _error(
                f"{target.name}, line {missing[0]}: the {method} method needs a "
                f"{key.replace('_', ' ')!r} reading in every row",
                file=target.name,
                line=missing[0],
                key=key,
            )
    for key in ("dissipation", "empty_dissipation"):
        have = [getattr(r, key) is not None for r in readings]
        if any(have) and not all(have):
            line = readings[have.index(False)].line
            raise _error(
                f"{target.name}, line {line}: {key.replace('_', ' ')} is blank here but "
                "given in other rows; give it in every row or in none",
                file=target.name,
                line=line,
                key=key,
            )
    if method == "contacting" and any(r.empty_capacitance is not None for r in readings):
        raise _error(
            f"{target.name}: the contacting method takes no 'empty capacitance' column",
            file=target.name,
        )
    return readings


def _kelvin(table: _Table, key: str) -> float:
    """A temperature difference in K ('0.3 K' or '0.3 delta_degC')."""
    raw = table.get(key, "0 K")
    from .units import Q_

    try:
        q = parse_quantity(raw, key)
        kelvin = (
            float(q.to("K").magnitude)
            if q._is_multiplicative
            else float(Q_(q.magnitude, f"delta_{q.units}").to("K").magnitude)
        )
    except Exception:  # pint raises several unrelated types here
        raise table.error(
            key, f"= {raw!r} is not a temperature difference (e.g. '0.3 K')", value=raw
        ) from None
    if not (math.isfinite(kelvin) and 0 <= kelvin <= 100):
        raise table.error(key, f"= {raw!r} is outside the valid range 0 K to 100 K", value=raw)
    return kelvin


def _accuracy(table: _Table, key: str, required: bool = True) -> AccuracySpec | None:
    raw = table.get(key, ... if required else None)
    if raw is None:
        return None
    try:
        return AccuracySpec.parse(raw)
    except CapbenchError as exc:
        raise table.error(key, f"= {raw!r}: {exc}", value=raw) from None


# --------------------------------------------------------------------------- export


_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n", "|", "%", "\uff1d", "\uff0b", "\uff0d")


def safe_cell(value: Any) -> Any:
    """A value made safe for a spreadsheet: text that a spreadsheet would run as a
    formula (starting with = + - @ tab CR LF | %, their full-width forms, or any of
    these after leading spaces) gets a leading apostrophe; numbers pass.

    Notes
    -----
    The usual defence against CSV formula injection (common practice, no source).
    Leading spaces are looked through because some spreadsheets trim them before
    deciding whether a cell is a formula.
    """
    if value is None:
        return ""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return value
    text = str(value)
    if text.lstrip(" ").startswith(_FORMULA_START):
        return "'" + text
    return text


def to_csv(header: list[str], rows: list[list[Any]]) -> str:
    """CSV text of a table, every text cell through :func:`safe_cell` and in quotes.

    Every text cell is quoted: with the minimal quoting a cell holding a bare carriage
    return went out unquoted, and a spreadsheet that breaks the row there would read
    what follows (``x\r=HYPERLINK(...)``) as a new, un-neutralised cell.
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n", quoting=csv.QUOTE_NONNUMERIC)
    w.writerow([safe_cell(h) for h in header])
    for row in rows:
        w.writerow([safe_cell(c) for c in row])
    return buf.getvalue()


__all__ = [
    "FIXTURE_SCHEMA",
    "MAX_CSV_BYTES",
    "MAX_DEPTH",
    "MAX_ROWS",
    "MAX_TOML_BYTES",
    "METHODS",
    "READINGS_SCHEMA",
    "SCHEMA",
    "Measurement",
    "Reading",
    "fixture_from_toml",
    "fixture_to_toml",
    "read_fixture",
    "read_measurement",
    "read_readings",
    "readings_from_csv",
    "safe_cell",
    "to_csv",
    "write_fixture",
]
