"""capbench.workbench: the page's forms, typed readings and result text, without a page.

Outside references: GUM (JCGM 100:2008) 4.2.1 to 4.2.3 for the mean of repeated readings
and its standard uncertainty (computed here by the formula), GUM 7.2.2 for the way a
result is stated with its uncertainty, and the fixture file format of capbench.files for
the save/load round trip.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import capbench as cb
from capbench import files
from capbench import workbench as wb


def test_repeated_readings_are_mean_and_type_a_uncertainty():
    q = wb.parse_reading("20.618, 20.619; 20.620\n20.6185 pF", "C [pF]", "capacitance")
    x = np.array([20.618, 20.619, 20.620, 20.6185])
    # GUM 4.2.1-4.2.3: q_bar = mean, u = s / sqrt(n) with s the n - 1 standard deviation
    s = math.sqrt(np.sum((x - x.mean()) ** 2) / (x.size - 1))
    assert q.units == cb.ureg.pF
    assert q.magnitude.n == pytest.approx(x.mean(), rel=1e-15)
    assert q.magnitude.s == pytest.approx(s / math.sqrt(x.size), rel=1e-12)
    budget = cb.budget(q.magnitude)
    assert budget.rows[0].kind == "A" and budget.rows[0].dof == 3  # n - 1 (GUM 4.2.6)


def test_value_with_standard_uncertainty_and_units_on_each_side():
    a = wb.parse_reading("20.613 pF ± 4 fF", "C [pF]", "capacitance")
    b = wb.parse_reading("20.613 +- 0.004", "C [pF]", "capacitance")  # bare: the box's pF
    for q in (a, b):
        assert q.to("pF").magnitude.n == pytest.approx(20.613, rel=1e-15)
        assert q.to("pF").magnitude.s == pytest.approx(0.004, rel=1e-12)
    length = wb.parse_reading("2.0129", "Thickness [mm]", "length")
    assert length.to("m").magnitude == pytest.approx(2.0129e-3, rel=1e-15)


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ("20,618, 20,619", ["Capacitance reading", "decimal point"]),
        ("5 mm", ["Capacitance reading", "not a capacitance"]),
        ("", ["Capacitance reading", "the box is empty"]),
        ("2 uF", ["Capacitance reading", "1 aF to 1 uF"]),
        ("1 ± 2 ± 3 pF", ["Capacitance reading", "more than one"]),
        ("nan pF", ["Capacitance reading"]),
    ],
)
def test_bad_readings_name_the_box_and_what_is_valid(text, words):
    with pytest.raises(cb.InputError) as err:
        wb.parse_reading(text, "Capacitance reading [pF]", "capacitance", limits="capacitance")
    for w in words:
        assert w in str(err.value)
    assert str(err.value).startswith("Capacitance reading")


def test_uncertainty_statement_rounding_follows_the_gum_example():
    # GUM 7.2.2: m_s = 100.021 47 g with u_c = 0.35 mg, stated to the uncertainty's
    # two significant digits
    assert wb.with_uncertainty(100.02147, 0.00035) == "100.02147 ± 0.00035"
    # two digits of u, x to the same place; a rounding carried over a decade
    assert wb.with_uncertainty(2.304071, 0.00336) == "2.3041 ± 0.0034"
    assert wb.with_uncertainty(2.3, 0.0996) == "2.30 ± 0.10"
    assert wb.with_uncertainty(1234.5, 56.0) == "1234 ± 56"
    assert wb.with_uncertainty(5.0, 0.0) == "5.000000 (exact)"
    assert wb.with_uncertainty(0.0002584, 2.7e-5) == "(2.58 ± 0.27)e-4"  # a loss tangent
    assert wb.frequency_text(1e3) == "1 kHz" and wb.frequency_text(2.5e6) == "2.5 MHz"
    # a column of small values shares one power of ten (common practice in tables)
    assert wb.with_uncertainty(0.00114, 6.1e-5, power=-4) == "(11.40 ± 0.61)e-4"
    assert wb.with_uncertainty(0.00114, 6.1e-5, power=0) == "0.001140 ± 0.000061"
    assert wb._column_power([2.6e-4, 1.14e-3, 0.0]) == -3
    assert wb._column_power([2.6e-4, 0.05]) == 0
    assert wb.capacitance_text(20.70721e-12) == "20.70721 pF"


def test_fixture_form_messages_name_each_box():
    texts = dict(wb.RIG_FORMS["guarded_cell"].defaults)
    texts.update(guard_gap="0", electrode_radius="25 parsecs", specimen_eps_r="0.5")
    res = wb.read_fixture_form("guarded_cell", texts)
    assert res.fixture is None
    assert res.errors["guard_gap"] == "Guard gap = 0 mm is outside the valid range 1 um to 10 m"
    assert res.errors["electrode_radius"].startswith("Guarded electrode radius")
    assert "1 to 10000" in res.errors["specimen_eps_r"]
    assert wb.read_fixture_form("nonsense", {}).errors[""].startswith("Fixture type")


def test_fixture_form_bare_numbers_are_millimetres_and_units_convert():
    texts = dict(wb.RIG_FORMS["parallel_discs"].defaults)
    texts.update(radius="0.98425 in", gap="2500 um", **{"specimen.thickness": "2"})
    res = wb.read_fixture_form("parallel_discs", texts, "disc test")
    assert res.ok
    p = res.fixture.param_dict
    assert p["radius"] == pytest.approx(0.98425 * 25.4e-3, rel=1e-14)  # 1 in = 25.4 mm
    assert p["gap"] == pytest.approx(2.5e-3, rel=1e-14)
    assert p["specimen"].thickness == pytest.approx(2e-3, rel=1e-14)


@pytest.mark.parametrize("builder", sorted(wb.RIG_FORMS))
def test_every_form_builds_and_round_trips_through_the_fixture_file(builder):
    res = wb.read_fixture_form(builder, wb.RIG_FORMS[builder].defaults, f"{builder} test")
    assert res.ok, res.errors
    fx = res.fixture
    # save as the CLI's fixture file, load, and show it in the form again
    back = files.fixture_from_toml(files.fixture_to_toml(fx), source="round trip")
    kind, texts = wb.form_texts(back)
    assert kind == builder
    again = wb.read_fixture_form(kind, texts, back.name).fixture
    assert again.kind == fx.kind
    for (k1, v1), (k2, v2) in zip(again.params, fx.params, strict=True):
        assert k1 == k2
        if isinstance(v1, float):
            assert v1 == pytest.approx(v2, rel=1e-6)  # 7 significant digits in the boxes


def test_readings_table_limits_and_grouping():
    text = (
        "frequency [Hz],capacitance [pF],dissipation factor\n"
        "1000,20.61381,0.0002526\n1000,20.61334,0.0002548\n100,20.618,0.00021\n"
    )
    rows = wb.read_table(text)
    b = wb.bridge_inputs(rows, cb.AccuracySpec.parse("0.05 % of reading + 0.002 pF"))
    assert b.frequencies == (100.0, 1000.0) and b.repeats == (1, 2)
    c = b.capacitance[1].to("pF").magnitude
    assert c.n == pytest.approx((20.61381 + 20.61334) / 2, rel=1e-15)
    # u^2 = (s/sqrt 2)^2 + (a/sqrt 3)^2, a = 0.05 % of the reading + 0.002 pF (GUM 4.3.7)
    s = abs(20.61381 - 20.61334) / math.sqrt(2)
    a = 0.0005 * c.n + 0.002
    assert c.s == pytest.approx(math.hypot(s / math.sqrt(2), a / math.sqrt(3)), rel=1e-9)
    with pytest.raises(cb.FileFormatError, match="over the limit"):
        wb.read_table("x" * (wb.MAX_TABLE_BYTES + 1))
    with pytest.raises(cb.FileFormatError, match="not UTF-8"):
        wb.read_table(b"\xff\xfe\x00")
    with pytest.raises(cb.FileFormatError, match="line 2"):
        wb.read_table("frequency [Hz],capacitance [pF]\n1000,=cmd|' /C calc'!A0\n")
    assert wb.read_table(wb.table_text(rows)) == tuple(
        files.Reading(r.frequency, r.capacitance, r.dissipation, line=i + 2)
        for i, r in enumerate(rows)
    )


def test_method_form_collects_errors_and_makes_kwargs():
    fx = wb.read_fixture_form("guarded_cell", wb.RIG_FORMS["guarded_cell"].defaults).fixture
    call = wb.read_method_form(
        "contacting",
        fx,
        {"thickness": "2.01, 2.02 mm", "capacitance": "20.6 pF", "tolerance": "0.01 mm"},
    )
    assert call.ok, call.errors
    assert set(call.kwargs) == {"thickness", "capacitance", "frequency", "dimensions"}
    assert call.kwargs["dimensions"]["electrode_radius"].to("mm").magnitude.s == pytest.approx(
        0.01 / math.sqrt(3), rel=1e-12
    )  # rectangular half-width a: u = a / sqrt(3) (GUM 4.3.7)
    bad = wb.read_method_form("contacting", fx, {"thickness": "", "capacitance": "x"})
    assert set(bad.errors) == {"thickness", "capacitance"}
    assert bad.errors["thickness"].startswith("Specimen thickness readings")
    with pytest.raises(cb.InputError, match="invalid boxes"):
        wb.run_method(bad, fx)


def test_demo_and_summary():
    d = wb.demo()
    assert "Quillfield Dielectrics Lab" in d.title
    res = wb.read_fixture_form(d.builder, d.fixture_texts, d.fixture_name)
    assert res.ok and res.fixture.kind == "guarded_cell"
    call = wb.read_method_form(d.method, res.fixture, d.method_texts, wb.read_table(d.table))
    assert call.ok and call.frequencies == (100.0, 1e3, 1e4, 1e5, 1e6)
    text = wb.markdown_summary(fixture=res.fixture, cautions=("edge note",))
    assert text.startswith("# capbench workbench summary")
    assert "- edge note" in text and "licensed practice" in text


def test_edge_window_holds_the_electrode_edge():
    fx = wb.read_fixture_form("guarded_cell", wb.RIG_FORMS["guarded_cell"].defaults).fixture
    x0, x1, y0, y1 = wb.edge_window(fx)
    assert x0 < 25e-3 < 25.5e-3 < x1 and y0 < 0 < 2e-3 < y1
    assert (
        wb.edge_window(
            wb.read_fixture_form("coaxial_cell", wb.RIG_FORMS["coaxial_cell"].defaults).fixture
        )
        is None
    )
