"""The ``capbench`` command: solve, extract, guard, compare, sweep, report, log.

Run ``capbench --help`` (or ``python -m capbench --help``). With no arguments the
command solves the demo fixture (an invented lab's guarded cell) and prints the result.

Every sub-command reads capbench's own files (``capbench-fixture/1`` and
``capbench-measurement/1`` TOML, readings CSV; see :mod:`capbench.files`), prints a
table for people or, with ``--json``, one JSON document on standard output for scripts.
Progress goes to standard error, as a bar on a terminal (or with ``--progress``).

Exit codes: 0 success; 1 bad input (a file, a value or a reading; one line on standard
error naming the file, key and value, no traceback); 2 usage (unknown option, missing
argument); 3 an internal error of capbench (please report it; set ``CAPBENCH_DEBUG=1``
for the traceback); 130 interrupted.

The command wires files to library calls; no physics lives here.
"""

from __future__ import annotations

import argparse
import contextlib
import csv
import io
import json
import math
import os
import re
import sys
import warnings
from pathlib import Path
from typing import Any, TextIO

from .cautions import SHORT as CAUTION_LINE

EXIT_OK = 0
EXIT_INPUT = 1
EXIT_USAGE = 2
EXIT_INTERNAL = 3


_EPILOG = """\
examples:
  capbench solve fixtures/quillfield/bench3-guarded-cell.toml
  capbench extract fixtures/quillfield/qf-pe-03.toml --log
  capbench guard fixtures/quillfield/bench3-guarded-cell.toml --thickness 1mm 2mm --eps 2.1 4.5
  capbench compare fixtures/quillfield/bench3-guarded-cell.toml --measured "18.05 pF"
  capbench sweep fixtures/quillfield/bench3-guarded-cell.toml --vary guard_width=4mm,8mm
  capbench report fixtures/quillfield/qf-pe-03.toml --output out/qf-pe-03
  capbench log list

exit codes: 0 done, 1 bad input, 2 usage, 3 internal error.
Caution: bench fixtures can carry high voltage; follow local codes and licensed practice.
"""


