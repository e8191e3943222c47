"""The workbench's relaxation page through streamlit.testing.v1.AppTest: the demo's
extraction fitted on the page shows what capbench.dispersion.analyse gives for the same
extraction (the library's own result, the second path), refusals stay inline, and the
report page carries the section while it belongs to the current result."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from capbench import dispersion as dsp

ROOT = Path(__file__).resolve().parents[1]
APP = str(ROOT / "app.py")
TIMEOUT = 180  # s per script run: the first solve builds its mesh on a shared 2-core box


def _shown(markdown: str) -> str:
    """What a reader sees of Markdown the page escaped."""
    return re.sub(r"\\(.)", r"\1", markdown)


def _page(at: AppTest, page: str) -> AppTest:
    at.switch_page(f"bench_pages/{page}.py").run()
    assert not at.exception, at.exception
    return at


@pytest.fixture(scope="module")
def fitted():
    at = AppTest.from_file(APP, default_timeout=TIMEOUT)
    at.run()
    _page(at, "relax")
    assert any("Find eps'" in i.value for i in at.info)  # nothing to fit yet
    _page(at, "extract")
    at.button(key="extract.run").click().run()
    assert not at.exception
    _page(at, "relax")
    at.multiselect(key="relax.models").set_value(["debye", "cole-cole"])
    at.selectbox(key="relax.sigma").set_value("never")
    at.button(key="relax.run").click().run()
    assert not at.exception, at.exception
    return at


def test_the_page_shows_the_librarys_fit(fitted):
    at = fitted
    res = at.session_state["bench.extraction"]
    rel = dsp.analyse(dsp.Spectrum.from_extraction(res), ("debye", "cole-cole"), conductivity=False)
    shown = _shown(" ".join(m.value for m in at.markdown))
    assert rel.statement().split(" (chi2")[0] in shown
    table = at.dataframe[0].value
    assert list(table["parameter"]) == rel.best.names
    assert list(table["value"]) == [row[2] for row in rel.parameter_rows()]
    kk = [_shown(k.value) for k in (*at.success, *at.warning)]
    assert any(k == rel.kk.text() for k in kk), kk
    images = sum(1 for e in at.main if getattr(e, "type", None) == "image")
    assert images == 3


def test_bad_choices_are_refused_inline(fitted):
    at = fitted
    at.number_input(key="relax.draws").set_value(5).run()
    assert not at.exception
    assert any("valid: 0 (none) or 20 to 2000" in _shown(e.value) for e in at.error)
    assert at.button(key="relax.run").disabled
    at.number_input(key="relax.draws").set_value(0).run()
    at.multiselect(key="relax.models").set_value([]).run()
    assert any("choose at least one model" in _shown(e.value) for e in at.error)
    assert at.button(key="relax.run").disabled


def test_the_report_page_adds_the_section(fitted):
    import json

    at = fitted
    at.multiselect(key="relax.models").set_value(["debye", "cole-cole"]).run()
    _page(at, "report")
    at.button(key="report.build").click().run()
    assert not at.exception, at.exception
    files = at.session_state["bench.report"][1]
    data = json.loads(files["json"])
    assert data["relaxation"]["model"] in ("debye", "cole-cole")
