"""Fixture, measurement and readings files: round trips, the demo data, and refusals that
name the file, line, key, bad value and what would be valid."""

from __future__ import annotations

import math
import shutil
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

import capbench as cb
from capbench import files
from capbench.errors import FileFormatError

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "quillfield"


def _fixtures() -> dict[str, cb.Fixture]:
    cell = cb.guarded_cell(
        "25 mm",
        "0.5 mm",
        "10 mm",
        "2 mm",
        specimen_eps_r=2.3,
        unguarded_radius="50 mm",
        name="Quillfield bench 3 guarded cell",
    )
    discs = cb.parallel_discs("25 mm", "2.5 mm", specimen=cb.Specimen("2 mm", complex(2.3, -1e-3)))
    coax = cb.coaxial_cell("5 mm", "8 mm", "50 mm", fill_eps_r=2.0, guard_length="10 mm")
    return {
        "guarded": cell,
        "guarded_shielded": cb.guarded_cell(
            "25 mm",
            "0.3 mm",
            "10 mm",
            "1 mm",
            specimen_eps_r=4.5,
            shield=("45 mm", "9 mm"),
            edge_radius="0.2 mm",
            electrode_thickness="1 mm",
        ),
        "discs": discs,
        "coax": coax,
        "strips": cb.parallel_strips("10 mm", "1 mm", length="1 m"),
        "coplanar": cb.coplanar_strips(
            "1 mm", "0.2 mm", substrate_thickness="0.5 mm", substrate_eps_r=4.4
        ),
        "idt": cb.interdigitated(
            "0.1 mm", "0.1 mm", 6, substrate_thickness="0.5 mm", substrate_eps_r=9.8
        ),
        "four": cb.four_electrode_section("20 mm", "0.5 mm"),
        # a permittivity changed after building (the builder's params lag behind it)
        "changed": cell.with_permittivity("specimen", complex(2.31, -5e-4)).with_permittivity(
            "medium", 1.0006
        ),
        "custom_discs": replace(discs, kind="custom", params=()),
        "custom_coax": replace(coax, kind="custom", params=()),
    }


def _same_geometry(a: cb.Geometry, b: cb.Geometry, rtol: float = 1e-14) -> None:
    """Equal structure, permittivities exactly, coordinates to rtol (the file writes
    15 significant digits of each length in mm)."""
    assert a.symmetry == b.symmetry and a.conductor_names == b.conductor_names
    assert a.permittivities() == b.permittivities()
    assert type(a.boundary) is type(b.boundary)

    def numbers(obj):
        if isinstance(obj, float):
            return [obj]
        if isinstance(obj, (tuple, list)):
            return [x for o in obj for x in numbers(o)]
        if hasattr(obj, "__dataclass_fields__"):
            return [x for k in obj.__dataclass_fields__ for x in numbers(getattr(obj, k))]
        return []

    for pa, pb in zip(
        (*a.conductors, *a.dielectrics), (*b.conductors, *b.dielectrics), strict=True
    ):
        assert pa.name == pb.name and type(pa.shape) is type(pb.shape)
        np.testing.assert_allclose(numbers(pa.shape), numbers(pb.shape), rtol=rtol, atol=1e-18)


@pytest.mark.parametrize("key", list(_fixtures()))
def test_fixture_round_trip(key, tmp_path):
    fx = _fixtures()[key]
    text = files.fixture_to_toml(fx, comment="made by the test suite")
    back = files.fixture_from_toml(text, source="t.toml")
    assert (back.kind, back.name, back.high, back.low) == (fx.kind, fx.name, fx.high, fx.low)
    assert (back.connection, back.specimen) == (fx.connection, fx.specimen)
    assert back.length == pytest.approx(fx.length) if fx.length else back.length is None
    _same_geometry(back.geometry, fx.geometry)
    # the same through a file on disk
    path = files.write_fixture(fx, tmp_path / "f.toml")
    _same_geometry(files.read_fixture(path).geometry, fx.geometry)
    # a second round trip writes the same text: the format is stable
    assert files.fixture_to_toml(back, comment="made by the test suite") == text


def test_fixture_file_is_readable_and_units_are_written():
    text = files.fixture_to_toml(_fixtures()["guarded"])
    assert 'schema = "capbench-fixture/1"' in text
    assert 'guard_gap = "0.5 mm"' in text and 'electrode_radius = "25 mm"' in text
    assert "caution" in text.lower()
    # 2.5 mm is 2.5e-3 m by the definition of the millimetre (SI; common practice, no source)
    fx = files.fixture_from_toml(
        text.replace('guard_gap = "0.5 mm"', 'guard_gap = "500 um"'), source="x.toml"
    )
    assert fx.param_dict["guard_gap"] == pytest.approx(5e-4, rel=1e-15)