class _Parser(argparse.ArgumentParser):
    """argparse with capbench's exit code for usage errors (2, as argparse's own)."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        self.exit(EXIT_USAGE, f"capbench: usage error: {message}\n")


def _rtol(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number (e.g. 1e-6)") from None
    if not (math.isfinite(value) and 1e-9 <= value <= 1e-2):
        raise argparse.ArgumentTypeError(f"{text} is outside the valid range 1e-9 to 1e-2")
    return value


def _time_budget(text: str) -> float:
    from .validate import LIMITS

    lo, hi, _unit = LIMITS["time"]
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"{text!r} is not a number of seconds (e.g. 120)"
        ) from None
    if not (math.isfinite(value) and lo < value <= hi):
        raise argparse.ArgumentTypeError(
            f"{text} s is outside the valid range {lo:g} s to {hi:g} s (and must be > 0)"
        )
    return value


def _max_dofs(text: str) -> int:
    from .validate import LIMITS

    lo, hi, _unit = LIMITS["dofs"]
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number (e.g. 3000000)") from None
    if not lo <= value <= hi:
        raise argparse.ArgumentTypeError(f"{text} is outside the valid range {lo:.0f} to {hi:.0f}")
    return value


def _workers(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if not 1 <= value <= 256:
        raise argparse.ArgumentTypeError(f"{text} is outside the valid range 1 to 256")
    return value


def _entry_id(text: str) -> int:
    """A bench-log entry number: a whole number the log can hold (SQLite's integers are
    64-bit; a longer one made 'log show' fail with OverflowError, exit 3)."""
    if not re.fullmatch(r"\s*\d{1,19}\s*", text) or int(text) > 2**63 - 1:
        raise argparse.ArgumentTypeError(
            f"{text[:40]!r} is not an entry number; give a whole number from 1 to "
            f"{2**63 - 1} (see 'capbench log list')"
        )
    return int(text)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``capbench`` command."""
    from .options import RELAXATION_CRITERIA, RELAXATION_MODELS, SOLVERS

    p = _Parser(
        prog="capbench",
        description=(
            "Permittivity and loss from capacitance readings, with a finite-element "
            "correction for the fixture's real field and a GUM uncertainty budget. "
            "Without a command: solve the demo fixture."
        ),
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    from ._version import __version__

    p.add_argument("--version", action="version", version=f"capbench {__version__}")
    sub = p.add_subparsers(dest="command", metavar="command", parser_class=_Parser)

    def common(sp, rtol: float = 1e-6, progress: bool = False):
        sp.add_argument("--json", action="store_true", help="print one JSON document")
        sp.add_argument(
            "--rtol",
            type=_rtol,
            default=rtol,
            help=f"relative accuracy of the field solves (default {rtol:g})",
        )
        if progress:
            sp.add_argument(
                "--progress",
                action="store_true",
                help="show progress on stderr even when it is not a terminal",
            )

    def log_file(sp):
        sp.add_argument(
            "--log-file",
            metavar="PATH",
            help="bench log database (default $CAPBENCH_LOG or the user data directory)",
        )

    def allow_outside(sp):
        sp.add_argument(
            "--allow-outside",
            action="store_true",
            help="let the measurement name fixture or readings files outside its folder",
        )

    sp = sub.add_parser(
        "solve",
        help="solve a fixture file: terminal capacitance with its error bar",
        description="Solve a fixture's field; print its terminal capacitance, the "
        "estimated relative error and the Maxwell capacitance matrix.",
    )
    sp.add_argument("fixture", help="a capbench-fixture/1 TOML file")
    common(sp, progress=True)
    sp.add_argument(
        "--time-budget",
        type=_time_budget,
        default=None,
        metavar="SECONDS",
        help="stop with an error before a refinement step that would exceed this (default 120)",
    )
    sp.add_argument(
        "--max-dofs",
        type=_max_dofs,
        default=None,
        metavar="N",
        help="largest number of unknowns a refinement step may use (default 3000000)",
    )
    sp.add_argument(
        "--solver",
        choices=SOLVERS,
        default="auto",
        help="how refined meshes are solved: sparse factorisation, multigrid CG (time in "
        "proportion to the unknowns, less memory), or auto (default: multigrid from 2 "
        "million unknowns, where it is faster)",
    )

    sp = sub.add_parser(
        "extract",
        help="permittivity and loss from a measurement file, with the budget",
        description="Extract eps', tan delta and their expanded uncertainties from a "
        "capbench-measurement/1 file and its readings, with the field correction.",
    )
    sp.add_argument("measurement", help="a capbench-measurement/1 TOML file")
    common(sp)
    sp.add_argument(
        "--closed-form", action="store_true", help="the parallel-plate formula only (no FEM)"
    )
    sp.add_argument("--budget", action="store_true", help="print every uncertainty budget")
    sp.add_argument("--log", action="store_true", help="record the result in the bench log")
    sp.add_argument(
        "--operator", help="who measured (default: the measurement file's [lab] operator)"
    )
    allow_outside(sp)
    log_file(sp)

    sp = sub.add_parser(
        "relax",
        help="fit relaxation models to a measurement's eps*(f), with a Kramers-Kronig check",
        description="Extract eps' and eps'' at every frequency of a measurement file, then "
        "fit Debye, Cole-Cole, Cole-Davidson and Havriliak-Negami models (with and without "
        "a DC conductivity, optionally an electrode-polarisation term) by generalised least "
        "squares over the spectrum's covariance; rank them by BIC (or AIC), test the "
        "spectrum's Kramers-Kronig consistency, and optionally cross-check the parameters' "
        "uncertainties by Monte Carlo. A [leads] table in the file is corrected first.",
    )
    sp.add_argument("measurement", help="a capbench-measurement/1 TOML file with loss readings")
    sp.add_argument(
        "--model",
        default="auto",
        choices=("auto", *RELAXATION_MODELS),
        help="one model, or auto: every model, ranked (default)",
    )
    sp.add_argument(
        "--criterion", choices=RELAXATION_CRITERIA, default="bic", help="ranking (default bic)"
    )
    sp.add_argument(
        "--conductivity",
        choices=("auto", "with", "without"),
        default="auto",
        help="DC conductivity term: try both (auto, default), always, never",
    )
    sp.add_argument(
        "--electrode",
        choices=("auto", "with", "without"),
        default="without",
        help="electrode-polarisation term at low frequency: try both, always, never (default)",
    )
    sp.add_argument(
        "--monte-carlo",
        type=int,
        default=0,
        metavar="N",
        help="cross-check the best fit's uncertainties with N refits (20 to 100000; 0: none)",
    )
    sp.add_argument("--seed", type=int, help="seed of the Monte Carlo check (repeatable runs)")
    sp.add_argument(
        "--plot",
        metavar="STEM",
        help="write STEM-spectrum.png, STEM-arc.png and STEM-residuals.png",
    )
    sp.add_argument(
        "--closed-form", action="store_true", help="the parallel-plate formula only (no FEM)"
    )
    allow_outside(sp)
    common(sp)

    sp = sub.add_parser(
        "guard",
        help="check a guarded cell's guard ring against a target edge error",
        description="Effective area of the guarded electrode from the field, against the "
        "standard's d1 + B g formula, over specimen thicknesses and permittivities.",
    )
    sp.add_argument("fixture", help="a guarded_cell fixture file")
    sp.add_argument(
        "--thickness", nargs="+", metavar="T", help="specimen thicknesses (default the file's)"
    )
    sp.add_argument(
        "--eps", nargs="+", type=float, metavar="EPS", help="specimen eps_r (default the file's)"
    )
    sp.add_argument(
        "--target", type=float, default=1e-3, help="largest |error in eps_r| (default 1e-3)"
    )
    sp.add_argument(
        "--basis", choices=("formula", "bare"), default="formula", help="area the lab uses"
    )
    sp.add_argument("--workers", type=_workers, help="processes (1: in this process)")
    common(sp, progress=True)

    sp = sub.add_parser(
        "compare",
        help="split a reading into ideal, fringing, stray, leads and residual",
        description="Measured against ideal: where a capacitance reading comes from.",
    )
    sp.add_argument("fixture", help="a guarded_cell or parallel_discs fixture file")
    sp.add_argument("--measured", required=True, help='the reading, e.g. "18.05 pF"')
    sp.add_argument("--stray", help="known stray capacitance")
    sp.add_argument("--leads", help="known lead capacitance")
    sp.add_argument("--unguarded-measured", help="a reading of the unguarded twin")
    common(sp)

    sp = sub.add_parser(
        "sweep",
        help="solve a fixture over a grid of its dimensions",
        description="Vary builder arguments of a fixture file and solve every combination "
        "(in parallel).",
    )
    sp.add_argument("fixture", help="a capbench-fixture/1 file (made by a builder)")
    sp.add_argument(
        "--vary",
        action="append",
        required=True,
        metavar="NAME=V1,V2,...",
        help='an argument and its values, e.g. guard_width="4 mm,8 mm" (repeatable)',
    )
    sp.add_argument("--workers", type=_workers, help="processes (1: in this process)")
    common(sp, rtol=1e-5, progress=True)

    sp = sub.add_parser(
        "report",
        help="write an HTML, PDF and JSON report of a measurement or a fixture",
        description="Write a report (fixture drawing, inputs, method, result with "
        "expanded uncertainty, budget, field plot, version, references).",
    )
    sp.add_argument("file", help="a measurement file (or a fixture file: a solve report)")
    sp.add_argument(
        "--output", "-o", metavar="STEM", help="path without extension (default beside the file)"
    )
    sp.add_argument(
        "--format",
        default="html,pdf,json",
        help="comma-separated: html, pdf, json (default all three)",
    )
    sp.add_argument("--log", action="store_true", help="record the result in the bench log")
    sp.add_argument(
        "--operator", help="who measured (default: the measurement file's [lab] operator)"
    )
    sp.add_argument(
        "--relaxation",
        action="store_true",
        help="add the relaxation model of the measurement's eps*(f) (as capbench relax "
        "ranks it by BIC), with its figures",
    )
    allow_outside(sp)
    log_file(sp)
    common(sp)

    sp = sub.add_parser("log", help="list, show or export bench-log entries")
    log_sub = sp.add_subparsers(
        dest="action", metavar="action", required=True, parser_class=_Parser
    )
    lp = log_sub.add_parser("list", help="the latest entries")
    lp.add_argument("--specimen", help="only this specimen id")
    lp.add_argument("--limit", type=_workers, default=50, help="at most this many (1-256)")
    lp = log_sub.add_parser("show", help="one entry with its readings and results")
    lp.add_argument("id", type=_entry_id, help="entry number (from 'capbench log list')")
    lp = log_sub.add_parser("export", help="every result row as CSV")
    lp.add_argument("csv", help="the CSV file to write ('-' for standard output)")
    lp.add_argument("--specimen", help="only this specimen id")
    for lp in log_sub.choices.values():
        lp.add_argument("--json", action="store_true", help="print one JSON document")
        log_file(lp)

    sub.add_parser("demo", help="solve the demo fixture (what 'capbench' alone does)")
    return p


# --------------------------------------------------------------------------- output


class _Out:
    def __init__(self, stdout: TextIO, stderr: TextIO, as_json: bool, progress: bool):
        self.stdout = stdout
        self.stderr = stderr
        self.as_json = as_json
        self.progress = progress or getattr(stderr, "isatty", lambda: False)()
        self.cautioned = False

    def json(self, data: Any) -> None:
        if isinstance(data, dict) and "caution" not in data:
            data = {**data, "caution": CAUTION_LINE}  # every document carries it
        self.stdout.write(json.dumps(data, indent=2, allow_nan=False, default=str) + "\n")
        self.cautioned = True

    def line(self, text: str = "") -> None:
        self.stdout.write(text + "\n")
        if text == CAUTION_LINE:
            self.cautioned = True

    def status(self, text: str) -> None:
        if self.progress:
            self.stderr.write(text + "\n")
            self.stderr.flush()

    def bar(self, label: str):
        if not self.progress:
            return False
        from .sweep import TerminalBar

        return TerminalBar(label, stream=self.stderr)

    def solve_progress(self):
        if not self.progress:
            return None
        stream = self.stderr

        def report(fraction: float, message: str) -> None:
            end = "\n" if fraction >= 1 else ""
            stream.write(f"\rsolving {100 * fraction:5.1f} % {message:<32}{end}")
            stream.flush()

        return report


def _si(q) -> dict:
    return {"value": float(q.magnitude), "unit": f"{q.units:~}"}


# --------------------------------------------------------------------------- commands


def _cmd_solve(args, out: _Out) -> int:
    from .capacitance import solve
    from .errors import SolverError
    from .files import read_fixture

    fx = read_fixture(args.fixture)
    budgets = {}
    if args.time_budget is not None:
        budgets["time_budget"] = args.time_budget
    if args.max_dofs is not None:
        budgets["max_dofs"] = args.max_dofs
    try:
        sol = solve(
            fx, rtol=args.rtol, progress=out.solve_progress(), solver=args.solver, **budgets
        )
    except SolverError as exc:
        raise SolverError(
            f"{exc} (command-line options: --rtol, --time-budget, --max-dofs)", **exc.details
        ) from None
    c = sol.capacitance
    if out.as_json:
        out.json(
            {
                "fixture": fx.name,
                "kind": fx.kind,
                "connection": fx.connection,
                "capacitance": _si(c),
                "rel_error": sol.rel_error,
                "dissipation_factor": sol.dissipation_factor,
                "terminals": list(sol.terminals),
                "matrix": {
                    "value": [[float(x) for x in row] for row in sol.matrix.magnitude.real],
                    "unit": sol.unit,
                },
                "n_dofs": sol.n_dofs,
                "seconds": sol.seconds,
                "solver": sol.rungs[-1].solver,
            }
        )
        return EXIT_OK
    unit = "pF" if sol.unit == "F" else "pF/m"
    out.line(f"{fx.name} ({fx.kind}, {fx.connection} capacitance {fx.high} to {fx.low})")
    out.line(
        f"  capacitance  {c.to(unit).magnitude:.9g} {unit}  (estimated relative error "
        f"{sol.rel_error:.1e})"
    )
    if sol.dissipation_factor:
        out.line(f"  dissipation factor  {sol.dissipation_factor:.6g}")
    how = " (last step by multigrid)" if sol.rungs[-1].solver == "multigrid" else ""
    out.line(f"  {sol.n_dofs:,} unknowns, {sol.seconds:.2f} s{how}")
    names = sol.terminals
    m = sol.matrix.to(unit).magnitude.real
    out.line(f"  Maxwell matrix ({unit}):")
    out.line(f"    {'':<12}" + "".join(f"{n:>14}" for n in names))
    for n, row in zip(names, m, strict=True):
        out.line(f"    {n:<12}" + "".join(f"{x:>14.6g}" for x in row))
    out.line(CAUTION_LINE)
    return EXIT_OK


# the optional columns of a logged reading `log show` prints where a row has them
_LOGGED_READING_EXTRAS = (
    ("empty_capacitance", "empty", lambda x: f"{x * 1e12:.6g} pF"),
    ("empty_dissipation", "empty D", lambda x: f"{x:.6g}"),
    ("loaded_spacing", "s1", lambda x: f"{x * 1e3:.6g} mm"),
    ("empty_spacing", "s2", lambda x: f"{x * 1e3:.6g} mm"),
    ("fluid", "fluid", lambda x: f"{x}"),
)


def _cmd_relax(args, out: _Out) -> int:
    from . import dispersion as dsp
    from .files import read_measurement

    m = read_measurement(args.measurement, allow_outside=args.allow_outside)
    out.status(f"extracting {m.specimen_id} ({m.method}, {len(m.frequencies)} frequencies)")
    res = m.extract(rtol=args.rtol, fem=not args.closed_form)
    spectrum = dsp.Spectrum.from_extraction(res)
    out.status("fitting relaxation models")
    terms = {"auto": None, "with": True, "without": False}
    rel = dsp.analyse(
        spectrum,
        args.model,
        conductivity=terms[args.conductivity],
        electrode=terms[args.electrode],
        criterion=args.criterion,
        monte_carlo_draws=args.monte_carlo,
        seed=args.seed,
    )
    plots = _relaxation_plots(rel, args.plot) if args.plot else []
    if out.as_json:
        out.json(
            {
                "specimen": m.specimen_id,
                "method": res.method,
                "leads": None if m.leads is None else m.leads.text(),
                **rel.content(),
                "plots": plots,
            }
        )
        return EXIT_OK
    out.line(f"specimen {m.specimen_id}: {len(res.points)} frequencies, {res.method}")
    if m.leads is not None and m.leads.active:
        out.line(m.leads.text())
    out.line(rel.text())
    for path in plots:
        out.line(f"wrote {path}")
    out.line(CAUTION_LINE)
    return EXIT_OK


def _relaxation_plots(rel: Any, stem: str) -> list[str]:
    """The relaxation figures as STEM-<name>.png (regular files only, written whole)."""
    from .dispersion.figures import FIGURES
    from .files import _atomic_write

    paths = []
    for name, _caption, func in FIGURES:
        fig = func(rel)
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=110)
        fig.clear()
        path = Path(f"{stem}-{name.removeprefix('relaxation-')}.png")
        _atomic_write(path, buf.getvalue())
        paths.append(str(path))
    return paths


