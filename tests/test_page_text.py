"""User text on the page is shown as text, never as Markdown or markup (issue 15: a
fixture name holding an image link made the browser fetch it, and "9**9**9 m" in a
message was shown as a bold "999 m")."""

from __future__ import annotations

import re

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_app import errors, go, start

from capbench import workbench as wb

HOSTILE = "![pixel](http://192.0.2.1/x.png) **bold** <b>tag</b> $x^2$ :material/bolt: [a](b)"


def _unescaped_markup(body: str) -> list[str]:
    """Markup a renderer would act on: an image or link opener, a bold or code marker,
    an HTML tag or a LaTeX/icon delimiter not preceded by a backslash."""
    return re.findall(r"(?<!\\)(!\[|\]\(|\*\*|<b>|\$x|:material)", body)


def test_the_escape_keeps_every_character_and_disarms_markup():
    escaped = wb.markdown_text(HOSTILE)
    assert not _unescaped_markup(escaped)
    assert re.sub(r"\\(.)", r"\1", escaped) == HOSTILE


def test_a_hostile_fixture_name_is_shown_literally_everywhere():
    at = go(start(), "fixture")
    at.text_input(key="fixture.name").set_value(HOSTILE)
    at.run()
    assert not at.exception, at.exception
    for page in ("fixture", "solve", "extract"):
        go(at, page)
        bodies = [m.value for m in at.markdown] + [c.value for c in at.caption]
        named = [b for b in bodies if "pixel" in b]
        assert named, f"the {page} page does not show the fixture's name"
        for body in named:  # the whole name, escaped (the page's own bold around it aside)
            assert wb.markdown_text(HOSTILE) in body, (page, body)


def test_a_message_echoes_what_was_typed():
    at = go(start(), "fixture")
    at.text_input(key="fixture.guarded_cell.guard_gap").set_value("9**9**9 m")
    at.run()
    assert not at.exception, at.exception
    shown = " | ".join(errors(at))
    assert "'9**9**9 m'" in shown, shown
    for e in at.error:
        assert not _unescaped_markup(e.value), e.value


# generated text of the hostile families (markup, exponent chains, control characters,
# long digit runs) typed into a fixture box: the page answers every one without an
# exception, with either a drawing or a message under the box (never a hang: each run is
# bounded by AppTest's timeout)
_PIECES = st.sampled_from(
    [
        "**9",
        "^9",
        "(",
        ")",
        "mm",
        "![x](http://192.0.2.1/a)",
        "<b>",
        "$",
        ":",
        "\u200b",
        "\ufeff",
        "\x0c",
        "=",
        "+",
        "-",
        "e",
        ".",
        "1" * 300,
        " ",
        "um",
        "in",
        "%",
    ]
)


@settings(deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(_PIECES, min_size=1, max_size=8).map("".join))
def test_generated_text_in_a_box_never_breaks_the_page(text):
    at = go(start(), "fixture")
    at.text_input(key="fixture.guarded_cell.guard_gap").set_value("0.5" + text)
    at.run()
    assert not at.exception, at.exception
    shown = errors(at)
    drawn = any(getattr(e, "type", None) == "image" for e in at.main)
    assert shown or drawn, "neither a message nor a drawing"
    for e in at.error:
        assert not _unescaped_markup(e.value), e.value
