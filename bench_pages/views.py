"""Result views shared by several pages (no computation beyond formatting)."""

from __future__ import annotations

import pandas as pd
import streamlit as st

from capbench import workbench as wb

from . import actions, state


def solve_summary(compact: bool = False) -> None:
    """The solved capacitance with its error estimate (and, in full, the matrix)."""
    err = st.session_state.get(state.SOLVE_ERROR)
    if err:
        st.error(state.as_text(err), icon=":material/error:")
    sol = actions.current_solution()
    if sol is None:
        return
    fx = sol.fixture
    how = "direct (three-terminal)" if fx.connection == "direct" else "two-terminal"
    c = float(sol.terminal.real) * (fx.length or 1.0)
    cols = st.columns(4)
    cols[0].metric(f"Capacitance, {how}", state.cap_text(sol))
    cols[1].metric(
        "Estimated error",
        f"± {wb.capacitance_text(abs(c) * sol.rel_error, 2)}" + ("/m" if sol.unit == "F/m" else ""),
        help="A conservative upper estimate of the discretisation error.",
    )
    cols[2].metric("Relative error", f"{sol.rel_error:.1e}")
    cols[3].metric("Unknowns / time", f"{sol.n_dofs:,} / {sol.seconds:.2f} s")
    if compact:
        return
    head, cells = wb.matrix_rows(sol)
    st.markdown(
        "**Maxwell capacitance matrix** (charge on each row's conductor per volt "
        "on each column's, others at 0 V)"
    )
    st.dataframe(pd.DataFrame(cells, columns=head, index=list(sol.terminals)), width="stretch")


def extraction_headline() -> None:
    """eps' (and tan delta) of the reported point, with the expanded uncertainty."""
    err = st.session_state.get(state.EXTRACT_ERROR)
    if err:
        st.error(state.as_text(err), icon=":material/error:")
    res = state.current_extraction()
    if res is None:
        if state.extraction_is_stale():
            st.info(
                "The fixture or the readings changed since the last result; press "
                "*Find eps'* for a result of these."
            )
        return
    i = min(st.session_state.get(state.POINT, 0), len(res.points) - 1)
    p = res.points[i]
    kept = st.session_state.get(state.MONTE_CARLO)
    value, how = wb.eps_statement(p, kept[1] if kept and kept[0] == i else None)
    where = "" if p.frequency is None else f" at {wb.frequency_text(p.frequency)}"
    cols = st.columns(3)
    cols[0].metric(f"eps'{where}", value, help=how[0].upper() + how[1:] + ".")
    cols[1].metric(
        "Field correction",
        f"{100 * p.correction:+.3f} %",
        help="eps' from the fixture's field against the parallel-plate formula.",
    )
    if p.tan_delta is not None:
        Ut, kt = p.expanded("tan_delta")
        cols[2].metric(
            f"tan δ{where}",
            wb.with_uncertainty(p.tan_delta.n, Ut),
            help=f"Expanded uncertainty, k = {kt:.2f} for 95 % coverage.",
        )
