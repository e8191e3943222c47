"""Guard-ring design check: effective area of a guarded electrode, the standard's gap
formula, the smallest guard and largest gap that meet a target, and the edge field.

A guarded electrode of diameter d1 with a guard gap g on a specimen of thickness t
collects the flux of an area larger than its own: the standards give the effective
diameter d1 + B g with B = 1 - 2 delta / g, delta = (2 t / pi) ln cosh(pi g / (4 t)).
That formula is the exact result of a 2-D conformal map under two assumptions: the
electrode and guard are wide compared with t, and no flux leaves the specimen through
the gap. A real cell breaks both (its edge is curved; below the gap is air, where flux
from the unguarded electrode can reach the guarded electrode around a narrow guard).
This module measures the real effective area with the finite-element field and reports
the error in eps_r that using the formula, or the bare electrode area, would cause.

Everything here is for :func:`capbench.guarded_cell` designs with contacting electrodes
(no air gap). Many solves run through :mod:`capbench.sweep` (local cores or a cluster).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pint
from uncertainties.core import AffineScalarFunc

from . import validate as v
from .capacitance import Solution, solve
from .cautions import EDGE
from .errors import InputError, SolverError
from .geometry import (
    Plate,
    Polygon,
    Rect,
    shape_corners,
    shape_edges,
    simple_shapes,
)
from .mesh import MEDIUM_REGION
from .rigs import SPECIMEN, guarded_cell
from .sweep import Progress, run
from .units import EPS0, Q_, to_si

#: where the gap formula comes from (the table form's attribution is from memory)
FORMULA_SOURCE = (
    "ASTM D150 (Standard Test Methods for AC Loss Characteristics and Permittivity of "
    "Solid Electrical Insulation) and IEC 62631-2-1: effective diameter d1 + B g; "
    "attribution of the table form from memory"
)

#: dielectric strength of air at atmospheric pressure, V/m (common practice, no source)
AIR_BREAKDOWN = 3e6

#: what a verdict compares against the target
BASES = ("formula", "bare")

SAFETY_NOTE = EDGE


# --------------------------------------------------------------------------- formula


def gap_factor(guard_gap: Any, specimen_thickness: Any) -> float:
    """The factor B of the standard's effective-diameter formula d1 + B g.

    Parameters
    ----------
    guard_gap, specimen_thickness : length (Quantity, "0.5 mm", or metres)

    Returns
    -------
    float
        B = 1 - 2 delta / g with delta = (2 t / pi) ln cosh(pi g / (4 t)); B -> 1 as
        g/t -> 0 and B g -> (4 ln 2 / pi) t as g/t -> infinity.

    Notes
    -----
    Exact for a planar section whose guarded electrode and guard are wide compared with
    t and where no flux leaves through the gap (conformal map of the strip; each edge of
    the guarded electrode then gains B g / 2).

    References
    ----------
    ASTM D150 and IEC 62631-2-1 (the table form's attribution is from memory).
    """
    g = v.length(guard_gap, "guard_gap")
    t = v.length(specimen_thickness, "specimen_thickness")
    return _gap_factor(g, t)


def _gap_factor(g: Any, t: Any) -> Any:
    """B of d1 + B g for SI floats or uncertain values (ufloats), the one home of the
    formula (the contacting method's effective area and the comparison use it too)."""
    x = math.pi * g / (4 * t)
    if isinstance(x, AffineScalarFunc):
        from uncertainties import umath as m
    elif isinstance(x, np.ndarray) and x.dtype == object:  # an array of uncertain values
        from uncertainties import unumpy as m
    else:  # floats or arrays of them
        m = np
    # ln cosh x = x + log1p(exp(-2x)) - ln 2, stable for large x (cosh overflows past
    # x = 710, i.e. a gap 900 times the thickness)
    lncosh = x + m.log1p(m.exp(-2 * x)) - math.log(2)
    delta = 2 * t / math.pi * lncosh
    b = 1 - 2 * delta / g
    return float(b) if m is np and np.ndim(b) == 0 else b  # a plain float for floats


def formula_diameter(
    electrode_diameter: Any, guard_gap: Any, specimen_thickness: Any
) -> pint.Quantity:
    """Effective diameter d1 + B g of a guarded electrode by the standard's formula.

    See :func:`gap_factor` for B and the source.
    """
    d1 = v.length(electrode_diameter, "electrode_diameter")
    g = v.length(guard_gap, "guard_gap")
    t = v.length(specimen_thickness, "specimen_thickness")
    return Q_(d1 + _gap_factor(g, t) * g, "m")


# --------------------------------------------------------------------------- one cell


@dataclass(frozen=True)
class EdgeCase:
    """Effective area of one guarded cell at one specimen thickness and permittivity.

    All lengths in metres, capacitance in farads (plain floats: these cross process
    pools). The ``*_q`` properties give quantities.

    area: the FEM effective area A = C t / (eps0 eps_r), where C is the direct
    capacitance; error_formula: eps_r(formula area) / eps_r(true) - 1 = A / A_formula - 1,
    the error in eps_r made by using d1 + B g; error_bare: the same with the bare
    electrode area pi d1^2 / 4; departure: (D_fem - (d1 + B g)) / (B g), how far the
    FEM effective diameter sits from the formula, in units of the formula's own edge
    term.
    """

    electrode_diameter: float
    guard_gap: float
    guard_width: float
    thickness: float
    eps_r: float
    capacitance: float
    rel_error: float

    @property
    def area(self) -> float:
        return self.capacitance * self.thickness / (EPS0 * self.eps_r)

    @property
    def diameter(self) -> float:
        return 2.0 * math.sqrt(self.area / math.pi)

    @property
    def formula_diameter(self) -> float:
        return (
            self.electrode_diameter + _gap_factor(self.guard_gap, self.thickness) * self.guard_gap
        )

    @property
    def error_formula(self) -> float:
        return self.area / (math.pi * self.formula_diameter**2 / 4) - 1

    @property
    def error_bare(self) -> float:
        return self.area / (math.pi * self.electrode_diameter**2 / 4) - 1

    @property
    def departure(self) -> float:
        bg = _gap_factor(self.guard_gap, self.thickness) * self.guard_gap
        return (self.diameter - self.formula_diameter) / bg

    def error(self, basis: str = "formula") -> float:
        return self.error_formula if basis == "formula" else self.error_bare

    @property
    def area_q(self) -> pint.Quantity:
        return Q_(self.area, "m^2")

    @property
    def diameter_q(self) -> pint.Quantity:
        return Q_(self.diameter, "m")

    @property
    def capacitance_q(self) -> pint.Quantity:
        return Q_(self.capacitance, "F")


def _cell_params(fx) -> dict:
    if fx.kind != "guarded_cell":
        raise InputError(
            f"the guard check needs a guarded_cell fixture; got kind {fx.kind!r}",
            value=fx.kind,
        )
    p = dict(fx.params)
    if p.get("air_gap"):
        raise InputError(
            f"air_gap = {p['air_gap'] * 1e3:.6g} mm: the effective-area formula is for "
            "contacting electrodes; valid: air_gap = 0 mm",
            name="air_gap",
            value=p["air_gap"],
            unit="m",
        )
    return p


def effective_area(fixture, rtol: float = 1e-6) -> EdgeCase:
    """Effective area of the guarded electrode of a :func:`~capbench.guarded_cell`.

    Parameters
    ----------
    fixture : Fixture
        Made by :func:`capbench.guarded_cell` with contacting electrodes (air_gap 0).
    rtol : float
        Relative accuracy of the solve.

    Returns
    -------
    EdgeCase

    Notes
    -----
    A = C t / (eps0 eps_r), C the direct (three-terminal) capacitance from the FEM, and
    D = 2 sqrt(A / pi), to compare with d1 + B g (:func:`gap_factor`).
    """
    p = _cell_params(fixture)
    sol = solve(fixture, rtol=rtol)
    eps = complex(fixture.geometry.permittivities()[SPECIMEN]).real
    return EdgeCase(
        electrode_diameter=2 * p["electrode_radius"],
        guard_gap=p["guard_gap"],
        guard_width=p["guard_width"],
        thickness=p["specimen_thickness"],
        eps_r=eps,
        capacitance=float(sol.terminal.real),
        rel_error=float(sol.rel_error),
    )


def edge_cases_task(item: tuple[dict, tuple[float, ...], float]) -> list[tuple]:
    """Worker task: one cell geometry (builder arguments, SI floats), solved at every
    permittivity in turn (the mesh is built once), to plain tuples."""
    params, eps_values, rtol = item
    fx = guarded_cell(**params)
    out = []
    for eps in eps_values:
        sol = solve(fx.with_permittivity(SPECIMEN, eps), rtol=rtol)
        out.append((float(eps), float(sol.terminal.real), float(sol.rel_error)))
    return out


# --------------------------------------------------------------------------- check


@dataclass(frozen=True)
class GuardCheck:
    """The verdict of a guard design over a range of specimens.

    cases: one :class:`EdgeCase` per (thickness, eps_r); target: the largest |error in
    eps_r| allowed; basis: "formula" (the standard's d1 + B g is used for the area) or
    "bare" (the electrode's own area is used).
    """

    electrode_radius: float
    guard_gap: float
    guard_width: float
    target: float
    basis: str
    cases: tuple[EdgeCase, ...]

    @property
    def worst(self) -> EdgeCase:
        return max(self.cases, key=lambda c: abs(c.error(self.basis)))

    @property
    def worst_error(self) -> float:
        return self.worst.error(self.basis)

    @property
    def passed(self) -> bool:
        return abs(self.worst_error) <= self.target

    @property
    def thicknesses(self) -> tuple[float, ...]:
        return tuple(sorted({c.thickness for c in self.cases}))

    @property
    def eps_values(self) -> tuple[float, ...]:
        return tuple(sorted({c.eps_r for c in self.cases}))

    def verdict(self) -> str:
        """One line: passes or fails, against what, and the worst case."""
        w = self.worst
        ts = self.thicknesses
        es = self.eps_values
        area = "the formula d1 + B g" if self.basis == "formula" else "the bare electrode area"
        return (
            f"{'PASS' if self.passed else 'FAIL'}: edge error with {area} "
            f"{'below' if self.passed else 'exceeds'} {self.target * 100:.3g} % for specimens "
            f"{ts[0] * 1e3:.4g} to {ts[-1] * 1e3:.4g} mm thick, eps_r {es[0]:.4g} to "
            f"{es[-1]:.4g} (guard gap {self.guard_gap * 1e3:.4g} mm, guard width "
            f"{self.guard_width * 1e3:.4g} mm); worst {w.error(self.basis) * 100:+.4f} % at "
            f"t = {w.thickness * 1e3:.4g} mm, eps_r = {w.eps_r:.4g}"
        )

    def table(self) -> str:
        """The cases as a text table."""
        lines = [
            "   t/mm    eps_r     g/t   D_fem/mm  d1+Bg/mm  err(formula)   err(bare)  departure"
        ]
        for c in self.cases:
            lines.append(
                f"{c.thickness * 1e3:7.4g} {c.eps_r:8.4g} {c.guard_gap / c.thickness:7.3g} "
                f"{c.diameter * 1e3:10.5f} {c.formula_diameter * 1e3:9.5f} "
                f"{c.error_formula * 100:+11.4f} % {c.error_bare * 100:+9.4f} % "
                f"{c.departure:+9.4f}"
            )
        return "\n".join(lines)


def _lengths(values: Any, name: str) -> tuple[float, ...]:
    if isinstance(values, (str, pint.Quantity)) and not (
        isinstance(values, pint.Quantity) and np.ndim(values.magnitude) > 0
    ):
        values = [values]
    if isinstance(values, pint.Quantity):
        values = [Q_(m, values.units) for m in np.atleast_1d(values.magnitude)]
    out = tuple(v.length(x, f"{name}[{i}]") for i, x in enumerate(values))
    if not out:
        raise InputError(f"{name} is empty; give at least one length", name=name)
    return out


def _eps_list(values: Any, name: str) -> tuple[float, ...]:
    if isinstance(values, (int, float)):
        values = [values]
    out = tuple(v.check(x, "eps_r", f"{name}[{i}]") for i, x in enumerate(values))
    if not out:
        raise InputError(f"{name} is empty; give at least one relative permittivity", name=name)
    return out


def _check_target(target: Any) -> float:
    if not (isinstance(target, (int, float)) and math.isfinite(target) and 0 < target < 0.5):
        raise InputError(
            f"target = {target!r}; valid: a relative error in eps_r between 0 and 0.5 "
            "(e.g. 1e-3 for 0.1 %)",
            value=target,
            valid=(0.0, 0.5),
        )
    return float(target)


def _check_basis(basis: str) -> str:
    if basis not in BASES:
        raise InputError(f"basis = {basis!r}; valid: {BASES}", value=basis)
    return basis


def _cell_items(
    r1: float,
    g: float,
    w: float,
    thicknesses: Sequence[float],
    eps_values: Sequence[float],
    rtol: float,
    cell: dict,
) -> list:
    items = []
    for t in thicknesses:
        params = dict(
            electrode_radius=r1,
            guard_gap=g,
            guard_width=w,
            specimen_thickness=t,
            specimen_eps_r=eps_values[0],
            **cell,
        )
        guarded_cell(**params)  # refuse a bad design here, before any worker starts
        items.append((params, tuple(eps_values), rtol))
    return items


def _cases(items: list, raw: list) -> list[EdgeCase]:
    out = []
    for (params, _eps, _rtol), rows in zip(items, raw, strict=True):
        for eps, c, rel in rows:
            out.append(
                EdgeCase(
                    electrode_diameter=2 * params["electrode_radius"],
                    guard_gap=params["guard_gap"],
                    guard_width=params["guard_width"],
                    thickness=params["specimen_thickness"],
                    eps_r=eps,
                    capacitance=c,
                    rel_error=rel,
                )
            )
    return out


_CELL_KEYS = ("unguarded_radius", "specimen_radius", "electrode_thickness", "edge_radius", "shield")


def _cell_options(cell: dict) -> dict:
    unknown = set(cell) - set(_CELL_KEYS)
    if unknown:
        raise InputError(
            f"unknown cell option(s) {sorted(unknown)}; valid: {list(_CELL_KEYS)}",
            value=sorted(unknown),
        )
    out = {}
    for k, val in cell.items():
        if val is None or k == "shield":
            out[k] = val
        else:
            out[k] = v.length(val, k)
    return out


def guard_check(
    electrode_radius: Any,
    guard_gap: Any,
    guard_width: Any,
    thicknesses: Any,
    eps_values: Any = (2.0,),
    *,
    target: float = 1e-3,
    basis: str = "formula",
    rtol: float = 1e-6,
    scheduler: str | Any | None = None,
    max_workers: int | None = None,
    progress: bool | Progress | None = False,
    **cell: Any,
) -> GuardCheck:
    """Check a guard-ring design against a target over a range of specimens.

    Parameters
    ----------
    electrode_radius, guard_gap, guard_width : length
        The guarded electrode's radius d1/2, the gap to the guard ring and its width.
    thicknesses : length or sequence of lengths
        Specimen thicknesses to test.
    eps_values : float or sequence of float
        Specimen relative permittivities to test.
    target : float
        Largest |relative error in eps_r| allowed (1e-3 is 0.1 %).
    basis : {"formula", "bare"}
        The area the lab will use: the standard's d1 + B g, or the bare electrode.
    rtol : float
        Relative accuracy of each solve (keep it well below ``target``).
    scheduler, max_workers, progress
        Where the solves run (:func:`capbench.sweep.run`).
    **cell
        Further :func:`capbench.guarded_cell` options: unguarded_radius,
        specimen_radius, electrode_thickness, edge_radius, shield.

    Returns
    -------
    GuardCheck

    Notes
    -----
    For each (t, eps_r) the direct capacitance C gives the effective area
    A = C t / (eps0 eps_r); the error in eps_r made with an assumed area A' is
    A / A' - 1 (eps_r is inversely proportional to the area used).

    References
    ----------
    ASTM D150 and IEC 62631-2-1 for d1 + B g (attribution of the table form from memory).
    """
    r1 = v.length(electrode_radius, "electrode_radius")
    g = v.length(guard_gap, "guard_gap")
    w = v.length(guard_width, "guard_width")
    ts = _lengths(thicknesses, "thicknesses")
    es = _eps_list(eps_values, "eps_values")
    tgt = _check_target(target)
    _check_basis(basis)
    _check_solve_rtol(rtol, tgt)
    opts = _cell_options(cell)
    items = _cell_items(r1, g, w, ts, es, rtol, opts)
    raw = run(
        edge_cases_task,
        items,
        scheduler=scheduler,
        max_workers=max_workers,
        progress=progress,
        label="guard check",
    )
    return GuardCheck(r1, g, w, tgt, basis, tuple(_cases(items, raw)))


def _check_solve_rtol(rtol: Any, target: float) -> None:
    if not (isinstance(rtol, (int, float)) and 1e-9 <= rtol <= 1e-2):
        raise InputError(f"rtol = {rtol!r}; valid: a relative tolerance 1e-9 to 1e-2", value=rtol)
    if rtol > target / 10:
        raise InputError(
            f"rtol = {rtol:.1e} is not well below the target {target:.1e}; the verdict "
            f"needs rtol <= target / 10 = {target / 10:.1e}",
            value=rtol,
            valid=(1e-9, target / 10),
        )


# --------------------------------------------------------------------------- search


@dataclass(frozen=True)
class GuardDesign:
    """Result of :func:`guard_design`.

    min_guard_width: the smallest guard width (at the given gap) that meets the target,
    or None if none in the searched range does; max_guard_gap: the largest gap (at the
    given width) that meets it, or None; checks: every design evaluated on the way.
    Lengths in metres.
    """

    electrode_radius: float
    guard_gap: float
    guard_width: float
    target: float
    basis: str
    min_guard_width: float | None
    max_guard_gap: float | None
    width_bounds: tuple[float, float]
    gap_bounds: tuple[float, float]
    resolution: float
    checks: tuple[GuardCheck, ...] = field(repr=False, default=())

    def summary(self) -> str:
        def mm(x):
            return "none in the range searched" if x is None else f"{x * 1e3:.3f} mm"

        return (
            f"smallest guard width meeting {self.target * 100:.3g} % at gap "
            f"{self.guard_gap * 1e3:.4g} mm: {mm(self.min_guard_width)} (searched "
            f"{self.width_bounds[0] * 1e3:.4g} to {self.width_bounds[1] * 1e3:.4g} mm); "
            f"largest gap meeting it at guard width {self.guard_width * 1e3:.4g} mm: "
            f"{mm(self.max_guard_gap)} (searched {self.gap_bounds[0] * 1e3:.4g} to "
            f"{self.gap_bounds[1] * 1e3:.4g} mm); resolution {self.resolution * 1e3:.3g} mm"
        )


def _bisect(
    passes: Callable[[float], bool], lo: float, hi: float, res: float, pass_high: bool
) -> float | None:
    """The boundary of the passing interval by bisection: the smallest passing value if
    ``pass_high`` (passing for all values above), else the largest. Assumes one crossing."""
    good, bad = (hi, lo) if pass_high else (lo, hi)
    if not passes(good):
        return None
    if passes(bad):
        return bad
    while abs(good - bad) > res:
        mid = 0.5 * (good + bad)
        if passes(mid):
            good = mid
        else:
            bad = mid
    return good


def guard_design(
    electrode_radius: Any,
    thicknesses: Any,
    eps_values: Any = (2.0,),
    *,
    guard_gap: Any,
    guard_width: Any,
    target: float = 1e-3,
    basis: str = "formula",
    width_bounds: tuple[Any, Any] | None = None,
    gap_bounds: tuple[Any, Any] | None = None,
    resolution: Any = None,
    rtol: float = 1e-6,
    scheduler: str | Any | None = None,
    max_workers: int | None = None,
    progress: bool | Progress | None = False,
    **cell: Any,
) -> GuardDesign:
    """Search the design for the smallest guard width and the largest gap that meet a
    target edge error over a range of specimens.

    Parameters
    ----------
    electrode_radius : length
    thicknesses, eps_values
        The specimens the cell must serve (see :func:`guard_check`).
    guard_gap : length
        The gap held fixed while the guard width is searched.
    guard_width : length
        The width held fixed while the gap is searched.
    target, basis, rtol, scheduler, max_workers, progress, **cell
        As in :func:`guard_check`.
    width_bounds : (length, length), optional
        Guard widths searched; default 0.5 to 10 times the thickest specimen (inside a
        shield if one is given).
    gap_bounds : (length, length), optional
        Gaps searched; default 0.02 to 2 times the thinnest specimen (but not below
        1/500 of the electrode radius, and inside a shield if one is given).
    resolution : length, optional
        Bisection stops when the bracket is this narrow; default 2 % of the thinnest
        specimen.

    Returns
    -------
    GuardDesign

    Notes
    -----
    Bisection assumes one crossing of the target: the worst error falls as the guard
    widens and rises as the gap opens, which is what the field does as long as the
    guard does not reach other conductors. Each evaluation is one :func:`guard_check`
    (all thicknesses in parallel).
    """
    r1 = v.length(electrode_radius, "electrode_radius")
    g0 = v.length(guard_gap, "guard_gap")
    w0 = v.length(guard_width, "guard_width")
    ts = _lengths(thicknesses, "thicknesses")
    es = _eps_list(eps_values, "eps_values")
    tgt = _check_target(target)
    _check_basis(basis)
    _check_solve_rtol(rtol, tgt)
    opts = _cell_options(cell)
    t_min, t_max = min(ts), max(ts)
    w_hi, g_hi = 10 * t_max, 2 * t_min
    room = _room_in_shield(opts, r1)
    if room is not None:  # keep the default search inside the grounded can
        w_hi = min(w_hi, 0.9 * (room - g0))
        g_hi = min(g_hi, 0.9 * (room - w0))
    wb = _bounds(width_bounds, (min(0.5 * t_max, 0.5 * w_hi), w_hi), "width_bounds")
    # a gap over 500 times smaller than the electrode radius would be refused as a
    # likely unit slip (a warning), so the default search starts above that
    g_lo = max(0.02 * t_min, 2e-3 * r1)
    gb = _bounds(gap_bounds, (min(g_lo, 0.5 * g_hi), g_hi), "gap_bounds")
    _fits(r1, g0, wb[1], ts, opts, "width_bounds")
    _fits(r1, gb[1], w0, ts, opts, "gap_bounds")
    res = 0.02 * t_min if resolution is None else v.length(resolution, "resolution")
    checks: list[GuardCheck] = []

    def evaluate(g: float, w: float) -> bool:
        items = _cell_items(r1, g, w, ts, es, rtol, opts)
        raw = run(
            edge_cases_task,
            items,
            scheduler=scheduler,
            max_workers=max_workers,
            progress=progress,
            label=f"gap {g * 1e3:.4g} mm, guard {w * 1e3:.4g} mm",
        )
        chk = GuardCheck(r1, g, w, tgt, basis, tuple(_cases(items, raw)))
        checks.append(chk)
        return chk.passed

    w_min = _bisect(lambda w: evaluate(g0, w), wb[0], wb[1], res, pass_high=True)
    g_max = _bisect(lambda g: evaluate(g, w0), gb[0], gb[1], res, pass_high=False)
    return GuardDesign(r1, g0, w0, tgt, basis, w_min, g_max, wb, gb, res, tuple(checks))


def _room_in_shield(opts: dict, r1: float) -> float | None:
    """Radial room for gap + guard inside a shield (None without one)."""
    shield = opts.get("shield")
    if shield is None:
        return None
    try:
        radius = v.length(shield[0], "shield radius")
    except (TypeError, IndexError):
        return None  # guarded_cell reports the malformed shield itself
    return radius - r1


def _fits(r1: float, g: float, w: float, ts, opts: dict, name: str) -> None:
    """Refuse a search range whose far end cannot be built (e.g. outside the shield)."""
    from .errors import GeometryError

    try:
        for t in ts:
            guarded_cell(
                electrode_radius=r1, guard_gap=g, guard_width=w, specimen_thickness=t, **opts
            )
    except GeometryError as exc:
        raise InputError(
            f"{name}: the design with guard gap {g * 1e3:.4g} mm and guard width "
            f"{w * 1e3:.4g} mm cannot be built ({exc}); narrow {name}",
            name=name,
            value=(g, w),
            unit="m",
        ) from None


def _bounds(value: Any, default: tuple[float, float], name: str) -> tuple[float, float]:
    if value is None:
        return default
    try:
        lo_in, hi_in = value
    except (TypeError, ValueError):
        raise InputError(
            f"{name} = {value!r}; give (smallest, largest) lengths", name=name
        ) from None
    lo = v.length(lo_in, f"{name}[0]")
    hi = v.length(hi_in, f"{name}[1]")
    if not lo < hi:
        raise InputError(
            f"{name}: smallest {lo * 1e3:.6g} mm must be below largest {hi * 1e3:.6g} mm",
            name=name,
            value=(lo, hi),
            unit="m",
        )
    return (lo, hi)


# --------------------------------------------------------------------------- error map


@dataclass(frozen=True)
class ErrorMap:
    """Worst edge error in eps_r over a grid of guard gaps (rows) and widths (columns).

    gaps, widths in metres; error[i, j]: signed worst error (largest magnitude over the
    specimens) for gaps[i], widths[j]; basis as in :class:`GuardCheck`.
    """

    electrode_radius: float
    gaps: tuple[float, ...]
    widths: tuple[float, ...]
    error: np.ndarray
    target: float
    basis: str
    thicknesses: tuple[float, ...]
    eps_values: tuple[float, ...]


def error_map(
    electrode_radius: Any,
    gaps: Any,
    widths: Any,
    thicknesses: Any,
    eps_values: Any = (2.0,),
    *,
    target: float = 1e-3,
    basis: str = "formula",
    rtol: float = 1e-6,
    scheduler: str | Any | None = None,
    max_workers: int | None = None,
    progress: bool | Progress | None = False,
    **cell: Any,
) -> ErrorMap:
    """Worst eps_r error over a grid of guard gap x guard width, all solves in one sweep.

    See :func:`guard_check` for the arguments; ``gaps`` and ``widths`` are sequences of
    lengths.
    """
    r1 = v.length(electrode_radius, "electrode_radius")
    gs = _lengths(gaps, "gaps")
    ws = _lengths(widths, "widths")
    ts = _lengths(thicknesses, "thicknesses")
    es = _eps_list(eps_values, "eps_values")
    tgt = _check_target(target)
    _check_basis(basis)
    _check_solve_rtol(rtol, tgt)
    opts = _cell_options(cell)
    items = []
    for g in gs:
        for w in ws:
            items.extend(_cell_items(r1, g, w, ts, es, rtol, opts))
    raw = run(
        edge_cases_task,
        items,
        scheduler=scheduler,
        max_workers=max_workers,
        progress=progress,
        label="error map",
    )
    cases = _cases(items, raw)
    err = np.empty((len(gs), len(ws)))
    per = len(ts) * len(es)
    for k in range(len(gs) * len(ws)):
        block = cases[k * per : (k + 1) * per]
        worst = max(block, key=lambda c: abs(c.error(basis)))
        err[k // len(ws), k % len(ws)] = worst.error(basis)
    return ErrorMap(r1, gs, ws, err, tgt, basis, ts, es)


# --------------------------------------------------------------------------- edge field


@dataclass(frozen=True)
class EdgeField:
    """Field strength at the electrode edges of a solved fixture, per volt applied.

    sharp: True where some conductor has a sharp edge or corner (a zero-thickness plate
    or a square corner), where the field is unbounded in theory; peak is then None and
    field_at_distance gives the largest |E| found on circles of radius ``distance``
    about the sharp edges. Otherwise peak is the largest |E| on the conductor surfaces.
    All fields in V/m per volt of terminal drive; location (x, y) in metres.
    peak_in_medium: the largest |E| on the surfaces where they face the surrounding
    medium (usually air), the figure that matters for breakdown in air.
    """

    sharp: bool
    peak: float | None
    peak_in_medium: float | None
    location: tuple[float, float]
    distance: float | None
    field_at_distance: float | None
    voltage: float | None = None

    @property
    def governing(self) -> float:
        """The figure a caution is based on: the air-side peak, else the peak, else the
        field at the stated distance from a sharp edge."""
        if self.peak_in_medium is not None:
            return self.peak_in_medium
        if self.peak is not None:
            return self.peak
        return float(self.field_at_distance)

    @property
    def voltage_at_air_breakdown(self) -> float:
        """Applied voltage (V) at which ``governing`` reaches 3 kV/mm (air at atmospheric
        pressure; common practice, no source)."""
        return AIR_BREAKDOWN / self.governing

    def text(self) -> str:
        """The one statement of the edge field, in kV/m per volt applied, that the
        caution, the field map and the reports all show (a field map's largest vertex
        value at a sharp edge is singular and mesh-dependent, so it is not a figure)."""
        if self.sharp:
            return (
                f"{self.field_at_distance / 1e3:.4g} kV/m per volt at "
                f"{self.distance * 1e6:.3g} um from the sharp edge (unbounded at the edge "
                "itself)"
            )
        shown = self.peak_in_medium if self.peak_in_medium is not None else self.peak
        return f"peak {shown / 1e3:.4g} kV/m per volt applied"

    def caution(self) -> str:
        """A caution about the edge field, with the deferral to local codes."""
        parts = []
        if self.sharp:
            parts.append(
                f"Sharp electrode edges: the edge field is {self.text()}. Rounded edges "
                "(edge_radius) bound it."
            )
        else:
            parts.append(f"Edge field: {self.text()}.")
        vb = self.voltage_at_air_breakdown
        parts.append(
            f"Air (about 3 kV/mm at atmospheric pressure, common practice) would reach "
            f"breakdown at the edge at about {vb:.4g} V."
        )
        if self.voltage is not None:
            e = self.governing * self.voltage
            level = "HIGH: " if e >= 0.5 * AIR_BREAKDOWN else ""
            parts.append(
                f"{level}at the test voltage {self.voltage:.4g} V the edge field is "
                f"{e / 1e6:.4g} kV/mm ({e / AIR_BREAKDOWN * 100:.3g} % of air's breakdown "
                "strength)."
            )
        parts.append(SAFETY_NOTE)
        return " ".join(parts)


def edge_field(
    solution: Solution, distance: Any = None, voltage: Any = None, samples: int = 400
) -> EdgeField:
    """Peak field strength at the electrode edges, per volt applied.

    Parameters
    ----------
    solution : Solution
        A solved fixture (it must carry its field).
    distance : length, optional
        For sharp edges: the radius of the circles about each edge on which the field
        is reported; default 5 % of the smallest feature (an electrode's size, or the
        spacing of its corners, e.g. a guard gap), at least 1 um.
    voltage : voltage, optional
        The test voltage, for the caution.
    samples : int
        Points per circular arc and per straight side where the surface is sampled.

    Returns
    -------
    EdgeField

    Notes
    -----
    The gradient of the finite-element potential is evaluated exactly at points just
    off the conductor surfaces (rounded edges) or on circles about sharp edges. Near a
    conducting wedge of exterior angle beta the field grows as rho^(pi/beta - 1): as
    rho^(-1/2) at the edge of a thin plate, rho^(-1/3) at a square corner, so a sharp
    edge has no finite peak.

    References
    ----------
    J. D. Jackson, Classical Electrodynamics, 3rd ed., Wiley, 1999, section 2.11.
    """
    if solution.field is None:
        raise SolverError("this solution carries no field; solve the fixture again")
    if isinstance(samples, bool) or not isinstance(samples, int) or not 8 <= samples <= 100_000:
        # each sample is a point located in the mesh: a huge count is a memory fault
        raise InputError(f"samples = {samples!r}; valid: a whole number 8 to 100000", value=samples)
    fx = solution.fixture
    g = fx.geometry
    axi = g.axisymmetric
    volts = None if voltage is None else to_si(voltage, "voltage", "voltage")
    if volts is not None and not (0 < volts <= 1e6):
        raise InputError(
            f"voltage = {volts:.6g} V; valid: 0 V < voltage <= 1 MV", value=volts, unit="V"
        )
    corners = []
    smooth_edges = []
    for c in g.conductors:
        for s in simple_shapes(c.shape):
            if isinstance(s, (Plate, Rect, Polygon)):
                corners.extend(shape_corners(s, axi))
            else:
                smooth_edges.extend(shape_edges(s, axi))
    evaluator = _GradientProbe(solution)
    sharp = bool(corners)
    rho = None
    at_rho = None
    loc = (math.nan, math.nan)
    if sharp:
        rho = _default_distance(g, corners) if distance is None else v.length(distance, "distance")
        pts = []
        ang = np.linspace(0, 2 * math.pi, samples, endpoint=False)
        for cx, cy in corners:
            pts.append(np.vstack((cx + rho * np.cos(ang), cy + rho * np.sin(ang))))
        P = np.hstack(pts)
        E, _reg, ok = evaluator(P)
        if not ok.any():
            raise SolverError(f"no field point found {rho * 1e6:.3g} um from the sharp edges")
        k = int(np.argmax(np.where(ok, E, -1)))
        at_rho = float(E[k])
        loc = (float(P[0, k]), float(P[1, k]))
    peak = peak_air = None
    if smooth_edges and not sharp:
        P = np.hstack([_surface_points(e, samples) for e in smooth_edges])
        P = _off_surface(P, g)
        E, reg, ok = evaluator(P)
        if ok.any():
            k = int(np.argmax(np.where(ok, E, -1)))
            peak = float(E[k])
            loc = (float(P[0, k]), float(P[1, k]))
            air = ok & (reg == MEDIUM_REGION)
            peak_air = float(E[air].max()) if air.any() else None
    if not sharp and peak is None:
        raise SolverError("no conductor surface found to evaluate the edge field on")
    return EdgeField(sharp, peak, peak_air, loc, rho, at_rho, volts)


def _default_distance(g, corners) -> float:
    """5 % of the smallest feature: conductor sizes and the spacing of sharp corners."""
    sizes = []
    for c in g.conductors:
        for s in simple_shapes(c.shape):
            x0, y0, x1, y1 = s.bbox
            sizes.extend(d for d in (x1 - x0, y1 - y0) if d > 0)
    pts = np.unique(np.round(np.asarray(corners, float), 15), axis=0)
    if len(pts) > 1:
        d = np.hypot(*(pts[:, None, :] - pts[None, :, :]).transpose(2, 0, 1))
        sizes.append(float(d[d > 0].min()))
    return max(0.05 * min(sizes), 1e-6)


def _surface_points(edge, n: int) -> np.ndarray:
    return edge.point(np.linspace(0.0, 1.0, n))


def _off_surface(P: np.ndarray, g) -> np.ndarray:
    """Move surface points a hair into the field region (the probe needs an element)."""
    x0, y0, x1, y1 = g.bbox()
    eps = 1e-9 * max(x1 - x0, y1 - y0)
    out = P.copy()
    inside = np.zeros(P.shape[1], bool)
    for c in g.conductors:
        inside |= c.shape.contains(P)
    # step outward along the direction that leaves every conductor
    for dx, dy in ((1, 0), (-1, 0), (0, 1), (0, -1), (1, 1), (-1, 1), (1, -1), (-1, -1)):
        Q = P + eps * np.array([[dx], [dy]])
        free = np.ones(P.shape[1], bool)
        for c in g.conductors:
            free &= ~c.shape.contains(Q)
        # a point exactly on the boundary is not "inside"; the outward step is the one
        # whose mirror step lands inside the conductor
        Qm = P - eps * np.array([[dx], [dy]])
        into = np.zeros(P.shape[1], bool)
        for c in g.conductors:
            into |= c.shape.contains(Qm)
        good = free & into & ~inside
        out[:, good] = Q[:, good]
        inside |= good
    return out


class _GradientProbe:
    """|grad u| of the terminal drive at arbitrary points, from the degree-p solution,
    located and differentiated through the engine's exact element maps (so points
    beside curved conductor faces find the element they really lie in)."""

    def __init__(self, sol: Solution):
        from .capacitance import drive_potentials

        fs = sol.field
        fx = sol.fixture
        V = drive_potentials(
            fs.maxwell_energy, sol.terminals, fx.high, fx.low, fx.connection, sol.grounded
        )
        self.u = np.real(fs.potentials @ V)
        self.asm = fs.assembly
        self.region = self.asm.mesh.region

    def __call__(self, P: np.ndarray):
        from . import field as fe

        n = P.shape[1]
        cells, X = fe.locate(self.asm, P)
        ok = cells >= 0
        E = np.zeros(n)
        reg = np.full(n, -99)
        if ok.any():
            g = fe.gradient_at(self.asm, self.u, cells[ok], X[:, ok])
            E[ok] = np.hypot(g[0], g[1])
            reg[ok] = self.region[cells[ok]]
        return E, reg, ok


__all__ = [
    "AIR_BREAKDOWN",
    "FORMULA_SOURCE",
    "SAFETY_NOTE",
    "EdgeCase",
    "EdgeField",
    "ErrorMap",
    "GuardCheck",
    "GuardDesign",
    "edge_cases_task",
    "edge_field",
    "effective_area",
    "error_map",
    "formula_diameter",
    "gap_factor",
    "guard_check",
    "guard_design",
]
