"""What the buttons do: solve and extract through capbench, with progress and caching."""

from __future__ import annotations

from typing import Any

import streamlit as st

import capbench as cb
from capbench import workbench as wb

from . import state

#: relative accuracy of the page's solves (the solver's default)
RTOL_CHOICES = {"1e-4 (fast)": 1e-4, "1e-5": 1e-5, "1e-6 (default)": 1e-6}


@st.cache_data(show_spinner=False, max_entries=24)
def solved(fixture: cb.Fixture, rtol: float) -> cb.Solution:
    """The field solve of ``fixture``, cached per (frozen fixture, rtol) for every
    session. The progress bar is made inside, so that a cached call replays nothing
    that points outside the function."""
    bar = st.progress(0.0, text="Meshing the cross-section...")

    def report(fraction: float, message: str) -> None:
        bar.progress(min(max(fraction, 0.0), 1.0), text=f"Solving: {message}")

    sol = cb.solve(fixture, rtol=rtol, progress=report)
    bar.empty()
    return sol


def solve_current(rtol: float) -> cb.Solution | None:
    """Solve the current fixture; keep the solution, or the refusal's text."""
    fx = state.current_fixture()
    st.session_state[state.SOLVE_ERROR] = None
    if fx is None:
        st.session_state[state.SOLVE_ERROR] = "Fixture: fix the invalid boxes first."
        return None
    try:
        sol = solved(fx, rtol)
    except cb.CapbenchError as exc:
        st.session_state[state.SOLVE_ERROR] = f"Field solve: {exc}"
        return None
    st.session_state[state.SOLUTION] = sol
    return sol


def current_solution() -> cb.Solution | None:
    """The kept solution if it belongs to the current fixture."""
    sol = st.session_state.get(state.SOLUTION)
    fx = state.current_fixture()
    if sol is None or fx is None or sol.fixture != fx:
        return None
    return sol


@st.cache_data(show_spinner=False, max_entries=48)
def figure_png(kind: str, fixture: cb.Fixture, n_dofs: int, options: tuple, _sol: Any) -> bytes:
    """A solved fixture's figure as PNG, cached per (figure, fixture, solve size, options)."""
    from capbench import plots

    if kind == "potential":
        window, lines = options
        fig = plots.potential_map(_sol, window=window, field_lines=lines, grid=100)
    else:
        (window,) = options
        fig = wb.field_strength_figure(_sol, window)
    return wb.png(fig)


def read_table_text() -> tuple[Any, str | None]:
    """The readings table from the stored text: (readings or None, error or None)."""
    text = st.session_state.get(state.TABLE_TEXT) or ""
    if not text.strip():
        return None, None
    try:
        return wb.read_table(text), None
    except cb.CapbenchError as exc:
        return None, str(exc)


def extract_current(rtol: float = 1e-6) -> Any:
    """Run the chosen method on the current fixture with the stored texts; keep the
    extraction and its Monte Carlo cross-check, or the refusal's text. Returns the
    :class:`~capbench.workbench.MethodCall` (its box errors for the page)."""
    fx = state.current_fixture()
    method = st.session_state[state.METHOD]
    st.session_state[state.EXTRACT_ERROR] = None
    st.session_state[state.EXTRACTION] = None
    st.session_state[state.MONTE_CARLO] = None
    if fx is None:
        st.session_state[state.EXTRACT_ERROR] = "Fixture: fix the invalid boxes first."
        return None
    table = None
    form = wb.METHOD_FORMS[method]
    if st.session_state[state.SOURCE] == "table" and form.table:
        table, err = read_table_text()
        if err:
            st.session_state[state.EXTRACT_ERROR] = err
            return None
    call = wb.read_method_form(method, fx, state.method_texts(method), table)
    if not call.ok:
        return call
    with st.spinner("Finding eps' with the fixture's own field..."):
        try:
            res = wb.run_method(call, fx, rtol=rtol)
        except cb.CapbenchError as exc:
            st.session_state[state.EXTRACT_ERROR] = f"{form.title}: {exc}"
            return call
    st.session_state[state.EXTRACTION] = res
    st.session_state[state.EXTRACTION_INPUTS] = state.extraction_inputs()
    st.session_state[state.POINT] = _reported_point(res)
    monte_carlo(res, st.session_state[state.POINT])
    return call


def _reported_point(res: Any) -> int:
    """The point a report leads with: 1 kHz where measured (the trade's habit), else
    the first."""
    for i, p in enumerate(res.points):
        if p.frequency is not None and abs(p.frequency - 1e3) < 1e-6:
            return i
    return 0


def monte_carlo(res: Any, index: int) -> None:
    """The JCGM 101 cross-check of one point (kept, or None when not possible)."""
    try:
        mc = res.monte_carlo(index, rng=20240314)
    except cb.CapbenchError:
        mc = None  # an exact result (no uncertain input) has nothing to sample
    st.session_state[state.MONTE_CARLO] = (index, mc)
