"""Session state of the workbench and what every page shares.

Results live under keys no widget owns (a widget's key vanishes when its page is not
drawn); boxes are seeded from them with ``setdefault`` and copied back after drawing.
"""

from __future__ import annotations

import traceback
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

import streamlit as st

import capbench as cb
from capbench import workbench as wb

#: user text as literal text inside Markdown (one escape, shared with the summary)
as_text = wb.markdown_text


#: keys of the results and inputs the pages share (none is a widget's key)
FIXTURE_BUILDER = "bench.fixture.builder"
FIXTURE_TEXTS = "bench.fixture.texts"  # builder -> {box key: text}
FIXTURE_NAME = "bench.fixture.name"
FIXTURE = "bench.fixture"  # the Fixture the boxes make, or None
FIXTURE_ERRORS = "bench.fixture.errors"
SOLUTION = "bench.solution"  # the last Solution, for the fixture it was made for
SOLVE_ERROR = "bench.solve.error"
METHOD = "bench.method"
METHOD_TEXTS = "bench.method.texts"  # method -> {box key: text}
SOURCE = "bench.method.source"  # "table" or "single"
TABLE_TEXT = "bench.table.text"
EXTRACTION = "bench.extraction"
EXTRACTION_INPUTS = "bench.extraction.inputs"  # what the kept extraction was made from
EXTRACT_ERROR = "bench.extract.error"
POINT = "bench.point"
MONTE_CARLO = "bench.monte_carlo"
GUARD = "bench.guard"
COMPARISON = "bench.comparison"
DEMO_TITLE = "bench.demo.title"
REPORT = "bench.report"  # (sources, {"html": str, "pdf": bytes, "json": str})
RECORD = "bench.record"  # the measurement record the user entered: field -> text
RELAXATION = "bench.relaxation"  # (extraction, choices, dispersion.Relaxation) or None
DEMO = "bench.demo"  # the demo's Demo, to know when the page still holds it


def init() -> None:
    """Seed the session with the invented demo measurement (Quillfield bench 3)."""
    if DEMO_TITLE in st.session_state:
        return
    try:
        d = wb.demo()
    except cb.CapbenchError:  # the demo files are missing: start from the forms' defaults
        d = None
    if d is None:
        builder = "guarded_cell"
        texts = {builder: wb.RIG_FORMS[builder].defaults}
        st.session_state.setdefault(DEMO_TITLE, "")
        st.session_state.setdefault(FIXTURE_NAME, "my fixture")
        method_texts: dict[str, dict[str, str]] = {}
        table = ""
        method = "contacting"
    else:
        builder = d.builder
        # copies: the boxes edit these dicts in place, and the demo's own must stay as
        # loaded (it tells whether the page still holds the demo)
        texts = {d.builder: dict(d.fixture_texts)}
        st.session_state.setdefault(DEMO, d)
        st.session_state.setdefault(DEMO_TITLE, d.title)
        st.session_state.setdefault(FIXTURE_NAME, d.fixture_name)
        method_texts = {d.method: dict(d.method_texts)}
        table = d.table
        method = d.method
    st.session_state.setdefault(FIXTURE_BUILDER, builder)
    st.session_state.setdefault(FIXTURE_TEXTS, texts)
    st.session_state.setdefault(METHOD, method)
    st.session_state.setdefault(METHOD_TEXTS, method_texts)
    st.session_state.setdefault(SOURCE, "table" if table else "single")
    st.session_state.setdefault(TABLE_TEXT, table)
    for key in (
        SOLUTION,
        SOLVE_ERROR,
        EXTRACTION,
        EXTRACT_ERROR,
        MONTE_CARLO,
        GUARD,
        COMPARISON,
        REPORT,
        RELAXATION,
    ):
        st.session_state.setdefault(key, None)
    st.session_state.setdefault(POINT, 0)
    st.session_state.setdefault(FIXTURE_ERRORS, {})
    rebuild_fixture()


def fixture_texts(builder: str | None = None) -> dict[str, str]:
    """The stored box texts of a builder's form (its defaults the first time)."""
    builder = builder or st.session_state[FIXTURE_BUILDER]
    store = st.session_state[FIXTURE_TEXTS]
    if builder not in store:
        store[builder] = wb.RIG_FORMS[builder].defaults
    return store[builder]


def rebuild_fixture() -> wb.FormResult:
    """Build the fixture from the stored texts; keep it (or None) and the box errors."""
    builder = st.session_state[FIXTURE_BUILDER]
    result = wb.read_fixture_form(
        builder, fixture_texts(builder), st.session_state.get(FIXTURE_NAME, "")
    )
    st.session_state[FIXTURE] = result.fixture if result.ok else None
    st.session_state[FIXTURE_ERRORS] = result.errors
    return result


