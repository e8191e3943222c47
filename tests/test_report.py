"""Reports from the demo measurement: the HTML holds the result and the budget, the PDF
has the expected pages and text, and the JSON carries the same numbers as the library."""

from __future__ import annotations

import io
import json
import math
import re
from pathlib import Path

import pytest
from scipy import stats

import capbench as cb
from capbench import files, report

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "quillfield" / "qf-pe-03.toml"


@pytest.fixture(scope="module")
def measurement():
    return files.read_measurement(DEMO)


@pytest.fixture(scope="module")
def extraction(measurement):
    return measurement.extract(rtol=1e-6)


@pytest.fixture(scope="module")
def rep(measurement, extraction):
    return report.build(
        measurement=measurement,
        extraction=extraction,
        solution=extraction.solution(),
        operator="R. Quill (invented)",
        created="2024-03-15T09:00:00+00:00",
    )


def welch_satterthwaite(budget) -> float:
    """nu_eff = u_c^4 / sum (c_i u_i)^4 / nu_i (JCGM 100:2008, G.4.1), from the rows."""
    den = sum(r.contribution**4 / r.dof for r in budget.rows if math.isfinite(r.dof))
    return math.inf if den == 0 else budget.u**4 / den


def test_html_is_self_contained_and_holds_result_and_budget(rep, extraction):
    text = rep.html()
    assert text.startswith("<!DOCTYPE html>") and text.rstrip().endswith("</html>")
    # nothing fetched when it opens: every image is embedded, no external URL
    assert "http://" not in text and "https://" not in text
    srcs = re.findall(r'src="([^"]+)"', text)
    assert len(srcs) == 3 and all(s.startswith("data:image/png;base64,") for s in srcs)
    p = extraction[1]  # 1 kHz
    U, _k = p.budget.expanded(p=0.95)
    decimals = 1 - math.floor(math.log10(U))  # two significant digits of U (GUM 7.2.6)
    assert f"<td>{p.eps_r.n:.{decimals}f}</td><td>{U:.{decimals}f}</td>" in text
    for row in p.budget.rows:
        assert f"<td>{row.name}</td>" in text
    assert "Uncertainty budgets" in text and "Caution" in text
    assert "QF-PE-03" in text and "R. Quill (invented)" in text
    assert "JCGM 100:2008" in text and "ASTM D150" in text
    assert f"capbench {cb.__version__}" in text


def test_expanded_uncertainty_uses_t_with_effective_dof(rep, extraction):
    data = json.loads(rep.json())
    for item, p in zip(data["results"]["points"], extraction.points, strict=True):
        nu = welch_satterthwaite(p.budget)
        # k from the t distribution at 95 % (GUM G.3, G.4), by scipy directly
        k = stats.norm.ppf(0.975) if math.isinf(nu) else stats.t.ppf(0.975, nu)
        assert item["k_eps_r"] == pytest.approx(k, rel=1e-9)
        assert item["U_eps_r"] == pytest.approx(k * p.eps_r.s, rel=1e-9)


def test_json_carries_the_library_numbers(rep, extraction):
    data = json.loads(rep.json())
    assert data["schema"] == "capbench-report/1"
    assert data["created"] == "2024-03-15T09:00:00+00:00"
    pts = data["results"]["points"]
    assert len(pts) == len(extraction)
    for item, p in zip(pts, extraction.points, strict=True):
        assert item["eps_r"] == p.eps_r.n and item["u_eps_r"] == p.eps_r.s
        assert item["tan_delta"] == p.tan_delta.n
        assert item["frequency_hz"] == p.frequency
    assert len(data["budgets"]) == 2 * len(extraction)
    for b in data["budgets"]:
        # the shares of a budget add up to one (GUM 5.1.2, the law of propagation)
        total = sum(r["share"] for r in b["rows"]) + b["correlation_share"]
        assert total == pytest.approx(1.0, abs=1e-12)
    assert data["caution"] == report.CAUTION
    assert [f["name"] for f in data["figures"]] == ["fixture", "field", "result"]
    with_png = json.loads(rep.json(figures=True))
    assert all(len(f["png_base64"]) > 1000 for f in with_png["figures"])


