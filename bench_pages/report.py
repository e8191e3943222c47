"""Report: the library's report (HTML, PDF, JSON) and a Markdown summary with the budget."""

from __future__ import annotations

import streamlit as st

from bench_pages import actions, state
from capbench import report
from capbench import workbench as wb

st.title("Report")
fx = state.current_fixture()
if fx is None:
    state.fixture_missing_note()
    st.stop()

res = state.current_extraction()
sol = actions.current_solution()
kept = st.session_state.get(state.MONTE_CARLO)
index = st.session_state.get(state.POINT, 0)
guard = st.session_state.get(state.GUARD)
guard = guard[1] if guard and guard[0] == fx else None
comparison = st.session_state.get(state.COMPARISON)
comparison = comparison[1] if comparison and comparison[0] == fx else None
is_demo = state.demo_is_current(fx)
relaxation = state.current_relaxation()

st.subheader("Measurement record")
st.caption(
    "Who measured what, where, with what and when: it heads every report and the bench "
    "log. The demo's record shows only while the demo's fixture and readings are loaded."
)
entered = dict(st.session_state.get(state.RECORD, {}))
shown = state.record(fx)  # the demo's values fill in only while the demo is loaded
demo_record = getattr(st.session_state.get(state.DEMO), "record", {})
cols = st.columns(3)
for i, field_name in enumerate(report.RECORD_FIELDS):
    key = f"report.record.{field_name}"
    if key not in st.session_state:
        st.session_state[key] = shown.get(field_name, "")
    elif not is_demo and st.session_state[key] == demo_record.get(field_name, None):
        st.session_state[key] = ""  # the demo's identity never heads a user's result
    cols[i % 3].text_input(field_name.capitalize(), key=key, max_chars=200)
    value = st.session_state[key]
    # kept as the user's only where it is not the demo's own value
    entered[field_name] = "" if value == demo_record.get(field_name) else value
st.session_state[state.RECORD] = entered
record = {k: v.strip() for k, v in state.record(fx).items() if v.strip()}
subject = record.get("specimen") or fx.name
title = (
    st.session_state.get(state.DEMO_TITLE)
    if is_demo and st.session_state.get(state.DEMO_TITLE)
    else f"capbench report: {subject}"
)
if sol is None and res is None:
    st.info("Solve the field or extract eps' first; the report then holds the results.")

# what the report is made of: a new result makes the prepared files stale
sources = (fx, res, sol, guard, comparison, tuple(sorted(record.items())), relaxation)
prepared = st.session_state.get(state.REPORT)
if prepared and not all(
    (a is b) or (isinstance(a, tuple) and a == b) for a, b in zip(prepared[0], sources, strict=True)
):
    prepared = None

st.subheader("Measurement report")
st.caption(
    "Who, what and when, the fixture with its drawing, the method, the result with its "
    "expanded uncertainty (95 %), the budget, the field plot, references and the caution; "
    "one content as a self-contained HTML page, a PDF and JSON data."
)
if st.button("Prepare the report", type="primary", key="report.build"):
    with state.shielded("Report"), st.spinner("Writing the report (plots and PDF)..."):
        if sol is None and res is not None:
            sol = res.solution()  # the field plot's solve: the page's, not the report's
        rep = report.build(
            res.fixture if res is not None else fx,
            extraction=res,
            solution=sol,
            guard=guard,
            comparison=comparison,
            relaxation=relaxation,
            title=title,
            record=record,
        )
        files = {"html": rep.html(), "pdf": rep.pdf(), "json": rep.json()}
        prepared = (sources, files)
        st.session_state[state.REPORT] = prepared
if prepared:
    files = prepared[1]
    cols = st.columns(3)
    for col, (kind, mime) in zip(
        cols,
        (("html", "text/html"), ("pdf", "application/pdf"), ("json", "application/json")),
        strict=True,
    ):
        col.download_button(
            f"Download {kind.upper()}",
            files[kind],
            file_name=f"capbench-report.{kind}",
            mime=mime,
            key=f"report.{kind}",
        )

st.divider()
st.subheader("Summary with the budget (Markdown)")
cautions = []
if sol is not None:
    with state.shielded("Edge-field caution"):
        text, _severe = wb.edge_caution(sol, st.session_state.get("solve.voltage", "10 V"))
        cautions.append(text)
with state.shielded("Summary"):
    summary = wb.markdown_summary(
        fixture=res.fixture if res is not None else fx,
        solution=sol,
        extraction=res,
        index=index if res is not None else 0,
        monte_carlo=kept[1] if (kept and res is not None and kept[0] == index) else None,
        cautions=cautions,
        title=title,
    )
    st.download_button(
        "Download the summary (.md)",
        summary,
        file_name="capbench-summary.md",
        mime="text/markdown",
        key="report.download",
    )
    with st.container(border=True):
        st.markdown(summary)