def _fluid_caution(m: Any) -> str:
    """The hazards of the test liquids a measurement names (two-fluid method)."""
    from .cautions import for_fluids

    options = dict(m.method_options)
    names = [str(options.get(k, "")) for k in ("fluid1", "fluid2")]
    return for_fluids(n.split()[0] for n in names if n)


def _open_log(args):
    from .store import BenchLog

    return BenchLog(args.log_file)


def _cmd_extract(args, out: _Out) -> int:
    from . import report
    from .files import read_measurement

    m = read_measurement(args.measurement, allow_outside=args.allow_outside)
    out.status(f"extracting {m.specimen_id} ({m.method}, {len(m.frequencies)} frequencies)")
    res = m.extract(rtol=args.rtol, fem=not args.closed_form)
    data = report.results(res)
    entry = None
    if args.log:
        with _open_log(args) as log:
            entry = log.log_extraction(m, res, operator=args.operator)
    if out.as_json:
        out.json(
            {
                "specimen": m.specimen_id,
                "method": res.method,
                "fem": res.fem,
                "rel_error": res.rel_error,
                "solves": res.solves,
                "points": data["points"],
                "budgets": [
                    {"name": b["name"], "u": b["u"], "U": b["U"], "k": b["k"], "dof": b["dof"]}
                    for b in report._budgets(res, 0.95)
                ],
                "log_entry": entry,
            }
        )
        return EXIT_OK
    where = ", ".join(x for x in (m.lab, m.bench) if x)
    what = f"specimen {m.specimen_id}" + (f" ({m.description})" if m.description else "")
    out.line(f"{where}: {what}" if where else what)  # no empty parts (", :", "()")
    out.line(f"fixture: {m.fixture.name}; method: {res.method}")
    out.line(data["statement"])
    fluids = _fluid_caution(m)
    if fluids:
        out.line(fluids)
    out.line()
    out.line(res.table())
    if args.budget:
        for p in res.points:
            out.line()
            out.line(p.budget.table())
            if p.loss_budget is not None:
                out.line()
                out.line(p.loss_budget.table())
    if entry is not None:
        out.line(f"logged as entry {entry}")
    out.line(CAUTION_LINE)
    return EXIT_OK


