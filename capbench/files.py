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
import stat
import tempfile
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import CapbenchError, FileFormatError, InputError
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
METHODS = ("contacting", "air_gap", "liquid", "micrometer", "two_fluid")
#: the values of the readings table's ``fluid`` column (two-fluid method)
FLUIDS = (1, 2)

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
    "loaded spacing": ("loaded_spacing", "length", "mm"),
    "empty spacing": ("empty_spacing", "length", "mm"),
    # which fluid a row was read in (two-fluid method): a plain 1 or 2, no unit
    "fluid": ("fluid", "fluid", ""),
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
    "micrometer": (
        ("frequency", "capacitance", "empty_capacitance", "loaded_spacing", "empty_spacing"),
        ("dissipation", "empty_dissipation"),
    ),
    # the fluids are taken as lossless: no empty dissipation factor
    "two_fluid": (("frequency", "capacitance", "empty_capacitance", "fluid"), ("dissipation",)),
}
# [method] keys each method accepts (beyond name and readings): key -> kind
_METHOD_OPTIONS = {
    "contacting": {"stray": "capacitance"},
    "air_gap": {"stray": "capacitance", "spacing": "length"},
    "liquid": {"empty_eps_r": "eps", "stray": "capacitance"},
    "micrometer": {"spacing_half_width": "length"},
    "two_fluid": {
        "fluid1": "material",
        "fluid2": "material",
        "eps_fluid1": "eps",
        "eps_fluid2": "eps",
    },
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


def _umask() -> int:
    """The process's umask, read without changing it where the system shows it."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)  # elsewhere: set and restore (not thread-safe, so last resort)
    os.umask(mask)
    return mask


def _atomic_write(path: Path, data: str | bytes) -> None:
    """The one way capbench writes a file: only a regular file (or nothing) at ``path``
    is replaced, through a temporary file beside it, so a crash leaves the old file or
    the new one, never half of one.

    A symbolic link, FIFO, device or directory at ``path`` is refused, not written over
    (the user named a path, not what it points at; writing through a link could reach
    anywhere). A new file's mode follows the umask as any program's would; an existing
    file keeps its mode.
    """
    path = Path(path)
    try:
        st = os.lstat(path)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise InputError(f"cannot write {path}: {exc.strerror}", value=str(path)) from None
    if st is not None and not stat.S_ISREG(st.st_mode):
        what = (
            "a symbolic link"
            if stat.S_ISLNK(st.st_mode)
            else "a directory"
            if stat.S_ISDIR(st.st_mode)
            else "a FIFO"
            if stat.S_ISFIFO(st.st_mode)
            else "a device or socket"
        )
        raise InputError(
            f"will not write {path}: it is {what}, not a regular file; remove it or give "
            "another path (capbench writes only regular files)",
            value=str(path),
        )
    mode = stat.S_IMODE(st.st_mode) if st is not None else 0o666 & ~_umask()
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        if isinstance(data, str):
            fh = os.fdopen(fd, "w", encoding="utf-8", newline="\n")
        else:
            fh = os.fdopen(fd, "wb")
        with fh:
            fh.write(data)
            fh.flush()
            os.fchmod(fh.fileno(), mode)
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
    """One row of a readings table, in SI: Hz, F, D and m (None where not read).

    ``line``: the row's line in its file (for messages). ``loaded_spacing`` and
    ``empty_spacing``: the micrometer electrode's spacings s1 (with the specimen) and s2
    (re-set without it); ``fluid``: 1 or 2, the fluid a two-fluid row was read in.
    """

    frequency: float
    capacitance: float
    dissipation: float | None = None
    empty_capacitance: float | None = None
    empty_dissipation: float | None = None
    line: int = 0
    loaded_spacing: float | None = None
    empty_spacing: float | None = None
    fluid: int | None = None


def read_readings(path: str | os.PathLike) -> tuple[Reading, ...]:
    """Read a ``capbench-readings/1`` CSV file.

    The header row names the columns with units in brackets; one row per reading
    follows. Lines starting with ``#`` are comments. Decimal points, not commas.

    Columns (``frequency`` and ``capacitance`` in every table; the others as the
    measurement's method needs, see :func:`read_measurement`):

    ``frequency [Hz]``, ``capacitance [pF]``
        The bridge reading (with the specimen, or the filled cell).
    ``dissipation factor``
        D of that reading.
    ``empty capacitance [pF]``, ``empty dissipation factor``
        The reading without the specimen (air gap: empty cell; liquid: empty cell;
        micrometer: after the re-set; two-fluid: the cell in the row's fluid).
    ``loaded spacing [mm]``, ``empty spacing [mm]``
        Micrometer method: the electrode spacing s1 with the specimen and s2 after the
        re-set without it (lengths, 1 um to 10 m).
    ``fluid``
        Two-fluid method: 1 or 2, the fluid the row was read in (a plain integer).

    Raises
    ------
    FileFormatError
        Naming the file, line, column and value of the first problem.
    """
    path = Path(path)
    text = _decode(_read_bytes(path, MAX_CSV_BYTES, "readings file"), path.name)
    return readings_from_csv(text, source=path.name)


_DECIMAL_COMMA = re.compile(r"\s*[-+]?(?:\d+,\d*|,\d+)(?:[eE][-+]?\d+)?\s*")


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
    # a table saved where the decimal mark is a comma: semicolons between cells (in the
    # header and no comma there) and "20,613" read as 20.613
    header_text = numbered[0][1]
    semicolons = ";" in header_text and "," not in header_text
    for i, ln in numbered:
        # one line, one row: a quoted cell may not run on to the next line (the row
        # count would no longer match the line numbers the messages give)
        try:
            parsed = list(csv.reader([ln], strict=True, delimiter=";" if semicolons else ","))
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
        if semicolons:
            parsed[0] = [
                c.replace(",", ".") if _DECIMAL_COMMA.fullmatch(c) else c for c in parsed[0]
            ]
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
        if spec[1] == "fluid":
            if unit:
                raise _error(
                    f"{source}, line {header_line}: column {j} {head.strip()!r}: the fluid "
                    f"column takes no unit; valid: 'fluid' (cells {_FLUID_TEXT})",
                    file=source,
                    line=header_line,
                    value=unit,
                )
        elif unit:
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
        columns.append((spec, unit, _column_scale(spec[1], unit or spec[2])))
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
        vals: dict[str, Any] = {}
        for (spec, unit, scale), cell in zip(columns, row, strict=True):
            field_name, kind, default = spec
            text_value = cell.strip()
            if field_name != "frequency" and field_name != "capacitance" and text_value == "":
                continue  # an optional reading left blank
            if kind == "fluid":
                vals[field_name] = _fluid_cell(text_value, source, i)
                continue
            try:
                if len(text_value) > MAX_NUMBER_CHARS or not _UNITLESS.match(text_value):
                    raise ValueError(text_value)
                if scale is None:
                    value = to_si(f"{text_value} {unit or default}".strip(), kind, field_name)
                else:  # the column's unit was parsed once, at the header
                    value = float(text_value) * scale
                    if not math.isfinite(value):
                        raise ValueError(text_value)
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
        out.append(Reading(**vals, line=i))
    return tuple(out)


_FLUID_TEXT = " or ".join(str(k) for k in FLUIDS)


def _column_scale(kind: str, unit: str) -> float | None:
    """The factor from a column's unit to SI, parsed once per table rather than once per
    cell (parsing a unit costs about 2 ms, a 100,000-row table 200 s); None where the
    unit is not a plain factor (degC has an offset) or the column holds no quantity."""
    if kind in ("fluid", "temperature"):
        return None
    if not unit:
        return 1.0 if kind == "dimensionless" else None
    return to_si(f"1 {unit}", kind, "unit")


def _fluid_cell(text: str, source: str, line: int) -> int:
    """The fluid a two-fluid row was read in: the plain integer 1 or 2 (not 1.0, not
    'air': the names and permittivities of the fluids are in the [method] table)."""
    if text not in [str(k) for k in FLUIDS]:
        raise _error(
            f"{source}, line {line}: fluid = {text[:80]!r}; valid: {_FLUID_TEXT} (the fluid "
            "numbered fluid1/eps_fluid1 or fluid2/eps_fluid2 in the measurement's [method])",
            file=source,
            line=line,
            key="fluid",
            value=text,
            valid=FLUIDS,
        )
    return int(text)


def _column_help() -> list[str]:
    return [
        "frequency [Hz]",
        "capacitance [pF]",
        "dissipation factor",
        "empty capacitance [pF]",
        "empty dissipation factor",
        "loaded spacing [mm]",
        "empty spacing [mm]",
        f"fluid ({_FLUID_TEXT})",
    ]


# the limit (a key of capbench.validate.LIMITS) of each numeric column; the fluid column
# is checked as it is read (_fluid_cell)
_ROW_LIMITS = {
    "frequency": "frequency",
    "capacitance": "capacitance",
    "empty_capacitance": "capacitance",
    "dissipation": "loss",
    "empty_dissipation": "loss",
    "loaded_spacing": "length",
    "empty_spacing": "length",
}
# columns whose value must be above 0, not only in range (a D of 0 is a lossless reading)
_POSITIVE = ("frequency", "capacitance", "empty_capacitance", "loaded_spacing", "empty_spacing")


def _check_row(vals: dict[str, Any], source: str, line: int, row: list[str]) -> None:
    from . import validate

    for key, value in vals.items():
        if key not in _ROW_LIMITS:
            continue
        try:
            validate.check(value, _ROW_LIMITS[key], key.replace("_", " "), positive=False)
            if key in _POSITIVE:
                validate.check(value, _ROW_LIMITS[key], key.replace("_", " "))
        except CapbenchError as exc:
            raise _error(
                f"{source}, line {line}: {exc}", file=source, line=line, key=key, value=value
            ) from None


# --------------------------------------------------------------------------- measurements


def _mean(values: list[Any], many: str, one: str, unit: str) -> Any:
    """The mean of repeated readings as an input: type A (GUM 4.2) over two or more, a
    single reading with no type A part."""
    from . import uncertainty as unc

    if len(values) == 1:
        return unc.type_b(values[0], u=f"0 {unit}".strip(), name=one)
    return unc.type_a(values, many)


def _length_input(values: Any, half_width: float, many: str, one: str, instrument: str) -> Any:
    """Length readings (m) as an input in mm: their mean (:func:`_mean`) plus the reading
    instrument's error, rectangular with ``half_width`` (m; 0: none)."""
    from . import uncertainty as unc
    from .units import Q_

    mean = _mean([Q_(x * 1e3, "mm") for x in values], many, one, "mm")
    if half_width <= 0:
        return mean
    return mean + unc.type_b(Q_(0.0, "mm"), half_width=Q_(half_width * 1e3, "mm"), name=instrument)


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
    #: the [leads] table: a capbench.dispersion.LeadCorrection, or None
    leads: Any = None

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
        return _length_input(
            self.thickness_readings,
            self.micrometer_half_width,
            "specimen thickness (micrometer readings)",
            "specimen thickness (one reading)",
            "micrometer calibration",
        )

    def _bridge(self, values: list[float], spec: AccuracySpec | None, what: str, unit: str):
        from .units import Q_

        scale = 1e12 if unit == "pF" else 1.0
        qs = [Q_(x * scale, unit) if unit else x for x in values]
        mean = _mean(qs, f"{what} readings", f"{what} (one reading)", unit)
        return mean if spec is None else spec.apply(mean, f"bridge accuracy, {what}")

    def _group(self, rows: tuple[Reading, ...], tag: str) -> dict[str, Any]:
        """The inputs of one group of repeated rows (one frequency, or one frequency and
        fluid), by Reading field; a field blank in any row of the group is left out."""

        def given(key: str) -> list[Any] | None:
            values = [getattr(r, key) for r in rows]
            return None if any(v is None for v in values) else values

        out: dict[str, Any] = {}
        for key, what, spec, unit in (
            ("capacitance", "C", self.capacitance_accuracy, "pF"),
            ("dissipation", "D", self.dissipation_accuracy, ""),
            ("empty_capacitance", "empty C", self.capacitance_accuracy, "pF"),
            ("empty_dissipation", "empty D", self.dissipation_accuracy, ""),
        ):
            values = given(key)
            if values is not None:
                out[key] = self._bridge(values, spec, f"{what} {tag}", unit)
        half = dict(self.method_options).get("spacing_half_width", 0.0)
        for key, what in (
            ("loaded_spacing", "s1"),
            ("empty_spacing", "s2"),
        ):
            values = given(key)
            if values is not None:
                out[key] = _length_input(
                    values,
                    half,
                    f"{what} {tag} readings",
                    f"{what} {tag} (one reading)",
                    f"spacing scale accuracy, {what} {tag}",
                )
        return out

    def _temperature(self):
        """The temperature in degC, uncertain when the file gives its uncertainty (a
        standard uncertainty, normal): one input, so every value computed from it (the
        two fluids' permittivities) stays correlated."""
        from . import uncertainty as unc
        from .units import Q_

        if self.temperature_uncertainty <= 0:
            return self.temperature
        return unc.type_b(
            Q_(self.temperature, "degC"),
            u=Q_(self.temperature_uncertainty, "K"),
            name="temperature (thermometer)",
        )

    def fluid_eps(self, k: int, temperature: Any = None) -> Any:
        """Fluid ``k``'s relative permittivity (two-fluid method): ``eps_fluid{k}`` as
        given, or the reference material ``fluid{k}`` of :mod:`capbench.materials` at
        ``temperature`` (default: the file's, with its uncertainty)."""
        from . import materials

        opts = dict(self.method_options)
        if f"eps_fluid{k}" in opts:
            return opts[f"eps_fluid{k}"]
        t = self._temperature() if temperature is None else temperature
        return materials.material(opts[f"fluid{k}"]).at(t)

    def inputs(self) -> dict[str, Any]:
        """The uncertain inputs of the extraction, built from the file.

        Per frequency (two-fluid: per frequency and fluid): the mean of the repeated
        readings (type A; a single reading has no type A part) plus the bridge's
        accuracy specification (type B, rectangular, taken as independent between
        frequencies and between empty and loaded readings, a conservative choice). The
        thickness as :attr:`thickness`; each toleranced dimension as its nominal value
        with a rectangular half-width. Micrometer method: the spacings s1 and s2 as the
        mean of their readings plus ``spacing_half_width`` (rectangular), independent
        for s1 and s2 (conservative: a zero error common to both would partly cancel).
        Two-fluid method: each fluid's permittivity from :meth:`fluid_eps`, both at one
        uncertain temperature.
        Returns keyword arguments for the method of :mod:`capbench.extract`.
        """
        from . import uncertainty as unc
        from .units import Q_

        if self.method == "two_fluid":
            groups = [
                {
                    k: self._group(
                        tuple(r for r in self.at(f) if r.fluid == k), f"fluid {k}, {f:g} Hz"
                    )
                    for k in FLUIDS
                }
                for f in self.frequencies
            ]
        else:
            groups = [self._group(self.at(f), f"{f:g} Hz") for f in self.frequencies]
        if self.leads is not None and self.leads.active:
            self._correct_leads(groups)

        def column(key: str, fluid: int | None = None) -> list[Any] | None:
            """One input per frequency, or None when some frequency lacks it."""
            values = [(g if fluid is None else g[fluid]).get(key) for g in groups]
            return None if any(v is None for v in values) else values

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
        caps, losses = column("capacitance"), column("dissipation")
        empties, empty_losses = column("empty_capacitance"), column("empty_dissipation")
        if self.method == "contacting":
            kw.update(capacitance=caps, thickness=self.thickness)
        elif self.method == "air_gap":
            kw.update(empty=empties, loaded=caps, thickness=self.thickness)
            if "spacing" in opts:
                kw["spacing"] = opts["spacing"]
        elif self.method == "liquid":
            kw.update(empty=empties, filled=caps)
            if "empty_eps_r" in opts:
                kw["empty_eps_r"] = opts["empty_eps_r"]
        elif self.method == "micrometer":
            kw.update(
                thickness=self.thickness,
                loaded_spacing=column("loaded_spacing"),
                empty_spacing=column("empty_spacing"),
                capacitance=caps,
                empty_capacitance=empties,
            )
        if self.method == "two_fluid":
            t = self._temperature()
            kw.update(
                fluid1=column("empty_capacitance", 1),
                fluid1_with_specimen=column("capacitance", 1),
                fluid2=column("empty_capacitance", 2),
                fluid2_with_specimen=column("capacitance", 2),
                eps_fluid1=self.fluid_eps(1, t),
                eps_fluid2=self.fluid_eps(2, t),
            )
            for k in FLUIDS:
                if column("dissipation", k) is not None:
                    kw[f"dissipation{k}"] = column("dissipation", k)
        else:
            if losses is not None:
                kw["dissipation"] = losses
            if empty_losses is not None and self.method != "contacting":
                kw["empty_dissipation"] = empty_losses
        if "stray" in opts:
            kw["stray"] = opts["stray"]
        return kw

    def _correct_leads(self, groups: list[dict[Any, Any]]) -> None:
        """Remove the leads' series impedance and stray admittance ([leads]) from every
        reading, in place, with one set of lead inputs shared by all frequencies (see
        :class:`capbench.dispersion.LeadCorrection`)."""
        from .units import frequency_text

        lead_inputs = self.leads.inputs()
        for f, g in zip(self.frequencies, groups, strict=True):
            for part in g.values() if self.method == "two_fluid" else (g,):
                for c_key, d_key in (
                    ("capacitance", "dissipation"),
                    ("empty_capacitance", "empty_dissipation"),
                ):
                    if c_key in part:
                        part[c_key], d = self.leads.correct(
                            f,
                            part[c_key],
                            part.get(d_key),
                            inputs=lead_inputs,
                            where=f"{self.path.name}, {frequency_text(f)}",
                        )
                        if d is not None:
                            part[d_key] = d

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
    "leads",
}


def _beside(path: Path, name: str, key: str, table: Any, allow_outside: bool) -> Path:
    """The file a measurement names, which must stay inside the measurement's folder
    (after links are followed) unless the user allows otherwise: a shared measurement
    file must not make capbench read, or quote, a file elsewhere on the machine."""
    target = path.parent / name
    if allow_outside:
        return target
    folder = path.parent.resolve()
    if Path(name).is_absolute() or not target.resolve().is_relative_to(folder):
        raise table.error(
            key,
            f"= {name!r} leads outside the measurement's folder {folder}; keep the file "
            "beside the measurement (or allow it: --allow-outside on the command line, "
            "allow_outside=True in read_measurement)",
            value=name,
        )
    return target


def read_measurement(
    path: str | os.PathLike, *, with_readings: bool = True, allow_outside: bool = False
) -> Measurement:
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
        [leads]       optional: inductance and resistance of the leads (short reading),
                      open_capacitance and open_conductance (open reading), each with
                      its standard uncertainty ``<key>_uncertainty``; removed from every
                      reading before extraction (capbench.dispersion.LeadCorrection)
        [method]      name (contacting, air_gap, liquid, micrometer, two_fluid), readings
                      (CSV file, relative to this file), and the method's options: stray
                      (capacitance; contacting, air_gap, liquid), spacing (air_gap),
                      empty_eps_r (liquid), spacing_half_width (micrometer), fluid1 or
                      eps_fluid1 and fluid2 or eps_fluid2 (two_fluid)

    The fixture and readings files a measurement names must lie inside its folder (after
    symbolic links are followed) unless ``allow_outside=True``.

    The methods and their readings columns (:func:`read_readings`; a column a method
    does not use is refused, a blank optional cell is not a reading):

    contacting
        frequency, capacitance; optional dissipation factor. Thickness: [specimen].
    air_gap, liquid
        frequency, capacitance (with the specimen / filled), empty capacitance; optional
        dissipation factor, empty dissipation factor.
    micrometer
        frequency, capacitance C1 (with the specimen, electrodes at spacing s1), empty
        capacitance C2 (after the re-set without it, at s2), loaded spacing s1, empty
        spacing s2; optional dissipation factor D1 and empty dissipation factor D2 (D2
        needs D1). Thickness t: [specimen]. ``spacing_half_width``: the micrometer
        electrode's accuracy, a rectangular half-width added to s1 and s2 (default 0;
        at most a tenth of the smallest spacing).
    two_fluid
        frequency, fluid (1 or 2), empty capacitance (the cell in that fluid without
        the specimen), capacitance (with the specimen); optional dissipation factor
        (with the specimen). Rows in both fluids at every frequency. For each fluid k
        exactly one of ``fluid{k}`` (a key of :data:`capbench.materials.MATERIALS`,
        evaluated at [conditions] temperature, whose ``temperature_uncertainty`` is
        taken as a standard uncertainty shared by both fluids) or ``eps_fluid{k}`` (a
        real relative permittivity). The specimen's thickness is fitted by the method;
        the [specimen] thickness readings are recorded, and the fixture's own specimen
        thickness starts the fit.

    Repeated rows at one frequency (and fluid) are averaged (type A); see
    :meth:`Measurement.inputs`.

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
    fixture = _measurement_fixture(fix, path, allow_outside)
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
        raise meth.error("name", f"= {method!r}; valid: {list(METHODS)}", value=method)
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
    temperature_u = _kelvin(cond, "temperature_uncertainty")
    if method == "two_fluid":
        _check_fluids(meth, temperature)
    leads = _leads(top.table("leads", required=False))
    readings_name = meth.text("readings")
    readings: tuple[Reading, ...] = ()
    if with_readings:
        readings = _measurement_readings(meth, path, readings_name, method, allow_outside)
    if method == "micrometer":
        _check_spacing_half_width(meth, options, readings_t, readings)
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
        temperature_uncertainty=temperature_u,
        method=method,
        readings=readings,
        operator=lab.text("operator", ""),
        method_options=options,
        readings_file=readings_name,
        text=text,
        leads=leads,
    )


