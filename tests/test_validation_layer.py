"""The validation layer at capbench's edges: regressions for the bugs issue 8 found, and
the warnings for suspicious but legal input.

Each regression names what went wrong before the fix. The warning thresholds are checked
against numbers computed here: the wavelength lambda = c / (f sqrt(eps_r)) with c =
299 792 458 m/s (SI, exact) and the quasi-static limit size <= lambda / 20 (common
practice, no source).
"""

from __future__ import annotations

import math
import time
import warnings

import pytest

import capbench as cb
from capbench import extract, files, validate
from capbench.units import to_si

C_LIGHT = 299_792_458.0  # m/s, exact (SI)
EPS0 = 8.8541878188e-12  # F/m, CODATA 2022


# --------------------------------------------------------------------------- regressions


@pytest.mark.parametrize("text", ["5 %", "3 ppm", "2 mm/m", "7 percent"])
def test_a_dimensionless_unit_is_not_taken_as_metres(text):
    # was: "5 %" as a length gave 5 m (and as a capacitance 5 F), silently
    with pytest.raises(cb.InputError, match=r"is not a length"):
        to_si(text, "length", "gap")
    with pytest.raises(cb.InputError, match=r"is not a capacitance"):
        to_si(text, "capacitance", "C")


def test_a_percentage_converts_as_a_fraction():
    # was: to_si("5 %", "dimensionless") gave 5
    assert to_si("5 %", "dimensionless", "D") == pytest.approx(0.05, rel=1e-15)
    assert to_si("250 ppm", "dimensionless", "D") == pytest.approx(2.5e-4, rel=1e-15)
    assert to_si("2.5", "length", "gap") == 2.5  # a bare number stays in the base unit
    r = files.readings_from_csv(
        "frequency [Hz],capacitance [pF],dissipation factor [%]\n1e3,20,5\n"
    )
    assert r[0].dissipation == pytest.approx(0.05, rel=1e-15)


@pytest.mark.parametrize("t", ["-5 degC", "0 degC", "-199 degC", "250 K"])
def test_temperatures_at_or_below_zero_celsius_are_valid(t):
    # was: check(..., "temperature") refused every value <= 0 degC, naming the range
    # -200 degC to 500 degC, which holds them
    v = validate.check(t, "temperature", "T")
    assert -200 <= v <= 0


def test_a_measurement_file_at_minus_five_celsius_reads(tmp_path):
    import shutil

    demo = cb.files.Path(__file__).resolve().parents[1] / "fixtures" / "quillfield"
    shutil.copy(demo / "qf-pe-03_readings.csv", tmp_path)
    text = (demo / "qf-pe-03.toml").read_text().replace('"23.1 degC"', '"-5 degC"')
    (tmp_path / "m.toml").write_text(text)
    assert files.read_measurement(tmp_path / "m.toml").temperature == -5.0


@pytest.mark.timeout(30)
@pytest.mark.parametrize(
    "text", ["1 9**9**9 m", "1 m*10**10**4", "1 m**(10**10)", "1 " + "(" * 40 + "m" + ")" * 40]
)
def test_unit_text_with_number_arithmetic_is_refused_at_once(text):
    # was: pint evaluated 9**9**9 (a number of 370 million digits): a hang
    with pytest.raises(cb.InputError, match=r"is not a number with a unit"):
        to_si(text, "length", "gap")


@pytest.mark.timeout(60)
@pytest.mark.parametrize(
    "call",
    [
        lambda: files.fixture_from_toml("[" + " " * 100_000 + "a\n"),
        lambda: files.fixture_from_toml('schema = "x"\nkind = "' + "1" * 200_000 + 'x"\n'),
        lambda: files.readings_from_csv("frequency [Hz],capacitance [pF]\n1," + "1" * 60 + "x\n"),
        lambda: cb.AccuracySpec.parse("1" * 100_000 + "x %"),
        lambda: to_si("1" * 200_000 + "e", "length", "gap"),
    ],
    ids=["toml-header", "toml-value", "csv-cell", "accuracy", "number"],
)
def test_long_lines_are_refused_in_linear_time(call):
    # was: patterns like "\d+\.?\d*" and "\s*([^\]]+?)\s*" backtracked quadratically (a
    # header line of "[" and 4000 spaces took a minute)
    with pytest.raises(cb.CapbenchError):
        call()


