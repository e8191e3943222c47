"""The page's reports carry the user's identity, never the demo's on the user's results,
and no result is shown under inputs it was not made from (issue 14)."""

from __future__ import annotations

import json

from test_app import errors, go, start


def _report(at) -> dict:
    at.button(key="report.build").click().run()
    assert not at.exception and not errors(at), errors(at)
    return json.loads(at.session_state["bench.report"][1]["json"])


def test_the_demo_reports_as_the_demo_and_a_users_fixture_does_not():
    at = start()
    at.button(key="start.run").click().run()
    go(at, "report")
    demo = _report(at)
    assert demo["meta"]["lab"] == "Quillfield Dielectrics Lab"
    assert demo["meta"]["specimen"] == "QF-PE-03"
    # the user's own fixture: a different guard gap, a name of the user's
    go(at, "fixture")
    at.text_input(key="fixture.name").set_value("bench B cell")
    at.text_input(key="fixture.guarded_cell.guard_gap").set_value("0.3 mm").run()
    go(at, "solve")
    at.button(key="solve.run").click().run()
    go(at, "report")
    for field in ("lab", "specimen", "bench"):
        assert at.text_input(key=f"report.record.{field}").value == "", field
    mine = _report(at)
    assert "Quillfield" not in json.dumps(mine)
    assert "QF-PE-03" not in json.dumps(mine)
    # the user's record heads the report
    at.text_input(key="report.record.lab").set_value("Hollin Materials Test Room")
    at.text_input(key="report.record.operator").set_value("R. Okafor")
    at.text_input(key="report.record.specimen").set_value("HM-epoxy-11").run()
    rep = _report(at)
    assert rep["meta"]["lab"] == "Hollin Materials Test Room"
    assert rep["meta"]["operator"] == "R. Okafor"
    assert rep["title"] == "capbench report: HM-epoxy-11"


def test_a_result_is_not_shown_under_a_changed_fixture():
    at = start()
    at.button(key="start.run").click().run()
    go(at, "extract")
    assert any(m.label.startswith("eps'") for m in at.metric)
    go(at, "fixture")
    at.text_input(key="fixture.guarded_cell.guard_gap").set_value("0.3 mm").run()
    go(at, "extract")
    assert not any(m.label.startswith("eps'") for m in at.metric)
    assert any("changed since the last result" in i.value for i in at.info)
    # back to the inputs it was made from: the result returns
    go(at, "fixture")
    at.text_input(key="fixture.guarded_cell.guard_gap").set_value("0.5 mm").run()
    go(at, "extract")
    assert any(m.label.startswith("eps'") for m in at.metric)


def test_the_guard_page_takes_the_users_cell_not_the_demos_reading():
    """Issue 14: the guard page kept the demo's eps and reading under a user's fixture."""
    at = go(start(), "guard")
    assert at.text_input(key="compare.measured").value == "20.6133 pF"  # the demo's own
    go(at, "fixture")
    at.text_input(key="fixture.guarded_cell.guard_gap").set_value("0.3 mm")
    at.text_input(key="fixture.guarded_cell.specimen_eps_r").set_value("3.7").run()
    go(at, "guard")
    assert at.text_input(key="compare.measured").value == ""
    assert at.text_input(key="guard.eps").value == "3.7"
    assert not errors(at)
    assert at.button(key="compare.run").disabled
