"""A typeset PDF of a report's content (reportlab): wrapped text, tables sized to the
text area, the result statement whole on the first page, figures scaled to the width.

The content is :class:`capbench.report.Report`'s (this module only lays it out; it never
computes). A4, 20 mm margins; every string is drawn inside the text area (tests check it
on the PDF itself).
"""

from __future__ import annotations

import io
from typing import Any
from xml.sax.saxutils import escape

#: page margins (points); A4 is 595 x 842 points
MARGIN = 56.7  # 20 mm


def _styles():
    from reportlab.lib.styles import ParagraphStyle, getSampleStyleSheet

    base = getSampleStyleSheet()
    return {
        "title": ParagraphStyle("t", parent=base["Title"], fontSize=15, leading=19, spaceAfter=6),
        "h": ParagraphStyle(
            "h", parent=base["Heading2"], fontSize=11.5, leading=14, spaceBefore=10, spaceAfter=4
        ),
        "body": ParagraphStyle("b", parent=base["BodyText"], fontSize=9, leading=11.5),
        "statement": ParagraphStyle(
            "s", parent=base["BodyText"], fontSize=10.5, leading=14, spaceBefore=4, spaceAfter=6
        ),
        "cell": ParagraphStyle("c", parent=base["BodyText"], fontSize=7.5, leading=9),
        "caution": ParagraphStyle(
            "w",
            parent=base["BodyText"],
            fontSize=8.5,
            leading=11,
            borderColor="#9a3412",
            borderWidth=0.8,
            borderPadding=5,
            backColor="#fff7ed",
            spaceBefore=8,
            spaceAfter=8,
        ),
        "mono": ParagraphStyle("m", parent=base["Code"], fontSize=6.5, leading=8),
        "caption": ParagraphStyle(
            "cap", parent=base["BodyText"], fontSize=8, leading=10, alignment=1, spaceAfter=8
        ),
    }


def _p(text: Any, style) -> Any:
    from reportlab.platypus import Paragraph

    return Paragraph(escape(str(text)), style)


def _table(header: list[str], rows: list[list[Any]], width: float, st) -> Any:
    """A table whose columns share the text width in proportion to their longest cell
    (each at least 6 % of it); every cell a wrapped paragraph, the header repeated on
    each page."""
    from reportlab.lib import colors
    from reportlab.platypus import Table, TableStyle

    cells = [[str(h) for h in header]] + [[str(x) for x in r] for r in rows]
    n = len(header)
    # a column's share: its longest cell (capped at 40 characters) and room for the
    # padding, but never less than its longest unbreakable word
    longest = [
        max(
            4,
            *(min(len(r[j]), 40) + 3 for r in cells if j < len(r)),
            *(max((len(w) for w in r[j].split()), default=0) + 3 for r in cells if j < len(r)),
        )
        for j in range(n)
    ]
    total = sum(longest)
    widths = [max(0.06, w / total) for w in longest]
    scale = width / sum(widths)
    widths = [w * scale for w in widths]
    data = [[_p(c, st["cell"]) for c in r] for r in cells]
    t = Table(data, colWidths=widths, repeatRows=1)
    t.setStyle(
        TableStyle(
            [
                ("BACKGROUND", (0, 0), (-1, 0), colors.HexColor("#e5e7eb")),
                ("LINEBELOW", (0, 0), (-1, 0), 0.6, colors.HexColor("#6b7280")),
                ("ROWBACKGROUNDS", (0, 1), (-1, -1), [colors.white, colors.HexColor("#f9fafb")]),
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LEFTPADDING", (0, 0), (-1, -1), 2.5),
                ("RIGHTPADDING", (0, 0), (-1, -1), 2.5),
                ("TOPPADDING", (0, 0), (-1, -1), 1.5),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
            ]
        )
    )
    return t