def test_deep_arrays_tomllib_can_read_are_refused_not_a_recursion_error():
    # was: RecursionError from the depth count at about 480 nested arrays
    text = 'schema = "capbench-fixture/1"\nx = ' + "[" * 480 + "]" * 480 + "\n"
    with pytest.raises(cb.FileFormatError, match=r"at most 8 levels"):
        files.fixture_from_toml(text)


def test_a_quoted_cell_running_onto_the_next_line_is_refused():
    # was: ValueError("zip() argument 2 is shorter than argument 1")
    with pytest.raises(cb.FileFormatError, match=r"line 2: .*one reading per line"):
        files.readings_from_csv('frequency [Hz],capacitance [pF]\n"1000\n2",2\n')


def test_line_numbers_count_only_real_line_breaks():
    # was: a form feed or U+2028 inside a value shifted every line number after it
    csv_text = "frequency [Hz],capacitance [pF]\n1000,2\x0c0\n"
    with pytest.raises(cb.FileFormatError, match=r"^r.csv, line 2: capacitance"):
        files.readings_from_csv(csv_text, source="r.csv")
    toml_text = 'schema = "capbench-fixture/1"\n# a\u2028comment\nkind = "teapot"\n'
    with pytest.raises(cb.FileFormatError, match=r"^f.toml, line 3: kind"):
        files.fixture_from_toml(toml_text, source="f.toml")


def test_a_closed_form_result_outside_the_range_is_refused():
    # was: ideal_contacting returned eps_r = 0.115 for a reading below the vacuum value
    area = math.pi * 0.025**2
    cv = EPS0 * area / 2e-3  # 8.69 pF, computed here
    with pytest.raises(cb.ExtractionError, match=r"eps_r = 0.115"):
        extract.ideal_contacting(0.115 * cv, "2 mm", area)
    with pytest.raises(cb.ExtractionError, match=r"outside the valid range 1 to 10000"):
        extract.ideal_liquid("1 fF", "20 pF")  # eps_r 20 000


def test_a_loss_from_a_conductance_is_range_checked():
    # was: D = G / (2 pi f C) was never checked; 1 mS at 1 kHz on 20 pF is D = 7958
    fx = cb.parallel_discs(radius="25 mm", gap="2 mm", specimen=cb.Specimen("2 mm", 2.3))
    d = 1e-3 / (2 * math.pi * 1e3 * 20e-12)
    with pytest.raises(cb.InputError, match=rf"= {d:.6g} is outside the valid range 0 to 10"):
        extract.contacting(fx, "20 pF", conductance="1 mS", frequency="1 kHz", fem=False)


def test_a_huge_uncertainty_is_refused_not_an_overflow():
    from uncertainties import ufloat

    # was: OverflowError from squaring a standard deviation near 1e154
    with pytest.raises(cb.InputError, match=r"non-finite uncertainty; valid"):
        cb.uncertainty.si_value(ufloat(1.0, 1e160), "length", "gap", limits="length")


def test_budget_shares_sum_to_one_for_tiny_uncertainties():
    # was: shares summed to 1.096 when the contributions were near 1e-151 (their squares
    # fell below the smallest normal float); GUM 5.1.2 for y = 3 x
    x = cb.type_b(0.0, u=1e-160, name="x")
    b = cb.uncertainty.budget(3 * x)
    assert b.shares_total == pytest.approx(1.0, rel=1e-12)
    assert b.u == pytest.approx(3e-160, rel=1e-12)


def test_a_bare_carriage_return_in_an_exported_cell_is_quoted():
    # was: "x\r=cmd" went out unquoted; a spreadsheet breaking the row there would run
    # "=cmd" (common practice, no source: CSV injection)
    text = files.to_csv(["a"], [["x\r=cmd()"]])
    assert text == '"a"\n"x\r=cmd()"\n'


def test_solve_refuses_budgets_that_would_never_stop_or_never_start():
    fx = cb.parallel_discs(radius="25 mm", gap="2 mm")
    for kw, text in (
        ({"time_budget": math.nan}, "time_budget = nan"),
        ({"time_budget": math.inf}, "time_budget = inf"),
        ({"time_budget": -1.0}, "time_budget = -1 s"),
        ({"max_dofs": True}, "max_dofs = True is not a whole number"),
        ({"max_dofs": "many"}, "max_dofs = 'many' is not a whole number"),
    ):
        with pytest.raises(cb.InputError, match=re_escape(text)):
            cb.solve(fx, rtol=1e-4, **kw)


def re_escape(text: str) -> str:
    import re

    return re.escape(text)


# --------------------------------------------------------------------------- warnings

