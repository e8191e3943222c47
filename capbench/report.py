"""Measurement reports: one content, three forms (self-contained HTML, PDF, JSON).

:func:`build` gathers what a quality manager asks of a report — who measured what,
where and when; the fixture (a drawing and its dimensions); the inputs; the method;
the result with its expanded uncertainty; the uncertainty budget; the field plot; the
software version; the references used; and the safety caution — into a
:class:`Report`. :meth:`Report.html` gives one HTML file with its plots embedded (PNG,
base64; nothing is fetched when it opens), :meth:`Report.pdf` a PDF made with
matplotlib's PDF backend (text as TrueType, so it can be searched and extracted), and
:meth:`Report.json` the same content as data.

No physics lives here: the numbers come from :mod:`capbench.extract`,
:mod:`capbench.capacitance`, :mod:`capbench.guard` and :mod:`capbench.compare`.

Expanded uncertainties are U = k u_c with k from the t distribution with the
Welch-Satterthwaite effective degrees of freedom for a coverage probability of 95 %
(JCGM 100:2008, 6.2 and G.4), the choice stated beside each result.
"""

from __future__ import annotations

import base64
import datetime
import html
import io
import json
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from .cautions import ELECTRICAL
from .errors import InputError
from .geometry import Fixture

#: lines of monospaced text on one PDF page
PDF_LINES_PER_PAGE = 78

CAUTION = ELECTRICAL

REFERENCES = {
    "gum": "JCGM 100:2008, Evaluation of measurement data - Guide to the expression of "
    "uncertainty in measurement (GUM): type A and B evaluation (4), propagation (5), "
    "expanded uncertainty (6), Welch-Satterthwaite (G.4).",
    "mc": "JCGM 101:2008, Evaluation of measurement data - Supplement 1 to the GUM - "
    "Propagation of distributions using a Monte Carlo method.",
    "d150": "ASTM D150, Standard Test Methods for AC Loss Characteristics and Permittivity "
    "(Dielectric Constant) of Solid Electrical Insulation (contacting, air-gap and "
    "guarded-electrode methods; effective diameter d1 + B g).",
    "iec": "IEC 62631-2-1, Dielectric and resistive properties of solid insulating "
    "materials - Relative permittivity and dissipation factor - Technical frequencies.",
    "codata": "CODATA 2022 recommended values: vacuum permittivity eps0 = 8.8541878188e-12 F/m.",
    "relax": "Relaxation functions: P. Debye, Polar Molecules (1929); K. S. Cole and R. H. "
    "Cole, J. Chem. Phys. 9, 341 (1941); D. W. Davidson and R. H. Cole, J. Chem. Phys. 19, "
    "1484 (1951); S. Havriliak and S. Negami, Polymer 8, 161 (1967). Model choice: H. Akaike, "
    "IEEE Trans. Autom. Control 19, 716 (1974); G. Schwarz, Ann. Stat. 6, 461 (1978).",
    "kk": "B. A. Boukamp, A linear Kronig-Kramers transform test for immittance data "
    "validation, J. Electrochem. Soc. 142, 1885 (1995).",
    "fem": "capbench field engine: axisymmetric or planar finite elements of degree 3-4 "
    "on graded meshes with an exactly mapped exterior; error-controlled terminal "
    "capacitance (see the capbench README and DEVELOPERS.md).",
}

METHOD_TEXT = {
    "contacting": (
        "Contacting electrodes. The closed parallel-plate form is eps* = C*(1 - jD) t / "
        "(eps0 A), A the (effective) electrode area; capbench instead finds the complex "
        "permittivity eps* for which the finite-element model of the fixture reproduces "
        "the reading, so fringing, the guard gap and the specimen's extent are included."
    ),
    "air_gap": (
        "Air-gap (non-contacting) method: readings with and without the specimen at a "
        "fixed electrode spacing. Closed form eps_r = t / (t - s (1 - C0/C)); capbench "
        "solves the fixture with and without the specimen instead."
    ),
    "liquid": (
        "Liquid cell: readings of the empty and the filled cell. Closed form eps_r = "
        "e0 (Cf - Cp) / (Ce - Cp); capbench solves the cell's field and estimates the stray "
        "capacitance from the empty reading."
    ),
    "micrometer": "Micrometer-electrode re-set method (equal capacitance).",
    "two_fluid": "Two-fluid method: four readings in two fluids of known permittivity.",
}


# --------------------------------------------------------------------------- helpers


