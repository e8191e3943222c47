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
    # coaxial cylinders: C = 2 pi eps0 eps_r L / ln(b/a) (Gauss's law; e.g. W. R. Smythe,
    # Static and Dynamic Electricity, 3rd ed. 1968, section from memory); the guarded
    # electrode collects the flux of about half of each
    # guard gap as well, L -> L + g (common practice, no source), hence the 0.5 % band
    a, b, length, gap, eps = 8e-3, 10e-3, 60e-3, 1e-3, 2.02
    ideal = 2 * math.pi * 8.8541878188e-12 * eps * (length + gap) / math.log(b / a)
    assert sol.capacitance.to("F").magnitude == pytest.approx(ideal, rel=5e-3)


# --------------------------------------------------------------------------- micrometer and
# two-fluid measurement files: readings made by the field solver on fixtures of known
# eps_r, written to files, read back and inverted


def _fem_reading(fx: cb.Fixture, eps: complex, medium: float | None = None) -> tuple[float, float]:
    """Bench-style C (F) and D of ``fx`` with the specimen at ``eps`` (one BLAS thread for
    the complex factorisation, as extract does)."""
    from threadpoolctl import threadpool_limits

    if medium is not None:
        fx = fx.with_permittivity(cb.MEDIUM, medium)
    with threadpool_limits(limits=1, user_api="blas"):
        c = complex(cb.solve(fx.with_permittivity("specimen", eps), rtol=1e-6).terminal)
    return c.real, -c.imag / c.real


def _write_measurement(
    tmp_path: Path, fixture: str, thickness: str, method: str, header: str, rows: list
) -> Path:
    """A measurement file and its readings CSV (floats written with repr: no rounding)."""
    (tmp_path / "r.csv").write_text(
        header + "\n" + "\n".join(",".join(repr(x) for x in row) for row in rows) + "\n",
        encoding="utf-8",
    )
    path = tmp_path / "m.toml"
    path.write_text(
        f"""schema = "capbench-measurement/1"
[lab]
name = "test lab"
[specimen]
id = "T-1"
thickness = {thickness}
[fixture]
{fixture}
[instrument]
capacitance_accuracy = "0.05 % of reading + 0.002 pF"
dissipation_accuracy = "0.00002 + 1 % of reading"
[conditions]
temperature = "23.1 degC"
temperature_uncertainty = "0.3 K"
[method]
readings = "r.csv"
{method}
""",
        encoding="utf-8",
    )
    return path


MICROMETER_FIXTURE = 'kind = "parallel_discs"\nradius = "20 mm"\ngap = "2 mm"\n'
MICROMETER_FIXTURE += 'specimen = { thickness = "2 mm", eps_r = 2.3 }'
MICROMETER_HEADER = (
    "frequency [Hz],capacitance [pF],dissipation factor,empty capacitance [pF],"
    "empty dissipation factor,loaded spacing [mm],empty spacing [mm]"
)


@pytest.fixture(scope="module")
def micrometer_case(tmp_path_factory):
    # the case of tests/test_extract_fem.py: the electrodes touch a 2 mm specimen
    # (s1 = t), the empty re-set at s2 = 0.88 mm reads a little differently
    eps = complex(2.3, -2.3 * 5e-4)
    t, s2 = 2e-3, 0.88e-3
    loaded = cb.parallel_discs(radius="20 mm", gap=t, specimen=cb.Specimen(t, 2.3))
    c1, d1 = _fem_reading(loaded, eps)
    c2 = cb.solve(cb.parallel_discs(radius="20 mm", gap=s2), rtol=1e-6).terminal.real
    path = _write_measurement(
        tmp_path_factory.mktemp("micrometer"),
        MICROMETER_FIXTURE,
        '["2 mm"]',
        'name = "micrometer"',
        MICROMETER_HEADER,
        [[1e3, c1 * 1e12, d1, c2 * 1e12, 0.0, t * 1e3, s2 * 1e3]],
    )
    m = files.read_measurement(path)
    direct = cb.micrometer(
        loaded,
        thickness=t,
        loaded_spacing=t,
        empty_spacing=s2,
        capacitance=c1,
        empty_capacitance=c2,
        dissipation=d1,
        empty_dissipation=0.0,
        frequency=1e3,
        rtol=1e-6,
    )
    return m, m.extract(rtol=1e-6), direct, eps


