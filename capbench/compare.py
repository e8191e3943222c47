"""Measured against ideal: where a capacitance reading comes from.

Given a fixture and a measured capacitance, :func:`measured_vs_ideal` splits the reading into the
ideal parallel-plate value, the fringing share the finite-element field adds, the stray
and lead capacitance the lab supplies, and the residual that none of these explain
(with the shift of eps_r that would account for it). The same split is made for the
unguarded version of the cell (two equal discs, no guard), next to the standard's
empirical edge-capacitance correction for unguarded discs, so a lab sees what the guard
buys.

The parts add up to the reading exactly: residual = measured - ideal - fringing - stray
- leads.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import pint

from . import validate as v
from .capacitance import solve
from .errors import InputError
from .geometry import Fixture
from .guard import _gap_factor
from .rigs import SPECIMEN, Specimen, parallel_discs
from .units import EPS0, Q_

#: where the unguarded edge correction comes from (coefficients recalled, not read)
EDGE_CAPACITANCE_SOURCE = (
    "ASTM D150 (Standard Test Methods for AC Loss Characteristics and Permittivity of "
    "Solid Electrical Insulation), table of edge-capacitance corrections, coaxial discs "
    "of equal size with the specimen diameter equal to theirs: "
    "C_e = (0.0087 - 0.00252 ln t) P pF with P the perimeter and t the thickness in mm "
    "(coefficients from memory; the table is a regression on measured data)"
)

GAP_FORMULA_NAME = "standard's gap correction eps0 eps_r (A(d1 + B g) - A(d1)) / t"
EDGE_FORMULA_NAME = (
    "standard's empirical edge capacitance C_e (unguarded discs; approximate: its "
    "coefficients are quoted from memory)"
)

KINDS = ("guarded_cell", "parallel_discs")


def astm_edge_capacitance(diameter: Any, thickness: Any) -> pint.Quantity:
    """Empirical edge capacitance of two equal unguarded discs on a specimen of the same
    diameter, by the standard's regression formula.

    Parameters
    ----------
    diameter : length
        Electrode (and specimen) diameter.
    thickness : length
        Specimen thickness (contacting electrodes).

    Returns
    -------
    Quantity
        C_e in pF.

    Notes
    -----
    C_e = (0.0087 - 0.00252 ln t) P pF, P = pi d and t in millimetres. It is meant for
    thin (foil) electrodes and specimens thin compared with the diameter; outside that
    range the FEM value is the one to trust.

    References
    ----------
    ASTM D150, table of edge-capacitance corrections (coefficients from memory); the
    formulas are a regression on measured data (D. E. Woolley, "Edge Correction in
    Calculation of Dielectric Constant", J. Test. Eval. 39(2), 2011, abstract).
    """
    d = v.length(diameter, "diameter")
    t = v.length(thickness, "thickness")
    p_mm = math.pi * d * 1e3
    t_mm = t * 1e3
    return Q_((0.0087 - 0.00252 * math.log(t_mm)) * p_mm, "pF")


@dataclass(frozen=True)
class Breakdown:
    """One reading split into its parts (all in farads).

    measured = ideal + fringing + stray + leads + residual, where ideal is the
    parallel-plate value eps0 A / (t/eps_r + s) with the bare electrode area, fringing
    is what the FEM field adds to it, and residual is what remains. ``measured`` is None
    for a prediction (no reading given); residual is then None too. ``standard`` is the
    standard's own estimate of the fringing share, for comparison, named by
    ``standard_name``; ``eps_shift`` is the change of the specimen's eps_r that would
    explain the residual (first order, from the FEM sensitivity dC/d eps_r).
    """

    label: str
    ideal: float
    fringing: float
    stray: float
    leads: float
    measured: float | None
    fem_rel_error: float
    sensitivity: float
    standard: float | None
    standard_name: str

    @property
    def fem(self) -> float:
        """The FEM's capacitance of the fixture (ideal + fringing)."""
        return self.ideal + self.fringing

    @property
    def predicted(self) -> float:
        """What the bridge should read: FEM value plus stray and leads."""
        return self.fem + self.stray + self.leads

    @property
    def residual(self) -> float | None:
        if self.measured is None:
            return None
        return self.measured - self.ideal - self.fringing - self.stray - self.leads

    @property
    def eps_shift(self) -> float | None:
        r = self.residual
        return None if r is None else r / self.sensitivity

    def parts(self) -> dict[str, pint.Quantity]:
        """The named parts in pF (ideal, fringing, stray, leads, residual)."""
        out = {
            "ideal": Q_(self.ideal, "F").to("pF"),
            "fringing": Q_(self.fringing, "F").to("pF"),
            "stray": Q_(self.stray, "F").to("pF"),
            "leads": Q_(self.leads, "F").to("pF"),
        }
        if self.residual is not None:
            out["residual"] = Q_(self.residual, "F").to("pF")
        return out

    def text(self) -> str:
        """The breakdown as aligned lines, each part in pF and as a share of the total."""
        total = self.measured if self.measured is not None else self.predicted
        lines = [f"{self.label}:"]
        for name, q in self.parts().items():
            share = q.to("F").magnitude / total * 100
            lines.append(f"  {name:<9} {q.magnitude:12.5f} pF  {share:+9.4f} %")
        tail = "measured" if self.measured is not None else "predicted"
        lines.append(f"  {tail:<9} {total * 1e12:12.5f} pF")
        if self.standard is not None:
            lines.append(
                f"  {self.standard_name}: {self.standard * 1e12:.5f} pF against the FEM "
                f"fringing {self.fringing * 1e12:.5f} pF "
                f"({(self.standard - self.fringing) / self.fem * 100:+.4f} % of the total)"
            )
        if self.eps_shift is not None:
            lines.append(f"  residual as a change of eps_r: {self.eps_shift:+.5f}")
        return "\n".join(lines)


@dataclass(frozen=True)
class Comparison:
    """Result of :func:`measured_vs_ideal`: the fixture's own breakdown and its unguarded twin's.

    guarded: the breakdown of the fixture as measured (None if the fixture is itself
    unguarded); unguarded: two equal discs of the same electrode diameter on the same
    specimen, two-terminal, with the standard's empirical edge correction beside it.
    eps_r: the specimen permittivity assumed (the fixture's); thickness, diameter in m.
    """

    name: str
    eps_r: float
    thickness: float
    diameter: float
    guarded: Breakdown | None
    unguarded: Breakdown

    def text(self) -> str:
        head = (
            f"{self.name}: specimen {self.thickness * 1e3:.4g} mm, eps_r {self.eps_r:.5g} "
            f"assumed, electrode diameter {self.diameter * 1e3:.5g} mm"
        )
        parts = [head]
        if self.guarded is not None:
            parts.append(self.guarded.text())
        parts.append(self.unguarded.text())
        return "\n".join(parts)


def _optional_capacitance(value: Any, name: str) -> float:
    if value is None:
        return 0.0
    return v.check_or_zero(value, "capacitance", name)


def measured_vs_ideal(
    fixture: Fixture,
    measured: Any,
    *,
    stray: Any = None,
    leads: Any = None,
    unguarded_measured: Any = None,
    rtol: float = 1e-6,
) -> Comparison:
    """Split a measured capacitance into ideal, fringing, stray, leads and residual.

    Parameters
    ----------
    fixture : Fixture
        A :func:`capbench.guarded_cell` or :func:`capbench.parallel_discs` with a
        specimen; its specimen permittivity is the value assumed.
    measured : capacitance
        The reading (Quantity, "20.5 pF", or farads).
    stray, leads : capacitance, optional
        Stray capacitance in parallel with the specimen and lead capacitance the bridge
        sees, if known (two-terminal readings; a three-terminal bridge rejects most of
        both).
    unguarded_measured : capacitance, optional
        A reading of the unguarded twin, if one was taken; else its breakdown is a
        prediction.
    rtol : float
        Relative accuracy of the FEM solves.

    Returns
    -------
    Comparison

    Notes
    -----
    ideal = eps0 pi (d1/2)^2 / (t/eps_r + s/eps_m) with d1 the (guarded) electrode
    diameter, t the specimen thickness, s an air gap of permittivity eps_m; fringing =
    C_FEM - ideal; residual = measured - ideal - fringing - stray - leads.
    The guarded cell's standard estimate is eps0 eps_r pi ((d1 + B g)^2 - d1^2) / (4 t)
    (gap formula of ASTM D150 / IEC 62631-2-1, attribution from memory); the unguarded
    one is the empirical C_e of :func:`astm_edge_capacitance`.

    References
    ----------
    ASTM D150; IEC 62631-2-1 (see :data:`EDGE_CAPACITANCE_SOURCE`).
    """
    if not isinstance(fixture, Fixture):
        raise InputError(
            f"expected a capbench Fixture, got {type(fixture).__name__}", value=repr(fixture)
        )
    if fixture.kind not in KINDS:
        raise InputError(
            f"compare works on fixtures made by {KINDS}; got kind {fixture.kind!r}",
            value=fixture.kind,
        )
    if fixture.specimen is None:
        raise InputError(
            "the fixture has no specimen; give parallel_discs a specimen=Specimen(...)",
            value=None,
        )
    c_meas = v.check(measured, "capacitance", "measured")
    c_stray = _optional_capacitance(stray, "stray")
    c_leads = _optional_capacitance(leads, "leads")
    c_ung = (
        None
        if unguarded_measured is None
        else v.check(unguarded_measured, "capacitance", "unguarded_measured")
    )
    p = fixture.param_dict
    eps = complex(fixture.geometry.permittivities()[SPECIMEN]).real
    medium = complex(fixture.geometry.medium_eps_r).real
    if fixture.kind == "guarded_cell":
        r1 = p["electrode_radius"]
        t = p["specimen_thickness"]
        s = p["air_gap"]
        te = p["electrode_thickness"]
        ideal = EPS0 * math.pi * r1**2 / (t / eps + s / medium)
        sol = solve(fixture, rtol=rtol)
        standard = None
        if s == 0:
            g = p["guard_gap"]
            d_f = 2 * r1 + _gap_factor(g, t) * g
            standard = EPS0 * eps * math.pi * (d_f**2 - 4 * r1**2) / (4 * t)
        guarded = Breakdown(
            label=f"guarded (three-terminal) {fixture.name}",
            ideal=ideal,
            fringing=float(sol.terminal.real) - ideal,
            stray=c_stray,
            leads=c_leads,
            measured=c_meas,
            fem_rel_error=float(sol.rel_error),
            sensitivity=float(sol.sensitivity(SPECIMEN).real),
            standard=standard,
            standard_name=GAP_FORMULA_NAME,
        )
        twin = parallel_discs(
            radius=r1,
            gap=t + s,
            thickness=te,
            specimen=Specimen(t, fixture.geometry.permittivities()[SPECIMEN], radius=r1),
            medium_eps_r=fixture.geometry.medium_eps_r,
            name="unguarded twin",
        )
        how = "measured" if c_ung is not None else "predicted"
        un = _unguarded(twin, c_ung, 0.0, 0.0, rtol, f"unguarded twin (two-terminal, {how})")
        return Comparison(fixture.name, eps, t, 2 * r1, guarded, un)
    spec: Specimen = p["specimen"]
    un = _unguarded(
        fixture, c_meas, c_stray, c_leads, rtol, f"unguarded (two-terminal) {fixture.name}"
    )
    return Comparison(
        fixture.name, eps, spec.thickness, 2 * min(p["radius"], p["radius2"]), None, un
    )


def _unguarded(
    fx: Fixture, measured: float | None, stray: float, leads: float, rtol: float, label: str
) -> Breakdown:
    p = fx.param_dict
    spec: Specimen = p["specimen"]
    a = min(p["radius"], p["radius2"])
    d = p["gap"]
    t = spec.thickness
    eps = complex(spec.eps_r).real
    medium = complex(fx.geometry.medium_eps_r).real
    ideal = EPS0 * math.pi * a**2 / (t / eps + (d - t) / medium)
    sol = solve(fx, rtol=rtol)
    applicable = (
        math.isclose(t, d, rel_tol=1e-9)
        and p["radius"] == p["radius2"]
        and (spec.radius is None or math.isclose(spec.radius, a, rel_tol=1e-9))
    )
    standard = astm_edge_capacitance(2 * a, t).to("F").magnitude if applicable else None
    return Breakdown(
        label=label,
        ideal=ideal,
        fringing=float(sol.terminal.real) - ideal,
        stray=stray,
        leads=leads,
        measured=measured,
        fem_rel_error=float(sol.rel_error),
        sensitivity=float(sol.sensitivity(SPECIMEN).real),
        standard=standard,
        standard_name=EDGE_FORMULA_NAME,
    )