def render(report: Any) -> bytes:
    """The PDF of ``report`` (a :class:`capbench.report.Report`)."""
    from reportlab.lib.pagesizes import A4
    from reportlab.lib.units import mm
    from reportlab.platypus import Image, KeepTogether, SimpleDocTemplate, Spacer

    from .report import budget_table

    c = report.content
    st = _styles()
    buf = io.BytesIO()
    doc = SimpleDocTemplate(
        buf,
        pagesize=A4,
        leftMargin=MARGIN,
        rightMargin=MARGIN,
        topMargin=MARGIN,
        bottomMargin=MARGIN,
        title=report.title,
        author=c.get("meta", {}).get("operator", ""),
        creator=f"capbench {c['software']['capbench']}",
    )
    width = A4[0] - 2 * MARGIN
    story: list[Any] = [_p(report.title, st["title"])]
    meta = c.get("meta", {})
    if meta:
        story.append(_table(["record", ""], [[k, v] for k, v in meta.items()], width, st))
    if c.get("results"):
        r = c["results"]
        story += [_p("Result", st["h"]), _p(r["statement"], st["statement"])]
        story.append(_table(r["header"], r["rows"], width, st))
    if c.get("relaxation"):
        r = c["relaxation"]
        story += [_p("Relaxation model", st["h"]), _p(r["statement"], st["body"])]
        for key in ("parameter_table", "ranking_table"):
            story += [_table(r[key]["header"], r[key]["rows"], width, st), Spacer(1, 3)]
        story += [_p(t, st["body"]) for t in r["checks"]]
    if c.get("solution"):
        story += [_p("Field solution", st["h"])]
        story.append(
            _table(["quantity", "value"], [[k, v] for k, v in c["solution"].items()], width, st)
        )
    story.append(_p(c["caution"], st["caution"]))
    for _name, caption, png in report.figures:
        from reportlab.lib.utils import ImageReader

        w, h = ImageReader(io.BytesIO(png)).getSize()
        draw_w = min(width, w)
        draw_h = draw_w * h / w
        if draw_h > 150 * mm:
            draw_h = 150 * mm
            draw_w = draw_h * w / h
        story.append(
            KeepTogether([Image(io.BytesIO(png), draw_w, draw_h), _p(caption, st["caption"])])
        )
    for b in c.get("budgets", []):
        head, rows, summary = budget_table(b)
        story += [
            _p(f"Uncertainty budget: {b['name']}", st["h"]),
            _table(head, rows, width, st),
            Spacer(1, 3),
            _p(summary, st["body"]),
        ]
    if c.get("fixture"):
        f = c["fixture"]
        story += [
            _p("Fixture", st["h"]),
            _p(f"{f['name']} ({f['kind']}, {f['connection']} capacitance)", st["body"]),
            _table(["parameter", "value"], [list(x) for x in f["parameters"]], width, st),
        ]
    if c.get("inputs"):
        story.append(_p("Inputs", st["h"]))
        for k, v in c["inputs"].items():
            if k == "readings":
                story.append(_table(v["header"], v["rows"], width, st))
            else:
                story.append(_p(f"{k}: {v}", st["body"]))
    if c.get("guard"):
        story += [_p("Guard check", st["h"]), _p(c["guard"]["verdict"], st["body"])]
        story += [_p(line, st["mono"]) for line in c["guard"]["table"]]
    if c.get("comparison"):
        story.append(_p("Measured against ideal", st["h"]))
        story += [_p(line, st["body"]) for line in c["comparison"]["text"]]
    story += [_p("Method", st["h"]), _p(c["method"], st["body"])]
    story.append(_p("References", st["h"]))
    story += [_p(f"[{i}] {r}", st["body"]) for i, r in enumerate(c["references"], start=1)]
    story += [
        _p("Software", st["h"]),
        _p(f"capbench {c['software']['capbench']}, {c['created']}", st["body"]),
    ]
    doc.build(story)
    return buf.getvalue()