#: the [leads] table's keys: value key -> kind of quantity (each also "<key>_uncertainty")
_LEAD_KEYS = {
    "inductance": "inductance",
    "resistance": "resistance",
    "open_capacitance": "capacitance",
    "open_conductance": "conductance",
}


def _leads(table: _Table) -> Any:
    """The [leads] table as a LeadCorrection (None when absent or empty)."""
    if not table.data:
        return None
    from .dispersion.leads import LeadCorrection, check_value

    valid = sorted([*_LEAD_KEYS, *(f"{k}_uncertainty" for k in _LEAD_KEYS)])
    values: dict[str, float] = {}
    for key in table.data:
        base = key.removesuffix("_uncertainty")
        if key not in valid:
            raise table.error(key, f"is not a lead value; valid: {valid}", value=key)
        v = table.quantity(key, _LEAD_KEYS[base])
        try:
            check_value(v, _LEAD_KEYS[base], key)
        except CapbenchError as exc:
            raise table.error(key, f"= {table.get(key)!r}: {exc}", value=v) from None
        values[f"u_{base}" if key != base else base] = v
    return LeadCorrection.from_values(**values)


def _in_range(table: _Table, key: str, value: float, what: str) -> float:
    from . import validate

    try:
        return validate.check(value, what, key, positive=what != "temperature")
    except CapbenchError as exc:
        raise table.error(key, f"= {table.get(key.split('[')[0])!r}: {exc}", value=value) from None


