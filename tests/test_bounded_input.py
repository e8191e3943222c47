"""No unit string, number or table within the documented limits makes capbench work
without bound (issue 15). The timeouts below guard against a hang; they are not timing
goals (those live in benchmarks/)."""

from __future__ import annotations

import pytest

from capbench import files, units
from capbench.errors import CapbenchError, InputError

FIXTURE = """schema = "capbench-fixture/1"
kind = "parallel_discs"
radius = "{radius}"
gap = "2 mm"
"""


@pytest.mark.timeout(10)
@pytest.mark.parametrize(
    "text",
    [
        "1 mm**9**9**9",  # pint computed 9**(9**9) here: a hang
        "1 mm**9**9",
        "1 mm^9^9^9",
        "1 (mm**9)**9",
        "1 ((mm**3)**3)**3",
        "1 mm**99",
        "1 (((((mm)))))",
        "1 mm" + "**2" * 30,
    ],
)
def test_exponent_chains_are_refused_before_pint_sees_them(text):
    with pytest.raises(InputError) as info:
        units.to_si(text, "length", "electrode radius")
    assert "electrode radius" in str(info.value)
    assert "not a unit capbench reads" in str(info.value)


@pytest.mark.parametrize(
    "text, kind, si",
    [
        ("2 mm**2", "area", 2e-6),
        ("3 (mm)**2", "area", 3e-6),
        ("1 (mm**3)**4 / mm**10", "area", 1e-6),
        ("5 S/m", "siemens / meter", 5.0),
        ("4.7 pF", "capacitance", 4.7e-12),
        ("1 kV/mm", "volt / meter", 1e6),
        ("50 Hz", "frequency", 50.0),
    ],
)
def test_ordinary_units_still_read(text, kind, si):
    if " " in kind:  # no capbench kind: convert with pint directly
        q = units.parse_quantity(text, "x").to(kind)
        assert q.magnitude == pytest.approx(si, rel=1e-12)
    else:
        assert units.to_si(text, kind, "x") == pytest.approx(si, rel=1e-12)


@pytest.mark.timeout(10)
def test_a_fixture_file_with_an_exponent_chain_is_refused(tmp_path):
    with pytest.raises(CapbenchError) as info:
        files.fixture_from_toml(FIXTURE.format(radius="25 mm**9**9**9"), "disc.toml")
    assert "disc.toml" in str(info.value)


@pytest.mark.timeout(10)
def test_a_readings_header_with_an_exponent_chain_is_refused():
    text = "frequency [kHz**9**9**9],capacitance [pF]\n1,20.6\n"
    with pytest.raises(CapbenchError) as info:
        files.readings_from_csv(text, "bench.csv")
    assert "bench.csv, line 1" in str(info.value)


@pytest.mark.timeout(60)
def test_the_documented_largest_readings_table_reads():
    """MAX_ROWS rows read, each value scaled by its column's unit parsed once: the same
    numbers as parsing every cell with its unit (pint), which took about 2 ms a row."""
    n = files.MAX_ROWS
    body = "\n".join(f"{1 + i % 5},{20.6 + (i % 7) * 1e-3:.4f},0.0009" for i in range(n))
    rows = files.readings_from_csv("frequency [kHz],capacitance [pF],dissipation factor\n" + body)
    assert len(rows) == n
    assert rows[8].frequency == units.to_si("4 kHz", "frequency")
    assert rows[8].capacitance == pytest.approx(units.to_si("20.6010 pF", "capacitance"), 1e-15)
    with pytest.raises(CapbenchError, match="more than 100,000 readings"):
        files.readings_from_csv(
            "frequency [kHz],capacitance [pF]\n" + "\n".join(["1,20.6"] * (n + 1))
        )


def test_a_huge_integer_is_refused_with_its_name():
    with pytest.raises(InputError, match=r"gap = 1000.* too large"):
        units.to_si(10**400, "length", "gap")