def _fmt_u(value: float, U: float) -> tuple[str, str]:
    """value and U rounded to two significant digits of U (GUM 7.2.6)."""
    if not (math.isfinite(U) and U > 0):
        return f"{value:.7g}", "0"
    decimals = max(0, 1 - math.floor(math.log10(U)))
    if decimals > 12:
        return f"{value:.4e}", f"{U:.2g}"
    return f"{value:.{decimals}f}", f"{U:.{decimals}f}"


def _hz(f: float | None) -> str:
    from .units import frequency_text

    return "-" if f is None else frequency_text(f)


def _param_text(key: str, value: Any) -> str:
    from .files import _builder_kind

    if value is None:
        return "-"
    how = _builder_kind(key)
    if how == "specimen":
        return f"thickness {value.thickness * 1e3:.6g} mm, eps_r {value.eps_r}"
    if how == "shield":
        return f"radius {value[0]}, height {value[1]}"
    if how in ("count", "eps"):
        return f"{value}"
    if isinstance(value, float):
        return f"{value * 1e3:.6g} mm"
    return str(value)


def _figure_png(fig: Any, dpi: int = 110) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


# --------------------------------------------------------------------------- report


@dataclass(frozen=True, eq=False)
class Report:
    """A report's content. Make one with :func:`build`.

    ``content``: the report as plain data (what :meth:`json` writes, without the
    figures); ``figures``: PNG images by name, in order.
    """

    content: dict
    figures: tuple[tuple[str, str, bytes], ...] = field(repr=False)  # name, caption, PNG

    @property
    def title(self) -> str:
        return self.content["title"]

    # ------------------------------------------------------------------ JSON

    def json(self, figures: bool = False) -> str:
        """The report as JSON (figures as base64 PNG when ``figures``)."""
        data = dict(self.content)
        data["figures"] = [
            {"name": n, "caption": c, **({"png_base64": _b64(p)} if figures else {})}
            for n, c, p in self.figures
        ]
        return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False)

    # ------------------------------------------------------------------ text

    def text_sections(self) -> list[tuple[str, list[str]]]:
        """The report as (heading, lines of text) sections, as in the PDF."""
        c = self.content
        out: list[tuple[str, list[str]]] = []
        out.append(("Summary", [f"{k}: {v}" for k, v in c["meta"].items()]))
        if c.get("results"):
            lines = [c["results"]["statement"], ""]
            lines += _columns(c["results"]["header"], c["results"]["rows"])
            out.append(("Result", lines))
        if c.get("relaxation"):
            out.append(("Relaxation model", _relaxation_lines(c["relaxation"])))
        if c.get("solution"):
            s = c["solution"]
            out.append(("Field solution", [f"{k}: {v}" for k, v in s.items()]))
        out.append(("Caution", _wrap(c["caution"])))
        for b in c.get("budgets", []):
            head, rows, summary = budget_table(b, input_width=34)
            out.append((f"Uncertainty budget: {b['name']}", [*_columns(head, rows), summary]))
        if c.get("fixture"):
            f = c["fixture"]
            lines = [f"{f['name']} ({f['kind']}, {f['connection']} capacitance)"]
            lines += _columns(["parameter", "value"], [[k, v] for k, v in f["parameters"]])
            out.append(("Fixture", lines))
        if c.get("inputs"):
            lines = []
            for k, v in c["inputs"].items():
                if k == "readings":
                    lines.append("")
                    lines += _columns(v["header"], v["rows"])
                else:
                    lines.append(f"{k}: {v}")
            out.append(("Inputs", lines))
        if c.get("guard"):
            out.append(("Guard check", [c["guard"]["verdict"], *c["guard"]["table"]]))
        if c.get("comparison"):
            out.append(("Measured against ideal", c["comparison"]["text"]))
        out.append(("Method", _wrap(c["method"])))
        refs = []
        for i, r in enumerate(c["references"], start=1):
            refs += _wrap(f"[{i}] {r}")
        out.append(("References", refs))
        out.append(("Software", [f"capbench {c['software']['capbench']}", c["created"]]))
        return out

    # ------------------------------------------------------------------ HTML

    def html(self) -> str:
        """One self-contained HTML page (plots embedded as base64 PNG; no external
        resource is referenced)."""
        c = self.content
        e = html.escape
        parts = [
            "<!DOCTYPE html>",
            '<html lang="en"><head><meta charset="utf-8">',
            f"<title>{e(c['title'])}</title>",
            f"<style>{_CSS}</style></head><body>",
            f"<h1>{e(c['title'])}</h1>",
            _html_kv(c["meta"]),
            f'<p class="caution">{e(c["caution"])}</p>',
        ]
        if c.get("results"):
            r = c["results"]
            parts += [
                "<h2>Result</h2>",
                f'<p class="result">{e(r["statement"])}</p>',
                _html_table(r["header"], r["rows"], "results"),
            ]
        if c.get("relaxation"):
            r = c["relaxation"]
            parts += [
                "<h2>Relaxation model</h2>",
                f'<p class="result">{e(r["statement"])}</p>',
                _html_table(r["parameter_table"]["header"], r["parameter_table"]["rows"], "relax"),
                _html_table(r["ranking_table"]["header"], r["ranking_table"]["rows"], "relax"),
                *(f"<p>{e(t)}</p>" for t in r["checks"]),
            ]
        if c.get("solution"):
            parts += ["<h2>Field solution</h2>", _html_kv(c["solution"])]
        for name, caption, png in self.figures:
            parts.append(
                f'<figure id="fig-{e(name)}"><img alt="{e(caption)}" '
                f'src="data:image/png;base64,{_b64(png)}"><figcaption>{e(caption)}'
                "</figcaption></figure>"
            )
        if c.get("budgets"):
            parts.append("<h2>Uncertainty budgets</h2>")
            for b in c["budgets"]:
                rows = [
                    [
                        r["input"],
                        _unit(f"{r['value']:.7g}", r),
                        _unit(f"{r['u']:.3g}", r),
                        r["distribution"],
                        r["type"],
                        r["dof"],
                        f"{r['sensitivity']:.4g}",
                        f"{r['contribution']:.3g}",
                        f"{100 * r['share']:.2f} %",
                    ]
                    for r in b["rows"]
                ]
                parts += [
                    f"<h3>{e(b['name'])}</h3>",
                    _html_table(
                        [
                            "input",
                            "value",
                            "u(x)",
                            "distribution",
                            "type",
                            "dof",
                            "c",
                            "c u(x)",
                            "share",
                        ],
                        rows,
                        "budget",
                    ),
                    f"<p>u<sub>c</sub> = {b['u']:.3g}; effective degrees of freedom "
                    f"{e(str(b['dof']))}; U = {b['U']:.3g} (k = {b['k']:.3f}, "
                    f"{e(b['coverage'])})</p>",
                ]
        if c.get("fixture"):
            f = c["fixture"]
            parts += [
                "<h2>Fixture</h2>",
                f"<p>{e(f['name'])} ({e(f['kind'])}, {e(f['connection'])} capacitance)</p>",
                _html_table(["parameter", "value"], [list(p) for p in f["parameters"]], "fixture"),
            ]
        if c.get("inputs"):
            parts.append("<h2>Inputs</h2>")
            plain = {k: v for k, v in c["inputs"].items() if k != "readings"}
            parts.append(_html_kv(plain))
            if "readings" in c["inputs"]:
                rd = c["inputs"]["readings"]
                parts.append(_html_table(rd["header"], rd["rows"], "readings"))
        if c.get("guard"):
            g = c["guard"]
            parts += [
                "<h2>Guard check</h2>",
                f"<p>{e(g['verdict'])}</p>",
                "<pre>" + e("\n".join(g["table"])) + "</pre>",
            ]
        if c.get("comparison"):
            parts += [
                "<h2>Measured against ideal</h2>",
                "<pre>" + e("\n".join(c["comparison"]["text"])) + "</pre>",
            ]
        parts += ["<h2>Method</h2>", f"<p>{e(c['method'])}</p>", "<h2>References</h2><ol>"]
        parts += [f"<li>{e(r)}</li>" for r in c["references"]]
        parts += [
            "</ol>",
            f'<p class="small">capbench {e(c["software"]["capbench"])}; report made '
            f"{e(c['created'])}</p>",
            "</body></html>",
        ]
        return "\n".join(parts) + "\n"

    # ------------------------------------------------------------------ PDF

    def _detail_sections(self) -> list[tuple[str, list[str]]]:
        skip = ("Summary", "Result", "Field solution", "Caution")
        return [
            (h, lines)
            for h, lines in self.text_sections()
            if h not in skip and not h.startswith("Uncertainty budget")
        ]

    def pdf(self) -> bytes:
        """The report as a typeset PDF (A4, reportlab): the result statement whole on
        the first page, tables sized to the text area, figures scaled to its width."""
        from .report_pdf import render

        return render(self)

    def _figure_page(self, Figure):
        import matplotlib.image as mpimg

        fig = Figure(figsize=(8.27, 11.69))
        n = len(self.figures)
        for i, (_name, caption, png) in enumerate(self.figures):
            ax = fig.add_axes((0.06, 1 - (i + 1) / n + 0.04, 0.88, 1 / n - 0.07))
            ax.imshow(mpimg.imread(io.BytesIO(png), format="png"))
            ax.set_axis_off()
            fig.text(0.5, 1 - (i + 1) / n + 0.02, caption, ha="center", fontsize=8)
        return fig

    def write(self, stem: str, formats: tuple[str, ...] = ("html", "pdf", "json")) -> list[str]:
        """Write ``stem.html``, ``stem.pdf`` and/or ``stem.json``; returns the paths."""
        from pathlib import Path

        from .files import _atomic_write

        out = []
        for fmt in formats:
            path = Path(f"{stem}.{fmt}")
            if fmt == "html":
                _atomic_write(path, self.html())
            elif fmt == "json":
                _atomic_write(path, self.json(figures=True))
            elif fmt == "pdf":
                _atomic_write(path, self.pdf())
            else:
                raise InputError(f"report format {fmt!r}; valid: html, pdf, json", value=fmt)
            out.append(str(path))
        return out


