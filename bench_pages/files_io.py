"""Saving and loading a fixture file (the CLI's ``capbench-fixture/1`` format)."""

from __future__ import annotations

import re

import streamlit as st

import capbench as cb
from capbench import files
from capbench import workbench as wb

from . import state


def save_and_load(fixture: cb.Fixture | None) -> None:
    """A download button for the current fixture and an uploader for a saved one."""
    left, right = st.columns(2)
    with left:
        st.markdown("**Save this fixture**")
        if fixture is None:
            st.caption("Available when every box is valid.")
        else:
            with state.shielded("Save"):
                text = files.fixture_to_toml(fixture, comment="saved from the capbench workbench")
                stem = re.sub(r"[^A-Za-z0-9_.-]+", "-", fixture.name).strip("-") or "fixture"
                st.download_button(
                    "Download fixture file (.toml)",
                    text,
                    file_name=f"{stem}.toml",
                    mime="application/toml",
                    key="fixture.save",
                )
                st.caption("The same file works with the `capbench` command line.")
    with right:
        st.markdown("**Load a fixture file**")
        up = st.file_uploader(
            "capbench fixture file (.toml, at most 1 MB)", type=["toml"], key="fixture.load"
        )
        if up is not None and st.session_state.get("fixture.loaded_id") != up.file_id:
            # marked before loading: a successful load reruns the page at once
            st.session_state["fixture.loaded_id"] = up.file_id
            load_text(up.getvalue(), up.name)
        flash = st.session_state.pop("fixture.flash", None)
        if flash:
            st.success(state.as_text(flash))


def load_text(data: bytes, name: str) -> bool:
    """Read an uploaded fixture file into the form; an inline error names what is wrong."""
    try:
        if len(data) > files.MAX_TOML_BYTES:
            raise cb.FileFormatError(
                f"{name}: {len(data):,} bytes is over the limit of {files.MAX_TOML_BYTES:,} "
                "bytes for a fixture file",
                value=len(data),
            )
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError:
            raise cb.FileFormatError(f"{name}: not UTF-8 text", value=None) from None
        fx = files.fixture_from_toml(text, source=name)
        builder, texts = wb.form_texts(fx)
    except cb.CapbenchError as exc:
        st.error(state.as_text(f"Load fixture file: {exc}"), icon=":material/error:")
        return False
    st.session_state[state.FIXTURE_BUILDER] = builder
    st.session_state[state.FIXTURE_TEXTS][builder] = texts
    st.session_state[state.FIXTURE_NAME] = fx.name
    # the boxes are re-seeded from the loaded texts on the next run
    for key in [k for k in st.session_state if str(k).startswith(f"fixture.{builder}.")]:
        del st.session_state[key]
    for key in ("fixture.name", "fixture.family", "fixture.variant"):
        st.session_state.pop(key, None)
    state.rebuild_fixture()
    st.session_state["fixture.flash"] = f"Loaded {fx.name} ({builder.replace('_', ' ')})."
    st.rerun()
    return True
