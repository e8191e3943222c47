"""Property-based tests (hypothesis) of capbench's file readers and writers.

Whatever text a fixture file, a measurement file or a readings table holds (random or
malformed TOML and CSV, fuzzed values, deep nesting, huge inputs, formula-like cells),
reading it gives either a valid object or a clean FileFormatError that starts with the
file's name and gives the line where it knows one; never another exception, never NaN.
Exported CSV text never holds a cell a spreadsheet would run as a formula (common
practice, no source: the usual defence against CSV formula injection).

Example counts come from the hypothesis profile ("ci" in make test, "fuzz" in make
fuzz); run with --hypothesis-show-statistics to see how many inputs each test tried.
"""

from __future__ import annotations

import csv
import io
import json
import math
import pathlib
import shutil
import tempfile

import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

import capbench as cb
from capbench import files, validate
from capbench.rigs import BUILDERS

DEMO = pathlib.Path(__file__).resolve().parents[1] / "fixtures" / "quillfield"
DEMO_FIXTURES = (
    "bench3-guarded-cell.toml",
    "bench5-liquid-cell.toml",
    "reference-discs-custom.toml",
)
FIXTURE_TEXTS = {name: (DEMO / name).read_text() for name in DEMO_FIXTURES}
MEASUREMENT_TEXT = (DEMO / "qf-pe-03.toml").read_text()
READINGS_TEXT = (DEMO / "qf-pe-03_readings.csv").read_text()
SOURCE = "fuzz.toml"
ROOMY = settings(
    suppress_health_check=[
        HealthCheck.too_slow,
        HealthCheck.data_too_large,
        HealthCheck.filter_too_much,
        HealthCheck.large_base_example,
    ]
)

# --------------------------------------------------------------------------- strategies

# text that TOML can hold in a basic string (no surrogates; control characters are
# escaped by json.dumps below)
plain_text = st.text(
    alphabet=st.characters(blacklist_categories=("Cs",), blacklist_characters="\x7f"),
    max_size=40,
)
units = st.sampled_from(
    ["mm", "um", "m", "in", "pF", "F", "Hz", "kHz", "%", "", "degC", "K", "mm**2", "9**9**9"]
)
numbers = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(min_value=1e-4, max_value=1e3),
    st.integers(min_value=-(2**63), max_value=2**63 - 1),
)
quantity_text = st.builds(
    lambda x, u, sep: f"{x!r}{sep}{u}".strip(), numbers, units, st.sampled_from([" ", "", "  "])
)
formula_text = st.builds(
    lambda head, body: head + body, st.sampled_from(list("=+-@\t|%")), plain_text
)
scalars = st.one_of(st.booleans(), numbers, plain_text, quantity_text, formula_text, st.dates())
keys = st.one_of(
    st.sampled_from(sorted({p for b in BUILDERS.values() for p in b.__code__.co_varnames[:12]})),
    st.from_regex(r"[A-Za-z_][A-Za-z0-9_-]{0,12}", fullmatch=True),
)
values = st.recursive(
    scalars,
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(keys, inner, max_size=3),
    max_leaves=12,
)