def _relaxation_lines(r: Mapping[str, Any]) -> list[str]:
    lines = [*_wrap(r["statement"]), ""]
    lines += _columns(r["parameter_table"]["header"], r["parameter_table"]["rows"])
    lines.append("")
    lines += _columns(r["ranking_table"]["header"], r["ranking_table"]["rows"])
    for t in r["checks"]:
        lines += ["", *_wrap(t)]
    return lines


def _b64(data: bytes) -> str:
    return base64.b64encode(data).decode("ascii")


def _wrap(text: str, width: int = 110) -> list[str]:
    import textwrap

    return textwrap.wrap(text, width) or [""]


def _columns(header: list[str], rows: list[list[Any]]) -> list[str]:
    cells = [[str(h) for h in header]] + [[str(x) for x in r] for r in rows]
    widths = [max(len(r[j]) for r in cells) for j in range(len(header))]
    lines = []
    for i, r in enumerate(cells):
        lines.append(
            "  ".join(
                x.ljust(w) if j == 0 else x.rjust(w)
                for j, (x, w) in enumerate(zip(r, widths, strict=True))
            )
        )
        if i == 0:
            lines.append("-" * len(lines[0]))
    return lines


def _paginate(sections: list[tuple[str, list[str]]]) -> list[list[tuple[str, list[str]]]]:
    pages: list[list[tuple[str, list[str]]]] = [[]]
    used = 0
    for heading, lines in sections:
        rest = list(lines)
        while True:
            room = PDF_LINES_PER_PAGE - used - 3
            if room < 4 and pages[-1]:
                pages.append([])
                used = 0
                continue
            chunk, rest = rest[:room], rest[room:]
            pages[-1].append((heading, chunk))
            used += len(chunk) + 3
            if not rest:
                break
            pages.append([])
            used = 0
            heading = f"{heading} (continued)"
    return [p for p in pages if p]