def test_written_fixture_solves_the_same(tmp_path):
    fx = _fixtures()["changed"]
    back = files.read_fixture(files.write_fixture(fx, tmp_path / "c.toml"))
    a = cb.solve(fx, rtol=1e-5)
    b = cb.solve(back, rtol=1e-5)
    # identical geometry and permittivities: the same discrete problem to rounding
    assert complex(b.terminal) == pytest.approx(complex(a.terminal), rel=1e-12)


def test_demo_fixture_file_matches_the_measurement():
    fx = files.read_fixture(DEMO / "bench3-guarded-cell.toml")
    m = files.read_measurement(DEMO / "qf-pe-03.toml", with_readings=False)
    assert fx.kind == m.fixture.kind == "guarded_cell"
    for key, value in m.fixture.params:
        if isinstance(value, float) and key != "specimen_eps_r":
            assert fx.param_dict[key] == pytest.approx(value, rel=1e-15), key
        elif key != "specimen_eps_r":
            assert fx.param_dict[key] == value, key


# --------------------------------------------------------------------------- refusals


GOOD = """schema = "capbench-fixture/1"
kind = "guarded_cell"
name = "test cell"
electrode_radius = "25 mm"
guard_gap = "0.5 mm"
guard_width = "10 mm"
specimen_thickness = "2 mm"
specimen_eps_r = 2.3
"""


def refusal(text: str) -> FileFormatError:
    with pytest.raises(FileFormatError) as info:
        files.fixture_from_toml(text, source="cell.toml")
    assert isinstance(info.value, ValueError)  # the builtin it means
    return info.value


def test_good_text_reads():
    assert files.fixture_from_toml(GOOD).param_dict["guard_gap"] == pytest.approx(5e-4)


@pytest.mark.parametrize(
    ("old", "new", "expected"),
    [
        # a length without its unit: names the key, the line, the value and an example
        ('guard_gap = "0.5 mm"', "guard_gap = 0.5", ["line 5", "guard_gap", "0.5", "'2.5 mm'"]),
        # the wrong kind of unit
        ('guard_gap = "0.5 mm"', 'guard_gap = "0.5 kg"', ["line 5", "guard_gap", "0.5 kg"]),
        # out of the physical range: the builder's range is named
        (
            'guard_gap = "0.5 mm"',
            'guard_gap = "50 m"',
            ["guard_gap", "50000 mm", "1 um to 10 m"],
        ),
        # a permittivity below vacuum's
        ("specimen_eps_r = 2.3", "specimen_eps_r = 0.5", ["line 8", "0.5", "1 to 10000"]),
        # loss with the wrong sign
        (
            "specimen_eps_r = 2.3",
            'specimen_eps_r = "2.3 + 0.1j"',
            ["specimen_eps_r", "2.3 + 0.1j", "between -10 eps' and 0"],
        ),
        ("specimen_eps_r = 2.3", 'specimen_eps_r = "abc"', ["'abc'", "2.3 - 0.0005j"]),
        # an argument the builder does not have
        ("specimen_eps_r = 2.3", 'specimen_eps = "2.3"', ["line 8", "specimen_eps", "valid:"]),
        # an unknown builder
        ('kind = "guarded_cell"', 'kind = "guarded_cel"', ["line 2", "guarded_cel", "custom"]),
        # the wrong schema
        ("capbench-fixture/1", "capbench-fixture/9", ["line 1", "capbench-fixture/9"]),
        # text where a number is wanted
        ('name = "test cell"', "name = 3", ["line 3", "name", "3", "text"]),
        # broken TOML: the parser's line is given
        ('guard_width = "10 mm"', 'guard_width = "10 mm', ["not valid TOML", "line 6"]),
    ],
)
def test_fixture_refusals_name_line_key_value_and_valid(old, new, expected):
    assert old in GOOD
    err = refusal(GOOD.replace(old, new))
    text = str(err)
    assert text.startswith("cell.toml")
    for part in expected:
        assert part in text, (part, text)