def _measurement_fixture(fix: _Table, path: Path, allow_outside: bool = False) -> Fixture:
    if "file" in fix.data:
        if set(fix.data) - {"file"}:
            raise fix.error(
                "file",
                "names a fixture file; give either file = ... or the fixture's kind "
                "and arguments, not both",
            )
        name = fix.text("file")
        if not name.lower().endswith(".toml"):
            raise fix.error("file", f"= {name!r} must name a .toml fixture file", value=name)
        target = _beside(path, name, "file", fix, allow_outside)
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
        if kind == "eps":
            value = meth.eps(key)
        elif kind == "material":
            value = _material_name(meth, key)
        else:
            value = meth.quantity(key, kind)
        out.append((key, value))
    return tuple(out)


def _material_name(meth: _Table, key: str) -> str:
    """A key of :data:`capbench.materials.MATERIALS` (case and spaces as material())."""
    from .materials import MATERIALS

    name = meth.text(key)
    if name.strip().lower() not in MATERIALS:
        raise meth.error(
            key,
            f"= {name!r} is not a reference material of capbench.materials; valid: "
            f"{sorted(MATERIALS)}, or give the fluid's permittivity as eps_{key}",
            value=name,
            valid=sorted(MATERIALS),
        )
    return name.strip().lower()