def _text_page(title: str, sections: list[tuple[str, list[str]]], Figure):
    fig = Figure(figsize=(8.27, 11.69))
    y = 0.965
    step = 0.0118
    fig.text(0.06, y, title, fontsize=11, weight="bold")
    y -= 2 * step
    for heading, lines in sections:
        fig.text(0.06, y, heading, fontsize=9.5, weight="bold")
        y -= 1.4 * step
        for line in lines:
            fig.text(0.06, y, line, fontsize=6.6, family="DejaVu Sans Mono")
            y -= step
        y -= 0.6 * step
    return fig


def _html_kv(data: Mapping[str, Any]) -> str:
    e = html.escape
    rows = "".join(f"<tr><th>{e(str(k))}</th><td>{e(str(v))}</td></tr>" for k, v in data.items())
    return f'<table class="kv">{rows}</table>'


BUDGET_HEADER = ["input", "value", "u(x)", "distribution", "type", "dof", "c", "c u(x)", "share"]


def budget_table(b: dict, input_width: int | None = None) -> tuple[list[str], list[list], str]:
    """One budget of a report's content as (header, rows of text, summary line): what the
    text and the PDF layouts both show (``input_width`` cuts long input names)."""
    rows = [
        [
            r["input"][:input_width],
            _unit(f"{r['value']:.7g}", r),
            _unit(f"{r['u']:.3g}", r),
            r["distribution"],
            r["type"],
            r["dof"],
            f"{r['sensitivity']:.3g}",
            f"{r['contribution']:.3g}",
            f"{100 * r['share']:.2f} %",
        ]
        for r in b["rows"]
    ]
    summary = (
        f"u_c = {b['u']:.3g}; effective dof = {b['dof']}; U = {b['U']:.3g} "
        f"(k = {b['k']:.3f}, {b['coverage']})"
    )
    return BUDGET_HEADER, rows, summary


def _unit(text: str, row: dict) -> str:
    """A budget cell with its input's unit (none for a dimensionless input)."""
    return f"{text} {row['unit']}" if row.get("unit") else text