def test_custom_fixture_refusals():
    text = files.fixture_to_toml(_fixtures()["custom_discs"])
    err = refusal(text.replace('shape = "rect"', 'shape = "hexagon"', 1))
    assert "hexagon" in str(err) and "valid" in str(err)
    err = refusal(text.replace('y1 = "1.25 mm"', 'y1 = "20 m"', 1))
    assert "20 m" in str(err) and "-10 m to 10 m" in str(err)
    err = refusal(text.replace('symmetry = "axisymmetric"', 'symmetry = "spherical"'))
    assert "spherical" in str(err) and "planar" in str(err)


def test_hostile_toml_is_refused():
    # deep nesting: refused without a crash (no RecursionError escapes)
    deep = GOOD + "x = " + "[" * 5000 + "]" * 5000 + "\n"
    err = refusal(deep)
    assert "nest" in str(err)
    # over the size limit
    big = GOOD + "# " + "x" * files.MAX_TOML_BYTES + "\n"
    err = refusal(big)
    assert f"{files.MAX_TOML_BYTES:,}" in str(err)


def test_missing_and_non_utf8_files(tmp_path):
    with pytest.raises(FileFormatError, match="no such fixture file"):
        files.read_fixture(tmp_path / "absent.toml")
    bad = tmp_path / "latin.toml"
    bad.write_bytes(GOOD.replace("test cell", "cellule d'essai \xe9").encode("latin-1"))
    with pytest.raises(FileFormatError, match="not UTF-8"):
        files.read_fixture(bad)


# --------------------------------------------------------------------------- readings


def readings_refusal(text: str) -> str:
    with pytest.raises(FileFormatError) as info:
        files.readings_from_csv(text, source="r.csv")
    return str(info.value)


def test_readings_convert_units_and_skip_comments():
    rows = files.readings_from_csv(
        "# schema: capbench-readings/1\nfrequency [kHz],capacitance [nF],dissipation factor\n"
        "# a comment\n1,0.0206,0.0002\n1,0.0207,\n",
        source="r.csv",
    )
    # 1 kHz = 1000 Hz and 0.0206 nF = 20.6 pF (SI prefixes; common practice, no source)
    assert rows[0].frequency == pytest.approx(1e3, rel=1e-15)
    assert rows[0].capacitance == pytest.approx(20.6e-12, rel=1e-14)
    assert rows[0].line == 4 and rows[1].dissipation is None


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # a decimal comma splits a cell: the line and a hint
        ("frequency [Hz],capacitance [pF]\n100,20,61\n", ["line 2", "decimal comma"]),
        # a formula-like cell is not a number and is never evaluated
        ("frequency [Hz],capacitance [pF]\n100,=1+1\n", ["line 2", "capacitance", "'=1+1'"]),
        # a capacitance out of range: value, unit and range
        (
            "frequency [Hz],capacitance [pF]\n100,2e7\n",
            ["line 2", "capacitance", "2e+07 pF", "1 aF to 1 uF"],
        ),
        ("frequency [Hz],capacitance [pF]\n-5,20\n", ["line 2", "frequency", "1 mHz to 1 GHz"]),
        ("frequency [Hz],capacitance [kg]\n100,20\n", ["line 1", "'kg'", "capacitance"]),
        ("frequency [Hz],capacitance\n100,20\n", ["line 1", "no unit", "capacitance [pF]"]),
        ("frequency [Hz],resistance [ohm]\n100,20\n", ["line 1", "resistance", "valid columns"]),
        ("frequency [Hz],dissipation factor\n100,0.1\n", ["no 'capacitance' column"]),
        ("frequency [Hz],capacitance [pF]\n", ["header row", "at least one reading"]),
        ("# schema: capbench-readings/7\nfrequency [Hz]\n", ["line 1", "capbench-readings/7"]),
    ],
)
def test_readings_refusals(text, expected):
    message = readings_refusal(text)
    assert message.startswith("r.csv")
    for part in expected:
        assert part in message, (part, message)


def test_readings_row_limit(monkeypatch):
    monkeypatch.setattr(files, "MAX_ROWS", 10)
    text = "frequency [Hz],capacitance [pF]\n" + "100,20\n" * 12
    assert "more than 10 readings" in readings_refusal(text)


# --------------------------------------------------------------------------- measurements


@pytest.fixture(scope="module")
def demo_measurement() -> files.Measurement:
    return files.read_measurement(DEMO / "qf-pe-03.toml")


