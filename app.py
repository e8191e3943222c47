"""capbench workbench: fixture entry, field solve, permittivity and uncertainty in one page.

Start it with ``make run`` (``streamlit run app.py``). The page only wires widgets to
capbench; the forms, parsing and formatting live in :mod:`capbench.workbench`, the
physics in the rest of the library. Session state is initialised here, under keys no
widget owns (see ``bench_pages/state.py``).

Caution: bridges and fixtures can carry high voltage; follow local codes and licensed
practice for every energised measurement.
"""

from __future__ import annotations

import streamlit as st

from bench_pages import state

st.set_page_config(page_title="capbench workbench", page_icon=":material/bolt:", layout="wide")
state.init()

PAGES = [
    st.Page("bench_pages/start.py", title="Start", icon=":material/flag:", default=True),
    st.Page("bench_pages/fixture.py", title="Fixture", icon=":material/straighten:"),
    st.Page("bench_pages/solve.py", title="Field solve", icon=":material/blur_on:"),
    st.Page("bench_pages/extract.py", title="Permittivity", icon=":material/show_chart:"),
    st.Page("bench_pages/relax.py", title="Relaxation model", icon=":material/ssid_chart:"),
    st.Page("bench_pages/guard.py", title="Guard and comparison", icon=":material/shield:"),
    st.Page("bench_pages/report.py", title="Report", icon=":material/description:"),
]

page = st.navigation(PAGES)
state.sidebar()
page.run()