def test_micrometer_file_inverts_fem_readings(micrometer_case):
    m, res, _direct, eps = micrometer_case
    assert m.method == "micrometer" and m.readings[0].loaded_spacing == pytest.approx(2e-3)
    p = res[0]
    # 1e-6: the acceptance of issue 4 for the methods (tests/test_extract_fem.py); the
    # readings were solved at rtol 1e-6 on the same geometry the method rebuilds
    assert p.eps_r.n == pytest.approx(eps.real, rel=1e-6)
    # the empty cell the method builds has a specimen region at eps_r 1, the test's
    # none: different meshes, hence 1e-5 on the loss (as in test_extract_fem.py)
    assert p.eps_loss.n == pytest.approx(-eps.imag, rel=1e-5)


def test_micrometer_file_equals_the_library_call(micrometer_case):
    _m, res, direct, _eps = micrometer_case
    # the same solves from the same values (the CSV holds them with repr: exact to the
    # last bit but for the pF scaling, ~1e-16), so far below the Newton tolerance 1e-8
    assert res[0].eps_r.n == pytest.approx(direct[0].eps_r.n, rel=1e-9)
    assert res[0].eps_loss.n == pytest.approx(direct[0].eps_loss.n, rel=1e-9)


TWO_FLUID_FIXTURE = 'kind = "parallel_discs"\nradius = "20 mm"\ngap = "2 mm"\n'
# the nominal (wrong) thickness: the method fits the thickness
TWO_FLUID_FIXTURE += 'specimen = { thickness = "1.52 mm", eps_r = 2.3 }'
TWO_FLUID_HEADER = "frequency [Hz],fluid,empty capacitance [pF],capacitance [pF],dissipation factor"


@pytest.fixture(scope="module")
def two_fluid_case(tmp_path_factory):
    # the case of tests/test_extract_fem.py: a 1.5 mm specimen in a 2 mm cell, air and
    # cyclohexane given by value, a lossless stray capacitance in every reading
    eps = complex(2.3, -2.3 * 4e-4)
    e = {1: 1.000536, 2: 2.0243}
    true = cb.parallel_discs(radius="20 mm", gap="2 mm", specimen=cb.Specimen("1.5 mm", 2.3))
    stray = 0.35e-12
    rows, plain = [], {}
    for k in (1, 2):
        empty = _fem_reading(true, e[k], e[k])[0] + stray
        c, d = _fem_reading(true, eps, e[k])
        plain[k] = (empty, c + stray, d * c / (c + stray))
        rows.append([1e3, k, empty * 1e12, (c + stray) * 1e12, d * c / (c + stray)])
    path = _write_measurement(
        tmp_path_factory.mktemp("two_fluid"),
        TWO_FLUID_FIXTURE,
        '["1.5 mm", "1.5 mm"]',
        'name = "two_fluid"\neps_fluid1 = 1.000536\neps_fluid2 = 2.0243',
        TWO_FLUID_HEADER,
        rows,
    )
    m = files.read_measurement(path)
    direct = cb.two_fluid(
        m.fixture,
        plain[1][0],
        plain[1][1],
        plain[2][0],
        plain[2][1],
        eps_fluid1=e[1],
        eps_fluid2=e[2],
        dissipation1=plain[1][2],
        dissipation2=plain[2][2],
        frequency=1e3,
        rtol=1e-6,
    )
    return m, m.extract(rtol=1e-6), direct, eps