def toml_value(v) -> str:
    """A value as TOML text (the reader's input is made here, not by capbench)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{json.dumps(k)} = {toml_value(x)}" for k, x in v.items()) + "}"
    return v.isoformat()  # a date


@st.composite
def fixture_documents(draw) -> str:
    """A fixture file: mostly the right schema and a real builder, fuzzed arguments."""
    lines = []
    if draw(st.integers(0, 9)):
        lines.append('schema = "capbench-fixture/1"')
    kind = draw(st.sampled_from([*BUILDERS, "custom", "teapot"]))
    lines.append(f"kind = {json.dumps(kind)}")
    args = draw(st.dictionaries(keys, values, max_size=8))
    lines += [f"{json.dumps(k)} = {toml_value(v)}" for k, v in args.items()]
    return "\n".join(lines) + "\n"


@st.composite
def mutated(draw, text: str) -> str:
    """``text`` with one span deleted, replaced or repeated at a random place."""
    n = len(text)
    i = draw(st.integers(0, n))
    j = draw(st.integers(i, min(n, i + 40)))
    how = draw(st.sampled_from(["delete", "replace", "insert", "repeat"]))
    if how == "delete":
        return text[:i] + text[j:]
    if how == "repeat":
        return text[:j] + text[i:j] * draw(st.integers(2, 50)) + text[j:]
    piece = draw(
        st.one_of(
            plain_text,
            quantity_text,
            formula_text,
            st.sampled_from(
                ["[", "]", "[[", "{", "}", "=", '"', "'", "\n", "#", ",", "\\", "\x00", "\ufeff"]
            ),
        )
    )
    if how == "insert":
        return text[:i] + piece + text[i:]
    return text[:i] + piece + text[j:]


def _read_fixture_or_refuse(text: str):
    try:
        fx = files.fixture_from_toml(text, source=SOURCE)
    except cb.FileFormatError as exc:
        message = str(exc)
        assert message.startswith(SOURCE), message
        if getattr(exc, "line", None):
            assert f"line {exc.line}" in message, message
        return None
    assert isinstance(fx, cb.Fixture)
    # what reads is a fixture the builders accept: its lengths are in range
    for key, value in fx.params:
        if files._builder_kind(key) == "length" and isinstance(value, float) and value:
            assert 1e-6 <= value <= 10, (key, value)
    # and it writes back to text that reads again to the same kind of fixture
    again = files.fixture_from_toml(files.fixture_to_toml(fx), source="again.toml")
    assert again.kind == fx.kind and again.geometry.symmetry == fx.geometry.symmetry
    return fx


# --------------------------------------------------------------------------- fixture files


@ROOMY
@given(text=fixture_documents())
def test_fuzzed_fixture_documents_read_or_refuse_cleanly(text):
    _read_fixture_or_refuse(text)


@ROOMY
@given(data=st.data(), name=st.sampled_from(sorted(FIXTURE_TEXTS)))
def test_mutated_demo_fixture_files_read_or_refuse_cleanly(data, name):
    text = FIXTURE_TEXTS[name]
    for _ in range(data.draw(st.integers(1, 3))):
        text = data.draw(mutated(text))
    _read_fixture_or_refuse(text)


@ROOMY
@given(text=st.text(max_size=300))
def test_random_text_as_a_fixture_file_is_refused_or_read(text):
    _read_fixture_or_refuse(text)


@ROOMY
@given(
    depth=st.integers(9, 3000),
    style=st.sampled_from(["array", "inline", "dotted", "mixed"]),
)
def test_deep_nesting_is_refused_naming_the_limit(depth, style):
    if style == "array":
        body = "x = " + "[" * depth + "]" * depth
    elif style == "inline":
        body = "x = " + "{a = " * depth + "1" + "}" * depth
    elif style == "dotted":
        body = "[" + ".".join(["t"] * depth) + "]\nx = 1"
    else:
        body = "x = " + "[{a = " * (depth // 2 + 1) + "1" + "}]" * (depth // 2 + 1)
    text = 'schema = "capbench-fixture/1"\nkind = "parallel_discs"\n' + body + "\n"
    with pytest.raises(cb.FileFormatError, match=r"at most 8 levels"):
        files.fixture_from_toml(text, source=SOURCE)


@ROOMY
@given(
    n=st.integers(10_001, 600_000),
    where=st.sampled_from(["name", "array", "keys", "shield"]),
)
def test_huge_values_are_refused_or_read_without_another_exception(n, where):
    head = 'schema = "capbench-fixture/1"\nkind = "parallel_discs"\nradius = "25 mm"\n'
    head += 'gap = "2 mm"\n'
    if where == "name":
        text = head + 'name = "' + "q" * n + '"\n'
    elif where == "array":
        text = head + "radius2 = [" + "1," * (n // 2) + "1]\n"
    elif where == "shield":
        text = head + "shield = [" + '"1 mm",' * (n // 8) + '"1 mm"]\n'
    else:
        text = head + "".join(f"k{i} = 1\n" for i in range(n // 8))
    with pytest.raises(cb.FileFormatError) as info:
        files.fixture_from_toml(text, source=SOURCE)
    assert str(info.value).startswith(SOURCE)


# --------------------------------------------------------------------------- readings tables

COLUMNS = ["frequency", "capacitance", "dissipation factor", "empty capacitance"]
header_units = st.sampled_from(["Hz", "kHz", "pF", "F", "nF", "%", "", "mm", "=1+1", "9**9**9 F"])
cells = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.floats(min_value=1e-3, max_value=1e6).map(lambda x: f"{x:.6g}"),
    st.integers().map(str),
    formula_text.filter(lambda s: "\n" not in s and "\r" not in s),
    st.text(alphabet=st.characters(blacklist_characters="\n\r"), max_size=12),
    st.just(""),
    st.just('"20,5"'),
    st.just("1" * 70),
)


@st.composite
def readings_tables(draw) -> tuple[str, list[list[str]]]:
    cols = draw(st.lists(st.sampled_from(COLUMNS), min_size=0, max_size=5))
    head = ",".join(f"{c} [{draw(header_units)}]" if draw(st.booleans()) else c for c in cols)
    rows = draw(st.lists(st.lists(cells, min_size=0, max_size=6), max_size=12))
    lines = [head] + [",".join(r) for r in rows]
    if draw(st.booleans()):
        lines.insert(0, "# schema: " + draw(st.sampled_from(["capbench-readings/1", "other/2"])))
    return "\n".join(lines) + "\n", rows


def _is_formula(cell: str) -> bool:
    c = cell.strip()
    sign = c[:1] != "" and c[:1] in "+-"
    return c.startswith(("=", "@")) or (sign and not c[1:2].isdigit() and c[1:2] != ".")


@ROOMY
@given(table=readings_tables())
def test_fuzzed_readings_tables_read_or_refuse_cleanly(table):
    text, rows = table
    try:
        readings = files.readings_from_csv(text, source="fuzz.csv")
    except cb.FileFormatError as exc:
        assert str(exc).startswith("fuzz.csv"), str(exc)
        return
    # a table that reads held no formula-like cell, and every value is finite and in range
    assert not any(_is_formula(c) for r in rows for c in r)
    lo_c, hi_c, _ = validate.LIMITS["capacitance"]
    lo_f, hi_f, _ = validate.LIMITS["frequency"]
    for r in readings:
        assert lo_f <= r.frequency <= hi_f
        assert lo_c <= r.capacitance <= hi_c
        for d in (r.dissipation, r.empty_dissipation):
            assert d is None or 0 <= d <= 10
        if r.empty_capacitance is not None:
            assert lo_c <= r.empty_capacitance <= hi_c


@ROOMY
@given(
    data=st.data(),
    formula=formula_text.filter(lambda s: "\n" not in s and "\r" not in s and "," not in s),
)
def test_a_formula_like_cell_is_refused_naming_line_column_and_value(data, formula):
    assume(_is_formula(formula) and '"' not in formula)
    lines = READINGS_TEXT.splitlines()
    data_lines = [i for i, ln in enumerate(lines) if ln and not ln.startswith(("#", "frequency"))]
    k = data.draw(st.sampled_from(data_lines))
    col = data.draw(st.integers(0, 2))
    row = lines[k].split(",")
    row[col] = formula
    lines[k] = ",".join(row)
    with pytest.raises(cb.FileFormatError) as info:
        files.readings_from_csv("\n".join(lines) + "\n", source="demo.csv")
    message = str(info.value)
    assert f"demo.csv, line {k + 1}" in message
    assert ["frequency", "capacitance", "dissipation"][col] in message
    assert repr(formula.strip()[:80]) in message


# --------------------------------------------------------------------------- measurement files


@settings(ROOMY, max_examples=max(6, settings().max_examples // 2))
@given(data=st.data(), which=st.sampled_from(["measurement", "readings"]))
def test_mutated_measurement_files_read_or_refuse_cleanly(data, which):
    toml_text, csv_text = MEASUREMENT_TEXT, READINGS_TEXT
    if which == "measurement":
        toml_text = data.draw(mutated(toml_text))
    else:
        csv_text = data.draw(mutated(csv_text))
    with tempfile.TemporaryDirectory() as d:
        path = pathlib.Path(d) / "m.toml"
        path.write_text(toml_text, encoding="utf-8")
        (pathlib.Path(d) / "qf-pe-03_readings.csv").write_text(csv_text, encoding="utf-8")
        shutil.copy(DEMO / "bench3-guarded-cell.toml", pathlib.Path(d) / "cell.toml")
        try:
            m = files.read_measurement(path)
        except cb.FileFormatError as exc:
            assert str(exc).split(",")[0].split(":")[0] in ("m.toml", "qf-pe-03_readings.csv"), str(
                exc
            )
            return
    assert m.readings and all(math.isfinite(r.capacitance) for r in m.readings)
    assert validate.LIMITS["temperature"][0] <= m.temperature <= validate.LIMITS["temperature"][1]
    assert all(1e-6 <= t <= 10 for t in m.thickness_readings)


# --------------------------------------------------------------------------- export


DANGEROUS = ("=", "+", "-", "@", "\t", "\r", "\n", "|", "%", "\uff1d", "\uff0b", "\uff0d")


def _exported_cells_are_safe(text: str, originals: list[list]) -> None:
    parsed = list(csv.reader(io.StringIO(text)))
    assert len(parsed) == len(originals)
    for row, orig in zip(parsed, originals, strict=True):
        for cell, o in zip(row, orig, strict=True):
            if isinstance(o, (int, float)) and not isinstance(o, bool):
                assert cell == str(o)  # numbers pass unchanged
                continue
            text_o = "" if o is None else str(o)
            assert not cell.lstrip(" ").startswith(DANGEROUS), cell
            # nothing is lost: the apostrophe is the only change
            assert cell in (text_o, "'" + text_o)


@given(
    rows=st.lists(
        st.lists(st.one_of(plain_text, formula_text, numbers, st.none()), min_size=1, max_size=4),
        min_size=1,
        max_size=6,
    ).filter(lambda rows: len({len(r) for r in rows}) == 1)
)
def test_csv_export_neutralises_every_formula_like_cell(rows):
    header, body = rows[0], rows[1:]
    text = files.to_csv(header, body)
    _exported_cells_are_safe(text, [header, *body])


@settings(max_examples=max(4, settings().max_examples // 3))
@given(
    specimen=st.one_of(formula_text, plain_text.filter(lambda s: s.strip())),
    operator=st.one_of(formula_text, plain_text),
    method=st.one_of(formula_text, plain_text),
)
def test_bench_log_export_neutralises_formula_like_text(specimen, operator, method):
    from capbench.store import BenchLog

    with tempfile.TemporaryDirectory() as d, BenchLog(pathlib.Path(d) / "log.sqlite") as log:
        log.add(
            kind="extract",
            specimen_id=specimen,
            method=method,
            operator=operator or "x",
            results=[
                {"frequency_hz": 1e3, "eps_r": 2.3, "u_eps_r": 1e-3, "U_eps_r": 2e-3, "k_eps_r": 2}
            ],
        )
        text = log.export_csv()
    parsed = list(csv.reader(io.StringIO(text)))
    assert len(parsed) == 2
    for cell in parsed[1]:
        assert not cell.lstrip(" ").startswith(DANGEROUS), cell
    assert parsed[1][4] in (specimen, "'" + specimen)
