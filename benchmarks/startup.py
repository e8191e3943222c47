"""How long the command takes to start, against a bare ``python -c "import numpy"``.

    python benchmarks/startup.py [--repeats 7]

Each command runs in a fresh process, alternating with the baseline so both see the
same machine; the medians and their ratios are printed side by side (issue 17's goal:
``capbench --help`` and ``capbench log list`` within 3x of the baseline).
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def _time(argv: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(argv, check=True, capture_output=True)
    return time.perf_counter() - t0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--repeats", type=int, default=7)
    args = ap.parse_args(argv)
    py = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        log = str(Path(tmp) / "log.db")
        cases = {
            'python -c "import numpy"': [py, "-c", "import numpy"],
            "capbench --help": [py, "-m", "capbench", "--help"],
            "capbench log list": [py, "-m", "capbench", "log", "list", "--log-file", log],
            'python -c "import capbench"': [py, "-c", "import capbench"],
            "import capbench; solve a fixture": [
                py,
                "-c",
                "import capbench as cb; cb.solve(cb.parallel_discs('10 mm', '1 mm'), rtol=1e-3)",
            ],
        }
        times: dict[str, list[float]] = {k: [] for k in cases}
        for _ in range(args.repeats):
            for name, cmd in cases.items():
                times[name].append(_time(cmd))
    base = statistics.median(times['python -c "import numpy"'])
    print(f"{'command':36s} {'median':>8s} {'x numpy':>8s}")
    for name, ts in times.items():
        m = statistics.median(ts)
        print(f"{name:36s} {m:7.3f}s {m / base:7.2f}x")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
