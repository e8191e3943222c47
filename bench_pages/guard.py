"""Guard check and measured against ideal, through capbench.guard and capbench.compare."""

from __future__ import annotations

import pandas as pd
import streamlit as st

import capbench as cb
from bench_pages import state
from capbench import plots
from capbench import workbench as wb

st.title("Guard check and measured against ideal")
fx = state.current_fixture()
if fx is None:
    state.fixture_missing_note()
    st.stop()

st.subheader("Guard ring check")
if fx.kind != "guarded_cell":
    st.info("The guard check needs a guarded cell; choose one on the Fixture page.")
else:
    p = fx.param_dict
    entries = (
        wb.Entry(
            "thicknesses",
            "Specimen thicknesses to test [mm]",
            "list",
            f"{0.5 * p['specimen_thickness'] * 1e3:.4g}, {p['specimen_thickness'] * 1e3:.4g} mm",
        ),
        wb.Entry(
            "eps",
            "Specimen permittivities to test",
            "list",
            f"{complex(p.get('specimen_eps_r', 2.3)).real:.4g}",  # the fixture's own
        ),
        wb.Entry("target", "Largest error allowed in eps' [%]", "number", "0.1"),
    )
    values, errors = {}, {}
    cols = st.columns(3)
    # boxes seeded for another fixture start again from this one's values (the demo's
    # thickness and eps must not stay under a user's own cell)
    fresh = st.session_state.get("guard.seeded_for") != fx
    st.session_state["guard.seeded_for"] = fx
    for col, e in zip(cols, entries, strict=True):
        key = f"guard.{e.key}"
        if fresh and e.key != "target":
            st.session_state[key] = e.default
        st.session_state.setdefault(key, e.default)
        with col:
            st.text_input(e.label, key=key)
        try:
            values[e.key] = wb.guard_inputs(e.key, st.session_state[key], e.label)
        except cb.CapbenchError as exc:
            errors[e.key] = str(exc)
        with col:
            state.inline_error(errors.get(e.key))
    basis = st.radio(
        "Area the lab uses",
        ["formula", "bare"],
        key="guard.basis",
        horizontal=True,
        format_func={"formula": "effective area d1 + B g", "bare": "bare electrode"}.get,
    )
    if st.button("Check the guard", key="guard.run", disabled=bool(errors)):
        with state.shielded("Guard check"):
            bar = st.progress(0.0, text="Solving the cells...")
            check = cb.guard_check(
                p["electrode_radius"],
                p["guard_gap"],
                p["guard_width"],
                values["thicknesses"],
                values["eps"],
                target=values["target"],
                basis=basis,
                rtol=min(1e-6, values["target"] / 10),
                max_workers=1,  # in this process: the page must not fork its server
                progress=lambda done, total: bar.progress(
                    done / max(total, 1), text=f"Solved {done} of {total} cells"
                ),
                unguarded_radius=p["unguarded_radius"],
            )
            bar.empty()
            st.session_state[state.GUARD] = (fx, check)
    kept = st.session_state.get(state.GUARD)
    if kept and kept[0] == fx:
        check = kept[1]
        (st.success if check.passed else st.error)(check.verdict())
        st.dataframe(pd.DataFrame(wb.guard_rows(check)), hide_index=True)
        st.pyplot(plots.area_error_plot(check), clear_figure=False)

st.divider()
st.subheader("Measured against ideal")
if fx.kind not in ("guarded_cell", "parallel_discs") or fx.specimen is None:
    st.info("The comparison needs a guarded cell or parallel discs with a specimen.")
    st.stop()
# the demo's reading only under the demo's own cell; a user's cell starts empty
demo_reading = "20.6133 pF" if state.demo_is_current(fx) else ""
boxes = (
    wb.Entry("measured", "Measured capacitance [pF]", "c", demo_reading),
    wb.Entry("stray", "Stray capacitance [pF]", "c", "", True),
    wb.Entry("leads", "Lead capacitance [pF]", "c", "", True),
)
vals, errs = {}, {}
cols = st.columns(3)
if st.session_state.get("compare.seeded_for") != fx:
    st.session_state["compare.seeded_for"] = fx
    st.session_state["compare.measured"] = demo_reading
for col, e in zip(cols, boxes, strict=True):
    key = f"compare.{e.key}"
    st.session_state.setdefault(key, e.default)
    with col:
        st.text_input(e.label, key=key)
    raw = st.session_state[key]
    try:
        vals[e.key] = (
            None
            if not raw.strip()  # not entered yet (the reading waits for the user)
            else wb.parse_value(raw, e.label, "capacitance", limits="capacitance")
        )
    except cb.CapbenchError as exc:
        errs[e.key] = str(exc)
    with col:
        state.inline_error(errs.get(e.key))
if vals.get("measured") is None and not errs:
    st.caption("Enter the measured capacitance to split it.")
if st.button(
    "Split the reading", key="compare.run", disabled=bool(errs) or vals.get("measured") is None
):
    with state.shielded("Measured against ideal"), st.spinner("Solving..."):
        comp = cb.measured_vs_ideal(fx, vals["measured"], stray=vals["stray"], leads=vals["leads"])
        st.session_state[state.COMPARISON] = (fx, comp)
kept = st.session_state.get(state.COMPARISON)
if kept and kept[0] == fx:
    comp = kept[1]
    for b in (comp.guarded, comp.unguarded):
        if b is None:
            continue
        st.markdown(f"**{state.as_text(b.label)}**")
        st.dataframe(pd.DataFrame(wb.breakdown_rows(b)), hide_index=True)
        if b.standard is not None:
            st.caption(
                f"{b.standard_name}: {wb.capacitance_text(b.standard, 6)} against the field's "
                f"fringing {wb.capacitance_text(b.fringing, 6)}."
            )
        if b.eps_shift is not None:
            st.caption(f"The residual as a change of eps': {b.eps_shift:+.5f}.")