def test_demo_measurement_reads(demo_measurement):
    m = demo_measurement
    assert m.specimen_id == "QF-PE-03" and m.method == "contacting"
    assert m.frequencies == (100.0, 1e3, 1e4, 1e5, 1e6)
    assert all(len(m.at(f)) == 3 for f in m.frequencies)
    assert m.fixture.param_dict["electrode_radius"] == pytest.approx(0.025, rel=1e-15)
    assert m.temperature == pytest.approx(23.1) and m.temperature_uncertainty == pytest.approx(0.3)
    assert "QF-PE-03" in m.text


def test_measurement_inputs_follow_the_gum(demo_measurement):
    m = demo_measurement
    t = m.thickness.to("mm").magnitude
    # GUM 4.2 (type A: s / sqrt(n)) and 4.3.7 (rectangular: a / sqrt(3)) in quadrature
    # (JCGM 100:2008), computed here from the readings with numpy
    s_mean = np.std(m.thickness_readings, ddof=1) / math.sqrt(len(m.thickness_readings))
    expected = math.hypot(s_mean * 1e3, m.micrometer_half_width * 1e3 / math.sqrt(3))
    assert t.n == pytest.approx(np.mean(m.thickness_readings) * 1e3, rel=1e-12)
    assert t.s == pytest.approx(expected, rel=1e-9)
    kw = m.inputs()
    c = kw["capacitance"][1].to("pF").magnitude
    rows = [r.capacitance * 1e12 for r in m.at(1e3)]
    a = 0.05e-2 * np.mean(rows) + 0.002  # "0.05 % of reading + 0.002 pF", rectangular
    s_c = np.std(rows, ddof=1) / math.sqrt(3)
    assert c.s == pytest.approx(math.hypot(s_c, a / math.sqrt(3)), rel=1e-9)


@pytest.mark.slow
def test_measurement_extract_equals_the_library_call(demo_measurement):
    m = demo_measurement
    res = m.extract(rtol=1e-6)
    direct = cb.contacting(m.fixture, **{**m.inputs(), "rtol": 1e-6})
    for p, q in zip(res.points, direct.points, strict=True):
        assert p.eps_r.n == pytest.approx(q.eps_r.n, rel=1e-12)
        assert p.eps_r.s == pytest.approx(q.eps_r.s, rel=1e-9)


MEAS = DEMO / "qf-pe-03.toml"


def measurement_refusal(tmp_path: Path, old: str, new: str, csv_text: str | None = None) -> str:
    text = MEAS.read_text(encoding="utf-8")
    assert old in text, old
    (tmp_path / "m.toml").write_text(text.replace(old, new), encoding="utf-8")
    if csv_text is None:
        shutil.copy(DEMO / "qf-pe-03_readings.csv", tmp_path)
    else:
        (tmp_path / "qf-pe-03_readings.csv").write_text(csv_text, encoding="utf-8")
    with pytest.raises(FileFormatError) as info:
        files.read_measurement(tmp_path / "m.toml")
    return str(info.value)


@pytest.mark.parametrize(
    ("old", "new", "expected"),
    [
        ('temperature = "23.1 degC"', 'temperature = "923 degC"', ["temperature", "923"]),
        ('micrometer = "1.5 um"', 'micrometer = "1.5 ug"', ["micrometer", "1.5 ug"]),
        ('name = "contacting"', 'name = "resonant"', ["[method] name", "resonant", "air_gap"]),
        (
            'electrode_radius = "0.01 mm"',
            'guard_colour = "0.01 mm"',
            ["[tolerances] guard_colour", "valid"],
        ),
        (
            'electrode_radius = "0.01 mm"',
            'electrode_radius = "30 mm"',
            ["electrode_radius", "30 mm", "below the nominal 25 mm"],
        ),
        (
            'capacitance_accuracy = "0.05 % of reading + 0.002 pF"',
            'capacitance_accuracy = "about right"',
            ["capacitance_accuracy", "about right", "% of reading"],
        ),
        ('readings = "qf-pe-03_readings.csv"', 'readings = "absent.csv"', ["absent.csv"]),
        ('id = "QF-PE-03"', "id = 303", ["[specimen] id", "303", "text"]),
        ('"2.0129 mm"', '"2.0129 km"', ["thickness[0]", "2.0129 km", "1 um to 10 m"]),
    ],
)
def test_measurement_refusals(tmp_path, old, new, expected):
    message = measurement_refusal(tmp_path, old, new)
    assert message.startswith("m.toml")
    assert "line " in message
    for part in expected:
        assert part in message, (part, message)


