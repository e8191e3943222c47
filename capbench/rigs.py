"""Builders for the electrode fixtures of the trade.

Every length may be a pint Quantity, a string with a unit (``"25 mm"``) or a float in
metres. Each builder returns a :class:`~capbench.geometry.Fixture` whose ``kind`` and
``params`` record the call, so ``fixture.with_changes(gap="3 mm")`` rebuilds it.

Axisymmetric rigs put the z axis on the electrodes' common axis. Planar rigs give
capacitance per unit length unless a length is given.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

from . import validate as v
from .errors import GeometryError
from .geometry import (
    AXISYMMETRIC,
    DIRECT,
    MEDIUM,
    PAIR,
    PLANAR,
    Compound,
    Conductor,
    Dielectric,
    Enclosure,
    Fixture,
    Geometry,
    OpenSpace,
    Plate,
    Polygon,
    Rect,
    RoundedRect,
)

SPECIMEN = "specimen"


@dataclass(frozen=True)
class Specimen:
    """A flat specimen between two electrodes.

    thickness: specimen thickness; eps_r: relative permittivity (complex for loss);
    radius (or half-width, planar): defaults to the electrodes' extent; lift: air gap
    between the low electrode and the specimen (0: resting on it).
    """

    thickness: Any
    eps_r: complex = 2.0
    radius: Any = None
    lift: Any = 0.0

    def __post_init__(self):
        object.__setattr__(self, "thickness", v.length(self.thickness, "specimen thickness"))
        object.__setattr__(self, "eps_r", v.eps_r(self.eps_r, "specimen eps_r"))
        object.__setattr__(self, "radius", v.optional_length(self.radius, "specimen radius"))
        lift = 0.0 if self.lift in (0, 0.0, None) else v.length(self.lift, "specimen lift")
        object.__setattr__(self, "lift", lift)


def _specimen(value) -> Specimen | None:
    if value is None or isinstance(value, Specimen):
        return value
    if isinstance(value, dict):
        try:
            return Specimen(**value)
        except TypeError as exc:
            raise GeometryError(
                f"specimen {value!r}: {exc}; valid keys: thickness, eps_r, radius, lift",
                value=value,
            ) from None
    raise GeometryError(
        f"specimen = {value!r}; give a Specimen or a dict with thickness and eps_r", value=value
    )


def _shield(value, half_height_default: float) -> Enclosure | None:
    """A grounded cylindrical can (axisymmetric): (radius, height) centred on z = 0."""
    if value is None:
        return None
    try:
        radius, height = value
    except (TypeError, ValueError):
        raise GeometryError(
            f"shield = {value!r}; give (radius, height) of the grounded can", value=value
        ) from None
    radius = v.length(radius, "shield radius")
    height = v.length(height, "shield height")
    del half_height_default
    return Enclosure(0.0, -height / 2, radius, height / 2)


def _params(**kwargs) -> tuple[tuple[str, object], ...]:
    return tuple(sorted(kwargs.items()))


def _electrode(x0, y0, x1, y1, thickness, edge_radius, face_up: bool):
    """A disc or strip electrode: a plate if thickness is 0, else a (rounded) slab whose
    face at y0 (face_up False) or y1 is the active face."""
    if thickness == 0:
        if edge_radius:
            raise GeometryError(
                f"edge_radius = {edge_radius * 1e3:.6g} mm needs an electrode thickness > 0 mm "
                "(the thickness is 0: thin plates have no edge to round)",
                value=edge_radius,
            )
        y = y0
        return Plate(x0, y, x1, y)
    ya, yb = (y0 - thickness, y0) if face_up else (y0, y0 + thickness)
    if edge_radius:
        if edge_radius > thickness / 2:
            raise GeometryError(
                f"edge radius = {edge_radius * 1e3:.6g} mm exceeds half the electrode "
                f"thickness; valid: 0 mm to {thickness * 1e3 / 2:.6g} mm",
                value=edge_radius,
                valid=(0.0, thickness / 2),
            )
        return RoundedRect(x0, ya, x1, yb, edge_radius)
    return Rect(x0, ya, x1, yb)


def parallel_discs(
    radius,
    gap,
    thickness=0.0,
    radius2=None,
    specimen=None,
    edge_radius=None,
    medium_eps_r=1.0,
    shield=None,
    name="",
) -> Fixture:
    """Two coaxial discs facing each other across ``gap`` (two-terminal, ``PAIR``).

    The high disc ("top", radius ``radius``) has its lower face at z = gap/2; the low
    disc ("bottom", radius ``radius2``, default equal) its upper face at z = -gap/2.
    ``thickness`` 0 gives ideal thin discs. ``specimen``: a :class:`Specimen` (or dict)
    resting on the bottom disc. ``shield``: (radius, height) of a grounded can.
    """
    a = v.length(radius, "radius")
    d = v.length(gap, "gap")
    te = 0.0 if not thickness else v.length(thickness, "thickness")
    a2 = a if radius2 is None else v.length(radius2, "radius2")
    er = None if edge_radius is None else v.length(edge_radius, "edge_radius")
    spec = _specimen(specimen)
    medium = v.eps_r(medium_eps_r, "medium eps_r")
    _warn_aspect(d, max(a, a2), "gap", "disc radius")
    conductors = (
        Conductor("top", _electrode(0.0, d / 2, a, d / 2, te, er, face_up=False)),
        Conductor("bottom", _electrode(0.0, -d / 2, a2, -d / 2, te, er, face_up=True)),
    )
    dielectrics = ()
    if spec is not None:
        if spec.thickness + spec.lift > d * (1 + 1e-12):
            raise GeometryError(
                f"specimen thickness {spec.thickness * 1e3:.6g} mm (+ lift "
                f"{spec.lift * 1e3:.6g} mm) exceeds the gap {d * 1e3:.6g} mm; valid: 0 mm "
                f"to {d * 1e3:.6g} mm together",
                value=spec.thickness,
                valid=(0.0, d),
            )
        top = min(-d / 2 + spec.lift + spec.thickness, d / 2)
        rs = spec.radius if spec.radius is not None else max(a, a2)
        dielectrics = (Dielectric(SPECIMEN, Rect(0.0, -d / 2 + spec.lift, rs, top), spec.eps_r),)
    geom = Geometry(
        AXISYMMETRIC,
        conductors,
        dielectrics,
        medium_eps_r=medium,
        boundary=_shield(shield, d) or OpenSpace(),
    )
    return Fixture(
        geom,
        high="top",
        low="bottom",
        connection=PAIR,
        name=name or "parallel discs",
        kind="parallel_discs",
        params=_params(
            radius=a,
            gap=d,
            thickness=te,
            radius2=a2,
            specimen=spec,
            edge_radius=er,
            medium_eps_r=medium,
            shield=shield,
        ),
        specimen=SPECIMEN if spec else None,
    )


def guarded_cell(
    electrode_radius,
    guard_gap,
    guard_width,
    specimen_thickness,
    specimen_eps_r=2.0,
    unguarded_radius=None,
    specimen_radius=None,
    electrode_thickness=0.0,
    shield=None,
    edge_radius=None,
    air_gap=0.0,
    medium_eps_r=1.0,
    name="",
) -> Fixture:
    """Three-terminal cell: guarded electrode and guard ring under the specimen, the
    unguarded electrode on top (``DIRECT`` capacitance unguarded to guarded, guard at
    the guarded electrode's potential).

    The specimen occupies 0 <= z <= specimen_thickness; the guarded disc (radius
    ``electrode_radius``) and the guard ring (from electrode_radius + guard_gap, width
    ``guard_width``) lie on z = 0, the unguarded disc on z = specimen_thickness +
    ``air_gap`` (a non-contacting electrode if air_gap > 0).
    """
    r1 = v.length(electrode_radius, "electrode_radius")
    g = v.length(guard_gap, "guard_gap")
    w = v.length(guard_width, "guard_width")
    t = v.length(specimen_thickness, "specimen_thickness")
    eps = v.eps_r(specimen_eps_r, "specimen_eps_r")
    r_out = r1 + g + w
    ru = r_out if unguarded_radius is None else v.length(unguarded_radius, "unguarded_radius")
    rs = max(ru, r_out) if specimen_radius is None else v.length(specimen_radius, "specimen_radius")
    te = 0.0 if not electrode_thickness else v.length(electrode_thickness, "electrode_thickness")
    er = None if edge_radius is None else v.length(edge_radius, "edge_radius")
    s = 0.0 if not air_gap else v.length(air_gap, "air_gap")
    medium = v.eps_r(medium_eps_r, "medium eps_r")
    _warn_aspect(g, r1, "guard gap", "electrode radius")
    if ru <= r1:
        raise GeometryError(
            f"unguarded radius {ru * 1e3:.6g} mm must exceed the guarded electrode radius "
            f"{r1 * 1e3:.6g} mm",
            value=ru,
            valid=(r1, math.inf),
        )
    conductors = (
        Conductor("unguarded", _electrode(0.0, t + s, ru, t + s, te, er, face_up=False)),
        Conductor("guarded", _electrode(0.0, 0.0, r1, 0.0, te, er, face_up=True)),
        Conductor("guard", _electrode(r1 + g, 0.0, r_out, 0.0, te, er, face_up=True)),
    )
    dielectrics = (Dielectric(SPECIMEN, Rect(0.0, 0.0, rs, t), eps),)
    geom = Geometry(
        AXISYMMETRIC,
        conductors,
        dielectrics,
        medium_eps_r=medium,
        boundary=_shield(shield, t) or OpenSpace(),
    )
    return Fixture(
        geom,
        high="unguarded",
        low="guarded",
        connection=DIRECT,
        name=name or "guarded cell",
        kind="guarded_cell",
        params=_params(
            electrode_radius=r1,
            guard_gap=g,
            guard_width=w,
            specimen_thickness=t,
            specimen_eps_r=eps,
            unguarded_radius=ru,
            specimen_radius=rs,
            electrode_thickness=te,
            shield=shield,
            edge_radius=er,
            air_gap=s,
            medium_eps_r=medium,
        ),
        specimen=SPECIMEN,
    )


def coaxial_cell(
    inner_radius,
    outer_radius,
    length,
    fill_eps_r=1.0,
    wall=None,
    guard_length=None,
    guard_gap=None,
    medium_eps_r=1.0,
    name="",
) -> Fixture:
    """A cylindrical liquid cell: inner rod ("inner", high) in an outer tube ("outer",
    low) of ``length``, the annulus filled with liquid ("specimen").

    With ``guard_length``, guard tubes of that length sit above and below the outer
    electrode, ``guard_gap`` from it, and the capacitance is the ``DIRECT`` one; else
    ``PAIR``. The rod spans the whole height; the liquid fills the annulus over it.
    """
    a = v.length(inner_radius, "inner_radius")
    b = v.length(outer_radius, "outer_radius")
    L = v.length(length, "length")
    eps = v.eps_r(fill_eps_r, "fill_eps_r")
    medium = v.eps_r(medium_eps_r, "medium eps_r")
    if b <= a:
        raise GeometryError(
            f"outer radius {b * 1e3:.6g} mm must exceed the inner radius {a * 1e3:.6g} mm",
            value=b,
            valid=(a, math.inf),
        )
    wl = 0.1 * b if wall is None else v.length(wall, "wall")
    guarded = guard_length is not None
    if guard_gap is not None and not guarded:
        raise GeometryError(
            f"guard_gap = {guard_gap!r} needs guard_length (the guard tubes' length): a "
            "coaxial cell without guard tubes has no guard gap; give both, or neither",
            value=guard_gap,
        )
    if guarded:
        Lg = v.length(guard_length, "guard_length")
        gg = v.length(guard_gap if guard_gap is not None else 0.02 * L, "guard_gap")
        H = L / 2 + gg + Lg
    else:
        Lg = gg = 0.0
        H = L / 2
    conductors = [
        Conductor("inner", Rect(0.0, -H, a, H)),
        Conductor("outer", Rect(b, -L / 2, b + wl, L / 2)),
    ]
    if guarded:
        conductors.append(
            Conductor(
                "guard",
                Compound((Rect(b, L / 2 + gg, b + wl, H), Rect(b, -H, b + wl, -L / 2 - gg))),
            )
        )
    dielectrics = (Dielectric(SPECIMEN, Rect(a, -H, b, H), eps),)
    geom = Geometry(AXISYMMETRIC, tuple(conductors), dielectrics, medium_eps_r=medium)
    return Fixture(
        geom,
        high="inner",
        low="outer",
        connection=DIRECT if guarded else PAIR,
        name=name or "coaxial cell",
        kind="coaxial_cell",
        params=_params(
            inner_radius=a,
            outer_radius=b,
            length=L,
            fill_eps_r=eps,
            wall=wl,
            guard_length=Lg if guarded else None,
            guard_gap=gg if guarded else None,
            medium_eps_r=medium,
        ),
        specimen=SPECIMEN,
    )


def parallel_strips(
    width, gap, thickness=0.0, specimen=None, length=None, medium_eps_r=1.0, name=""
) -> Fixture:
    """Planar: two strips of ``width`` facing each other across ``gap`` (``PAIR``)."""
    wd = v.length(width, "width")
    d = v.length(gap, "gap")
    te = 0.0 if not thickness else v.length(thickness, "thickness")
    spec = _specimen(specimen)
    L = v.optional_length(length, "length")
    medium = v.eps_r(medium_eps_r, "medium eps_r")
    _warn_aspect(d, wd, "gap", "strip width")
    conductors = (
        Conductor("top", _electrode(-wd / 2, d / 2, wd / 2, d / 2, te, None, face_up=False)),
        Conductor("bottom", _electrode(-wd / 2, -d / 2, wd / 2, -d / 2, te, None, face_up=True)),
    )
    dielectrics = ()
    if spec is not None:
        if spec.thickness + spec.lift > d * (1 + 1e-12):
            raise GeometryError(
                f"specimen thickness {spec.thickness * 1e3:.6g} mm (+ lift "
                f"{spec.lift * 1e3:.6g} mm) exceeds the gap {d * 1e3:.6g} mm; valid: 0 mm "
                f"to {d * 1e3:.6g} mm together",
                value=spec.thickness,
                valid=(0.0, d),
            )
        hw = spec.radius if spec.radius is not None else wd / 2
        y0 = -d / 2 + spec.lift
        dielectrics = (
            Dielectric(SPECIMEN, Rect(-hw, y0, hw, min(y0 + spec.thickness, d / 2)), spec.eps_r),
        )
    geom = Geometry(PLANAR, conductors, dielectrics, medium_eps_r=medium)
    return Fixture(
        geom,
        high="top",
        low="bottom",
        connection=PAIR,
        length=L,
        name=name or "parallel strips",
        kind="parallel_strips",
        params=_params(width=wd, gap=d, thickness=te, specimen=spec, length=L, medium_eps_r=medium),
        specimen=SPECIMEN if spec else None,
    )


def _substrate(thickness, eps, half_width) -> tuple[Dielectric, ...]:
    if thickness is None:
        return ()
    return (Dielectric(SPECIMEN, Rect(-half_width, -thickness, half_width, 0.0), eps),)


def coplanar_strips(
    width,
    gap,
    thickness=0.0,
    substrate_thickness=None,
    substrate_eps_r=1.0,
    substrate_width=None,
    length=None,
    name="",
) -> Fixture:
    """Planar: two strips of ``width`` side by side on y = 0, ``gap`` apart, optionally on
    a substrate below (``PAIR``)."""
    wd = v.length(width, "width")
    s = v.length(gap, "gap")
    te = 0.0 if not thickness else v.length(thickness, "thickness")
    ts = v.optional_length(substrate_thickness, "substrate_thickness")
    eps = v.eps_r(substrate_eps_r, "substrate_eps_r")
    span = s + 2 * wd
    hw = v.length(substrate_width, "substrate_width") / 2 if substrate_width is not None else span
    L = v.optional_length(length, "length")
    conductors = (
        Conductor("left", _electrode(-s / 2 - wd, 0.0, -s / 2, 0.0, te, None, face_up=False)),
        Conductor("right", _electrode(s / 2, 0.0, s / 2 + wd, 0.0, te, None, face_up=False)),
    )
    geom = Geometry(PLANAR, conductors, _substrate(ts, eps, hw))
    return Fixture(
        geom,
        high="left",
        low="right",
        connection=PAIR,
        length=L,
        name=name or "coplanar strips",
        kind="coplanar_strips",
        params=_params(
            width=wd,
            gap=s,
            thickness=te,
            substrate_thickness=ts,
            substrate_eps_r=eps,
            substrate_width=2 * hw,
            length=L,
        ),
        specimen=SPECIMEN if ts else None,
    )


def interdigitated(
    finger_width,
    finger_gap,
    n_fingers,
    substrate_thickness=None,
    substrate_eps_r=1.0,
    finger_length=None,
    thickness=0.0,
    substrate_width=None,
    name="",
) -> Fixture:
    """Planar cross-section of an interdigitated electrode: ``n_fingers`` strips on y = 0
    alternately connected to "high" and "low", on a substrate below.

    With ``finger_length`` the capacitance is that of fingers of that length (F),
    neglecting the finger ends and the bus bars; without it, per unit length.
    """
    wd = v.length(finger_width, "finger_width")
    s = v.length(finger_gap, "finger_gap")
    n = int(n_fingers)
    if n != n_fingers or not 2 <= n <= 200:
        raise GeometryError(
            f"n_fingers = {n_fingers!r}; valid: a whole number 2 to 200",
            value=n_fingers,
            valid=(2, 200),
        )
    te = 0.0 if not thickness else v.length(thickness, "thickness")
    ts = v.optional_length(substrate_thickness, "substrate_thickness")
    eps = v.eps_r(substrate_eps_r, "substrate_eps_r")
    L = v.optional_length(finger_length, "finger_length")
    pitch = wd + s
    span = n * wd + (n - 1) * s
    hw = (
        v.length(substrate_width, "substrate_width") / 2
        if substrate_width is not None
        else 0.5 * span + 2 * pitch
    )
    shapes: dict[str, list] = {"high": [], "low": []}
    for i in range(n):
        x0 = -span / 2 + i * pitch
        shape = Plate(x0, 0.0, x0 + wd, 0.0) if te == 0 else Rect(x0, 0.0, x0 + wd, te)
        shapes["high" if i % 2 == 0 else "low"].append(shape)
    conductors = tuple(Conductor(k, Compound(tuple(sh))) for k, sh in shapes.items())
    geom = Geometry(PLANAR, conductors, _substrate(ts, eps, hw))
    return Fixture(
        geom,
        high="high",
        low="low",
        connection=PAIR,
        length=L,
        name=name or "interdigitated electrode",
        kind="interdigitated",
        params=_params(
            finger_width=wd,
            finger_gap=s,
            n_fingers=n,
            substrate_thickness=ts,
            substrate_eps_r=eps,
            finger_length=L,
            thickness=te,
            substrate_width=2 * hw,
        ),
        specimen=SPECIMEN if ts else None,
    )


def four_electrode_section(width, gap, height=None, bar=None, clearance=None, name="") -> Fixture:
    """Planar cross-section of a four-electrode (cross-capacitance) cell.

    Four bars ("a" bottom, "b" right, "c" top, "d" left) frame a ``width`` x ``height``
    rectangle, cut apart along its diagonals by slots ``gap`` wide; a grounded enclosure
    sits ``clearance`` outside. ``DIRECT`` capacitance between "a" and "c" (the cross
    capacitance); the other is between "b" and "d".
    """
    W = v.length(width, "width")
    H = W if height is None else v.length(height, "height")
    g = v.length(gap, "gap")
    T = 0.25 * min(W, H) if bar is None else v.length(bar, "bar")
    c = 0.05 * min(W, H) if clearance is None else v.length(clearance, "clearance")
    if g >= 0.2 * min(W, H):
        raise GeometryError(
            f"gap = {g * 1e3:.6g} mm must be below a fifth of the smaller side "
            f"({0.2e3 * min(W, H):.6g} mm)",
            value=g,
        )
    # half offset of a slot of width g measured along x (or y) on a 45-degree cut
    o = g / math.sqrt(2)
    X, Y = W / 2, H / 2
    XO, YO = X + T, Y + T
    bars = {
        "a": Polygon(((-X + o, -Y), (X - o, -Y), (XO - o, -YO), (-XO + o, -YO))),
        "b": Polygon(((X, -Y + o), (X, Y - o), (XO, YO - o), (XO, -YO + o))),
        "c": Polygon(((X - o, Y), (-X + o, Y), (-XO + o, YO), (XO - o, YO))),
        "d": Polygon(((-X, Y - o), (-X, -Y + o), (-XO, -YO + o), (-XO, YO - o))),
    }
    conductors = tuple(Conductor(k, s) for k, s in bars.items())
    box = Enclosure(-XO - c, -YO - c, XO + c, YO + c)
    geom = Geometry(PLANAR, conductors, boundary=box)
    return Fixture(
        geom,
        high="a",
        low="c",
        connection=DIRECT,
        name=name or "four-electrode section",
        kind="four_electrode_section",
        params=_params(width=W, gap=g, height=H, bar=T, clearance=c),
    )


def _warn_aspect(small: float, large: float, small_name: str, large_name: str) -> None:
    if small * 1000 < large:
        v.warn(
            f"{small_name} ({small * 1e3:.4g} mm) is over 1000 times smaller than the "
            f"{large_name} ({large * 1e3:.4g} mm); check the units"
        )


BUILDERS = {
    "parallel_discs": parallel_discs,
    "guarded_cell": guarded_cell,
    "coaxial_cell": coaxial_cell,
    "parallel_strips": parallel_strips,
    "coplanar_strips": coplanar_strips,
    "interdigitated": interdigitated,
    "four_electrode_section": four_electrode_section,
}


def params_with_permittivity(fixture: Fixture, region: str, eps_r: complex) -> tuple:
    """The builder arguments of ``fixture`` with the permittivity of ``region`` set."""
    p = dict(fixture.params)
    if region == MEDIUM and "medium_eps_r" in p:
        p["medium_eps_r"] = eps_r
    elif region == SPECIMEN:
        for key in ("specimen_eps_r", "fill_eps_r", "substrate_eps_r"):
            if key in p:
                p[key] = eps_r
        if isinstance(p.get("specimen"), Specimen):
            p["specimen"] = replace(p["specimen"], eps_r=eps_r)
    return tuple(sorted(p.items()))


def rebuild(fixture: Fixture, **changes) -> Fixture:
    """The fixture its builder makes with some arguments changed."""
    if fixture.kind not in BUILDERS:
        raise GeometryError(
            f"fixture kind {fixture.kind!r} has no builder; valid: {sorted(BUILDERS)}",
            value=fixture.kind,
        )
    args = dict(fixture.params)
    unknown = set(changes) - set(args)
    if unknown:
        raise GeometryError(
            f"{fixture.kind} has no argument(s) {sorted(unknown)}; valid: {sorted(args)}",
            value=sorted(unknown),
        )
    args.update(changes)
    return BUILDERS[fixture.kind](name=fixture.name, **args)