def _check_fluids(meth: _Table, temperature: float) -> None:
    """Two-fluid method: each fluid named (fluid1) or its permittivity given
    (eps_fluid1), exactly one of the two; real permittivities (the method takes the
    fluids as lossless) in range and different from each other."""
    from . import validate
    from .materials import material

    eps = {}
    for k in FLUIDS:
        name, value = f"fluid{k}", f"eps_fluid{k}"
        valid = (
            f"valid: exactly one of {name} (a reference material, e.g. 'cyclohexane') or "
            f"{value} (its relative permittivity, e.g. 2.0194)"
        )
        if meth.has(name) and meth.has(value):
            raise meth.error(
                name,
                f"= {meth.get(name)!r} and {value} = {meth.get(value)!r} are both given; {valid}",
                value=meth.get(name),
            )
        if not meth.has(name) and not meth.has(value):
            raise meth.error(None, f"has neither {name} nor {value}; {valid}")
        if meth.has(name):
            try:
                eps[k] = float(material(meth.get(name)).at(temperature).n)
            except CapbenchError as exc:
                raise meth.error(
                    name, f"= {meth.get(name)!r}: {exc}", value=meth.get(name)
                ) from None
            continue
        raw = meth.eps(value)
        if isinstance(raw, complex):
            raise meth.error(
                value,
                f"= {meth.get(value)!r} has a loss part; valid: a real relative permittivity "
                "(the two-fluid method takes the fluids as lossless)",
                value=meth.get(value),
            )
        try:
            eps[k] = validate.check(raw, "eps_r", value)
        except CapbenchError as exc:
            raise meth.error(value, f"= {meth.get(value)!r}: {exc}", value=raw) from None
    if abs(eps[2] - eps[1]) < 1e-6 * eps[1]:
        key = "fluid2" if meth.has("fluid2") else "eps_fluid2"
        raise meth.error(
            key,
            f"= {meth.get(key)!r}: eps_r {eps[2]:.6g}, the same as fluid 1's ({eps[1]:.6g}); "
            "valid: two fluids of different permittivity",
            value=eps[2],
        )