def _html_table(header: list[str], rows: list[list[Any]], cls: str) -> str:
    e = html.escape
    head = "".join(f"<th>{e(str(h))}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{e(str(x))}</td>" for x in r) + "</tr>" for r in rows)
    return f'<table class="{cls}"><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>'


_CSS = (
    "body{font-family:system-ui,sans-serif;max-width:60rem;margin:2rem auto;padding:0 1rem;"
    "color:#1d2430}h1{font-size:1.5rem}h2{font-size:1.2rem;border-bottom:1px solid #ccd;"
    "margin-top:2rem}table{border-collapse:collapse;margin:.5rem 0;font-size:.85rem}"
    "td,th{border:1px solid #ccd;padding:.2rem .5rem;text-align:right}"
    "td:first-child,th:first-child{text-align:left}.kv th{text-align:left;background:#f3f4f7}"
    ".caution{background:#fff4e5;border-left:4px solid #d9822b;padding:.5rem}"
    ".result{font-size:1.05rem;font-weight:600}figure{margin:1rem 0}"
    "figure img{max-width:100%}figcaption{font-size:.85rem;color:#555}.small{font-size:.8rem}"
)


# --------------------------------------------------------------------------- build


#: what a measurement record holds: who measured what, where, with what and when
RECORD_FIELDS = ("lab", "bench", "operator", "specimen", "instrument", "date of measurement")


