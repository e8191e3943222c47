"""The relaxation functions: Havriliak-Negami and its special cases, with the terms a
bench spectrum adds at low frequency (DC conductivity, electrode polarisation).

eps*(w) = eps' - j eps'' (the engineering sign, as capbench's extraction gives it):

    eps*(w) = eps_inf + delta / (1 + (j w tau)^alpha)^beta
              - j sigma / (eps0 w)                       DC conductivity
              + A (j w * 1 s)^(-n)                       electrode polarisation

Debye is alpha = beta = 1, Cole-Cole beta = 1, Cole-Davidson alpha = 1. The
electrode-polarisation term is a constant-phase element: a power law with the same
exponent in eps' and eps'' (eps''/eps' = tan(n pi / 2)), the usual empirical description
of the blocking layer at the electrodes (e.g. F. Kremer and A. Schoenhals, Broadband
Dielectric Spectroscopy, Springer 2003, chapter 2; from memory). With n = 1 it is a pure
conductance and cannot be told from sigma, so n stays below :data:`EP_EXPONENT_MAX`.

References
----------
P. Debye, Polar Molecules (Chemical Catalog Co., 1929). K. S. Cole and R. H. Cole,
J. Chem. Phys. 9, 341 (1941). D. W. Davidson and R. H. Cole, J. Chem. Phys. 19, 1484
(1951). S. Havriliak and S. Negami, Polymer 8, 161 (1967).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..errors import InputError
from ..options import RELAXATION_MODELS
from ..units import EPS0

#: the relaxation functions: name -> (alpha free, beta free); the names are
#: capbench.options.RELAXATION_MODELS (the command line's choices)
_FREE = ((False, False), (True, False), (False, True), (True, True))
MODELS: dict[str, tuple[bool, bool]] = dict(zip(RELAXATION_MODELS, _FREE, strict=True))

#: what each parameter is, its unit, for tables and reports
PARAMETERS: dict[str, tuple[str, str]] = {
    "eps_inf": ("high-frequency permittivity eps_inf", ""),
    "delta": ("relaxation strength eps_s - eps_inf", ""),
    "tau": ("relaxation time tau", "s"),
    "alpha": ("symmetric broadening alpha", ""),
    "beta": ("asymmetric broadening beta", ""),
    "sigma": ("DC conductivity sigma", "S/m"),
    "ep_amplitude": ("electrode polarisation A (at 1 rad/s)", ""),
    "ep_exponent": ("electrode polarisation exponent n", ""),
}

#: the electrode-polarisation exponent stays below this: at n = 1 the term is a
#: conductance and trades exactly with sigma
EP_EXPONENT_MAX = 0.98


def check_model(model: str) -> str:
    if model not in MODELS:
        raise InputError(f"model {model!r}; valid: {', '.join(MODELS)}", value=model)
    return model


def parameter_names(model: str, conductivity: bool = False, electrode: bool = False) -> list[str]:
    """The free parameters of ``model`` with the optional terms, in fitting order."""
    a, b = MODELS[check_model(model)]
    names = ["eps_inf", "delta", "tau"]
    if a:
        names.append("alpha")
    if b:
        names.append("beta")
    if conductivity:
        names.append("sigma")
    if electrode:
        names += ["ep_amplitude", "ep_exponent"]
    return names


def permittivity(
    f: Any,
    eps_inf: float,
    delta: float,
    tau: float,
    alpha: float = 1.0,
    beta: float = 1.0,
    sigma: float = 0.0,
    ep_amplitude: float = 0.0,
    ep_exponent: float = 0.5,
) -> np.ndarray:
    """eps*(f) = eps' - j eps'' of the Havriliak-Negami function with the optional
    DC conductivity ``sigma`` (S/m) and electrode-polarisation term
    ``ep_amplitude * (j w * 1 s)^-ep_exponent``.

    Parameters
    ----------
    f : array_like
        Frequencies, Hz.
    eps_inf, delta : float
        High-frequency permittivity and relaxation strength eps_s - eps_inf.
    tau : float
        Relaxation time, s.
    alpha, beta : float
        Shape parameters in (0, 1]: Debye alpha = beta = 1, Cole-Cole beta = 1,
        Cole-Davidson alpha = 1.

    Returns
    -------
    numpy.ndarray of complex
        eps' - j eps''.
    """
    w = 2 * np.pi * np.asarray(f, float)
    eps = eps_inf + delta / (1 + (1j * w * tau) ** alpha) ** beta
    if sigma:
        eps = eps - 1j * sigma / (EPS0 * w)
    if ep_amplitude:
        eps = eps + ep_amplitude * (1j * w) ** (-ep_exponent)
    return eps


def loss_peak_frequency(tau: Any, alpha: Any = 1.0, beta: Any = 1.0) -> Any:
    """Frequency (Hz) of the relaxation's eps'' maximum (without conduction or electrode
    terms); works on ufloats, so a fitted tau's uncertainty carries over.

    Notes
    -----
    w_max tau = [sin(alpha beta pi / (2 (beta + 1))) / sin(alpha pi / (2 (beta + 1)))]^(-1/alpha)
    for Havriliak-Negami (found by setting d eps''/d w = 0; e.g. R. Diaz-Calleja,
    Macromolecules 33, 8924, 2000, from memory); Debye gives w_max tau = 1 and
    Cole-Davidson w_max tau = tan(pi / (2 beta + 2)) (Davidson and Cole 1951).
    """
    from uncertainties import umath

    s = umath.sin if any(hasattr(v, "std_dev") for v in (tau, alpha, beta)) else math.sin
    ratio = s(math.pi * alpha / (2 * (beta + 1))) / s(math.pi * alpha * beta / (2 * (beta + 1)))
    return ratio ** (1 / alpha) / (2 * math.pi * tau)