def _check_spacing_half_width(
    meth: _Table, options: tuple, thickness: tuple[float, ...], readings: tuple[Reading, ...]
) -> None:
    """Micrometer method: the spacing readings' half-width, 0 up to a tenth of the
    smallest spacing read (of the thinnest thickness reading before the readings are
    read); more is a unit typed wrong, not an electrode's accuracy."""
    half = dict(options).get("spacing_half_width")
    if half is None:
        return
    spacings = [s for r in readings for s in (r.loaded_spacing, r.empty_spacing) if s]
    smallest = min(spacings or thickness)
    if not (0 <= half <= 0.1 * smallest):
        of = "the smallest spacing reading" if spacings else "the thinnest thickness reading"
        raise meth.error(
            "spacing_half_width",
            f"= {meth.get('spacing_half_width')!r}; valid: 0 mm to "
            f"{0.1 * smallest * 1e3:.6g} mm (a tenth of {of})",
            value=half,
            valid=(0.0, 0.1 * smallest),
        )


def _measurement_readings(
    meth: _Table, path: Path, name: str, method: str, allow_outside: bool = False
) -> tuple[Reading, ...]:
    if not name.lower().endswith(".csv"):
        raise meth.error("readings", f"= {name!r} must name a .csv readings file", value=name)
    target = _beside(path, name, "readings", meth, allow_outside)
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
            raise _row_error(
                target.name,
                missing[0],
                key,
                f"the {method} method needs a {key.replace('_', ' ')!r} reading in every row",
            )
    for key in ("dissipation", "empty_dissipation"):
        have = [getattr(r, key) is not None for r in readings]
        if any(have) and not all(have):
            line = readings[have.index(False)].line
            raise _row_error(
                target.name,
                line,
                key,
                f"{key.replace('_', ' ')} is blank here but given in other rows; give it in "
                "every row or in none",
            )
    used = set(need) | set(_optional)
    for name, (key, _kind, _unit) in _COLUMNS.items():
        rows = [r.line for r in readings if getattr(r, key) is not None]
        if key not in used and rows:
            columns = ", ".join(repr(n) for n, spec in _COLUMNS.items() if spec[0] in used)
            raise _row_error(
                target.name,
                rows[0],
                key,
                f"the {method} method takes no {name!r} column; valid columns for it: {columns}",
                valid=sorted(used),
            )
    if method == "micrometer" and readings[0].empty_dissipation is not None:
        if readings[0].dissipation is None:
            raise _row_error(
                target.name,
                readings[0].line,
                "empty_dissipation",
                "an 'empty dissipation factor' needs the 'dissipation factor' column too (the "
                "micrometer method's loss is the difference of the two)",
            )
    if method == "two_fluid":
        _check_fluid_rows(readings, target.name)
    return readings