def build(
    fixture: Fixture | None = None,
    *,
    extraction: Any = None,
    solution: Any = None,
    measurement: Any = None,
    guard: Any = None,
    comparison: Any = None,
    relaxation: Any = None,
    title: str | None = None,
    lab: str | None = None,
    operator: str | None = None,
    specimen_id: str | None = None,
    record: Mapping[str, str] | None = None,
    notes: str = "",
    coverage: float = 0.95,
    rtol: float = 1e-6,
    field_plot: bool = True,
    created: str | None = None,
) -> Report:
    """Gather a report from results of the library.

    Parameters
    ----------
    fixture : Fixture, optional
        The fixture; default the measurement's, the extraction's or the solution's.
    extraction : Extraction, optional
        Result of :mod:`capbench.extract` (permittivity, loss, budgets); required with a
        ``measurement`` (a report lays out results, it never solves or extracts).
    solution : Solution, optional
        A solved fixture for the field plot and the solution summary (e.g.
        :meth:`capbench.extract.Extraction.solution`); without one there is no field plot.
    measurement : Measurement, optional
        The measurement file's contents: lab, operator, specimen, readings, conditions.
    guard : GuardCheck, optional
        A guard-ring check to include.
    comparison : Comparison, optional
        A measured-against-ideal breakdown to include.
    relaxation : capbench.dispersion.Relaxation, optional
        A relaxation analysis of the extraction's spectrum (:func:`capbench.dispersion.analyse`):
        the chosen model, its parameters, the ranking, the Kramers-Kronig check, figures.
    record : mapping of str to str, optional
        The measurement record as entered on the page (keys ``lab``, ``bench``,
        ``operator``, ``specimen``, ``instrument``, ``date of measurement``); a value
        given here replaces the measurement file's, an empty one leaves it out.
    title, lab, operator, specimen_id, notes : str, optional
        Override or add to the metadata.
    coverage : float
        Coverage probability of the expanded uncertainties (k from the t distribution
        with the effective degrees of freedom).
    rtol : float
        Unused (kept for callers of earlier versions; reports no longer extract).
    field_plot : bool
        Include the potential and field-line plot.
    created : str, optional
        The report's timestamp (ISO 8601); default now, UTC.

    Returns
    -------
    Report

    Raises
    ------
    InputError
        When nothing to report is given, or an argument has the wrong type.
    """
    from ._version import __version__
    from .capacitance import Solution
    from .extract import Extraction

    if not (0 < coverage < 1):
        raise InputError(
            f"coverage = {coverage!r}; valid: a probability between 0 and 1 (e.g. 0.95)",
            value=coverage,
        )
    if measurement is not None and extraction is None:
        raise InputError(
            "report.build lays out results and never solves: pass the measurement's "
            "extraction too (extraction=measurement.extract())"
        )
    for name, value, cls in (
        ("extraction", extraction, Extraction),
        ("solution", solution, Solution),
        ("fixture", fixture, Fixture),
    ):
        if value is not None and not isinstance(value, cls):
            raise InputError(
                f"{name} = {type(value).__name__}; give a capbench {cls.__name__}", value=name
            )
    if fixture is None:
        for source in (measurement, extraction, solution):
            if source is not None:
                fixture = source.fixture
                break
    if fixture is None and guard is None and comparison is None:
        raise InputError(
            "nothing to report: give a fixture, a solution, an extraction, a measurement, "
            "a guard check or a comparison"
        )
    m = measurement
    meta: dict[str, str] = {}
    meta["lab"] = lab if lab is not None else (m.lab if m else "")
    if m is not None and m.bench:
        meta["bench"] = m.bench
    meta["operator"] = operator if operator is not None else (m.operator if m else "")
    meta["specimen"] = specimen_id if specimen_id is not None else (m.specimen_id if m else "")
    if m is not None:
        meta["description"] = m.description
        meta["date of measurement"] = m.date
        meta["measurement file"] = m.path.name
    if fixture is not None:
        meta["fixture"] = fixture.name
    if extraction is not None:
        meta["method"] = extraction.method
    for key, value in (record or {}).items():
        if key not in RECORD_FIELDS:
            raise InputError(f"record field {key!r}; valid: {', '.join(RECORD_FIELDS)}", value=key)
        meta[key] = str(value).strip()
    if notes:
        meta["notes"] = notes
    meta = {k: v for k, v in meta.items() if v}
    created = created or datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds")
    what = extraction.method if extraction is not None else "field solution"
    if title is None:
        subject = meta.get("specimen") or (fixture.name if fixture else "guard design")
        title = f"capbench report: {subject} ({what.replace('_', ' ')})"
    content: dict[str, Any] = {
        "schema": "capbench-report/1",
        "title": title,
        "created": created,
        "meta": meta,
        "caution": CAUTION,
        "software": {"capbench": __version__},
    }
    refs = ["codata", "fem"]
    if extraction is not None:
        content["results"] = results(extraction, coverage)
        content["budgets"] = _budgets(extraction, coverage)
        refs = ["d150", "iec", "gum", *refs]
        method = METHOD_TEXT.get(extraction.method, extraction.method)
        method += (
            f" {extraction.solves} field solves, largest estimated relative error of a "
            f"solve {extraction.rel_error:.1e} (carried in the budget as a type B input)."
            if extraction.fem
            else " Closed form only (no field correction)."
        )
    else:
        method = (
            "Finite-element solution of the fixture's electrostatic field; the terminal "
            "capacitance with its estimated discretisation error."
        )
    if m is not None:
        content["inputs"] = _inputs(m)
    if fixture is not None:
        content["fixture"] = {
            "name": fixture.name,
            "kind": fixture.kind,
            "connection": fixture.connection,
            "parameters": [[k, _param_text(k, v)] for k, v in fixture.params if v is not None],
        }
    if guard is not None:
        from .guard import FORMULA_SOURCE

        content["guard"] = {
            "verdict": guard.verdict(),
            "passed": bool(guard.passed),
            "worst_error": guard.worst_error,
            "target": guard.target,
            "table": guard.table().splitlines(),
        }
        refs = [r for r in refs if r != "d150"] + ["d150"]
        method += f" Guard check: effective area from the field against {FORMULA_SOURCE}."
    if comparison is not None:
        from .compare import EDGE_CAPACITANCE_SOURCE

        content["comparison"] = {"text": comparison.text().splitlines()}
        method += f" Unguarded edge correction: {EDGE_CAPACITANCE_SOURCE}."
        refs = [r for r in refs if r != "d150"] + ["d150"]
    if relaxation is not None:
        content["relaxation"] = _relaxation(relaxation)
        method += (
            " Relaxation model: generalised least squares over the spectrum's full "
            f"covariance, models ranked by {relaxation.criterion.upper()}; Kramers-Kronig "
            "consistency by the linear test."
        )
        refs += ["relax", "kk"]
    content["method"] = method
    content["references"] = [REFERENCES[r] for r in dict.fromkeys(refs)]

    figures: list[tuple[str, str, bytes]] = []
    if fixture is not None:
        from .plots import draw_fixture

        figures.append(
            (
                "fixture",
                f"Cross-section of {fixture.name} (to scale, mm)",
                _png(draw_fixture, fixture),
            )
        )
    if field_plot and fixture is not None:
        sol = solution  # the caller solves (Extraction.solution()); a report never does
        if sol is not None:
            from .plots import potential_map

            content["solution"] = _solution_summary(sol)
            figures.append(
                (
                    "field",
                    "Potential (per volt applied) and field lines"
                    + (" at the extracted permittivity" if extraction is not None else ""),
                    _png(potential_map, sol),
                )
            )
    if extraction is not None:
        fig = extraction.plot()
        figures.append(
            (
                "result",
                "Result against frequency (error bars: expanded uncertainty, 95 % coverage)",
                _figure_png(fig),
            )
        )
        _close(fig)
    if relaxation is not None:
        from .dispersion.figures import FIGURES

        for name, caption, func in FIGURES:
            figures.append((name, caption, _png(func, relaxation)))
    return Report(content, tuple(figures))


