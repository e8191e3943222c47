"""Permittivity and loss of a specimen, with its GUM uncertainty budget (invented demo).

The Quillfield Dielectrics Lab (an invented lab) measured specimen QF-PE-03, a
polyethylene sheet, between contacting electrodes in the guarded cell of bench 3, at five
frequencies (fixtures/quillfield/). This example reads the measurement, builds the
uncertain inputs (type A: repeated micrometer and bridge readings; type B: the
micrometer's calibration, the bridge's accuracy specification, the electrode's drawing
tolerance), extracts eps' and tan delta with the finite-element correction of the cell's
real field, and cross-checks the linear uncertainty at 1 kHz by Monte Carlo (JCGM 101).

Everything is computed at import (``RESULT``, ``MONTE_CARLO``, ...); running the file
prints the tables and budgets and saves a plot to out/:

    python examples/extract_permittivity.py

Caution: bridges and test cells can carry high voltage; follow your local electrical
safety codes and licensed practice for any energised measurement.
"""

from __future__ import annotations

from pathlib import Path

import capbench as cb
from capbench import extract, files
from capbench import uncertainty as unc

ROOT = Path(__file__).resolve().parents[1]
MEASUREMENT = files.read_measurement(ROOT / "fixtures" / "quillfield" / "qf-pe-03.toml")


def thickness_input(m: files.Measurement):
    """Mean of the micrometer readings (type A) plus the micrometer's calibration
    error (type B, rectangular)."""
    readings = [cb.Q_(t * 1e3, "mm") for t in m.thickness_readings]
    mean = unc.type_a(readings, "specimen thickness (micrometer readings)")
    calibration = unc.type_b(
        cb.Q_(0.0, "mm"),
        half_width=cb.Q_(m.micrometer_half_width * 1e3, "mm"),
        name="micrometer calibration",
    )
    return mean + calibration


def bridge_inputs(m: files.Measurement):
    """Per frequency: mean of the repeated readings (type A) plus the bridge's accuracy
    specification (type B, rectangular; taken as independent between frequencies)."""
    caps, losses = [], []
    for f in m.frequencies:
        rows = m.at(f)
        c = unc.type_a([cb.Q_(r.capacitance * 1e12, "pF") for r in rows], f"C readings {f:g} Hz")
        caps.append(m.capacitance_accuracy.apply(c, f"bridge C accuracy {f:g} Hz"))
        d = unc.type_a([r.dissipation for r in rows], f"D readings {f:g} Hz")
        losses.append(m.dissipation_accuracy.apply(d, f"bridge D accuracy {f:g} Hz"))
    return caps, losses


def dimension_inputs(m: files.Measurement):
    """The fixture's dimensions with their drawing tolerances (type B, rectangular)."""
    params = m.fixture.param_dict
    return {
        name: unc.type_b(
            cb.Q_(params[name] * 1e3, "mm"),
            half_width=cb.Q_(half * 1e3, "mm"),
            name=f"{name.replace('_', ' ')} (drawing tolerance)",
        )
        for name, half in m.tolerances
    }


THICKNESS = thickness_input(MEASUREMENT)
CAPACITANCE, DISSIPATION = bridge_inputs(MEASUREMENT)
FREQUENCIES = MEASUREMENT.frequencies
RESULT = extract.contacting(
    MEASUREMENT.fixture,
    CAPACITANCE,
    dissipation=DISSIPATION,
    frequency=list(FREQUENCIES),
    thickness=THICKNESS,
    dimensions=dimension_inputs(MEASUREMENT),
    rtol=1e-6,
)
#: index of the 1 kHz point, the one reported with its full budget
AT_1KHZ = FREQUENCIES.index(1e3)
MONTE_CARLO = RESULT.monte_carlo(AT_1KHZ, rng=20240314)


def report() -> str:
    m = MEASUREMENT
    p = RESULT[AT_1KHZ]
    U, k = p.budget.expanded(p=0.95)
    Ut, kt = p.loss_budget.expanded(p=0.95)
    lines = [
        f"{m.lab}, {m.bench}, {m.date}: specimen {m.specimen_id} ({m.description})",
        f"fixture: {m.fixture.name}; method: {RESULT.method}; temperature "
        f"{m.temperature:g} degC +- {m.temperature_uncertainty:g} K (no temperature "
        "coefficient applied)",
        f"thickness {THICKNESS:.5f~P} (mean of {len(m.thickness_readings)} micrometer readings"
        " with calibration)",
        f"{RESULT.solves} field solves in {RESULT.seconds:.1f} s, largest FEM relative error "
        f"{RESULT.rel_error:.1e}",
        "",
        RESULT.table(),
        "",
        f"At 1 kHz: eps_r' = {p.eps_r.n:.5f} +- {U:.5f} (k = {k:.2f}, 95 %), "
        f"tan delta = {p.tan_delta.n:.3e} +- {Ut:.1e} (k = {kt:.2f}, 95 %); the FEM "
        f"correction to the parallel-plate formula is {100 * p.correction:+.3f} % in eps_r' "
        f"and {100 * p.loss_correction:+.2f} % in tan delta",
        "",
        p.budget.table(),
        "",
        p.loss_budget.table(),
        "",
        MONTE_CARLO.summary(),
        "",
        "Caution: test cells carry high voltage; follow local codes and licensed practice.",
    ]
    return "\n".join(lines)


def main() -> None:
    print(report())
    out = ROOT / "out"
    out.mkdir(exist_ok=True)
    fig = RESULT.plot()
    fig.savefig(out / "qf-pe-03_permittivity.png", dpi=120)
    print(f"\nplot: {out / 'qf-pe-03_permittivity.png'}")


if __name__ == "__main__":
    main()
