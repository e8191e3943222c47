"""Guard-ring design check for a new guarded cell at the Quillfield Dielectrics Lab.

The scenario is invented. The Quillfield Dielectrics Lab is machining a guarded cell,
bench cell QF-7, for polymer films and laminates 0.5 to 3 mm thick with relative
permittivity 2.1 (a fluoropolymer film) to 4.5 (a glass-epoxy laminate). Before cutting
metal the lab wants to know whether a 50 mm guarded electrode with a 0.3 mm gap and a
10 mm guard ring, inside a grounded can, keeps the edge error below 0.1 % when the
standard's effective-diameter formula d1 + B g is used for the area; how narrow the
guard and how wide the gap may be; how strong the field is at the electrode edges at
the 1 kV the bridge can apply; and, after a first measurement, how the reading splits
into ideal, fringing, stray and residual parts.

Everything is computed at import (a test imports this module and checks the results);
plots are saved only when run as a script::

    python examples/guard_design.py [output directory]
"""

from __future__ import annotations

import sys
from pathlib import Path

import capbench as cb

ELECTRODE_RADIUS = "25 mm"
GUARD_GAP = "0.3 mm"
GUARD_WIDTH = "10 mm"
SHIELD = ("45 mm", "9 mm")  # grounded can: radius, height (centred on the electrode plane)
THICKNESSES = ["0.5 mm", "1 mm", "3 mm"]
EPS_VALUES = [2.1, 4.5]
TARGET = 1e-3  # 0.1 % in eps_r
TEST_VOLTAGE = "1 kV"

#: the verdict on the planned design over every specimen the cell must serve
CHECK = cb.guard_check(
    ELECTRODE_RADIUS,
    GUARD_GAP,
    GUARD_WIDTH,
    THICKNESSES,
    EPS_VALUES,
    target=TARGET,
    rtol=1e-6,
    shield=SHIELD,
)

#: smallest guard ring and widest gap that still meet the target (bisection)
DESIGN = cb.guard_design(
    ELECTRODE_RADIUS,
    THICKNESSES,
    EPS_VALUES,
    guard_gap=GUARD_GAP,
    guard_width=GUARD_WIDTH,
    target=TARGET,
    width_bounds=("1 mm", "15 mm"),
    gap_bounds=("0.05 mm", "1 mm"),
    resolution="0.05 mm",
    rtol=1e-5,
    shield=SHIELD,
)

#: worst error over a grid of gap x guard width (thinnest and thickest specimen, lowest eps)
EMAP = cb.error_map(
    ELECTRODE_RADIUS,
    ["0.1 mm", "0.3 mm", "0.6 mm", "1 mm"],
    ["2 mm", "5 mm", "10 mm", "15 mm"],
    ["0.5 mm", "3 mm"],
    [2.1],
    target=TARGET,
    rtol=1e-5,
    shield=SHIELD,
)

#: the cell as it will be machined: 2 mm thick electrodes with square edges, 1 mm laminate
CELL = cb.guarded_cell(
    electrode_radius=ELECTRODE_RADIUS,
    guard_gap=GUARD_GAP,
    guard_width=GUARD_WIDTH,
    specimen_thickness="1 mm",
    specimen_eps_r=4.5,
    electrode_thickness="2 mm",
    shield=SHIELD,
    name="Quillfield QF-7",
)
SOLUTION = cb.solve(CELL, rtol=1e-6)
EDGE = cb.edge_field(SOLUTION, distance="10 um", voltage=TEST_VOLTAGE)

#: first reading on laminate specimen QF-S12 (invented): 79.10 pF, leads 0.03 pF
MEASURED_PF = 79.10
READING = cb.measured_vs_ideal(CELL, f"{MEASURED_PF} pF", leads="0.03 pF", rtol=1e-6)


def save_plots(outdir: str | Path) -> list[Path]:
    """Draw the cell, its field, the edge errors and the error map into ``outdir``."""
    from capbench import plots

    out = Path(outdir)
    out.mkdir(parents=True, exist_ok=True)
    r1 = 25e-3
    figures = {
        "qf7_cross_section.png": plots.draw_fixture(CELL),
        "qf7_potential_gap.png": plots.potential_map(
            SOLUTION, window=(r1 - 2e-3, r1 + 2.5e-3, -2.5e-3, 2e-3), field_lines=30
        ),
        "qf7_potential_cell.png": plots.potential_map(SOLUTION),
        "qf7_area_error.png": plots.area_error_plot(CHECK),
        "qf7_error_map.png": plots.error_map_plot(EMAP),
    }
    saved = []
    for name, fig in figures.items():
        path = out / name
        fig.savefig(path, dpi=120)
        saved.append(path)
    return saved


def main(argv: list[str]) -> int:
    outdir = argv[1] if len(argv) > 1 else "out/guard_design"
    print("Quillfield Dielectrics Lab, bench cell QF-7: guard-ring design check")
    print(CHECK.verdict())
    print(CHECK.table())
    print(DESIGN.summary())
    print(EDGE.caution())
    print(READING.text())
    for path in save_plots(outdir):
        print(f"saved {path}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