def test_pdf_is_typeset_inside_its_text_area(rep, extraction):
    """Issue 14: a PDF a lab can sign: the result statement whole on page 1, every string
    drawn inside the text area (A4 less 20 mm margins; a string that ran off the page was
    the complaint), the budgets and the references present."""
    pypdf = pytest.importorskip("pypdf")
    from reportlab.pdfbase.pdfmetrics import stringWidth

    from capbench.report_pdf import MARGIN

    data = rep.pdf()
    assert data.startswith(b"%PDF")
    reader = pypdf.PdfReader(io.BytesIO(data))
    width, height = 595.2756, 841.8898  # A4 in points
    outside = []
    for n, page in enumerate(reader.pages):

        def visit(text, cm, tm, font, size, n=n):
            if not text.strip():
                return
            x = cm[0] * tm[4] + cm[2] * tm[5] + cm[4]
            y = cm[1] * tm[4] + cm[3] * tm[5] + cm[5]
            # the run's end from the font's own metrics (reportlab's standard fonts)
            name = str((font or {}).get("/BaseFont", "/Helvetica")).lstrip("/")
            try:
                w = stringWidth(text.rstrip(), name, size)
            except KeyError:  # a font reportlab has no metrics for: 0.6 em a character
                w = 0.6 * size * len(text.rstrip())
            end = x + w * abs(cm[0] or 1)
            if x < MARGIN - 1 or end > width - MARGIN + 1 or not (MARGIN - 12 < y < height):
                outside.append((n, round(x), round(end), round(y), text[:30]))

        page.extract_text(visitor_text=visit)
    assert not outside, outside[:5]
    first = reader.pages[0].extract_text()
    p = extraction[0]
    U, _k = p.budget.expanded(p=0.95)
    decimals = 1 - math.floor(math.log10(U))
    assert f"eps' at 100 Hz = {p.eps_r.n:.{decimals}f} +- {U:.{decimals}f}" in first
    assert "QF-PE-03" in first and "Caution" in first
    text = " ".join(pg.extract_text() for pg in reader.pages)
    assert "Uncertainty budget: eps_r' at 100 Hz" in text
    assert "micrometer calibration" in text
    assert "References" in text and "JCGM 100:2008" in text and "capbench" in text


def test_write_all_forms(rep, tmp_path):
    paths = rep.write(str(tmp_path / "qf-pe-03"))
    assert [Path(p).suffix for p in paths] == [".html", ".pdf", ".json"]
    assert all(Path(p).stat().st_size > 1000 for p in paths)
    with pytest.raises(cb.InputError, match="'docx'; valid: html, pdf, json"):
        rep.write(str(tmp_path / "x"), formats=("docx",))


def test_solution_only_report():
    fx = cb.parallel_discs("25 mm", "2.5 mm", name="invented test discs")
    sol = cb.solve(fx, rtol=1e-5)
    rep = report.build(solution=sol, lab="Quillfield Dielectrics Lab")
    data = json.loads(rep.json())
    assert "results" not in data and data["meta"]["fixture"] == "invented test discs"
    c = f"{sol.capacitance.to('pF').magnitude:.7g} pF"
    assert data["solution"]["terminal capacitance"] == c
    assert c in rep.html()


def test_build_refuses_nothing_and_wrong_types():
    with pytest.raises(cb.InputError, match="nothing to report"):
        report.build()
    with pytest.raises(cb.InputError, match="give a capbench Extraction"):
        report.build(extraction="2.3")
    with pytest.raises(cb.InputError, match=r"coverage = 95; valid: a probability"):
        report.build(fixture=cb.parallel_discs("25 mm", "2.5 mm"), coverage=95)


@pytest.mark.parametrize(
    ("name", "columns"),
    [
        ("qf-ps-07.toml", ["s1 (mm)", "s2 (mm)", "empty D"]),
        ("qf-pmma-02.toml", ["fluid", "empty C (pF)"]),
    ],
)
def test_readings_table_shows_the_new_columns(name, columns):

    m = files.read_measurement(ROOT / "fixtures" / "quillfield" / name)
    table = report._inputs(m)["readings"]
    for column in columns:
        assert column in table["header"]
    assert len(table["rows"]) == len(m.readings)
    if m.method == "two_fluid":
        assert "cyclohexane, eps_r 2.0193" in report._inputs(m)["fluid 2"]


def test_eps_loss_is_a_first_class_result_with_its_expanded_uncertainty():
    """eps'' and U(eps'') in the results table and the JSON points (issue 21); U(eps'') =
    k u(eps'') with the k of tan delta's budget, so U(eps'') / eps'' = U(tan d) / tan d to
    first order where eps' is far better known than the loss."""
    m = files.read_measurement(
        Path(__file__).resolve().parents[1] / "fixtures" / "quillfield" / "qf-pe-03.toml"
    )
    data = report.results(m.extract(fem=False))
    assert "eps''" in data["header"] and "U(eps'')" in data["header"]
    p = data["points"][0]
    assert p["U_eps_loss"] == pytest.approx(p["k_tan_delta"] * p["u_eps_loss"], rel=1e-12)
    assert p["U_eps_loss"] / p["eps_loss"] == pytest.approx(
        p["U_tan_delta"] / p["tan_delta"], rel=0.05
    )


def test_a_report_never_solves(measurement, extraction, monkeypatch):
    """Issue 14: documents are pure functions of results. build() refuses a measurement
    without its extraction, and with no solution it draws no field plot rather than
    solving for one (any solve here would fail the test)."""
    import capbench.capacitance as cc

    def refuse(*a, **k):
        raise AssertionError("report.build solved")

    monkeypatch.setattr(cc, "solve", refuse)
    with pytest.raises(cb.InputError, match="never solves"):
        report.build(measurement=measurement)
    rep = report.build(measurement=measurement, extraction=extraction)
    names = [f["name"] for f in json.loads(rep.json())["figures"]]
    assert "field" not in names and "result" in names
