"""Reference solutions computed independently of capbench (no capbench import here).

Each function names its source. These are the outside references the field engine is
held against; tests/cases/make_field_cases.py tabulates them into field_cases.json.
"""

from __future__ import annotations

import math

import numpy as np

#: Vacuum permittivity, F/m (CODATA 2022 recommended value).
EPS0 = 8.8541878188e-12


def love_discs(kappa: float, panel_width: float | None = None, order: int = 16) -> float:
    """C / (eps0 a) of two equal coaxial thin discs at +V and -V, gap/radius = kappa.

    Love's integral equation (E. R. Love, "The electrostatic field of two equal circular
    co-axial conducting disks", Q. J. Mech. Appl. Math. 2, 428-451, 1949):
        f(x) - (1/pi) int_{-1}^{1} kappa / (kappa^2 + (x - t)^2) f(t) dt = 1,
        C = 2 eps0 a int_{-1}^{1} f(x) dx  (C = Q / (2V), the capacitance between the
        discs).
    Solved by Nystrom's method with composite Gauss-Legendre panels no wider than kappa
    (the kernel has poles at t = x +- i kappa).
    """
    width = min(kappa, 0.5) if panel_width is None else panel_width
    n_panels = max(4, math.ceil(2.0 / width))
    x0, w0 = np.polynomial.legendre.leggauss(order)
    edges = np.linspace(-1.0, 1.0, n_panels + 1)
    h = np.diff(edges)
    x = (edges[:-1, None] + (x0[None, :] + 1) / 2 * h[:, None]).ravel()
    w = (w0[None, :] * h[:, None] / 2).ravel()
    kernel = kappa / (kappa**2 + (x[:, None] - x[None, :]) ** 2) / math.pi
    f = np.linalg.solve(np.eye(x.size) - kernel * w[None, :], np.ones(x.size))
    return float(2.0 * (w @ f))


def kirchhoff_discs(kappa: float) -> float:
    """C / (eps0 a) by Kirchhoff's edge-corrected formula (G. Kirchhoff, 1877):
    pi / kappa + ln(16 pi / kappa) - 1."""
    return math.pi / kappa + math.log(16 * math.pi / kappa) - 1


def isolated_disc(a: float) -> float:
    """Thin disc of radius a in free space: C = 8 eps0 a (classical potential theory)."""
    return 8 * EPS0 * a


def isolated_sphere(a: float) -> float:
    """C = 4 pi eps0 a (textbook closed form)."""
    return 4 * math.pi * EPS0 * a


def concentric_spheres(a: float, b: float) -> float:
    """C = 4 pi eps0 a b / (b - a) (textbook closed form)."""
    return 4 * math.pi * EPS0 * a * b / (b - a)


def coaxial_cylinders(a: float, b: float) -> float:
    """C per metre = 2 pi eps0 / ln(b / a) (textbook closed form)."""
    return 2 * math.pi * EPS0 / math.log(b / a)


def sphere_over_plane(R: float, D: float, terms: int = 2000) -> float:
    """Sphere of radius R, centre at height D over a grounded plane (image charges):
    C = 4 pi eps0 R sinh(alpha) sum_{n>=1} 1 / sinh(n alpha), cosh(alpha) = D / R
    (W. R. Smythe, Static and Dynamic Electricity; section number from memory)."""
    alpha = math.acosh(D / R)
    n = np.arange(1, min(terms, int(700 / alpha)) + 1)  # later terms underflow to 0
    return float(4 * math.pi * EPS0 * R * math.sinh(alpha) * np.sum(1 / np.sinh(n * alpha)))


def thompson_lampard_symmetric() -> float:
    """Cross capacitance per metre of a symmetric four-electrode section with vanishing
    gaps: eps0 ln 2 / pi (A. M. Thompson and D. G. Lampard, Nature 177, 888, 1956)."""
    return EPS0 * math.log(2) / math.pi


def guard_edge_extension(g: float, t: float) -> float:
    """Half of B g: the widening of a guarded electrode per edge, with
    B = 1 - 2 delta / g, delta = (2 t / pi) ln cosh(pi g / (4 t)) (the form used in
    ASTM D150 and IEC 62631-2-1; the attribution of the table form is from memory)."""
    delta = (2 * t / math.pi) * math.log(math.cosh(math.pi * g / (4 * t)))
    return 0.5 * (g - 2 * delta)