def _relaxation(rel: Any) -> dict:
    """The relaxation section as plain data: the analysis's content plus its tables as
    text rows (the same in HTML, PDF and text)."""
    from .dispersion import Relaxation

    if not isinstance(rel, Relaxation):
        raise InputError(
            f"relaxation = {type(rel).__name__}; give a capbench.dispersion.Relaxation "
            "(from dispersion.analyse)",
            value=type(rel).__name__,
        )
    out = rel.content()
    out["parameter_table"] = {
        "header": list(rel.PARAMETER_HEADER),
        "rows": rel.parameter_rows(),
    }
    out["ranking_table"] = {"header": list(rel.TABLE_HEADER), "rows": rel.table_rows()}
    out["checks"] = [
        rel.kk.text() if rel.kk else "Kramers-Kronig check: needs at least 5 frequencies",
        *([rel.monte_carlo.text()] if rel.monte_carlo is not None else []),
    ]
    return out


def _png(func, obj) -> bytes:
    fig = func(obj)
    try:
        return _figure_png(fig)
    finally:
        _close(fig)


def _close(fig) -> None:
    """Release a figure's canvas memory (figures here are made without pyplot, so
    there is no pyplot registry to close them in)."""
    fig.clear()


def _solution_summary(sol: Any) -> dict[str, str]:
    c = sol.capacitance
    unit = "pF" if str(c.units) in ("farad", "F") else "pF/m"
    return {
        "terminal capacitance": f"{c.to(unit).magnitude:.7g} {unit}",
        "connection": sol.fixture.connection,
        "estimated relative error": f"{sol.rel_error:.1e}",
        "unknowns": f"{sol.n_dofs:,}",
        "solve time": f"{sol.seconds:.2f} s",
    }


def results(extraction: Any, coverage: float = 0.95) -> dict:
    """An extraction's results as plain data: a one-line statement, a table (header,
    rows of text) and ``points`` (numbers per frequency: eps_r, u_eps_r, U_eps_r, k_eps_r
    and, with loss, the same for tan_delta), U = k u with k from the t distribution."""
    loss = extraction.points[0].tan_delta is not None
    header = ["frequency", "eps'", "U(eps')", "k", "closed form", "correction"]
    if loss:
        header += ["eps''", "U(eps'')", "tan delta", "U(tan delta)", "k"]
    rows = []
    data = []
    for p in extraction.points:
        U, k = p.budget.expanded(p=coverage)
        v, Ut = _fmt_u(p.eps_r.n, U)
        row = [
            _hz(p.frequency),
            v,
            Ut,
            f"{k:.2f}",
            f"{p.eps_r_ideal.n:.5f}",
            f"{100 * p.correction:+.3f} %",
        ]
        item = {
            "frequency_hz": p.frequency,
            "eps_r": p.eps_r.n,
            "u_eps_r": p.eps_r.s,
            "U_eps_r": U,
            "k_eps_r": k,
            "eps_r_ideal": p.eps_r_ideal.n,
            "correction": p.correction,
        }
        if loss:
            Ul, kl = p.loss_budget.expanded(p=coverage)
            tv, tU = _fmt_u(p.tan_delta.n, Ul)
            U_loss = kl * p.eps_loss.s  # the k of tan delta's budget (same inputs)
            lv, lU = _fmt_u(p.eps_loss.n, U_loss)
            row += [lv, lU, tv, tU, f"{kl:.2f}"]
            item.update(
                eps_loss=p.eps_loss.n,
                u_eps_loss=p.eps_loss.s,
                U_eps_loss=U_loss,
                tan_delta=p.tan_delta.n,
                u_tan_delta=p.tan_delta.s,
                U_tan_delta=Ul,
                k_tan_delta=kl,
                tan_delta_ideal=p.tan_delta_ideal.n,
            )
        rows.append(row)
        data.append(item)
    p0 = extraction.points[0]
    U0, k0 = p0.budget.expanded(p=coverage)
    v0, u0 = _fmt_u(p0.eps_r.n, U0)
    at = f" at {_hz(p0.frequency)}" if p0.frequency is not None else ""
    statement = (
        f"Relative permittivity eps'{at} = {v0} +- {u0} (expanded uncertainty, k = "
        f"{k0:.2f}, coverage probability {100 * coverage:g} %)"
    )
    if loss:
        Ul, kl = p0.loss_budget.expanded(p=coverage)
        tv, tU = _fmt_u(p0.tan_delta.n, Ul)
        statement += f"; tan delta = {tv} +- {tU} (k = {kl:.2f})"
    if len(extraction.points) > 1:
        statement += f"; {len(extraction.points)} frequencies in the table."
    return {"statement": statement, "header": header, "rows": rows, "points": data}