def _guarded(fx, command: str):
    from .errors import InputError

    if fx.kind != "guarded_cell":
        raise InputError(
            f"{command} needs a guarded_cell fixture file; this one is kind {fx.kind!r}",
            value=fx.kind,
        )
    return fx.param_dict


def _cmd_guard(args, out: _Out) -> int:
    from .files import read_fixture
    from .guard import guard_check

    fx = read_fixture(args.fixture)
    p = _guarded(fx, "guard")
    from . import validate

    eps = [validate.check(e, "eps_r", f"--eps value {i + 1}") for i, e in enumerate(args.eps or [])]
    eps = eps or [complex(fx.geometry.permittivities()["specimen"]).real]
    thick = [
        validate.length(t, f"--thickness value {i + 1}") for i, t in enumerate(args.thickness or [])
    ]
    thick = thick or [p["specimen_thickness"]]
    # options at their "absent" value (0 or None) stay out: guard_check range-checks lengths
    keys = ("unguarded_radius", "specimen_radius", "electrode_thickness", "edge_radius", "shield")
    cell = {k: p[k] for k in keys if p.get(k)}
    chk = guard_check(
        p["electrode_radius"],
        p["guard_gap"],
        p["guard_width"],
        thick,
        eps,
        target=args.target,
        basis=args.basis,
        rtol=args.rtol,
        max_workers=args.workers,
        progress=out.bar("guard check"),
        **cell,
    )
    if out.as_json:
        out.json(
            {
                "passed": chk.passed,
                "verdict": chk.verdict(),
                "target": chk.target,
                "basis": chk.basis,
                "worst_error": chk.worst_error,
                "cases": [
                    {
                        "thickness_m": c.thickness,
                        "eps_r": c.eps_r,
                        "capacitance_f": c.capacitance,
                        "area_m2": c.area,
                        "diameter_m": c.diameter,
                        "formula_diameter_m": c.formula_diameter,
                        "error_formula": c.error_formula,
                        "error_bare": c.error_bare,
                        "rel_error": c.rel_error,
                    }
                    for c in chk.cases
                ],
            }
        )
        return EXIT_OK
    out.line(chk.verdict())
    out.line(chk.table())
    out.line(CAUTION_LINE)
    return EXIT_OK


