"""Hostile inputs, each run in a fresh process with a time limit, counted by outcome.

    python benchmarks/hostile_inputs.py [--limit 60]

Families (issue 15): exponent chains and huge numbers in unit text, huge polygons, many
conductors, files a measurement names outside its folder, formula and control-character
prefixes in readings, outputs over links and FIFOs, the largest readings table, entry
numbers past SQLite's integers. Each case says what a correct program does (refuse or
accept); the outcome is one of refused, accepted, crashed (exit 3, a traceback or an
exception that is not a capbench refusal), hung (over the time limit) or silently wrong
(accepted where it must refuse, or refused where it must accept). Prints the counts and
every case that is not as expected. The page's boxes are exercised by
tests/test_page_text.py and ``make fuzz``; the 139 documented refusals by
tests/test_refusals.py.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "quillfield"

FIXTURE = 'schema = "capbench-fixture/1"\nkind = "parallel_discs"\nradius = "{r}"\ngap = "2 mm"\n'


def _polygon(n: int) -> str:
    import math

    pts = []
    for k in range(n):
        th = 2 * math.pi * k / n
        r = 10 * (1 + 0.1 * math.sin(40 * th))
        pts.append(f'["{30 + r * math.cos(th):.6f} mm", "{30 + r * math.sin(th):.6f} mm"]')
    return (
        'schema = "capbench-fixture/1"\nkind = "custom"\nsymmetry = "planar"\nhigh = "a"\n'
        'low = "b"\n[[conductor]]\nname = "a"\nshape = "polygon"\n'
        f"points = [{', '.join(pts)}]\n"
        '[[conductor]]\nname = "b"\nshape = "rect"\nx0 = "0 mm"\ny0 = "0 mm"\n'
        'x1 = "5 mm"\ny1 = "5 mm"\n'
    )


def _many(n: int) -> str:
    rows = []
    for i in range(n):
        x, y = 10 * (i % 32), 10 * (i // 32)
        rows.append(
            f'[[conductor]]\nname = "c{i}"\nshape = "rect"\nx0 = "{x} mm"\ny0 = "{y} mm"\n'
            f'x1 = "{x + 4} mm"\ny1 = "{y + 4} mm"\n'
        )
    head = (
        'schema = "capbench-fixture/1"\nkind = "custom"\nsymmetry = "planar"\nhigh = "c0"\n'
        'low = "c1"\n'
    )
    return head + "".join(rows)


def cases(tmp: Path) -> list[tuple[str, str, str]]:
    """(id, expected 'refuse' | 'accept', python code run in a fresh process)."""
    out = []
    load = "from capbench import files; files.fixture_from_toml(open({p!r}).read(), 'f.toml')"
    for i, r in enumerate(
        [
            "25 mm**9**9**9",
            "25 mm**9**9",
            "25 mm^9^9^9",
            "25 (mm**9)**9",
            "25 ((((mm))))",
            "25 mm**99",
            "1e309 mm",
            "9" * 5000 + " mm",
            "1" * 20000 + "." + "1" * 20000 + "e mm",
            "25 mm" + "**2" * 40,
        ]
    ):
        p = tmp / f"unit{i}.toml"
        p.write_text(FIXTURE.format(r=r))
        out.append((f"unit-text-{i}", "refuse", load.format(p=str(p))))
    p = tmp / "unit-ok.toml"
    p.write_text(FIXTURE.format(r="25 mm"))
    out.append(("unit-text-plain", "accept", load.format(p=str(p))))
    for n, want in ((10_000, "accept"), (10_001, "refuse")):
        p = tmp / f"poly{n}.toml"
        p.write_text(_polygon(n))
        out.append((f"polygon-{n}-points", want, load.format(p=str(p))))
    p = tmp / "many.toml"
    p.write_text(_many(1000))
    out.append(
        (
            "1000-conductors-checked",
            "accept",
            textwrap.dedent(f"""
                from capbench import files, mesh
                fx = files.fixture_from_toml(open({str(p)!r}).read(), 'f.toml')
                g = fx.geometry
                mesh._check_resolvable(mesh.planar_graph(g, mesh.domain_box(g)), g.size())
            """),
        )
    )
    # files a measurement names, outside its folder
    lab = tmp / "lab"
    lab.mkdir()
    secret = tmp / "secret.csv"
    secret.write_text("root:x:0:0:root:/root:/bin/bash\n")
    text = (DEMO / "qf-pe-03.toml").read_text()
    for i, name in enumerate(["../secret.csv", str(secret), "link.csv"]):
        if name == "link.csv":
            (lab / "link.csv").symlink_to(secret)
        m = lab / f"m{i}.toml"
        m.write_text(text.replace('readings = "qf-pe-03_readings.csv"', f"readings = {name!r}"))
        out.append(
            (
                f"readings-outside-{i}",
                "refuse",
                f"from capbench import files; files.read_measurement({str(m)!r})",
            )
        )
    # formula and control-character prefixes in a readings cell
    for i, cell in enumerate(["=1+1", "\u200b=1+1", "\ufeff+20.6", "\x0c-3", "@SUM(A1)"]):
        csv = tmp / f"cells{i}.csv"
        csv.write_text(f"frequency [Hz],capacitance [pF]\n1000,{cell}\n", encoding="utf-8")
        out.append(
            (
                f"readings-cell-{i}",
                "refuse",
                f"from capbench import files; files.read_readings({str(csv)!r})",
            )
        )
    big = tmp / "big.csv"
    big.write_text(
        "frequency [Hz],capacitance [pF],dissipation factor\n"
        + "\n".join(f"{1000 + i % 5},{20.6 + (i % 7) * 1e-3:.4f},0.0009" for i in range(100_000))
    )
    out.append(
        (
            "readings-100000-rows",
            "accept",
            f"from capbench import files; files.read_readings({str(big)!r})",
        )
    )
    bigger = tmp / "bigger.csv"
    bigger.write_text("frequency [Hz],capacitance [pF]\n" + "\n".join(["1000,20.6"] * 100_001))
    out.append(
        (
            "readings-100001-rows",
            "refuse",
            f"from capbench import files; files.read_readings({str(bigger)!r})",
        )
    )
    # outputs over a link and a FIFO
    target = tmp / "keep.txt"
    target.write_text("keep")
    (tmp / "out-link.toml").symlink_to(target)
    os.mkfifo(tmp / "out-fifo.toml")
    for name in ("out-link.toml", "out-fifo.toml"):
        out.append(
            (
                f"write-over-{name}",
                "refuse",
                "import capbench as cb; from capbench import files; files.write_fixture("
                f"cb.parallel_discs('10 mm', '1 mm'), {str(tmp / name)!r})",
            )
        )
    out.append(
        (
            "log-show-huge-id",
            "refuse",
            "import sys; from capbench.cli import main; "
            f"sys.exit(main(['log', 'show', '9' * 30, '--log-file', {str(tmp / 'l.db')!r}]))",
        )
    )
    return out


def run(code: str, limit: float) -> tuple[str, float, str]:
    wrapper = (
        "import sys\n"
        "try:\n"
        + textwrap.indent(code.strip(), "    ")
        + "\nexcept SystemExit as e:\n    sys.exit(1 if e.code in (1, 2) else 3)\n"
        "except Exception as e:\n"
        "    from capbench.errors import CapbenchError\n"
        "    print(type(e).__name__, str(e)[:200], file=sys.stderr)\n"
        "    sys.exit(1 if isinstance(e, CapbenchError) else 3)\n"
    )
    t0 = time.perf_counter()
    try:
        p = subprocess.run(
            [sys.executable, "-c", wrapper], capture_output=True, text=True, timeout=limit
        )
    except subprocess.TimeoutExpired:
        return "hung", time.perf_counter() - t0, ""
    s = time.perf_counter() - t0
    if p.returncode == 0:
        return "accepted", s, ""
    if p.returncode == 1 and "Traceback" not in p.stderr:
        return "refused", s, p.stderr.strip()[:160]
    return "crashed", s, p.stderr.strip()[-300:]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--limit", type=float, default=60.0, help="seconds before a case is hung")
    args = ap.parse_args(argv)
    counts = dict.fromkeys(("refused", "accepted", "crashed", "hung", "silently wrong"), 0)
    slowest = (0.0, "")
    with tempfile.TemporaryDirectory() as tmp:
        all_cases = cases(Path(tmp))
        for cid, want, code in all_cases:
            outcome, s, detail = run(code, args.limit)
            counts[outcome] += 1
            wrong = (want == "refuse" and outcome == "accepted") or (
                want == "accept" and outcome == "refused"
            )
            if wrong:
                counts["silently wrong"] += 1
            if wrong or outcome in ("crashed", "hung"):
                print(f"NOT AS EXPECTED {cid}: wanted {want}, got {outcome} ({detail})")
            slowest = max(slowest, (s, cid))
    print(
        f"{len(all_cases)} hostile inputs tried: "
        + ", ".join(f"{v} {k}" for k, v in counts.items())
        + f"; slowest {slowest[1]} at {slowest[0]:.1f} s (limit {args.limit:g} s)"
    )
    return 0 if counts["crashed"] + counts["hung"] + counts["silently wrong"] == 0 else 1


if __name__ == "__main__":
    raise SystemExit(main())
