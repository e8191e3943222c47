"""From eps*(f) to a material model (invented demo): relaxation fits with correlated
uncertainties, a Kramers-Kronig check and the leads' correction.

The Quillfield Dielectrics Lab (an invented lab) measured specimen QF-PU-11, a cast
polyurethane sheet, between contacting electrodes in the guarded cell of bench 3 at 16
frequencies from 20 Hz to 3 MHz, through leads whose short and open readings are in the
measurement file's [leads] table (fixtures/quillfield/qf-pu-11.toml). This example

1. reads the file; the leads' series inductance and resistance and their open
   capacitance are removed from every reading, with their uncertainties in the budget;
2. extracts eps' and eps'' with the finite-element correction of the cell's field; the
   points share the thickness, the area and the leads, so their errors are correlated;
3. fits the relaxation models by generalised least squares over that full covariance,
   ranks them by BIC, checks Kramers-Kronig consistency and cross-checks the best fit's
   uncertainties by Monte Carlo;
4. shows the same fit from plain arrays, for a spectrum measured elsewhere.

Everything is computed at import (``RELAXATION``, ``BEST``, ...); running the file prints
the analysis and saves its figures to out/:

    python examples/relaxation_fit.py

Caution: bridges and test cells can carry high voltage; follow your local electrical
safety codes and licensed practice for any energised measurement.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np

from capbench import dispersion, files
from capbench.errors import CapbenchWarning

ROOT = Path(__file__).resolve().parents[1]
MEASUREMENT = files.read_measurement(ROOT / "fixtures" / "quillfield" / "qf-pu-11.toml")

with warnings.catch_warnings(record=True) as WARNINGS:  # the leads' warning at 3 MHz
    warnings.simplefilter("always", CapbenchWarning)
    EXTRACTION = MEASUREMENT.extract(rtol=1e-6)

SPECTRUM = dispersion.Spectrum.from_extraction(EXTRACTION)
RELAXATION = dispersion.analyse(SPECTRUM, monte_carlo_draws=200, seed=11)
BEST = RELAXATION.best

# the same model fitted to plain arrays (values with independent standard uncertainties)
PLAIN = dispersion.fit(
    dispersion.Spectrum.from_values(
        SPECTRUM.frequency, SPECTRUM.eps_real, SPECTRUM.eps_loss, SPECTRUM.u_real, SPECTRUM.u_loss
    ),
    BEST.model,
    conductivity=BEST.conductivity,
)


def main() -> None:
    from capbench.dispersion.figures import FIGURES

    print(MEASUREMENT.leads.text())
    for w in WARNINGS:
        print(f"warning: {w.message}")
    print(RELAXATION.text())
    print()
    print("The same model weighted by the diagonal alone (correlations dropped):")
    print(PLAIN.table())
    out = ROOT / "out"
    out.mkdir(exist_ok=True)
    for name, _caption, func in FIGURES:
        fig = func(RELAXATION)
        fig.savefig(out / f"qf-pu-11-{name}.png", dpi=110)
        print(f"saved {out / f'qf-pu-11-{name}.png'}")
    print(f"eps_s / eps_inf = {np.divide(BEST.eps_static, BEST.params['eps_inf'])}")


if __name__ == "__main__":
    main()