def _budgets(extraction: Any, coverage: float) -> list[dict]:
    out = []
    for p in extraction.points:
        for b in (p.budget, p.loss_budget):
            if b is None:
                continue
            U, k = b.expanded(p=coverage)
            out.append(
                {
                    "name": b.name,
                    "value": b.value,
                    "u": b.u,
                    "U": U,
                    "k": k,
                    "coverage": f"{100 * coverage:g} % from the t distribution",
                    "dof": "inf" if math.isinf(b.dof) else f"{b.dof:.3g}",
                    "rows": [
                        {
                            "input": r.name,
                            "unit": r.unit,
                            "value": r.value,
                            "u": r.u,
                            "distribution": r.distribution,
                            "type": r.kind,
                            "dof": "inf" if math.isinf(r.dof) else f"{r.dof:.0f}",
                            "sensitivity": r.sensitivity,
                            "contribution": r.contribution,
                            "share": r.share,
                        }
                        for r in sorted(b.rows, key=lambda r: -r.share)
                    ],
                    "correlation_share": b.correlation_share,
                }
            )
    return out


def _inputs(m: Any) -> dict:
    t = m.thickness_readings
    out: dict[str, Any] = {
        "specimen thickness readings": ", ".join(f"{x * 1e3:.5g} mm" for x in t),
        "micrometer calibration (half-width)": f"{m.micrometer_half_width * 1e6:.4g} um",
        "instrument": m.instrument,
        "capacitance accuracy": f"{m.capacitance_accuracy.percent:g} % of reading + "
        f"{m.capacitance_accuracy.offset:~P}",
        "temperature": f"{m.temperature:g} degC +- {m.temperature_uncertainty:g} K "
        + (
            "(applied to the reference fluids' permittivities only)"
            if any(k in ("fluid1", "fluid2") for k, _v in m.method_options)
            else "(no temperature coefficient applied)"
        ),
    }
    if m.dissipation_accuracy is not None:
        d = m.dissipation_accuracy
        out["dissipation accuracy"] = f"{d.percent:g} % of reading + {d.offset:~P}"
    for name, half in m.tolerances:
        out[f"tolerance of {name}"] = f"+- {half * 1e3:.4g} mm (rectangular)"
    if getattr(m, "leads", None) is not None and m.leads.active:
        out["lead correction (removed from every reading)"] = m.leads.text()
    opts = dict(m.method_options)
    if "spacing_half_width" in opts:
        out["spacing scale accuracy (half-width)"] = (
            f"{opts['spacing_half_width'] * 1e6:.4g} um (rectangular, each of s1 and s2)"
        )
    if m.method == "two_fluid":
        for k in (1, 2):
            eps = m.fluid_eps(k, m.temperature)
            name = opts.get(f"fluid{k}")
            out[f"fluid {k}"] = (
                f"{name}, eps_r {float(eps.n):.6g} at {m.temperature:g} degC "
                "(capbench.materials, with the temperature's uncertainty)"
                if name
                else f"eps_r {float(eps):.6g} (given)"
            )
    # the columns of the table: the two first always, the others where a row has them
    columns = [
        ("fluid", "fluid", lambda x: f"{x:d}"),
        ("capacitance", "C (pF)", lambda x: f"{x * 1e12:.6g}"),
        ("dissipation", "D", lambda x: f"{x:.6g}"),
        ("empty_capacitance", "empty C (pF)", lambda x: f"{x * 1e12:.6g}"),
        ("empty_dissipation", "empty D", lambda x: f"{x:.6g}"),
        ("loaded_spacing", "s1 (mm)", lambda x: f"{x * 1e3:.6g}"),
        ("empty_spacing", "s2 (mm)", lambda x: f"{x * 1e3:.6g}"),
    ]
    shown = [
        c
        for c in columns
        if c[0] in ("capacitance", "dissipation")
        or any(getattr(r, c[0]) is not None for r in m.readings)
    ]
    header = ["line", "frequency", *(title for _key, title, _fmt in shown)]
    rows = []
    for r in m.readings:
        row = [r.line, _hz(r.frequency)]
        for key, _title, fmt in shown:
            value = getattr(r, key)
            row.append("-" if value is None else fmt(value))
        rows.append(row)
    out["readings"] = {"file": m.readings_file, "header": header, "rows": rows}
    return out


__all__ = ["CAUTION", "REFERENCES", "Report", "build", "results"]