@pytest.mark.slow
def test_two_fluid_file_inverts_fem_readings(two_fluid_case):
    _m, res, _direct, eps = two_fluid_case
    p = res[0]
    # 1e-6 as issue 4 requires; the fitted thickness to the same (the readings were
    # solved at 1.5 mm, the file's fixture says 1.52 mm)
    assert p.eps_r.n == pytest.approx(eps.real, rel=1e-6)
    assert res.extra("thickness")[0].to("mm").magnitude.n == pytest.approx(1.5, rel=1e-6)
    # the loss to first order (sensitivity ratio): O(tan delta) relative, as in
    # tests/test_extract_fem.py
    assert p.eps_loss.n == pytest.approx(-eps.imag, rel=1e-3)


@pytest.mark.slow
def test_two_fluid_file_equals_the_library_call(two_fluid_case):
    _m, res, direct, _eps = two_fluid_case
    # the same solves from the same values (repr in the CSV): far below Newton's 1e-8
    assert res[0].eps_r.n == pytest.approx(direct[0].eps_r.n, rel=1e-9)
    assert res[0].eps_loss.n == pytest.approx(direct[0].eps_loss.n, rel=1e-9)


def test_named_fluids_share_the_thermometer(tmp_path):
    path = _write_measurement(
        tmp_path,
        TWO_FLUID_FIXTURE,
        '["1.5 mm"]',
        'name = "two_fluid"\nfluid1 = "air"\nfluid2 = "Cyclohexane"',
        TWO_FLUID_HEADER,
        [[1e3, 1, 5.6, 7.4, 1e-4], [1e3, 2, 11.3, 12.9, 2e-4]],
    )
    m = files.read_measurement(path)
    kw = m.inputs()
    e2, e1 = kw["eps_fluid2"], kw["eps_fluid1"]
    # capbench.materials' cyclohexane: 2.0243 at 20 degC, -0.0016 / K (its table, CRC
    # handbook from memory), u 0.0005 of its own and 0.0016 * 0.3 K from the thermometer
    # in quadrature (GUM 5.1.2)
    assert e2.n == pytest.approx(2.0243 - 0.0016 * 3.1, rel=1e-12)
    assert e2.s == pytest.approx(math.hypot(5e-4, 0.0016 * 0.3), rel=1e-9)
    # one temperature input for both fluids: covariance d e1/dT d e2/dT u(T)^2 (GUM 5.2.2)
    from uncertainties import covariance_matrix

    t = next(v for v in e2.derivatives if v.tag == "temperature (thermometer)")
    cov = covariance_matrix([e1, e2])[0][1]
    assert cov == pytest.approx(e1.derivatives[t] * e2.derivatives[t] * 0.3**2, rel=1e-9)
    assert e1.derivatives[t] != 0  # air's permittivity falls with temperature
    assert (
        kw["fluid1"][0].to("pF").magnitude.n,
        kw["fluid2_with_specimen"][0].to("pF").magnitude.n,
    ) == (
        pytest.approx(5.6),
        pytest.approx(12.9),
    )


def test_micrometer_spacings_are_means_plus_the_scale(tmp_path):
    rows = [
        [1e3, 20.0, 1e-4, 20.001, 0.0, 2.001, 0.901],
        [1e3, 20.002, 1e-4, 20.0, 0.0, 2.003, 0.905],
    ]
    path = _write_measurement(
        tmp_path,
        MICROMETER_FIXTURE,
        '["2 mm"]',
        'name = "micrometer"\nspacing_half_width = "2 um"',
        MICROMETER_HEADER,
        rows,
    )
    s2 = files.read_measurement(path).inputs()["empty_spacing"][0].to("mm").magnitude
    # GUM 4.2.3 (s / sqrt(n)) and 4.3.7 (a / sqrt(3)) in quadrature
    s_mean = np.std([0.901, 0.905], ddof=1) / math.sqrt(2)
    assert s2.n == pytest.approx(0.903, rel=1e-12)
    assert s2.s == pytest.approx(math.hypot(s_mean, 0.002 / math.sqrt(3)), rel=1e-9)


