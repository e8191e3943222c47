"""Fixture: choose a rig, type its dimensions, see it drawn to scale; save or load it."""

from __future__ import annotations

import streamlit as st

from bench_pages import files_io, state
from capbench import plots
from capbench import workbench as wb

st.title("Fixture")

builder = st.session_state[state.FIXTURE_BUILDER]
family_now = next(f for f, bs in wb.FAMILIES.items() if builder in bs)
st.session_state.setdefault("fixture.family", family_now)
family = st.selectbox("Rig type", list(wb.FAMILIES), key="fixture.family")
choices = wb.FAMILIES[family]
if builder not in choices:
    builder = choices[0]
if len(choices) > 1:
    if st.session_state.get("fixture.variant") not in choices:
        st.session_state["fixture.variant"] = builder
    builder = st.radio(
        "Electrode layout",
        choices,
        key="fixture.variant",
        format_func=lambda b: wb.RIG_FORMS[b].title,
        horizontal=True,
    )
st.session_state[state.FIXTURE_BUILDER] = builder
form = wb.RIG_FORMS[builder]
st.caption(
    form.note + " A bare number is read in the unit in brackets; any unit may be typed "
    "('0.98 in', '2500 um')."
)

# the boxes' current texts (a box's key holds what was typed last) make the fixture
# before the boxes are drawn, so each message can sit right under its own box
texts = state.fixture_texts(builder)
prefix = f"fixture.{builder}"
for entry in form.entries:
    key = f"{prefix}.{entry.key}"
    st.session_state.setdefault(key, texts.get(entry.key, entry.default))
    texts[entry.key] = st.session_state[key]
st.session_state.setdefault("fixture.name", st.session_state[state.FIXTURE_NAME])
st.session_state[state.FIXTURE_NAME] = st.session_state["fixture.name"]
result = state.rebuild_fixture()

left, right = st.columns([2, 3])
with left:
    st.text_input("Fixture name", key="fixture.name")
    for entry in form.entries:
        st.text_input(
            entry.label,
            key=f"{prefix}.{entry.key}",
            help=entry.help or None,
            placeholder=entry.default or None,
        )
        state.inline_error(result.errors.get(entry.key))
    state.inline_error(result.errors.get(""))

with right:
    if result.fixture is not None:
        with state.shielded("Drawing"):
            fig = plots.draw_fixture(result.fixture)
            st.pyplot(fig, clear_figure=False)
            st.caption("Cross-section to scale, lengths in mm; axisymmetric rigs show r >= 0.")
        for w in result.warnings:
            st.warning(state.as_text(w), icon=":material/warning:")
    else:
        st.info("The drawing returns when every box is valid.")

st.divider()
files_io.save_and_load(result.fixture)