def test_suspicious_thickness_readings_warn(tmp_path):
    text = MEAS.read_text(encoding="utf-8").replace('"2.0129 mm"', '"2.0129 cm"')
    (tmp_path / "m.toml").write_text(text, encoding="utf-8")
    shutil.copy(DEMO / "qf-pe-03_readings.csv", tmp_path)
    with pytest.warns(cb.CapbenchWarning, match="more than 10 % apart; check their units"):
        files.read_measurement(tmp_path / "m.toml")


def test_measurement_csv_error_names_the_csv(tmp_path):
    message = measurement_refusal(
        tmp_path,
        'name = "contacting"',
        'name = "contacting"',
        csv_text="frequency [Hz],capacitance [pF]\n100,20.6\n100,abc\n",
    )
    assert message.startswith("qf-pe-03_readings.csv, line 3") and "'abc'" in message


def test_air_gap_method_needs_empty_readings(tmp_path):
    message = measurement_refusal(
        tmp_path,
        'name = "contacting"',
        'name = "air_gap"',
        csv_text="frequency [Hz],capacitance [pF]\n100,20.6\n",
    )
    assert "air_gap method needs a 'empty capacitance'" in message


def test_measurement_with_a_fixture_file(tmp_path):
    text = MEAS.read_text(encoding="utf-8")
    start = text.index("[fixture]")
    end = text.index("[tolerances]")
    text = text[:start] + '[fixture]\nfile = "cell.toml"\n\n' + text[end:]
    (tmp_path / "m.toml").write_text(text, encoding="utf-8")
    shutil.copy(DEMO / "qf-pe-03_readings.csv", tmp_path)
    files.write_fixture(_fixtures()["guarded"], tmp_path / "cell.toml")
    m = files.read_measurement(tmp_path / "m.toml")
    assert m.fixture.name == "Quillfield bench 3 guarded cell"
    # a broken fixture file is reported through the measurement's key
    (tmp_path / "cell.toml").write_text(GOOD.replace('"0.5 mm"', '"0.5"'), encoding="utf-8")
    with pytest.raises(FileFormatError) as info:
        files.read_measurement(tmp_path / "m.toml")
    assert "[fixture] file" in str(info.value) and "guard_gap" in str(info.value)


# --------------------------------------------------------------------------- export


@pytest.mark.parametrize(
    ("cell", "expected"),
    [
        ("=HYPERLINK(1)", "'=HYPERLINK(1)"),
        ("+1+1", "'+1+1"),
        ("-2+3", "'-2+3"),
        ("@SUM(A1)", "'@SUM(A1)"),
        ("\t=1", "'\t=1"),
        ("QF-PE-03", "QF-PE-03"),
        (-2.5, -2.5),  # numbers stay numbers
    ],
)
def test_safe_cell_neutralises_formulas(cell, expected):
    # OWASP "CSV Injection" guidance: prefix cells starting with = + - @ tab CR with a
    # single quote (common practice, no source)
    assert files.safe_cell(cell) == expected


def test_to_csv_reads_back_as_text():
    import csv
    import io

    text = files.to_csv(["id", "note"], [[1, "=cmd|' /C calc'!A0"]])
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[1] == ["1", "'=cmd|' /C calc'!A0"]


@pytest.mark.parametrize("path", sorted(DEMO.glob("*.toml")), ids=lambda p: p.name)
def test_every_demo_file_reads(path):
    if 'schema = "capbench-measurement/1"' in path.read_text(encoding="utf-8"):
        assert files.read_measurement(path).readings
    else:
        fx = files.read_fixture(path)
        _same_geometry(files.fixture_from_toml(files.fixture_to_toml(fx)).geometry, fx.geometry)


def test_demo_liquid_cell_against_the_coaxial_formula():
    fx = files.read_fixture(DEMO / "bench5-liquid-cell.toml")
    sol = cb.solve(fx, rtol=1e-5)
    # coaxial cylinders: C = 2 pi eps0 eps_r L / ln(b/a) (textbook closed form, see
    # REFERENCES.md); the guarded electrode collects the flux of about half of each
    # guard gap as well, L -> L + g (common practice, no source), hence the 0.5 % band
    a, b, length, gap, eps = 8e-3, 10e-3, 60e-3, 1e-3, 2.02
    ideal = 2 * math.pi * 8.8541878188e-12 * eps * (length + gap) / math.log(b / a)
    assert sol.capacitance.to("F").magnitude == pytest.approx(ideal, rel=5e-3)