DISCS = cb.parallel_discs(radius="25 mm", gap="2 mm", specimen=cb.Specimen("2 mm", 2.3))
CV_DISCS = EPS0 * math.pi * 0.025**2 / 2e-3


def _warned(call) -> list[str]:
    with warnings.catch_warnings(record=True) as got:
        warnings.simplefilter("always")
        call()
    return [str(w.message) for w in got if issubclass(w.category, cb.CapbenchWarning)]


def test_quasi_static_warning_at_the_limit_computed_here():
    # the discs' largest extent is their 25 mm radius (the fixture's size); eps_r 2.3
    eps = 2.3
    f_limit = C_LIGHT / (20 * 0.025 * math.sqrt(eps))  # about 1.98e8 Hz
    reading = eps * CV_DISCS

    def at(f):
        return lambda: extract.contacting(DISCS, reading, frequency=f, fem=False)

    assert not [w for w in _warned(at(0.98 * f_limit)) if "quasi-static" in w]
    above = [w for w in _warned(at(1.02 * f_limit)) if "quasi-static" in w]
    assert len(above) == 1
    assert f"above about {f_limit:.3g} Hz" in above[0]
    assert "25 mm across" in above[0]


def test_quasi_static_warning_uses_the_densest_dielectric():
    # at eps_r 100 the wavelength is 10 times shorter than in vacuum
    f = C_LIGHT / (20 * 0.025 * math.sqrt(100.0)) * 1.05
    assert validate.quasi_static(f, 0.025, 100.0)
    assert not validate.quasi_static(f, 0.025, 1.0)


def test_a_high_dissipation_factor_warns():
    msgs = _warned(lambda: extract.contacting(DISCS, 2.3 * CV_DISCS, dissipation=0.2, fem=False))
    assert any("dissipation factor = 0.2 is above 0.1" in m for m in msgs)
    assert not _warned(
        lambda: extract.contacting(DISCS, 2.3 * CV_DISCS, dissipation=0.05, fem=False)
    )


def test_a_permittivity_near_the_upper_limit_warns():
    msgs = _warned(lambda: extract.contacting(DISCS, 6000 * CV_DISCS, fem=False))
    assert any("eps_r = 6000 is above 5000, near the limit 10000" in m for m in msgs)


def test_a_gap_a_thousand_times_smaller_than_the_electrode_warns():
    msgs = _warned(lambda: cb.parallel_discs(radius="2 m", gap="1 mm"))
    assert any("over 1000 times smaller" in m and "check the units" in m for m in msgs)
    assert not _warned(lambda: cb.parallel_discs(radius="0.9 m", gap="1 mm"))


def test_thickness_readings_far_apart_warn(tmp_path):
    import shutil

    demo = cb.files.Path(__file__).resolve().parents[1] / "fixtures" / "quillfield"
    shutil.copy(demo / "qf-pe-03_readings.csv", tmp_path)
    text = (demo / "qf-pe-03.toml").read_text().replace('"2.0126 mm"', '"2.6 mm"')
    (tmp_path / "m.toml").write_text(text)
    msgs = _warned(lambda: files.read_measurement(tmp_path / "m.toml"))
    assert any("more than 10 % apart" in m for m in msgs)


def test_the_command_shows_warnings_as_one_line_each(tmp_path):
    import io

    from capbench.cli import main

    path = tmp_path / "big.toml"
    path.write_text(
        'schema = "capbench-fixture/1"\nkind = "parallel_discs"\nradius = "2 m"\ngap = "1 mm"\n'
    )
    err = io.StringIO()
    start = time.perf_counter()
    code = main(["solve", str(path), "--rtol", "1e-3"], stdout=io.StringIO(), stderr=err)
    del start
    assert code == 0, err.getvalue()
    lines = [ln for ln in err.getvalue().splitlines() if ln.startswith("capbench: warning:")]
    assert len(lines) == 1 and "over 1000 times smaller" in lines[0]


def test_budget_degrees_of_freedom_survive_tiny_contributions():
    # was: a type A input of 2 readings whose contribution was near 1e-100 gave infinite
    # effective degrees of freedom (its 4th power underflowed); with one input the
    # Welch-Satterthwaite formula gives that input's own n - 1 (GUM G.4.1)
    x = cb.type_a([0.0, 2.4e-50], "x")
    b = cb.uncertainty.budget(1.7e-50 * x)
    assert b.dof == pytest.approx(1.0, rel=1e-12)
    assert b.shares_total == pytest.approx(1.0, rel=1e-12)
