"""Hostile files and the bench log: nothing in a file is ever executed or unpickled; deep
nesting, huge arrays, very long strings and lines, over-size files, pickles and
formula-like cells are refused cleanly (a FileFormatError naming the file and what would
be valid); exports neutralise spreadsheet formulas (common practice, no source: the
usual defence against CSV formula injection).
"""

from __future__ import annotations

import ast
import builtins
import csv
import io
import pickle
import shutil
import time
from pathlib import Path

import pytest

import capbench as cb
from capbench import files
from capbench.cli import main
from capbench.store import BenchLog

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "quillfield"
PACKAGE = ROOT / "capbench"
HEAD = 'schema = "capbench-fixture/1"\nkind = "parallel_discs"\nradius = "25 mm"\ngap = "2 mm"\n'


# --------------------------------------------------------------------------- nothing runs


def test_the_package_has_no_code_that_could_run_or_unpickle_a_file():
    # a static check: no eval/exec/compile, no pickle/marshal/shelve/yaml loading, no
    # shell, anywhere in capbench's source
    banned_calls = {"eval", "exec", "compile", "__import__"}
    banned_modules = {"pickle", "marshal", "shelve", "yaml", "dill", "cloudpickle"}
    found = []
    for path in sorted(PACKAGE.glob("*.py")):
        tree = ast.parse(path.read_text())
        for node in ast.walk(tree):
            if isinstance(node, ast.Call) and getattr(node.func, "id", None) in banned_calls:
                found.append(f"{path.name}:{node.lineno} {node.func.id}()")
            if isinstance(node, ast.Attribute) and node.attr in ("system", "popen", "loads"):
                owner = getattr(node.value, "id", "")
                if owner in ("os", "pickle", "marshal", "subprocess"):
                    found.append(f"{path.name}:{node.lineno} {owner}.{node.attr}")
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                names = [a.name for a in node.names] + [getattr(node, "module", None) or ""]
                for n in names:
                    if n.split(".")[0] in banned_modules | {"subprocess"}:
                        found.append(f"{path.name}:{node.lineno} import {n}")
    assert found == []


def _read_every_demo_file() -> None:
    for path in sorted(DEMO.glob("*.toml")):
        if "capbench-measurement/1" in path.read_text():
            files.read_measurement(path).extract(fem=False)
        else:
            files.read_fixture(path)
    files.read_readings(DEMO / "qf-pe-03_readings.csv")


@pytest.fixture
def nothing_may_run(monkeypatch):
    """Every way to run or unpickle text, replaced by a trap (fault injection). The demo
    files are read once first, so that Python's own imports (which exec module code and
    unmarshal .pyc files) are done before the traps are set."""
    _read_every_demo_file()
    calls = []

    def trap(name):
        def run(*args, **kwargs):
            calls.append(name)
            raise AssertionError(f"{name} called while reading a file")

        return run

    for name in ("eval", "exec"):
        monkeypatch.setattr(builtins, name, trap(name))
    for mod, name in ((pickle, "loads"), (pickle, "load"), (pickle, "Unpickler")):
        monkeypatch.setattr(mod, name, trap(f"{mod.__name__}.{name}"))
    import os
    import subprocess

    monkeypatch.setattr(os, "system", trap("os.system"))
    monkeypatch.setattr(subprocess, "Popen", trap("subprocess.Popen"))
    return calls


def test_reading_every_demo_file_runs_nothing(nothing_may_run):
    _read_every_demo_file()
    assert nothing_may_run == []


CODE_VALUES = [
    "__import__('os').system('touch PWNED')",
    "eval('1+1')",
    "!!python/object/apply:os.system ['touch PWNED']",
    "{{7*7}} mm",
    "$(touch PWNED) mm",
    "`touch PWNED` mm",
    "exec(open('x').read())",
]