def extraction_inputs() -> tuple:
    """Everything an extraction is made from on the page: fixture, method, where the
    readings come from, the method's boxes and the readings table."""
    method = st.session_state.get(METHOD)
    return (
        current_fixture(),
        method,
        st.session_state.get(SOURCE),
        # the boxes' texts, leaving out empty ones (drawing a page adds empty boxes)
        tuple(sorted((k, v) for k, v in method_texts(method).items() if str(v).strip()))
        if method
        else (),
        st.session_state.get(TABLE_TEXT, ""),
    )


def current_extraction() -> Any:
    """The kept extraction if it was made from the inputs the page holds now, else None
    (a result is never shown under a fixture or readings it was not made from)."""
    res = st.session_state.get(EXTRACTION)
    if res is None or st.session_state.get(EXTRACTION_INPUTS) != extraction_inputs():
        return None
    return res


def current_relaxation() -> Any:
    """The kept relaxation analysis if it was fitted to the current extraction."""
    kept = st.session_state.get(RELAXATION)
    res = current_extraction()
    if not kept or res is None or kept[0] is not res:
        return None
    return kept[2]


def extraction_is_stale() -> bool:
    return st.session_state.get(EXTRACTION) is not None and current_extraction() is None


def method_texts(method: str | None = None) -> dict[str, str]:
    method = method or st.session_state[METHOD]
    store = st.session_state[METHOD_TEXTS]
    if method not in store:
        form = wb.METHOD_FORMS[method]
        store[method] = {e.key: e.default for e in (*form.entries, *wb.COMMON_ENTRIES)}
    return store[method]


def text_box(entry: wb.Entry, store: dict[str, str], prefix: str) -> str:
    """A text box seeded from ``store`` and copied back into it; returns the text."""
    key = f"{prefix}.{entry.key}"
    st.session_state.setdefault(key, store.get(entry.key, entry.default))
    text = st.text_input(
        entry.label, key=key, help=entry.help or None, placeholder=entry.default or None
    )
    store[entry.key] = text
    return text


def inline_error(message: str | None) -> None:
    """The message under a box that names the box and what would be valid."""
    if message:
        st.error(as_text(message), icon=":material/error:")


@contextmanager
def shielded(where: str) -> Iterator[None]:
    """No traceback reaches the page: capbench's refusals are shown as they are (they
    name the value and what is valid); anything else as one line naming ``where``."""
    try:
        yield
    except cb.CapbenchError as exc:
        st.error(as_text(f"{where}: {exc}"), icon=":material/error:")
    except Exception as exc:  # the page boundary: nothing may escape as a traceback
        traceback.print_exc()  # to the server's log, for the developers
        st.error(
            as_text(
                f"{where}: an unexpected {type(exc).__name__} ({exc}). Nothing was saved; "
                "check the entries above, and report it if it persists."
            ),
            icon=":material/error:",
        )


def demo_is_current(fx: cb.Fixture | None) -> bool:
    """Whether the page still holds the demo's own fixture and readings: only then may
    the demo's identity (lab, specimen, title) appear on a result."""
    d = st.session_state.get(DEMO)
    if d is None or fx is None:
        return False
    demo_fx = wb.read_fixture_form(d.builder, d.fixture_texts, d.fixture_name).fixture
    return (
        demo_fx == fx
        and st.session_state.get(TABLE_TEXT, "") == d.table
        and st.session_state.get(METHOD) == d.method
    )


def record(fx: cb.Fixture | None) -> dict[str, str]:
    """The measurement record for a report of ``fx``: what the user entered; the demo's
    record where the user entered nothing and the page still holds the demo."""
    entered = dict(st.session_state.get(RECORD, {}))
    d = st.session_state.get(DEMO)
    if d is not None and demo_is_current(fx):
        return {k: entered.get(k) or v for k, v in d.record.items()}
    return entered


def current_fixture() -> cb.Fixture | None:
    return st.session_state.get(FIXTURE)


def fixture_missing_note() -> None:
    st.info("The fixture on the Fixture page has invalid boxes; fix them there first.")


def sidebar() -> None:
    with st.sidebar:
        fx = current_fixture()
        if fx is not None:
            st.caption(f"Fixture: **{as_text(fx.name)}** ({fx.kind.replace('_', ' ')})")
        sol = st.session_state.get(SOLUTION)
        if sol is not None and fx is not None and sol.fixture == fx:
            st.caption(f"Solved: {cap_text(sol)}")
        st.caption(":material/warning: " + wb.SAFETY)


def cap_text(sol: Any) -> str:
    if sol.unit == "F":
        return wb.capacitance_text(float(sol.capacitance.magnitude))
    return f"{wb.sig(float(sol.capacitance.to('pF/m').magnitude), 7)} pF/m"
