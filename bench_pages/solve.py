"""Field solve: capacitance with its error bar, Maxwell matrix, potential and field."""

from __future__ import annotations

import streamlit as st

import capbench as cb
from bench_pages import actions, state, views
from capbench import workbench as wb

st.title("Field solve")
fx = state.current_fixture()
if fx is None:
    state.fixture_missing_note()
    st.stop()

how = "three-terminal (direct)" if fx.connection == "direct" else "two-terminal"
st.markdown(f"**{state.as_text(fx.name)}**: {fx.kind.replace('_', ' ')}, {how}")
st.session_state.setdefault("solve.rtol", "1e-6 (default)")
cols = st.columns([3, 1])
with cols[0]:
    rtol_label = st.select_slider(
        "Target relative error", list(actions.RTOL_CHOICES), key="solve.rtol"
    )
with cols[1]:
    clicked = st.button("Solve the field", type="primary", key="solve.run")
if clicked:
    with state.shielded("Field solve"):
        actions.solve_current(actions.RTOL_CHOICES[rtol_label])

views.solve_summary()
sol = actions.current_solution()
if sol is None:
    st.caption("Press *Solve the field*; results are cached per fixture.")
    st.stop()

window = wb.edge_window(fx)
# one picture per run (tabs would draw all three): the result above reaches the screen
# first, and the picture follows without delaying it
view = st.radio(
    "Show",
    ["Potential", "Field strength", "Edge field and test voltage"],
    key="solve.view",
    horizontal=True,
)
if view == "Potential":
    with state.shielded("Potential map"):
        c1, c2 = st.columns(2)
        lines = c1.toggle(
            "Trace field lines (adds a few seconds)",
            key="solve.lines",
            help="Field lines follow E = -grad u; each picture is cached per fixture.",
        )
        whole = c2.toggle("Whole cross-section", key="solve.whole", value=window is None)
        win = None if whole else window
        with st.spinner("Drawing the potential..."):
            png = actions.figure_png("potential", fx, sol.n_dofs, (win, 12 if lines else 0), sol)
        st.image(png, caption="Potential in volts per volt applied; electrodes in black.")
elif view == "Field strength":
    with state.shielded("Field-strength map"):
        with st.spinner("Drawing the field strength..."):
            png = actions.figure_png("field", fx, sol.n_dofs, (window,), sol)
        st.image(png, caption="|E| per volt applied, log scale; the ring marks the largest shown.")
elif view is not None:
    with state.shielded("Edge field"):
        st.session_state.setdefault("solve.voltage", "10 V")
        vtext = st.text_input(
            "Test voltage [V]", key="solve.voltage", help="The bridge's drive or the test voltage."
        )
        try:
            text, severe = wb.edge_caution(sol, vtext)
        except cb.CapbenchError as exc:
            state.inline_error(str(exc))
        else:
            if severe:
                st.error(state.as_text(text), icon=":material/bolt:")
            else:
                st.warning(state.as_text(text), icon=":material/warning:")