def _cmd_compare(args, out: _Out) -> int:
    from .compare import measured_vs_ideal
    from .files import read_fixture

    fx = read_fixture(args.fixture)
    cmp = measured_vs_ideal(
        fx,
        args.measured,
        stray=args.stray,
        leads=args.leads,
        unguarded_measured=args.unguarded_measured,
        rtol=args.rtol,
    )
    if out.as_json:

        def parts(b):
            if b is None:
                return None
            return {
                "label": b.label,
                "ideal_f": b.ideal,
                "fringing_f": b.fringing,
                "stray_f": b.stray,
                "leads_f": b.leads,
                "measured_f": b.measured,
                "residual_f": b.residual,
                "eps_shift": b.eps_shift,
                "standard_f": b.standard,
                "standard_name": b.standard_name,
                "fem_rel_error": b.fem_rel_error,
            }

        out.json(
            {
                "fixture": cmp.name,
                "eps_r": cmp.eps_r,
                "thickness_m": cmp.thickness,
                "diameter_m": cmp.diameter,
                "guarded": parts(cmp.guarded),
                "unguarded": parts(cmp.unguarded),
            }
        )
        return EXIT_OK
    out.line(cmp.text())
    return EXIT_OK


def _parse_vary(items: list[str], fx) -> dict[str, list[str]]:
    from .errors import InputError

    axes: dict[str, list[str]] = {}
    valid = sorted(k for k, v in fx.params if k != "specimen")
    for item in items:
        name, sep, values = item.partition("=")
        name = name.strip()
        vals = [v.strip() for v in values.split(",") if v.strip()]
        if not sep or not vals:
            raise InputError(
                f"--vary {item!r}: write NAME=V1,V2,... e.g. guard_width=4mm,8mm", value=item
            )
        if name not in valid:
            raise InputError(
                f"--vary {name!r} is not an argument of {fx.kind}; valid: {valid}", value=name
            )
        if len(vals) > 64:
            raise InputError(f"--vary {name}: {len(vals)} values; at most 64", value=len(vals))
        axes[name] = vals
    return axes


