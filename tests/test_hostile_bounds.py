"""Hostile inputs that once hung or ran unbounded: the work is bounded before it starts.

The exponent chain "m**9**9**9" made pint compute 9**(9**9) (an integer of 370 million
digits); the readings table parsed the unit of a column in every cell (2 ms a row).
"""

from __future__ import annotations

import time

import pytest

from capbench import units
from capbench.errors import InputError
from capbench.files import readings_from_csv


@pytest.mark.parametrize(
    "text",
    [
        "1 mm**9**9**9",
        "1 mm**9**9",
        "1 mm^9^9",
        "1 m**2**99",
        "1 ((((m))))",
        "1 m)",
        "1 **2",
        "1 m*" + "m*" * 40,
        "1 9**9**9 m",
    ],
)
def test_a_unit_with_an_exponent_chain_or_deep_brackets_is_refused_at_once(text):
    start = time.process_time()
    with pytest.raises(InputError) as info:
        units.to_si(text, "length", "gap")
    assert "gap" in str(info.value)
    # a refusal, not a computation: far below a second of CPU (pint's 9**9**9 never ends)
    assert time.process_time() - start < 1.0


@pytest.mark.parametrize(
    ("text", "kind", "si"),
    [
        ("2 mm**2", "area", 2e-6),
        ("3 m^2", "area", 3.0),
        ("1 pF/m", "capacitance per length", 1e-12),
        ("5 (mm)**2", "area", 5e-6),
        ("1 kg*m**2/(s**3*A)", "voltage", 1.0),
        ("4 1/s", "frequency", 4.0),
    ],
)
def test_plain_units_with_one_exponent_still_convert(text, kind, si):
    assert units.to_si(text, kind) == pytest.approx(si, rel=1e-15)


def test_a_large_readings_table_reads_each_cell_without_pint():
    rows = "\n".join(f"{1000 + i},{20.0 + i * 1e-6}" for i in range(20_000))
    text = "frequency [Hz], capacitance [pF]\n" + rows
    readings = readings_from_csv(text, "big.csv")
    assert len(readings) == 20_000
    # the conversion of a pF cell equals pint's own conversion of the same text
    assert readings[7].capacitance == units.to_si(f"{20.0 + 7e-6} pF", "capacitance")
    assert readings[7].frequency == 1007.0
