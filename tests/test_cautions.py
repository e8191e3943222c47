"""Every output carries the caution where people can get hurt (issue 20): the command
line's text and JSON for every command, reports, the page; hazardous test liquids are
named where they are chosen. The texts defer to local codes and licensed practice
(common practice, no source)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from capbench import cautions, materials
from capbench.cli import main

DEMO = Path(__file__).resolve().parents[1] / "fixtures" / "quillfield"
CELL = str(DEMO / "bench3-guarded-cell.toml")


@pytest.mark.parametrize(
    "argv",
    [
        ["compare", CELL, "--measured", "18.06 pF"],
        ["log", "list", "--log-file", "{log}"],
        ["extract", str(DEMO / "qf-pe-03.toml"), "--closed-form"],
        ["relax", str(DEMO / "qf-pe-03.toml"), "--closed-form"],
    ],
)
def test_text_and_json_output_carry_the_caution(argv, tmp_path, capsys):
    argv = [a.replace("{log}", str(tmp_path / "log.db")) for a in argv]
    assert main(argv) == 0
    assert cautions.SHORT in capsys.readouterr().out
    assert main([*argv, "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["caution"] == cautions.SHORT


def test_a_csv_on_standard_output_stays_data(tmp_path, capsys):
    assert main(["log", "export", "-", "--log-file", str(tmp_path / "l.db")]) == 0
    assert "Caution" not in capsys.readouterr().out


def test_the_texts_defer_to_codes_and_say_to_discharge():
    for text in (cautions.ELECTRICAL, cautions.SHORT):
        assert "licensed practice" in text
        assert "discharge and ground" in text.lower()
    assert "licensed practice" in cautions.EDGE


@pytest.mark.parametrize("name", ["benzene", "cyclohexane", "n-hexane"])
def test_hazardous_reference_liquids_say_so(name):
    hazard = materials.material(name).hazard
    assert name in hazard
    assert "flammable" in hazard or "carcinogen" in hazard
    assert "safety data sheet" in hazard
    assert materials.material("air").hazard == ""


def test_a_two_fluid_extraction_names_its_fluids_hazard(capsys):
    assert main(["extract", str(DEMO / "qf-pmma-02.toml"), "--closed-form"]) == 0
    out = capsys.readouterr().out
    assert "cyclohexane is highly flammable" in out