def _cmd_sweep(args, out: _Out) -> int:
    from . import sweep
    from .errors import InputError
    from .files import read_fixture

    fx = read_fixture(args.fixture)
    if fx.kind == "custom":
        raise InputError("sweep needs a fixture made by a builder (kind is 'custom')")
    axes = _parse_vary(args.vary, fx)
    base = {k: v for k, v in fx.params}
    base.update(axes)
    specs = sweep.grid(fx.kind, **base)
    if len(specs) > 512:
        raise InputError(f"the grid has {len(specs)} designs; at most 512", value=len(specs))
    results = sweep.solve_grid(
        specs, rtol=args.rtol, max_workers=args.workers, progress=out.bar("sweep")
    )
    rows = []
    for r in results:
        rows.append(
            {
                "params": {k: r.param(k) for k in axes},
                "capacitance": _si(r.capacitance),
                "rel_error": r.rel_error,
                "n_dofs": r.n_dofs,
            }
        )
    if out.as_json:
        out.json({"fixture": fx.name, "kind": fx.kind, "varied": list(axes), "results": rows})
        return EXIT_OK
    unit = "pF" if results[0].capacitance.check("[capacitance]") else "pF/m"
    out.line(f"{fx.name}: {len(results)} designs")
    out.line("".join(f"{k:>18}" for k in axes) + f"{'C (' + unit + ')':>18}{'rel. error':>12}")
    for r in results:
        vals = "".join(f"{r.param(k) * 1e3:>15.6g} mm" for k in axes)
        out.line(f"{vals}{r.capacitance.to(unit).magnitude:>18.9g}{r.rel_error:>12.1e}")
    return EXIT_OK


def _schema_of(path: str) -> str | None:
    from .files import MAX_TOML_BYTES, _decode, _parse_toml, _read_bytes

    p = Path(path)
    data = _parse_toml(_decode(_read_bytes(p, MAX_TOML_BYTES, "file"), p.name), p.name)
    schema = data.get("schema")
    return schema if isinstance(schema, str) else None