@pytest.mark.parametrize("code", CODE_VALUES)
def test_code_in_a_value_stays_text_and_is_refused_as_a_length(code, tmp_path, nothing_may_run):
    path = tmp_path / "cell.toml"
    path.write_text(HEAD + f"thickness = {_toml_str(code)}\n")
    with pytest.raises(cb.FileFormatError) as info:
        files.read_fixture(path)
    message = str(info.value)
    assert message.startswith("cell.toml, line 5: thickness")
    assert repr(code) in message  # the value quoted back, as text
    assert nothing_may_run == []
    assert not (tmp_path / "PWNED").exists() and not Path("PWNED").exists()


@pytest.mark.parametrize("code", CODE_VALUES)
def test_code_in_a_name_stays_a_name(code, nothing_may_run):
    fx = files.fixture_from_toml(HEAD + f"name = {_toml_str(code)}\n")
    assert fx.name == code
    assert nothing_may_run == []


def _toml_str(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


def test_a_pickle_named_toml_is_refused_not_unpickled(tmp_path, nothing_may_run):
    path = tmp_path / "cell.toml"
    path.write_bytes(pickle.dumps({"kind": "parallel_discs"}, protocol=0))
    with pytest.raises(cb.FileFormatError, match=r"^cell.toml"):
        files.read_fixture(path)
    path.write_bytes(pickle.dumps({"kind": "parallel_discs"}, protocol=5))
    with pytest.raises(cb.FileFormatError, match=r"^cell.toml: byte \d+ is not UTF-8 text"):
        files.read_fixture(path)
    assert nothing_may_run == []


# --------------------------------------------------------------------------- hostile TOML


@pytest.mark.parametrize(
    "body",
    [
        "x = " + "[" * 100 + "]" * 100,
        "x = " + "[" * 480 + "]" * 480,  # deep enough to overflow a recursive count
        "x = " + "[" * 5000 + "]" * 5000,
        "x = " + "{a = " * 300 + "1" + "}" * 300,
        "[" + ".".join(["t"] * 50) + "]\ny = 1",
        "[[" + ".".join(["t"] * 12) + "]]\ny = 1",
    ],
    ids=["arrays-100", "arrays-480", "arrays-5000", "inline-300", "dotted-50", "aot-12"],
)
def test_deep_nesting_is_refused(body):
    with pytest.raises(cb.FileFormatError, match=r"^deep.toml: .*at most 8 levels"):
        files.fixture_from_toml(HEAD + body + "\n", source="deep.toml")


@pytest.mark.timeout(60)
@pytest.mark.parametrize(
    "extra",
    [
        "radius2 = [" + "1, " * 200_000 + "1]",
        "shield = [" + '"1 mm", ' * 100_000 + '"1 mm"]',
        'name = "' + "q" * 900_000 + '"',
        "".join(f"k{i} = {i}\n" for i in range(60_000)),
        '"' + "k" * 500_000 + '" = 1',
        "[" + " " * 200_000 + "a",  # a header line that once backtracked for minutes
        "thickness = " + "1" * 200_000,
        'medium_eps_r = "' + "1-" * 200_000 + '"',
    ],
    ids=[
        "array-200k",
        "shield-100k",
        "string-900k",
        "keys-60k",
        "key-500k",
        "header-spaces-200k",
        "digits-200k",
        "eps-text-400k",
    ],
)
def test_huge_toml_values_are_refused_quickly(extra):
    start = time.perf_counter()
    with pytest.raises(cb.FileFormatError) as info:
        files.fixture_from_toml(HEAD + extra + "\n", source="huge.toml")
    assert str(info.value).startswith("huge.toml")
    assert len(str(info.value)) < 2_000  # the message quotes a piece, not the whole value
    del start  # timing lives in the timeout, not in an assertion


def test_over_size_files_are_refused_before_reading(tmp_path):
    for name, limit, read in (
        ("cell.toml", files.MAX_TOML_BYTES, files.read_fixture),
        ("m.toml", files.MAX_TOML_BYTES, files.read_measurement),
        ("r.csv", files.MAX_CSV_BYTES, files.read_readings),
    ):
        path = tmp_path / name
        with open(path, "wb") as fh:
            fh.truncate(limit + 1)  # sparse: no disk used
        with pytest.raises(cb.FileFormatError) as info:
            read(path)
        message = str(info.value)
        assert message.startswith(name)
        assert f"{limit + 1:,} bytes is over the {limit:,}-byte limit" in message


def test_a_folder_or_missing_file_is_refused(tmp_path):
    with pytest.raises(cb.FileFormatError, match="is not a file"):
        files.read_fixture(tmp_path)
    with pytest.raises(cb.FileFormatError, match="no such fixture file"):
        files.read_fixture(tmp_path / "missing.toml")


# --------------------------------------------------------------------------- CSV input

READINGS = (DEMO / "qf-pe-03_readings.csv").read_text()


@pytest.mark.parametrize(
    "cell",
    ["=1+2", "@SUM(A1)", "+cmd|' /C calc'!A0", "-2+3+cmd|' /C calc'!A0", '=HYPERLINK("x")'],
)
@pytest.mark.parametrize("column", [0, 1, 2], ids=["frequency", "capacitance", "dissipation"])
def test_formula_like_cells_are_refused_on_input(cell, column):
    lines = READINGS.splitlines()
    k = next(i for i, ln in enumerate(lines) if ln[:1].isdigit())
    row = next(csv.reader([lines[k]]))
    row[column] = cell
    buf = io.StringIO()
    csv.writer(buf, lineterminator="").writerow(row)
    lines[k] = buf.getvalue()
    with pytest.raises(cb.FileFormatError) as info:
        files.readings_from_csv("\n".join(lines) + "\n", source="r.csv")
    message = str(info.value)
    name = ["frequency", "capacitance", "dissipation"][column]
    assert f"r.csv, line {k + 1}: {name} = {cell!r}" in message
    assert "plain numbers" in message


@pytest.mark.timeout(60)
@pytest.mark.parametrize(
    "text",
    [
        "frequency [Hz],capacitance [pF]\n1000," + "1" * 100_000 + "x\n",
        'frequency [Hz],capacitance [pF]\n1000,"' + "9" * 200_000 + '"\n',
        "frequency [Hz],capacitance [9**9**9 pF]\n1000,20\n",
        "frequency [Hz],capacitance [" + "(" * 5000 + "pF" + ")" * 5000 + "]\n1000,20\n",
        "frequency [Hz],capacitance [pF]\n" + "1000,20," * 50_000 + "\n",
    ],
    ids=["digits-100k", "quoted-200k", "unit-power-tower", "unit-brackets-5000", "wide-row"],
)
def test_hostile_readings_are_refused_quickly(text):
    with pytest.raises(cb.FileFormatError) as info:
        files.readings_from_csv(text, source="r.csv")
    assert str(info.value).startswith("r.csv")
    assert len(str(info.value)) < 2_000


# --------------------------------------------------------------------------- exports

HOSTILE = [
    "=cmd|' /C calc'!A0",
    "+SUM(1,2)",
    "-2+3",
    "@SUM(A1)",
    "\t=1+1",
    "   =1+1",
    "\uff1d1+1",  # a full-width equals sign
    'x\r=HYPERLINK("http://example.invalid")',  # a row break inside a cell
    "%0A=1+1",
    "|calc",
]


def _text_cells_are_safe(text: str) -> list[list[str]]:
    rows = list(csv.reader(io.StringIO(text)))
    for row in rows:
        for cell in row:
            assert not cell.lstrip(" ").startswith(
                ("=", "+", "-", "@", "\t", "\r", "|", "%", "\uff1d")
            ), cell
    return rows


def test_csv_writer_neutralises_formulas_and_keeps_the_text():
    text = files.to_csv(["name", "value"], [[h, 1.5] for h in HOSTILE])
    rows = _text_cells_are_safe(text)
    assert len(rows) == len(HOSTILE) + 1  # no cell broke its row
    assert [r[0] for r in rows[1:]] == ["'" + h for h in HOSTILE[:-3]] + [
        HOSTILE[-3],  # a CR inside a cell is quoted, not a row break
        "'" + HOSTILE[-2],
        "'" + HOSTILE[-1],
    ]
    assert [r[1] for r in rows[1:]] == ["1.5"] * len(HOSTILE)


RESULT = {"frequency_hz": 1e3, "eps_r": 2.3, "u_eps_r": 1e-3, "U_eps_r": 2e-3, "k_eps_r": 2.0}


def _log_hostile_entries(path: Path) -> None:
    with BenchLog(path) as log:
        for i, h in enumerate(HOSTILE):
            log.add(
                kind="extract",
                specimen_id=h,
                method=h,
                operator=h,
                results=[RESULT],
                summary=f"entry {i}",
            )


def test_bench_log_export_neutralises_formulas(tmp_path):
    _log_hostile_entries(tmp_path / "log.sqlite")
    with BenchLog(tmp_path / "log.sqlite") as log:
        text = log.export_csv(tmp_path / "out.csv")
    assert (tmp_path / "out.csv").read_bytes().decode("utf-8") == text
    rows = _text_cells_are_safe(text)
    assert len(rows) == len(HOSTILE) + 1
    header = rows[0]
    for col in ("operator", "specimen", "method"):
        j = header.index(col)
        assert {r[j].removeprefix("'") for r in rows[1:]} == set(HOSTILE)


def test_command_log_export_neutralises_formulas(tmp_path):
    _log_hostile_entries(tmp_path / "log.sqlite")
    out, err = io.StringIO(), io.StringIO()
    code = main(["log", "export", "-", "--log-file", str(tmp_path / "log.sqlite")], out, err)
    assert code == 0, err.getvalue()
    rows = _text_cells_are_safe(out.getvalue())
    assert len(rows) == len(HOSTILE) + 1
    out2 = io.StringIO()
    code = main(
        ["log", "export", str(tmp_path / "x.csv"), "--log-file", str(tmp_path / "log.sqlite")],
        out2,
        io.StringIO(),
    )
    assert code == 0 and f"wrote {len(HOSTILE)} rows" in out2.getvalue()


def test_a_result_row_without_its_values_is_refused_before_logging(tmp_path):
    # was sqlite3.IntegrityError from inside the transaction
    with BenchLog(tmp_path / "log.sqlite") as log:
        with pytest.raises(cb.InputError, match=r"result row 0: U_eps_r = None; valid: a finite"):
            log.add(kind="extract", results=[{"eps_r": 2.3, "u_eps_r": 1e-3}])
        with pytest.raises(cb.InputError, match=r"k_eps_r = nan; valid: a finite number"):
            log.add(
                kind="extract",
                results=[{"eps_r": 2.3, "u_eps_r": 1e-3, "U_eps_r": 2e-3, "k_eps_r": float("nan")}],
            )
        assert log.count() == 0


def test_a_measurement_with_hostile_text_round_trips_through_the_log(tmp_path):
    # the measurement's own text is kept as data in the log, and reads back the same
    for name in ("qf-pe-03.toml", "qf-pe-03_readings.csv"):
        shutil.copy(DEMO / name, tmp_path / name)
    path = tmp_path / "qf-pe-03.toml"
    text = path.read_text().replace('id = "QF-PE-03"', 'id = "=HYPERLINK(\\"x\\")"')
    path.write_text(text)
    m = files.read_measurement(path)
    assert m.specimen_id == '=HYPERLINK("x")'
    res = m.extract(fem=False)
    with BenchLog(tmp_path / "log.sqlite") as log:
        entry = log.log_extraction(m, res, operator="@op")
        assert log.entry(entry).payload["measurement"] == text
        rows = _text_cells_are_safe(log.export_csv())
    assert rows[1][rows[0].index("specimen")] == "'" + '=HYPERLINK("x")'