def _refusal_of(tmp_path, fixture, thickness, method, header, lines) -> str:
    """The refusal of a measurement file with ``method`` text and raw CSV ``lines``."""
    path = _write_measurement(tmp_path, fixture, thickness, method, header, [])
    (tmp_path / "r.csv").write_text(header + "\n" + "\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(FileFormatError) as info:
        files.read_measurement(path)
    return str(info.value)


def _micrometer_refusal(tmp_path, method="", header=MICROMETER_HEADER, row=None) -> str:
    row = row or "1000,20.0,0.0001,20.001,0.0,2.001,0.901"
    method = f'name = "micrometer"\n{method}'
    return _refusal_of(tmp_path, MICROMETER_FIXTURE, '["2 mm"]', method, header, [row])


def _two_fluid_refusal(tmp_path, method, rows, header=TWO_FLUID_HEADER) -> str:
    method = f'name = "two_fluid"\n{method}'
    return _refusal_of(tmp_path, TWO_FLUID_FIXTURE, '["1.5 mm"]', method, header, rows)


FLUIDS_OK = "eps_fluid1 = 1.0005\neps_fluid2 = 2.02"
TWO_ROWS = ["1000,1,5.6,7.4,0.0001", "1000,2,11.3,12.9,0.0002"]


@pytest.mark.parametrize(
    ("method", "rows", "expected"),
    [
        # a fluid number other than 1 or 2: file, line, value and what is valid
        (
            FLUIDS_OK,
            ["1000,1,5.6,7.4,0.0001", "1000,3,11.3,12.9,0.0002"],
            ["r.csv, line 3", "fluid = '3'", "valid: 1 or 2"],
        ),
        (
            FLUIDS_OK,
            ["1000,1.0,5.6,7.4,0.0001", TWO_ROWS[1]],
            ["line 2", "fluid = '1.0'", "valid: 1 or 2"],
        ),
        (
            FLUIDS_OK,
            ["1000,air,5.6,7.4,0.0001", TWO_ROWS[1]],
            ["line 2", "fluid = 'air'", "valid: 1 or 2"],
        ),
        # a frequency without fluid 2 rows
        (
            FLUIDS_OK,
            [*TWO_ROWS, "2000,1,5.6,7.4,0.0001"],
            ["r.csv, line 4", "no row in fluid 2 at 2000 Hz", "fluid = 1 or 2"],
        ),
        # both, or neither, of a fluid's name and permittivity
        (
            'fluid1 = "air"\neps_fluid1 = 1.0005\neps_fluid2 = 2.02',
            TWO_ROWS,
            [
                "m.toml, line",
                "[method] fluid1 = 'air'",
                "eps_fluid1 = 1.0005",
                "exactly one of fluid1",
            ],
        ),
        (
            "eps_fluid2 = 2.02",
            TWO_ROWS,
            ["m.toml, line", "[method]", "neither fluid1 nor eps_fluid1", "exactly one"],
        ),
        # a material capbench does not know
        (
            'fluid1 = "air"\nfluid2 = "unobtainium"',
            TWO_ROWS,
            ["[method] fluid2 = 'unobtainium'", "valid: ['air', 'benzene'"],
        ),
        # benzene has no temperature coefficient in capbench.materials: 23.1 degC is
        # more than 0.5 K from its 20 degC value
        (
            'fluid1 = "air"\nfluid2 = "benzene"',
            TWO_ROWS,
            ["[method] fluid2 = 'benzene'", "23.1 degC", "directly"],
        ),
        # a lossy, out-of-range or repeated fluid permittivity
        (
            "eps_fluid1 = 1.0005\neps_fluid2 = '2.02-0.01j'",
            TWO_ROWS,
            ["eps_fluid2", "'2.02-0.01j'", "lossless"],
        ),
        ("eps_fluid1 = 1.0005\neps_fluid2 = 20000", TWO_ROWS, ["eps_fluid2 = 20000", "1 to 10000"]),
        (
            "eps_fluid1 = 2.02\neps_fluid2 = 2.02",
            TWO_ROWS,
            ["eps_fluid2 = 2.02", "different permittivity"],
        ),
        # a column the two-fluid method does not use
        (
            FLUIDS_OK,
            ["1000,1,5.6,7.4,0.0001,0.0", "1000,2,11.3,12.9,0.0002,0.0"],
            ["r.csv, line 2", "takes no 'empty dissipation factor' column", "valid columns"],
        ),
    ],
)
def test_two_fluid_refusals(tmp_path, method, rows, expected):
    header = TWO_FLUID_HEADER + (",empty dissipation factor" if rows[0].count(",") == 5 else "")
    message = _two_fluid_refusal(tmp_path, method, rows, header)
    for part in expected:
        assert part in message, (part, message)


@pytest.mark.parametrize(
    ("method", "header", "row", "expected"),
    [
        # no empty spacing column: the method needs it in every row
        (
            "",
            MICROMETER_HEADER.replace(",empty spacing [mm]", ""),
            "1000,20.0,0.0001,20.001,0.0,2.001",
            ["r.csv, line 2", "micrometer method needs a 'empty spacing'"],
        ),
        # a spacing out of range: value, unit and range
        (
            "",
            MICROMETER_HEADER,
            "1000,20.0,0.0001,20.001,0.0,2.001,-0.9",
            ["r.csv, line 2", "empty spacing = -0.9 mm", "1 um to 10 m"],
        ),
        (
            "",
            MICROMETER_HEADER.replace("[mm]", "[kg]", 1),
            None,
            ["r.csv, line 1", "'kg'", "not a unit of length"],
        ),
        # a fluid column is not the micrometer method's
        (
            "",
            MICROMETER_HEADER + ",fluid",
            "1000,20.0,0.0001,20.001,0.0,2.001,0.901,1",
            ["takes no 'fluid' column"],
        ),
        # D2 without D1
        (
            "",
            MICROMETER_HEADER.replace("dissipation factor,empty capacitance", "empty capacitance"),
            "1000,20.0,20.001,0.0,2.001,0.901",
            ["'empty dissipation factor' needs", "'dissipation factor'"],
        ),
        (
            'spacing_half_width = "0.5 mm"',
            MICROMETER_HEADER,
            None,
            ["[method] spacing_half_width = '0.5 mm'", "valid: 0 mm to 0.0901 mm"],
        ),
        (
            'spacing = "2 mm"',
            MICROMETER_HEADER,
            None,
            ["[method] spacing", "not an option of the micrometer method", "spacing_half_width"],
        ),
    ],
)
def test_micrometer_refusals(tmp_path, method, header, row, expected):
    message = _micrometer_refusal(tmp_path, method, header, row)
    for part in expected:
        assert part in message, (part, message)


def test_contacting_refuses_the_new_columns(tmp_path):
    message = measurement_refusal(
        tmp_path,
        'name = "contacting"',
        'name = "contacting"',
        csv_text="frequency [Hz],capacitance [pF],loaded spacing [mm]\n100,20.6,2.0\n",
    )
    assert "line 2: the contacting method takes no 'loaded spacing' column" in message


@pytest.mark.parametrize("name", ["qf-ps-07.toml", "qf-pmma-02.toml"])
def test_new_demo_measurements_read(name):
    m = files.read_measurement(DEMO / name)
    assert m.frequencies == (1e3, 1e4, 1e5)
    if m.method == "two_fluid":
        assert {r.fluid for r in m.readings} == {1, 2}
        assert dict(m.method_options) == {"fluid1": "air", "fluid2": "cyclohexane"}
    else:
        assert all(r.loaded_spacing and r.empty_spacing for r in m.readings)
        assert dict(m.method_options)["spacing_half_width"] == pytest.approx(1e-6, rel=1e-12)
