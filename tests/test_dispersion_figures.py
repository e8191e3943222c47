"""Figures of a relaxation analysis: Figures without pyplot, drawing what the fit says.

The band drawn must be the one Fit.band computes (itself checked against propagation by
ufloats in test_dispersion.py); the points drawn must be the spectrum's values."""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest
from matplotlib.figure import Figure

from capbench import dispersion as D
from capbench.dispersion import figures as DF
from capbench.errors import InputError

F = np.logspace(1, 7, 20)


@pytest.fixture(scope="module")
def relaxation():
    e = D.permittivity(F, 3.0, 5.0, 1e-4, alpha=0.8)
    rng = np.random.default_rng(1)
    u = 0.002 * np.abs(e)
    s = D.Spectrum.from_values(
        F, e.real + rng.normal(0, 1, F.size) * u, -e.imag + rng.normal(0, 1, F.size) * u, u, u
    )
    return D.analyse(s, models=("debye", "cole-cole"), conductivity=False)


def test_every_figure_is_a_figure(relaxation):
    for _name, caption, func in DF.FIGURES:
        fig = func(relaxation)
        assert isinstance(fig, Figure) and caption
        fig.canvas.draw()  # Agg renders it


def test_drawing_every_figure_leaves_pyplot_unimported():
    """In a fresh interpreter: another test of the suite may have imported pyplot here."""
    code = (
        "import sys, numpy as np\n"
        "from capbench import dispersion as D\n"
        "from capbench.dispersion import figures as DF\n"
        "f = np.logspace(1, 7, 12)\n"
        "e = D.permittivity(f, 3.0, 5.0, 1e-4)\n"
        "u = 0.002 * np.abs(e)\n"
        "s = D.Spectrum.from_values(f, e.real, -e.imag, u, u)\n"
        "r = D.analyse(s, models=('debye',), conductivity=False)\n"
        "for _n, _c, func in DF.FIGURES:\n"
        "    func(r).canvas.draw()\n"
        "assert 'matplotlib.pyplot' not in sys.modules, 'pyplot was imported'\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr


def test_the_spectrum_figure_draws_the_data_and_the_models_band(relaxation):
    fig = DF.spectrum_figure(relaxation)
    a1, a2 = fig.axes[:2]
    best = relaxation.best
    model = next(ln for ln in a1.get_lines() if ln.get_label() == best.label)
    fd = model.get_xdata()
    e, U_re, _ = best.band(fd)
    assert np.allclose(model.get_ydata(), e.real, rtol=1e-12)
    band = a1.collections[-1].get_paths()[0].vertices
    assert band[:, 1].max() == pytest.approx(np.max(e.real + U_re), rel=1e-9)
    drawn = np.concatenate([ln.get_ydata() for ln in a2.get_lines() if ln.get_marker() == "s"])
    assert np.allclose(np.sort(drawn), np.sort(relaxation.spectrum.eps_loss))
    assert a1.get_xscale() == "log" and a2.get_yscale() == "log"


def test_figures_draw_on_given_axes_and_refuse_wrong_ones(relaxation):
    host = Figure()
    ax = host.add_subplot()
    assert DF.arc_figure(relaxation, ax) is host
    pair = Figure().subplots(1, 2)
    assert DF.residuals_figure(relaxation, pair) is pair[0].figure
    with pytest.raises(InputError, match="two matplotlib Axes"):
        DF.spectrum_figure(relaxation, axes=[ax])
    with pytest.raises(InputError, match="Relaxation"):
        DF.spectrum_figure(relaxation.best)
