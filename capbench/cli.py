"""The ``capbench`` command. (Sub-commands grow here; see DEVELOPERS.md.)"""

from __future__ import annotations

import sys


def demo() -> int:
    """Solve the demo fixture (an invented lab's guarded cell) and print the result."""
    import capbench as cb

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
    print(
        f"{fx.name}: direct capacitance {c.magnitude:.7g} pF "
        f"(estimated relative error {sol.rel_error:.1e}, {sol.n_dofs} unknowns, "
        f"{sol.seconds:.2f} s)"
    )
    print(
        "Caution: bench fixtures can carry high voltage; follow local codes and licensed practice."
    )
    return 0


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    return demo()
