"""Report: a Markdown summary of the fixture, the solve and the extraction with its budget."""

from __future__ import annotations

import streamlit as st

from bench_pages import actions, state
from capbench import workbench as wb

st.title("Report")
fx = state.current_fixture()
if fx is None:
    state.fixture_missing_note()
    st.stop()

res = st.session_state.get(state.EXTRACTION)
sol = actions.current_solution()
kept = st.session_state.get(state.MONTE_CARLO)
index = st.session_state.get(state.POINT, 0)
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
        title=st.session_state.get(state.DEMO_TITLE) or "capbench workbench summary",
    )
    if sol is None and res is None:
        st.info("Solve the field or extract eps' first; the summary then holds the results.")
    st.download_button(
        "Download the summary (.md)",
        summary,
        file_name="capbench-summary.md",
        mime="text/markdown",
        key="report.download",
        type="primary",
    )
    with st.container(border=True):
        st.markdown(summary)
