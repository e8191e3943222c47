"""Solver faults: a solve that cannot meet its budget, runs out of memory or meets a
geometry it cannot mesh stops with a clear error that says what to change, and never
hangs (each test has a timeout well above its run time; tiny budgets make the faults).

The command gives the same stop as exit code 1 and one line on standard error.
"""

from __future__ import annotations

import io
import math
import subprocess
import sys
import warnings
from pathlib import Path

import pytest

import capbench as cb
from capbench import capacitance, files
from capbench.cli import main

ROOT = Path(__file__).resolve().parents[1]
CELL = ROOT / "fixtures" / "quillfield" / "bench3-guarded-cell.toml"
MEASUREMENT = ROOT / "fixtures" / "quillfield" / "qf-pe-03.toml"


@pytest.fixture(scope="module")
def cell():
    return files.read_fixture(CELL)


def _what_to_change(message: str) -> None:
    # the stop names each budget a user can change, with its valid range
    assert "rtol" in message and "valid 1e-9 to 1e-2" in message
    assert "time_budget" in message and "max_dofs" in message


@pytest.mark.timeout(120)
def test_a_solve_over_its_time_budget_stops_and_says_what_to_change(cell):
    with pytest.raises(cb.SolverError) as info:
        cb.solve(cell, rtol=1e-8, time_budget=1e-3)
    exc = info.value
    assert isinstance(exc, RuntimeError)
    message = str(exc)
    assert "could not reach rtol = 1.0e-08" in message
    assert "beyond time_budget = 0.001 s" in message
    _what_to_change(message)
    # the best result so far travels with the error
    partial = exc.partial
    assert isinstance(partial, capacitance.Solution)
    assert math.isfinite(partial.terminal.real) and partial.terminal.real > 0


@pytest.mark.timeout(120)
def test_a_solve_over_its_unknowns_budget_stops_and_says_what_to_change(cell):
    with pytest.raises(cb.SolverError) as info:
        cb.solve(cell, rtol=1e-8, max_dofs=100)
    message = str(info.value)
    assert "unknowns, over max_dofs = 100" in message
    _what_to_change(message)
    assert info.value.partial.terminal.real > 0


@pytest.mark.timeout(120)
def test_running_out_of_memory_is_a_clear_stop(cell, monkeypatch):
    # fault injected: the field solve's allocation fails on the second step
    real = capacitance.fe.solve_unit_drives
    calls = []

    def starved(asm, eps, **kw):
        calls.append(asm.n_dofs)
        if len(calls) > 1:
            raise MemoryError
        return real(asm, eps, **kw)

    monkeypatch.setattr(capacitance.fe, "solve_unit_drives", starved)
    with pytest.raises(cb.SolverError) as info:
        cb.solve(cell, rtol=1e-9)
    message = str(info.value)
    assert "ran out of memory" in message
    assert f"largest step solved: {calls[0]:,} unknowns" in message
    assert "lower max_dofs (now 3,000,000; valid 100 to 1e8)" in message
    assert "loosen rtol (valid 1e-9 to 1e-2)" in message
    assert info.value.partial is not None


@pytest.mark.timeout(120)
def test_running_out_of_memory_on_the_first_step_is_a_clear_stop(cell, monkeypatch):
    def starved(asm, eps, **kw):
        raise MemoryError

    monkeypatch.setattr(capacitance.fe, "solve_unit_drives", starved)
    with pytest.raises(cb.SolverError, match=r"largest step solved: none") as info:
        cb.solve(cell, rtol=1e-4)
    assert info.value.partial is None


@pytest.mark.timeout(60)
def test_a_gap_too_thin_for_its_fixture_is_refused_before_meshing():
    # a 1 um gap under a 10 m disc: 1e-7 of the fixture's size, the mesher's limit
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", cb.CapbenchWarning)
        fx = cb.parallel_discs(radius="10 m", gap="1 um")
    with pytest.raises(cb.GeometryError) as info:
        cb.solve(fx, rtol=1e-4)
    message = str(info.value)
    assert "is 1e-06 m" in message and "1e-7 of its size" in message
    assert "separate the parts further or let them touch" in message


@pytest.mark.timeout(120)
def test_the_command_stops_a_solve_over_budget_with_one_line(tmp_path):
    out, err = io.StringIO(), io.StringIO()
    code = main(
        ["solve", str(CELL), "--rtol", "1e-8", "--time-budget", "0.001"], stdout=out, stderr=err
    )
    assert code == 1
    lines = err.getvalue().splitlines()
    assert len(lines) == 1 and lines[0].startswith("capbench: error: could not reach rtol")
    assert "time_budget = 0.001 s" in lines[0]
    assert "--rtol, --time-budget, --max-dofs" in lines[0]
    assert out.getvalue() == ""


@pytest.mark.timeout(120)
def test_the_command_stops_a_solve_out_of_memory_with_one_line(monkeypatch):
    def starved(asm, eps, **kw):
        raise MemoryError

    monkeypatch.setattr(capacitance.fe, "solve_unit_drives", starved)
    err = io.StringIO()
    code = main(["solve", str(CELL)], stdout=io.StringIO(), stderr=err)
    assert code == 1
    lines = err.getvalue().splitlines()
    assert len(lines) == 1 and "ran out of memory" in lines[0]
    assert "--max-dofs" in lines[0]


@pytest.mark.timeout(120)
def test_an_extraction_whose_solves_fail_stops_cleanly_through_the_command(monkeypatch):
    # fault injected: every solve of the extraction fails as a solve over budget does
    from capbench import extract

    def over_budget(fixture, rtol, **kw):
        raise cb.SolverError(
            "could not reach rtol = 1.0e-06: the next step needs about 9,999,999 unknowns, "
            "over max_dofs = 3,000,000",
            rtol=rtol,
        )

    monkeypatch.setattr(extract, "solve", over_budget)
    err = io.StringIO()
    code = main(["extract", str(MEASUREMENT)], stdout=io.StringIO(), stderr=err)
    assert code == 1
    lines = err.getvalue().splitlines()
    assert len(lines) == 1 and "over max_dofs = 3,000,000" in lines[0]


@pytest.mark.timeout(180)
def test_the_installed_command_never_hangs_on_a_budget_it_cannot_meet():
    # a separate process, as a user runs it; the subprocess timeout would fail the test
    proc = subprocess.run(
        [
            sys.executable,
            "-m",
            "capbench",
            "solve",
            str(CELL),
            "--rtol",
            "1e-9",
            "--max-dofs",
            "500",
        ],
        capture_output=True,
        text=True,
        timeout=150,
    )
    assert proc.returncode == 1, proc.stderr
    assert "Traceback" not in proc.stderr
    lines = proc.stderr.splitlines()
    assert len(lines) == 1 and "over max_dofs = 500" in lines[0]
