"""Start: what the workbench does, and the demo in one click."""

from __future__ import annotations

import streamlit as st

from bench_pages import actions, state, views

st.title("capbench workbench")
st.markdown(
    "Turn capacitance-bridge readings into **relative permittivity and loss**, corrected "
    "by the finite-element field of *your* fixture, with a GUM uncertainty budget. "
    "Describe the fixture, solve its field, enter readings, download the summary."
)
title = st.session_state.get(state.DEMO_TITLE)
if title:
    st.info(
        f"Loaded: the invented demo measurement of the **{title}**. "
        "Press the button to solve the cell and extract eps' from its readings."
    )

if st.button("Solve and extract the loaded measurement", type="primary", key="start.run"):
    with state.shielded("Demo"):
        if actions.solve_current(1e-6) is not None:
            actions.extract_current()

views.solve_summary(compact=True)
views.extraction_headline()

st.divider()
cols = st.columns(5)
cols[0].page_link("bench_pages/fixture.py", label="Fixture", icon=":material/straighten:")
cols[1].page_link("bench_pages/solve.py", label="Field solve", icon=":material/blur_on:")
cols[2].page_link("bench_pages/extract.py", label="Permittivity", icon=":material/show_chart:")
cols[3].page_link("bench_pages/guard.py", label="Guard and comparison", icon=":material/shield:")
cols[4].page_link("bench_pages/report.py", label="Report", icon=":material/description:")
