"""The relaxation section of a report: the chosen model, its parameters, the ranking,
the Kramers-Kronig and Monte Carlo checks and the three figures, in HTML, PDF and JSON;
the lead correction listed among the inputs. A report lays out what it is given: the
analysis comes from capbench.dispersion.analyse (its numbers are checked in
test_dispersion.py and test_relax_command.py)."""

from __future__ import annotations

import io
import json
import warnings
from pathlib import Path

import pytest

from capbench import dispersion, report
from capbench.errors import CapbenchWarning, InputError
from capbench.files import read_measurement

PU = Path(__file__).resolve().parents[1] / "fixtures" / "quillfield" / "qf-pu-11.toml"


@pytest.fixture(scope="module")
def built():
    m = read_measurement(PU)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CapbenchWarning)
        res = m.extract(fem=False)
    rel = dispersion.analyse(dispersion.Spectrum.from_extraction(res), monte_carlo_draws=30, seed=1)
    return rel, report.build(measurement=m, extraction=res, relaxation=rel), (m, res)


def test_every_form_carries_the_relaxation_section(built):
    rel, rep, _ = built
    html = rep.html()
    assert "<h2>Relaxation model</h2>" in html
    assert rel.statement().split(".")[0] in html.replace("&#x27;", "'")
    data = json.loads(rep.json())
    r = data["relaxation"]
    assert r["model"] == rel.best.label
    assert [row[0] for row in r["parameter_table"]["rows"]] == rel.best.names
    assert r["kramers_kronig"]["consistent"] is True
    names = [f["name"] for f in data["figures"]]
    assert names[-3:] == ["relaxation-spectrum", "relaxation-arc", "relaxation-residuals"]
    assert any("Boukamp" in ref for ref in data["references"])
    assert "lead correction (removed from every reading)" in data["inputs"]
    sections = dict(rep.text_sections())
    assert "Relaxation model" in sections


def test_the_pdf_holds_the_section(built):
    pypdf = pytest.importorskip("pypdf")
    rel, rep, _ = built
    reader = pypdf.PdfReader(io.BytesIO(rep.pdf()))
    text = " ".join(p.extract_text() for p in reader.pages).replace("\n", " ")
    assert "Relaxation model" in text
    assert f"Relaxation model chosen by BIC: {rel.best.label}" in text
    assert "Kramers-Kronig check" in text and "Monte Carlo check" in text


def test_a_wrong_relaxation_is_refused(built):
    rel, _rep, (m, res) = built
    with pytest.raises(InputError, match=r"dispersion\.Relaxation"):
        report.build(measurement=m, extraction=res, relaxation=rel.best)


def test_the_report_command_adds_the_section(tmp_path, capsys):
    from capbench.cli import main

    stem = tmp_path / "pu"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CapbenchWarning)
        code = main(["report", str(PU), "--relaxation", "--format", "json", "-o", str(stem)])
    assert code == 0
    data = json.loads((tmp_path / "pu.json").read_text())
    assert data["relaxation"]["model"] == "cole-cole + conductivity"
    fixture = PU.parent / "bench3-guarded-cell.toml"
    assert main(["report", str(fixture), "--relaxation", "-o", str(stem)]) == 1
    assert "--relaxation needs a measurement file" in capsys.readouterr().err
