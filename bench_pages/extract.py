"""Permittivity: a method, readings (boxes, repeated values or a table), eps' and its budget."""

from __future__ import annotations

import pandas as pd
import streamlit as st

import capbench as cb
from bench_pages import actions, state, views
from capbench import workbench as wb

st.title("Permittivity and loss")
fx = state.current_fixture()
if fx is None:
    state.fixture_missing_note()
    st.stop()
st.markdown(f"Fixture: **{state.as_text(fx.name)}** ({fx.kind.replace('_', ' ')}).")

methods = list(wb.METHOD_FORMS)
st.session_state.setdefault("extract.method", st.session_state[state.METHOD])
method = st.selectbox(
    "Method", methods, key="extract.method", format_func=lambda m: wb.METHOD_FORMS[m].title
)
st.session_state[state.METHOD] = method
form = wb.METHOD_FORMS[method]
st.caption(form.note)

source = "single"
if form.table:
    st.session_state.setdefault(
        "extract.source", "table" if st.session_state[state.SOURCE] == "table" else "single"
    )
    source = st.radio(
        "Readings",
        ["table", "single"],
        key="extract.source",
        horizontal=True,
        format_func={
            "table": "Table: one or more frequencies (CSV)",
            "single": "Single readings in boxes",
        }.get,
    )
st.session_state[state.SOURCE] = source

texts = state.method_texts(method)
prefix = f"extract.{method}"
skip = {form.table, "dissipation"} if (source == "table" and form.table) else set()
shown = [e for e in form.entries if e.key not in skip]
common = [e for e in wb.COMMON_ENTRIES if not (source == "table" and e.key == "frequency")]
for e in (*shown, *common):
    key = f"{prefix}.{e.key}"
    st.session_state.setdefault(key, texts.get(e.key, e.default))
    texts[e.key] = st.session_state[key]

table, table_error = None, None
if source == "table":
    up = st.file_uploader(
        "Upload a readings table (.csv, at most 1 MB)", type=["csv", "txt"], key="extract.upload"
    )
    if up is not None and st.session_state.get("extract.upload_id") != up.file_id:
        st.session_state["extract.upload_id"] = up.file_id
        try:
            wb.read_table(up.getvalue(), f"Uploaded table {up.name}")
        except cb.CapbenchError as exc:
            state.inline_error(str(exc))
        else:
            st.session_state[state.TABLE_TEXT] = up.getvalue().decode("utf-8")
            st.session_state["extract.table"] = st.session_state[state.TABLE_TEXT]
    st.session_state.setdefault("extract.table", st.session_state[state.TABLE_TEXT])
    st.session_state[state.TABLE_TEXT] = st.session_state["extract.table"]
    table, table_error = actions.read_table_text()
    if table is None and table_error is None:
        table_error = (
            "Readings table: the table is empty; give a header row such as 'frequency [Hz],"
            "capacitance [pF],dissipation factor' and one row per reading"
        )

call = wb.read_method_form(method, fx, texts, table)
errors = dict(call.errors)
if table_error:
    errors["table"] = table_error

if source == "table":
    st.text_area(
        "Readings table (CSV): frequency [Hz], capacitance [pF], dissipation factor",
        key="extract.table",
        height=220,
        help="Repeated rows at one frequency are repeated readings (type A).",
    )
    state.inline_error(errors.get("table"))
    if table:
        n_f = len({r.frequency for r in table})
        st.caption(f"{len(table)} readings at {n_f} frequenc{'y' if n_f == 1 else 'ies'}.")

cols = st.columns(2)
for i, e in enumerate(shown):
    with cols[i % 2]:
        st.text_input(e.label, key=f"{prefix}.{e.key}", help=e.help or None)
        state.inline_error(errors.get(e.key))
with st.expander("Instrument, micrometer and tolerances", expanded=True):
    ccols = st.columns(2)
    for i, e in enumerate(common):
        with ccols[i % 2]:
            st.text_input(e.label, key=f"{prefix}.{e.key}", help=e.help or None)
            state.inline_error(errors.get(e.key))
state.inline_error(errors.get(""))

if st.button("Find eps'", type="primary", key="extract.run", disabled=bool(errors)):
    with state.shielded(form.title):
        actions.extract_current()

views.extraction_headline()
res = state.current_extraction()
if res is None:
    st.stop()

with state.shielded("Results"):
    st.markdown(
        f"**{res.method}**: {res.solves} field solves in {res.seconds:.1f} s, largest "
        f"estimated FEM error {res.rel_error:.1e}. Uncertainties expanded for 95 % coverage "
        "(k from each budget's effective degrees of freedom)."
    )
    st.dataframe(pd.DataFrame(wb.point_rows(res)), hide_index=True, width="stretch")
    labels = ["-" if p.frequency is None else wb.frequency_text(p.frequency) for p in res.points]
    index = st.selectbox(
        "Budget of the point at",
        range(len(labels)),
        index=min(st.session_state[state.POINT], len(labels) - 1),
        format_func=lambda i: labels[i],
        key="extract.point",
    )
    if index != st.session_state[state.POINT]:
        st.session_state[state.POINT] = index
        actions.monte_carlo(res, index)
    p = res.points[index]
    kept = st.session_state.get(state.MONTE_CARLO)
    mc = kept[1] if kept and kept[0] == index else None
    value, how = wb.eps_statement(p, mc)
    st.markdown(f"eps' = **{value}** ({how})")
    st.dataframe(pd.DataFrame(wb.budget_rows(p.budget)), hide_index=True, width="stretch")
    if p.loss_budget is not None:
        with st.expander("Budget of tan δ"):
            Ut, kt = p.expanded("tan_delta")
            st.markdown(f"tan δ = **{wb.with_uncertainty(p.tan_delta.n, Ut)}** (k = {kt:.2f})")
            st.dataframe(
                pd.DataFrame(wb.budget_rows(p.loss_budget)),
                hide_index=True,
                width="stretch",
            )
    kept = st.session_state.get(state.MONTE_CARLO)
    if kept and kept[0] == index and kept[1] is not None:
        st.markdown("**Monte Carlo cross-check (JCGM 101)**")
        st.text(kept[1].summary())
    if len(res.points) > 1 and all(q.frequency is not None for q in res.points):
        st.pyplot(wb.spectrum_figure(res), clear_figure=False)