def _cmd_report(args, out: _Out) -> int:
    from . import report
    from .errors import InputError
    from .files import FIXTURE_SCHEMA, SCHEMA, read_fixture, read_measurement

    formats = tuple(f.strip().lower() for f in args.format.split(",") if f.strip())
    bad = [f for f in formats if f not in ("html", "pdf", "json")]
    if bad or not formats:
        raise InputError(
            f"--format {args.format!r}; valid: html, pdf, json (comma-separated)",
            value=args.format,
        )
    schema = _schema_of(args.file)
    stem = args.output or str(Path(args.file).with_suffix(""))
    entry = None
    if schema == SCHEMA:
        m = read_measurement(args.file, allow_outside=args.allow_outside)
        out.status(f"extracting {m.specimen_id} ({m.method})")
        res = m.extract(rtol=args.rtol)
        rel = None
        if args.relaxation:
            from . import dispersion as dsp

            out.status("fitting relaxation models")
            rel = dsp.analyse(dsp.Spectrum.from_extraction(res))
        out.status("solving the fixture at the result for the field plot")
        rep = report.build(
            measurement=m,
            extraction=res,
            solution=res.solution(),
            operator=args.operator or None,
            relaxation=rel,
        )
        if args.log:
            with _open_log(args) as log:
                entry = log.log_extraction(
                    m, res, operator=args.operator, kind="report", note=f"report {stem}"
                )
    elif schema == FIXTURE_SCHEMA:
        from .capacitance import solve

        if args.relaxation:
            raise InputError(
                f"--relaxation needs a measurement file with loss readings; "
                f"{Path(args.file).name} is a fixture file",
                value=args.file,
            )

        fx = read_fixture(args.file)
        sol = solve(fx, rtol=args.rtol, progress=out.solve_progress())
        rep = report.build(solution=sol, operator=args.operator or None)
        if args.log:
            with _open_log(args) as log:
                entry = log.add(
                    kind="report",
                    fixture=fx,
                    operator=args.operator,
                    source=str(args.file),
                    summary=rep.content["solution"]["terminal capacitance"],
                    payload={"solution": rep.content.get("solution")},
                )
    else:
        raise InputError(
            f"{Path(args.file).name}: schema = {schema!r}; a report needs a {SCHEMA!r} or "
            f"{FIXTURE_SCHEMA!r} file",
            value=schema,
        )
    paths = rep.write(stem, formats)
    if out.as_json:
        out.json(
            {
                "files": paths,
                "title": rep.title,
                "statement": rep.content.get("results", {}).get("statement"),
                "log_entry": entry,
            }
        )
        return EXIT_OK
    out.line(rep.title)
    if "results" in rep.content:
        out.line(rep.content["results"]["statement"])
    for path in paths:
        out.line(f"wrote {path}")
    if entry is not None:
        out.line(f"logged as entry {entry}")
    return EXIT_OK


def _cmd_log(args, out: _Out) -> int:
    from .units import frequency_text

    with _open_log(args) as log:
        if args.action == "list":
            entries = log.entries(specimen=args.specimen, limit=args.limit)
            if out.as_json:
                out.json(
                    {
                        "log": str(log.path),
                        "entries": [
                            {
                                k: v
                                for k, v in e.as_dict().items()
                                if k not in ("readings", "results")
                            }
                            for e in entries
                        ],
                    }
                )
                return EXIT_OK
            out.line(f"bench log {log.path} ({log.count()} entries)")
            out.line(
                f"{'id':>5}  {'created (UTC)':<20} {'kind':<8} {'specimen':<14} "
                f"{'operator':<14} summary"
            )
            for e in entries:
                out.line(
                    f"{e.id:>5}  {e.created[:19]:<20} {e.kind:<8} {(e.specimen_id or '-'):<14} "
                    f"{e.operator[:14]:<14} {e.summary}"
                )
            return EXIT_OK
        if args.action == "show":
            e = log.entry(args.id)
            if out.as_json:
                out.json(e.as_dict())
                return EXIT_OK
            for k, v in e.as_dict().items():
                if k not in ("readings", "results"):
                    out.line(f"{k:>17}: {v}")
            out.line(f"{len(e.readings)} readings:")
            for r in e.readings:
                d = "-" if r["dissipation"] is None else f"{r['dissipation']:.6g}"
                more = "".join(
                    f"  {label} {fmt(r[key])}"
                    for key, label, fmt in _LOGGED_READING_EXTRAS
                    if r.get(key) is not None
                )
                out.line(
                    f"  {r['frequency']:>12g} Hz  {r['capacitance'] * 1e12:>12.6g} pF  D {d}{more}"
                )
            out.line(f"{len(e.results)} results:")
            for r in e.results:
                f = "-" if r["frequency"] is None else frequency_text(r["frequency"])
                out.line(
                    f"  {f:>12}  eps' {r['eps_r']:.6g} +- {r['expanded_eps_r']:.2g} "
                    f"(k = {r['k_eps_r']:.2f})"
                )
            return EXIT_OK
        text = log.export_csv(None if args.csv == "-" else args.csv, specimen=args.specimen)
        # rows, not line breaks: a quoted cell may hold a line break of its own
        n = max(0, len(list(csv.reader(io.StringIO(text)))) - 1)
        if args.csv == "-":
            out.stdout.write(text)
            out.cautioned = True  # the CSV is data for another program: no caution in it
        elif out.as_json:
            out.json({"file": args.csv, "rows": n})
        else:
            out.line(f"wrote {n} rows to {args.csv}")
        return EXIT_OK