def _row_error(source: str, line: int, key: str, message: str, **details: Any):
    """A refusal of a readings file's row: file, line, then what is wrong."""
    return _error(f"{source}, line {line}: {message}", file=source, line=line, key=key, **details)


def _check_fluid_rows(readings: tuple[Reading, ...], source: str) -> None:
    """Two-fluid method: rows in both fluids at every frequency."""
    for f in sorted({r.frequency for r in readings}):
        rows = [r for r in readings if r.frequency == f]
        for k in FLUIDS:
            if not any(r.fluid == k for r in rows):
                lines = ", ".join(str(r.line) for r in rows)
                raise _row_error(
                    source,
                    rows[0].line,
                    "fluid",
                    f"no row in fluid {k} at {f:g} Hz (rows at {f:g} Hz: lines {lines}); the "
                    f"two_fluid method needs rows with fluid = {_FLUID_TEXT} at every frequency",
                    value=k,
                    valid=FLUIDS,
                )


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
# what a spreadsheet may skip before deciding that a cell is a formula: spaces of every
# kind (no-break, thin, ideographic), zero-width characters, a byte-order mark, and the
# control characters a cell can hide (NUL, vertical tab, form feed)
_INVISIBLE = (
    " \u00a0\u1680\u2000\u2001\u2002\u2003\u2004\u2005\u2006\u2007\u2008\u2009\u200a"
    "\u202f\u205f\u3000\u200b\u200c\u200d\u2060\ufeff\x00\x0b\x0c"
)


def safe_cell(value: Any) -> Any:
    """A value made safe for a spreadsheet: text that a spreadsheet would run as a
    formula (starting with = + - @ tab CR LF | %, their full-width forms, or any of
    these after leading spaces of any kind, zero-width characters, a byte-order mark,
    NUL, vertical tab or form feed) gets a leading apostrophe; numbers pass.

    Notes
    -----
    The usual defence against CSV formula injection (common practice, no source).
    Leading invisible characters are looked through because some spreadsheets trim them
    before deciding whether a cell is a formula.
    """
    if value is None:
        return ""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return value
    text = str(value)
    if text.lstrip(_INVISIBLE).startswith(_FORMULA_START):
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
