"""Figures of a relaxation analysis (matplotlib, never pyplot).

Each function draws on the Axes it is given (or on a new Figure) and returns the Figure:
:func:`spectrum_figure` (eps' and eps'' against frequency with the fitted model and its
95 % band), :func:`arc_figure` (eps'' against eps', where a Debye relaxation is a
semicircle and a Cole-Cole one a depressed arc), :func:`residuals_figure` (the fit's
whitened residuals and the Kramers-Kronig z values against frequency). Error bars and
bands are expanded uncertainties U = k u for 95 % coverage with k = 1.96 (the
spectrum's covariance taken as known).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from ..errors import InputError
from .analysis import Relaxation

DATA = "#1d3557"
MODEL = "#e76f51"
BAND = "#f4a261"
REAL_MARK, LOSS_MARK = "o", "s"


def _k() -> float:
    from ..uncertainty import coverage_factor

    return coverage_factor(float("inf"), 0.95)


def _check(relaxation: Any) -> Relaxation:
    if not isinstance(relaxation, Relaxation):
        raise InputError(
            f"relaxation = {type(relaxation).__name__}; give a capbench.dispersion.Relaxation "
            "(from analyse())",
            value=type(relaxation).__name__,
        )
    return relaxation


def _axes_pair(axes: Any, size: tuple[float, float]) -> tuple[Figure, list[Axes]]:
    if axes is None:
        fig = Figure(figsize=size, layout="constrained")
        return fig, list(fig.subplots(1, 2))
    axes = list(np.atleast_1d(axes))
    if len(axes) != 2 or not all(isinstance(a, Axes) for a in axes):
        raise InputError("axes: give two matplotlib Axes (eps' and eps''), or None")
    return axes[0].figure, axes


def _one_axes(ax: Any, size: tuple[float, float]) -> tuple[Figure, Axes]:
    if ax is None:
        fig = Figure(figsize=size, layout="constrained")
        return fig, fig.add_subplot()
    if not isinstance(ax, Axes):
        raise InputError(f"ax = {ax!r} is not a matplotlib Axes; pass one or None")
    return ax.figure, ax


def _dense(f: np.ndarray) -> np.ndarray:
    lo, hi = np.log10(f[0]), np.log10(f[-1])
    pad = 0.1 * max(hi - lo, 0.5)
    return np.logspace(lo - pad, hi + pad, 300)


def spectrum_figure(relaxation: Relaxation, axes: Any = None) -> Figure:
    """eps'(f) and eps''(f): the measured points with error bars, the chosen model and
    its 95 % band (from the parameters' covariance)."""
    r = _check(relaxation)
    s, best = r.spectrum, r.best
    fig, (a1, a2) = _axes_pair(axes, (10.0, 4.2))
    k = _k()
    fd = _dense(s.frequency)
    e, U_re, U_lo = best.band(fd)
    a1.errorbar(
        s.frequency,
        s.eps_real,
        yerr=k * s.u_real,
        fmt=REAL_MARK,
        color=DATA,
        capsize=2,
        label="measured",
    )
    a1.plot(fd, e.real, color=MODEL, label=best.label)
    a1.fill_between(
        fd, e.real - U_re, e.real + U_re, color=BAND, alpha=0.35, lw=0, label="model, 95 % band"
    )
    a1.set_ylabel("eps'")
    loss = -e.imag
    a2.errorbar(
        s.frequency,
        s.eps_loss,
        yerr=k * s.u_loss,
        fmt=LOSS_MARK,
        color=DATA,
        capsize=2,
        label="measured",
    )
    a2.plot(fd, loss, color=MODEL, label=best.label)
    a2.fill_between(fd, loss - U_lo, loss + U_lo, color=BAND, alpha=0.35, lw=0)
    a2.set_ylabel("eps''")
    if np.all(s.eps_loss > 0) and np.all(loss > 0):
        a2.set_yscale("log")
    for ax in (a1, a2):
        ax.set_xscale("log")
        ax.set_xlabel("frequency (Hz)")
        ax.grid(True, alpha=0.3, which="both")
    a1.legend(fontsize=8)
    fig.suptitle(
        f"Relaxation model by {r.criterion.upper()}: {best.label} "
        f"(error bars and band: U, k = {k:.2f})",
        fontsize=10,
    )
    return fig


def arc_figure(relaxation: Relaxation, ax: Axes | None = None) -> Figure:
    """eps'' against eps' (equal axes): the measured points with error bars and the
    chosen model over and beyond the band."""
    r = _check(relaxation)
    s, best = r.spectrum, r.best
    fig, ax = _one_axes(ax, (5.5, 4.5))
    k = _k()
    e = best.permittivity(_dense(s.frequency))
    ax.errorbar(
        s.eps_real,
        s.eps_loss,
        xerr=k * s.u_real,
        yerr=k * s.u_loss,
        fmt=REAL_MARK,
        color=DATA,
        capsize=2,
        label="measured",
    )
    ax.plot(e.real, -e.imag, color=MODEL, label=best.label)
    ax.set_xlabel("eps'")
    ax.set_ylabel("eps''")
    ax.set_aspect("equal", adjustable="datalim")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8)
    ax.set_title("eps'' against eps'", fontsize=10)
    return fig


def residuals_figure(relaxation: Relaxation, axes: Any = None) -> Figure:
    """Left: the chosen fit's whitened residuals (model - data, in standard uncertainties
    after the covariance is taken out); right: the Kramers-Kronig residuals over their
    own standard uncertainties, with the flagging limit."""
    r = _check(relaxation)
    s, best = r.spectrum, r.best
    fig, (a1, a2) = _axes_pair(axes, (10.0, 3.6))
    n = s.size
    f = s.frequency
    a1.axhline(0, color="0.5", lw=0.8)
    a1.plot(f, best.residuals[:n], REAL_MARK, color=DATA, label="eps'")
    a1.plot(f, best.residuals[n:], LOSS_MARK, color=MODEL, mfc="none", label="eps''")
    a1.set_ylabel("whitened residual")
    a1.set_title(f"fit: chi2/dof = {best.chi2 / max(best.dof, 1):.3g}", fontsize=10)
    a1.legend(fontsize=8)
    if r.kk is not None:
        lim = r.kk.limit
        a2.axhspan(-lim, lim, color="0.9", lw=0)
        a2.plot(f, r.kk.z[:n], REAL_MARK, color=DATA, label="eps'")
        a2.plot(f, r.kk.z[n:], LOSS_MARK, color=MODEL, mfc="none", label="eps''")
        a2.set_title(
            "Kramers-Kronig: " + ("consistent" if r.kk.consistent else "NOT consistent"),
            fontsize=10,
        )
        a2.legend(fontsize=8)
    else:
        a2.text(
            0.5,
            0.5,
            "Kramers-Kronig check:\nneeds at least 5 frequencies",
            ha="center",
            va="center",
            transform=a2.transAxes,
        )
    a2.set_ylabel("residual / u")
    for ax in (a1, a2):
        ax.set_xscale("log")
        ax.set_xlabel("frequency (Hz)")
        ax.grid(True, alpha=0.3)
    return fig


#: the figures of a relaxation analysis for reports and the page: name, caption, function
FIGURES = (
    (
        "relaxation-spectrum",
        "eps' and eps'' against frequency with the fitted relaxation model and its 95 % band",
        spectrum_figure,
    ),
    ("relaxation-arc", "eps'' against eps' with the fitted model", arc_figure),
    (
        "relaxation-residuals",
        "Residuals of the fit (whitened) and of the Kramers-Kronig test (in u)",
        residuals_figure,
    ),
)