def demo(stdout: TextIO | None = None) -> int:
    """Solve the demo fixture (an invented lab's guarded cell) and print the result."""
    import capbench as cb

    stdout = stdout or sys.stdout
    fx = cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="0.5 mm",
        guard_width="10 mm",
        specimen_thickness="2 mm",
        specimen_eps_r=2.3,
        unguarded_radius="50 mm",
        name="Quillfield bench 3 guarded cell",
    )
    sol = cb.solve(fx, rtol=1e-6)
    c = sol.capacitance.to("pF")
    stdout.write(
        f"{fx.name}: direct capacitance {c.magnitude:.7g} pF "
        f"(estimated relative error {sol.rel_error:.1e}, {sol.n_dofs} unknowns, "
        f"{sol.seconds:.2f} s)\n"
    )
    stdout.write("Try 'capbench --help' for the commands.\n")
    stdout.write(CAUTION_LINE + "\n")
    return EXIT_OK


def _one_line(exc: BaseException) -> str:
    return " ".join(str(exc).split())


_COMMANDS = {
    "solve": _cmd_solve,
    "extract": _cmd_extract,
    "relax": _cmd_relax,
    "guard": _cmd_guard,
    "compare": _cmd_compare,
    "sweep": _cmd_sweep,
    "report": _cmd_report,
    "log": _cmd_log,
}


def main(
    argv: list[str] | None = None, stdout: TextIO | None = None, stderr: TextIO | None = None
) -> int:
    """Run the ``capbench`` command; returns its exit code (see the module docstring)."""
    argv = sys.argv[1:] if argv is None else list(argv)
    stdout = stdout or sys.stdout
    stderr = stderr or sys.stderr
    parser = build_parser()
    try:
        saved = sys.stdout, sys.stderr
        sys.stdout, sys.stderr = stdout, stderr  # argparse prints --help and usage there
        try:
            args = parser.parse_args(argv)
        finally:
            sys.stdout, sys.stderr = saved
    except SystemExit as exc:  # --help, --version (0) or a usage error (2)
        return int(exc.code or 0)
    from .errors import CapbenchError, CapbenchWarning

    def show_warning(message, category, filename, lineno, file=None, line=None):
        if issubclass(category, CapbenchWarning):
            stderr.write(f"capbench: warning: {message}\n")
        else:
            stderr.write(warnings.formatwarning(message, category, filename, lineno, line))

    with warnings.catch_warnings():
        warnings.simplefilter("default")
        warnings.showwarning = show_warning
        try:
            if args.command in (None, "demo"):
                return demo(stdout)
            out = _Out(
                stdout,
                stderr,
                getattr(args, "json", False),
                getattr(args, "progress", False),
            )
            code = _COMMANDS[args.command](args, out)
            if code == EXIT_OK and not out.cautioned and not out.as_json:
                out.line(CAUTION_LINE)  # every command's text output ends with it
            return code
        except CapbenchError as exc:
            # one line: a message quoting a file's text may hold line breaks
            stderr.write(f"capbench: error: {_one_line(exc)}\n")
            return EXIT_INPUT
        except KeyboardInterrupt:
            stderr.write("capbench: interrupted\n")
            return 130
        except BrokenPipeError:  # the reader (e.g. head) stopped reading: not an error
            with contextlib.suppress(OSError):
                sys.stdout = open(os.devnull, "w")  # no flush error at exit
            return EXIT_OK
        except OSError as exc:  # e.g. an output folder that cannot be written
            stderr.write(f"capbench: error: {_one_line(exc)}\n")
            return EXIT_INPUT
        except Exception as exc:
            if os.environ.get("CAPBENCH_DEBUG"):
                raise
            stderr.write(
                f"capbench: internal error: {type(exc).__name__}: {_one_line(exc)} (please "
                "report it; set CAPBENCH_DEBUG=1 for the traceback)\n"
            )
            return EXIT_INTERNAL
