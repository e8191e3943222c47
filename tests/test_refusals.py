"""Every refusal names the offending value, its unit and the valid range.

The cases are in tests/cases/refusals.json (made by tests/cases/make_refusals.py): each
limit of capbench.validate.LIMITS just outside both ends, and the other refusals of the
library, the file readers and the command. The expected texts there are written from the
documented limits (README, "Valid input"), not read from capbench. A refusal must be a
capbench error that is also a ValueError (bad input) or RuntimeError (a solve that cannot
meet its budget), never another exception; the command must exit with the stated code
and one line on standard error.
"""

from __future__ import annotations

import io
import json
import pathlib
import re

import pytest

import capbench as cb
from capbench import extract, files, materials, uncertainty, validate
from capbench.cli import main
from capbench.units import to_si

HERE = pathlib.Path(__file__).resolve().parent
DEMO = HERE.parent / "fixtures" / "quillfield"
CASES = json.loads((HERE / "cases" / "refusals.json").read_text())

# every limit of the one table is walked at both ends (the table and the cases agree)
LIMIT_IDS = {c["args"]["what"] for c in CASES if c["entry"] == "check"}


def test_every_limit_has_cases_at_both_ends():
    assert set(validate.LIMITS) <= LIMIT_IDS
    ids = {c["id"] for c in CASES}
    for what in validate.LIMITS:
        assert f"limit-{what}-below" in ids and f"limit-{what}-above" in ids


def _expand(value):
    """``<<piece*N>>`` in a case's text stands for the piece repeated N times."""
    if isinstance(value, str):
        return re.sub(
            r"<<(.*?)\*(\d+)>>", lambda m: m.group(1) * int(m.group(2)), value, flags=re.DOTALL
        )
    if isinstance(value, list):
        return [_expand(v) for v in value]
    if isinstance(value, dict):
        return {k: _expand(v) for k, v in value.items()}
    return value


def _fixtures():
    return {
        "discs": cb.parallel_discs(
            radius="25 mm", gap="2 mm", specimen=cb.Specimen("2 mm", 2.3), name="case discs"
        ),
    }


def _builder(args):
    args = dict(args)
    builder = getattr(cb, args.pop("builder"))
    for key in ("specimen_eps_r",):
        if isinstance(args.get(key), list):  # JSON has no complex numbers
            args[key] = complex(*args[key])
    return builder(**args)


def _replaced(path: pathlib.Path, replace: list[list[str]]) -> str:
    text = path.read_text()
    for old, new in replace:
        assert old in text, old  # the case still matches the demo file
        text = text.replace(old, new, 1)
    return text


def _method(name):
    def run(args):
        args = dict(args)
        fx = _fixtures()[args.pop("fixture")]
        args.setdefault("fem", False)
        return getattr(extract, name)(fx, **args)

    return run


def _measurement(args, tmp_path):
    """A demo measurement (default qf-pe-03) with text replaced in it ("replace") and in
    its readings CSV ("csv"), copied to tmp_path."""
    demo = args.get("demo", "qf-pe-03")
    csv_name = f"{demo}_readings.csv"
    (tmp_path / csv_name).write_text(_replaced(DEMO / csv_name, args.get("csv", [])))
    path = tmp_path / "case.toml"
    path.write_text(_replaced(DEMO / f"{demo}.toml", args["replace"]))
    return files.read_measurement(path)


def _solve(args):
    args = dict(args)
    fx = _fixtures()[args.pop("fixture")]
    return cb.solve(fx, **args)


ENTRIES = {
    "check": lambda a, _t: validate.check(a["value"], a["what"], a["name"]),
    "check_or_zero": lambda a, _t: validate.check_or_zero(a["value"], a["what"], a["name"]),
    "to_si": lambda a, _t: to_si(a["value"], a["kind"], a["name"]),
    "builder": lambda a, _t: _builder(a),
    "ideal_contacting": lambda a, _t: extract.ideal_contacting(**a),
    "ideal_air_gap": lambda a, _t: extract.ideal_air_gap(**a),
    "ideal_micrometer": lambda a, _t: extract.ideal_micrometer(**a),
    "ideal_two_fluid": lambda a, _t: extract.ideal_two_fluid(**a),
    "ideal_liquid": lambda a, _t: extract.ideal_liquid(**a),
    "guard_effective_area": lambda a, _t: extract.guard_effective_area(**a),
    "contacting": lambda a, _t: _method("contacting")(a),
    "water_eps_r": lambda a, _t: materials.water_eps_r(**a),
    "air_eps_r": lambda a, _t: materials.air_eps_r(**a),
    "reference_eps_r": lambda a, _t: materials.reference_eps_r(**a),
    "solve": lambda a, _t: _solve(a),
    "edge_field": lambda a, _t: cb.edge_field(
        cb.solve(_fixtures()[a["fixture"]], rtol=1e-4), samples=a["samples"]
    ),
    "accuracy": lambda a, _t: uncertainty.AccuracySpec.parse(a["text"]),
    "type_a": lambda a, _t: uncertainty.type_a(a["readings"], a["name"]),
    "coverage_factor": lambda a, _t: uncertainty.coverage_factor(a["dof"], a["p"]),
    "fixture_demo": lambda a, _t: files.fixture_from_toml(
        _replaced(DEMO / "bench3-guarded-cell.toml", a["replace"]), source="case.toml"
    ),
    "fixture_text": lambda a, _t: files.fixture_from_toml(a["text"], source="case.toml"),
    "readings_csv": lambda a, _t: files.readings_from_csv(a["text"], source="case.csv"),
    "measurement_demo": _measurement,
}

_BUILTIN = {"SolverError": RuntimeError}


@pytest.mark.parametrize("case", [c for c in CASES if c["entry"] != "cli"], ids=lambda c: c["id"])
def test_library_and_file_refusals_name_value_and_range(case, tmp_path):
    args = _expand(case["args"])
    error = getattr(cb, case["error"])
    with pytest.raises(error) as info:
        ENTRIES[case["entry"]](args, tmp_path)
    exc = info.value
    assert isinstance(exc, cb.CapbenchError)
    assert isinstance(exc, _BUILTIN.get(case["error"], ValueError))
    message = str(exc)
    for piece in case["expect"]:
        assert piece in message, f"{case['id']}: {piece!r} not in {message!r}"


@pytest.fixture(scope="module")
def cli_paths(tmp_path_factory):
    d = tmp_path_factory.mktemp("cli")
    return {
        "fixture": str(DEMO / "bench3-guarded-cell.toml"),
        "measurement": str(DEMO / "qf-pe-03.toml"),
        "log": str(d / "empty-log.sqlite"),
    }


@pytest.mark.parametrize("case", [c for c in CASES if c["entry"] == "cli"], ids=lambda c: c["id"])
def test_command_refusals_exit_with_one_line_naming_value_and_range(case, cli_paths):
    argv = [a.format(**cli_paths) for a in case["args"]["argv"]]
    out, err = io.StringIO(), io.StringIO()
    code = main(argv, stdout=out, stderr=err)
    assert f"exit {code}" == case["error"], err.getvalue()
    lines = [ln for ln in err.getvalue().splitlines() if ln.startswith("capbench:")]
    assert len(lines) == 1, err.getvalue()  # one message line, no traceback
    assert "Traceback" not in err.getvalue()
    for piece in case["expect"]:
        assert piece in lines[0], f"{case['id']}: {piece!r} not in {lines[0]!r}"
