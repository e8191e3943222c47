"""Fixture cross-sections: conductors, dielectrics, the surrounding medium, the outer boundary.

A fixture is described by a 2-D cross-section in one of two symmetries:

* ``AXISYMMETRIC``: the (r, z) half-plane r >= 0, rotated about the z axis. Results are
  capacitances in F. x in this module means r and y means z.
* ``PLANAR``: an (x, y) section of an infinitely long fixture. Results are per unit
  length (F/m) unless the fixture gives a length.

All lengths here are SI floats (metres). Builders in :mod:`capbench.rigs` accept pint
quantities and strings and convert once.

Shapes are frozen dataclasses with three abilities the mesher needs: ``edges()`` (line
segments and circular arcs of the boundary, without any part lying on the symmetry
axis), ``corners()`` (points where the boundary has a kink, where the field is singular)
and ``contains(points)`` (strict interior test, vectorised).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from .errors import GeometryError

AXISYMMETRIC = "axisymmetric"
PLANAR = "planar"
SYMMETRIES = (AXISYMMETRIC, PLANAR)

#: Name of the region filled by the surrounding medium.
MEDIUM = "medium"
#: Name of the grounded outer conductor (enclosure, ground plane, or infinity in 3-D).
GROUND = "ground"

#: Terminal connections a bridge can make.
PAIR = "pair"  # two-terminal: equal and opposite charge, every other conductor floating
DIRECT = "direct"  # three-terminal: every other conductor held at the low's potential
CONNECTIONS = (PAIR, DIRECT)


# --------------------------------------------------------------------------- edges


@dataclass(frozen=True)
class Line:
    """A straight boundary segment from ``a`` to ``b``."""

    a: tuple[float, float]
    b: tuple[float, float]

    @property
    def length(self) -> float:
        return math.dist(self.a, self.b)

    def point(self, s: np.ndarray) -> np.ndarray:
        """Points at fractions ``s`` (0..1) along the segment, shape (2, n)."""
        a, b = np.asarray(self.a), np.asarray(self.b)
        return a[:, None] + (b - a)[:, None] * np.asarray(s)[None, :]


@dataclass(frozen=True)
class Arc:
    """A circular arc, counter-clockwise from angle ``t0`` to ``t1`` (radians)."""

    cx: float
    cy: float
    radius: float
    t0: float
    t1: float

    @property
    def length(self) -> float:
        return self.radius * (self.t1 - self.t0)

    @property
    def a(self) -> tuple[float, float]:
        return self._at(self.t0)

    @property
    def b(self) -> tuple[float, float]:
        return self._at(self.t1)

    def _at(self, t: float) -> tuple[float, float]:
        return (self.cx + self.radius * math.cos(t), self.cy + self.radius * math.sin(t))

    def point(self, s: np.ndarray) -> np.ndarray:
        t = self.t0 + (self.t1 - self.t0) * np.asarray(s)
        return np.vstack((self.cx + self.radius * np.cos(t), self.cy + self.radius * np.sin(t)))


Edge = Line | Arc


# --------------------------------------------------------------------------- shapes


def _check_finite(shape: str, **values: float) -> None:
    for key, v in values.items():
        if not math.isfinite(v):
            raise GeometryError(
                f"{shape}: {key} = {v!r} m is not a finite number", name=key, value=v
            )


@dataclass(frozen=True)
class Rect:
    """Axis-aligned rectangle [x0, x1] x [y0, y1]."""

    x0: float
    y0: float
    x1: float
    y1: float

    def __post_init__(self):
        _check_finite("rectangle", x0=self.x0, y0=self.y0, x1=self.x1, y1=self.y1)
        if not (self.x1 > self.x0 and self.y1 > self.y0):
            raise GeometryError(
                f"rectangle needs x1 > x0 and y1 > y0; got width {self.x1 - self.x0:.6g} m "
                f"and height {self.y1 - self.y0:.6g} m (both must be > 0 m)",
                width=self.x1 - self.x0,
                height=self.y1 - self.y0,
            )

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        return (self.x0, self.y0, self.x1, self.y1)

    def outline(self) -> list[tuple[float, float]]:
        return [(self.x0, self.y0), (self.x1, self.y0), (self.x1, self.y1), (self.x0, self.y1)]

    def edges(self) -> list[Edge]:
        return _polygon_edges(self.outline())

    def corners(self) -> list[tuple[float, float]]:
        return self.outline()

    def contains(self, p: np.ndarray) -> np.ndarray:
        x, y = p
        return (x > self.x0) & (x < self.x1) & (y > self.y0) & (y < self.y1)

    @property
    def area(self) -> float:
        return (self.x1 - self.x0) * (self.y1 - self.y0)


@dataclass(frozen=True)
class RoundedRect:
    """Rectangle whose corners are rounded with ``radius`` (a real electrode's edge).

    On the symmetry axis of an axisymmetric fixture, corners with x0 == 0 are not
    corners at all (they lie inside the revolved body) and stay square.
    """

    x0: float
    y0: float
    x1: float
    y1: float
    radius: float

    def __post_init__(self):
        Rect(self.x0, self.y0, self.x1, self.y1)  # same size checks
        _check_finite("rounded rectangle", radius=self.radius)
        half = 0.5 * min(self.x1 - self.x0, self.y1 - self.y0)
        if not (0 < self.radius <= half):
            raise GeometryError(
                f"edge radius = {self.radius:.6g} m must be > 0 m and at most half the "
                f"smaller side ({half:.6g} m)",
                name="radius",
                value=self.radius,
                valid=(0.0, half),
            )

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        return (self.x0, self.y0, self.x1, self.y1)

    def _rounded(self, axis_at_x0: bool) -> tuple[bool, bool, bool, bool]:
        # corners: lower-left, lower-right, upper-right, upper-left
        return (not axis_at_x0, True, True, not axis_at_x0)

    def edges(self, axis_at_x0: bool = False) -> list[Edge]:
        x0, y0, x1, y1, rad = self.x0, self.y0, self.x1, self.y1, self.radius
        ll, lr, ur, ul = self._rounded(axis_at_x0)
        out: list[Edge] = []
        # walk counter-clockwise: bottom, right, top, left
        out.append(Line((x0 + rad * ll, y0), (x1 - rad * lr, y0)))
        if lr:
            out.append(Arc(x1 - rad, y0 + rad, rad, -math.pi / 2, 0.0))
        out.append(Line((x1, y0 + rad * lr), (x1, y1 - rad * ur)))
        if ur:
            out.append(Arc(x1 - rad, y1 - rad, rad, 0.0, math.pi / 2))
        out.append(Line((x1 - rad * ur, y1), (x0 + rad * ul, y1)))
        if ul:
            out.append(Arc(x0 + rad, y1 - rad, rad, math.pi / 2, math.pi))
        out.append(Line((x0, y1 - rad * ul), (x0, y0 + rad * ll)))
        if ll:
            out.append(Arc(x0 + rad, y0 + rad, rad, math.pi, 1.5 * math.pi))
        return [e for e in out if e.length > 0]

    def corners(self) -> list[tuple[float, float]]:
        return []

    def contains(self, p: np.ndarray) -> np.ndarray:
        x, y = p
        rad = self.radius
        inside = (x > self.x0) & (x < self.x1) & (y > self.y0) & (y < self.y1)
        cx = np.clip(x, self.x0 + rad, self.x1 - rad)
        cy = np.clip(y, self.y0 + rad, self.y1 - rad)
        return inside & ((x - cx) ** 2 + (y - cy) ** 2 < rad**2)

    @property
    def area(self) -> float:
        return (self.x1 - self.x0) * (self.y1 - self.y0) - (4 - math.pi) * self.radius**2


@dataclass(frozen=True)
class Plate:
    """A zero-thickness conductor: the straight segment from (x0, y0) to (x1, y1)."""

    x0: float
    y0: float
    x1: float
    y1: float

    def __post_init__(self):
        _check_finite("plate", x0=self.x0, y0=self.y0, x1=self.x1, y1=self.y1)
        if math.hypot(self.x1 - self.x0, self.y1 - self.y0) <= 0:
            raise GeometryError("plate has zero length (0 m); its two ends must differ", length=0.0)

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        return (
            min(self.x0, self.x1),
            min(self.y0, self.y1),
            max(self.x0, self.x1),
            max(self.y0, self.y1),
        )

    def edges(self) -> list[Edge]:
        return [Line((self.x0, self.y0), (self.x1, self.y1))]

    def corners(self) -> list[tuple[float, float]]:
        return [(self.x0, self.y0), (self.x1, self.y1)]

    def contains(self, p: np.ndarray) -> np.ndarray:
        return np.zeros(np.shape(p)[1], dtype=bool)

    @property
    def area(self) -> float:
        return 0.0


@dataclass(frozen=True)
class Circle:
    """A disc of ``radius`` about (cx, cy); on the axis of an axisymmetric fixture, a sphere."""

    cx: float
    cy: float
    radius: float

    def __post_init__(self):
        _check_finite("circle", cx=self.cx, cy=self.cy, radius=self.radius)
        if not self.radius > 0:
            raise GeometryError(
                f"circle radius = {self.radius!r} m must be > 0 m", name="radius", value=self.radius
            )

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        r = self.radius
        return (self.cx - r, self.cy - r, self.cx + r, self.cy + r)

    def edges(self, axis_at_x0: bool = False) -> list[Edge]:
        if axis_at_x0 and self.cx == 0.0:
            return [Arc(self.cx, self.cy, self.radius, -math.pi / 2, math.pi / 2)]
        return [Arc(self.cx, self.cy, self.radius, -math.pi, math.pi)]

    def corners(self) -> list[tuple[float, float]]:
        return []

    def contains(self, p: np.ndarray) -> np.ndarray:
        x, y = p
        return (x - self.cx) ** 2 + (y - self.cy) ** 2 < self.radius**2

    @property
    def area(self) -> float:
        return math.pi * self.radius**2


@dataclass(frozen=True)
class Annulus:
    """The ring between ``inner`` and ``outer`` radius about (cx, cy).

    Planar: a tube wall (the outer conductor of a coaxial line). Axisymmetric, centred on
    the axis: a spherical shell.
    """

    cx: float
    cy: float
    inner: float
    outer: float

    def __post_init__(self):
        _check_finite("annulus", cx=self.cx, cy=self.cy, inner=self.inner, outer=self.outer)
        if not (0 < self.inner < self.outer):
            raise GeometryError(
                f"annulus needs 0 m < inner radius < outer radius; got inner = "
                f"{self.inner:.6g} m, outer = {self.outer:.6g} m",
                inner=self.inner,
                outer=self.outer,
            )

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        r = self.outer
        return (self.cx - r, self.cy - r, self.cx + r, self.cy + r)

    def edges(self, axis_at_x0: bool = False) -> list[Edge]:
        if axis_at_x0 and self.cx == 0.0:
            t0, t1 = -math.pi / 2, math.pi / 2
        else:
            t0, t1 = -math.pi, math.pi
        return [
            Arc(self.cx, self.cy, self.inner, t0, t1),
            Arc(self.cx, self.cy, self.outer, t0, t1),
        ]

    def corners(self) -> list[tuple[float, float]]:
        return []

    def contains(self, p: np.ndarray) -> np.ndarray:
        x, y = p
        r2 = (x - self.cx) ** 2 + (y - self.cy) ** 2
        return (r2 > self.inner**2) & (r2 < self.outer**2)

    @property
    def area(self) -> float:
        return math.pi * (self.outer**2 - self.inner**2)


@dataclass(frozen=True)
class Polygon:
    """A simple polygon through ``points`` (closed automatically)."""

    points: tuple[tuple[float, float], ...]

    def __post_init__(self):
        pts = tuple((float(x), float(y)) for x, y in self.points)
        object.__setattr__(self, "points", pts)
        if len(pts) < 3:
            raise GeometryError(f"polygon needs at least 3 points; got {len(pts)}", count=len(pts))
        if len(pts) > MAX_POLYGON_POINTS:
            raise GeometryError(
                f"polygon has {len(pts):,} points; at most {MAX_POLYGON_POINTS:,} (simplify "
                "the outline: a fixture's shape needs far fewer)",
                count=len(pts),
                valid=(3, MAX_POLYGON_POINTS),
            )
        for i, (x, y) in enumerate(pts):
            _check_finite("polygon", **{f"x[{i}]": x, f"y[{i}]": y})
        if abs(self.area) <= 0:
            raise GeometryError("polygon has zero area (0 m^2); its points are collinear", area=0.0)
        if _self_intersects(pts):
            raise GeometryError(
                "polygon edges cross each other; give the points in order around the outline",
                points=pts,
            )

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        xs, ys = zip(*self.points, strict=True)
        return (min(xs), min(ys), max(xs), max(ys))

    def outline(self) -> list[tuple[float, float]]:
        return list(self.points)

    def edges(self) -> list[Edge]:
        return _polygon_edges(self.outline())

    def corners(self) -> list[tuple[float, float]]:
        return list(self.points)

    def contains(self, p: np.ndarray) -> np.ndarray:
        from matplotlib.path import Path

        return Path(np.asarray(self.points)).contains_points(np.asarray(p).T, radius=0.0)

    @property
    def area(self) -> float:
        x, y = np.asarray(self.points).T
        return 0.5 * float(abs(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))


@dataclass(frozen=True)
class Compound:
    """Several shapes that form one electrically connected part (a guard split in two)."""

    shapes: tuple

    def __post_init__(self):
        object.__setattr__(self, "shapes", tuple(self.shapes))
        if not self.shapes:
            raise GeometryError("a compound part needs at least one shape; got none")
        for s in self.shapes:
            if isinstance(s, Compound):
                raise GeometryError("a compound part cannot contain another compound part")

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        x0, y0, x1, y1 = zip(*(s.bbox for s in self.shapes), strict=True)
        return (min(x0), min(y0), max(x1), max(y1))

    def contains(self, p: np.ndarray) -> np.ndarray:
        out = np.zeros(np.shape(p)[1], dtype=bool)
        for s in self.shapes:
            out |= s.contains(p)
        return out

    @property
    def area(self) -> float:
        return sum(s.area for s in self.shapes)


Shape = Rect | RoundedRect | Plate | Circle | Annulus | Polygon | Compound


def _polygon_edges(points: Sequence[tuple[float, float]]) -> list[Edge]:
    n = len(points)
    return [Line(points[i], points[(i + 1) % n]) for i in range(n)]


#: the most points a polygon may have: its checks are near-linear, but a shape this
#: detailed is a drawing to be simplified rather than a fixture (and meshes slowly)
MAX_POLYGON_POINTS = 10_000


def near_pairs(lo: np.ndarray, hi: np.ndarray, pad: float = 0.0) -> np.ndarray:
    """Index pairs (i < j) of boxes ``[lo[i], hi[i]]`` (shape (n, 2) each) that meet once
    grown by ``pad``: a uniform grid of cells about the size of a typical box, each box
    entered in the cells it covers, so the work grows with the number of boxes (not its
    square) unless most boxes overlap each other. Returns an (m, 2) integer array."""
    lo = np.asarray(lo, float) - pad
    hi = np.asarray(hi, float) + pad
    n = len(lo)
    if n < 2:
        return np.zeros((0, 2), int)
    extent = np.max(hi, axis=0) - np.min(lo, axis=0)
    sizes = np.median(hi - lo, axis=0)
    # cells no smaller than a typical box and no more than about 4 n of them
    cell = np.maximum(sizes, extent / max(2.0 * math.sqrt(n), 1.0))
    cell = np.where(cell > 0, cell, 1.0)
    origin = np.min(lo, axis=0)
    c0 = np.floor((lo - origin) / cell).astype(np.int64)
    c1 = np.floor((hi - origin) / cell).astype(np.int64)
    buckets: dict[tuple[int, int], list[int]] = {}
    for i in range(n):
        for cx in range(c0[i, 0], c1[i, 0] + 1):
            for cy in range(c0[i, 1], c1[i, 1] + 1):
                buckets.setdefault((cx, cy), []).append(i)
    pairs = set()
    for members in buckets.values():
        if len(members) < 2:
            continue
        m = np.array(members)
        a, b = np.triu_indices(len(m), 1)
        i, j = m[a], m[b]
        meet = np.all((lo[i] <= hi[j]) & (lo[j] <= hi[i]), axis=1)
        pairs.update(zip(i[meet].tolist(), j[meet].tolist(), strict=True))
    if not pairs:
        return np.zeros((0, 2), int)
    out = np.array(sorted(pairs), int)
    return np.sort(out, axis=1)


def _self_intersects(pts: Sequence[tuple[float, float]]) -> bool:
    n = len(pts)
    p = np.asarray(pts, float)
    q = np.roll(p, -1, axis=0)
    for i, j in near_pairs(np.minimum(p, q), np.maximum(p, q)):
        i, j = int(min(i, j)), int(max(i, j))
        if j == i + 1 or (i == 0 and j == n - 1):
            continue
        if _segments_cross(pts[i], pts[(i + 1) % n], pts[j], pts[(j + 1) % n]):
            return True
    return False


def _segments_cross(p1, p2, q1, q2) -> bool:
    def orient(a, b, c):
        return (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])

    d1, d2 = orient(q1, q2, p1), orient(q1, q2, p2)
    d3, d4 = orient(p1, p2, q1), orient(p1, p2, q2)
    return (d1 * d2 < 0) and (d3 * d4 < 0)


# --------------------------------------------------------------------------- parts


@dataclass(frozen=True)
class Conductor:
    """A named electrode. Its interior is field-free; its surface is an equipotential."""

    name: str
    shape: Shape


@dataclass(frozen=True)
class Dielectric:
    """A named region of relative permittivity ``eps_r``.

    A complex ``eps_r = eps' - 1j * eps''`` describes a lossy dielectric (loss tangent
    eps''/eps'). Where two dielectrics overlap, one must lie wholly inside the other, and
    the inner one holds.
    """

    name: str
    shape: Shape
    eps_r: complex = 1.0


@dataclass(frozen=True)
class OpenSpace:
    """Unbounded space around the fixture, modelled without truncation error.

    ``ground_plane``: if given, an infinite grounded plane at y (z) = ground_plane, below
    every part; the field lives above it.
    """

    ground_plane: float | None = None


@dataclass(frozen=True)
class Enclosure:
    """A grounded conducting box around the fixture (a shield, or the can of a cell).

    Axisymmetric: a closed cylinder of radius ``x1`` from z = ``y0`` to ``y1`` (x0 must
    be 0).
    """

    x0: float
    y0: float
    x1: float
    y1: float

    def __post_init__(self):
        Rect(self.x0, self.y0, self.x1, self.y1)

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        return (self.x0, self.y0, self.x1, self.y1)


Boundary = OpenSpace | Enclosure


@dataclass(frozen=True)
class Geometry:
    """A complete cross-section: symmetry, conductors, dielectrics, medium, outer boundary."""

    symmetry: str
    conductors: tuple[Conductor, ...]
    dielectrics: tuple[Dielectric, ...] = ()
    medium_eps_r: complex = 1.0
    boundary: Boundary = field(default_factory=OpenSpace)

    def __post_init__(self):
        object.__setattr__(self, "conductors", tuple(self.conductors))
        object.__setattr__(self, "dielectrics", tuple(self.dielectrics))
        validate(self)

    @property
    def axisymmetric(self) -> bool:
        return self.symmetry == AXISYMMETRIC

    @property
    def conductor_names(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.conductors)

    def bbox(self) -> tuple[float, float, float, float]:
        """Bounding box of every part (not of the outer boundary), within r >= 0 for
        axisymmetric sections."""
        boxes = [p.shape.bbox for p in (*self.conductors, *self.dielectrics)]
        x0, y0, x1, y1 = zip(*boxes, strict=True)
        left = max(min(x0), 0.0) if self.axisymmetric else min(x0)
        return (left, min(y0), max(x1), max(y1))

    def size(self) -> float:
        """The largest extent of the parts, the scale that tolerances refer to."""
        x0, y0, x1, y1 = self.bbox()
        return max(x1 - x0, y1 - y0, x1 if self.axisymmetric else 0.0)

    def with_permittivity(self, name: str, eps_r: complex) -> Geometry:
        """A copy with the named dielectric (or ``MEDIUM``) at a new permittivity."""
        if name == MEDIUM:
            return replace(self, medium_eps_r=eps_r)
        if name not in {d.name for d in self.dielectrics}:
            raise GeometryError(
                f"no dielectric named {name!r}; this geometry has "
                f"{[d.name for d in self.dielectrics] + [MEDIUM]}",
                name=name,
            )
        return replace(
            self,
            dielectrics=tuple(
                replace(d, eps_r=eps_r) if d.name == name else d for d in self.dielectrics
            ),
        )

    def permittivities(self) -> dict[str, complex]:
        """Relative permittivity of every dielectric region and of the medium."""
        out = {MEDIUM: complex(self.medium_eps_r)}
        out.update({d.name: complex(d.eps_r) for d in self.dielectrics})
        return out


def simple_shapes(shape: Shape) -> tuple:
    """The plain shapes of a part (the members of a compound, or the shape itself)."""
    return shape.shapes if isinstance(shape, Compound) else (shape,)


def shape_edges(shape: Shape, axisymmetric: bool) -> list[Edge]:
    """Boundary edges of ``shape``, leaving out any part lying on the symmetry axis."""
    if isinstance(shape, Compound):
        return [e for s in shape.shapes for e in shape_edges(s, axisymmetric)]
    if isinstance(shape, (RoundedRect, Circle, Annulus)):
        edges = shape.edges(axis_at_x0=axisymmetric and _touches_axis(shape))
    else:
        edges = shape.edges()
    if axisymmetric:
        edges = [e for e in edges if not (isinstance(e, Line) and e.a[0] == 0 and e.b[0] == 0)]
    return edges


def shape_corners(shape: Shape, axisymmetric: bool) -> list[tuple[float, float]]:
    """Kinks of the boundary where the field is singular (none on the symmetry axis)."""
    if isinstance(shape, Compound):
        return [c for s in shape.shapes for c in shape_corners(s, axisymmetric)]
    pts = shape.corners()
    if axisymmetric:
        pts = [p for p in pts if p[0] != 0]
    return pts


def _touches_axis(shape: Shape) -> bool:
    if isinstance(shape, (Circle, Annulus)):
        return shape.cx == 0.0
    return shape.bbox[0] == 0.0


def _limits_of_eps(eps: complex, name: str) -> None:
    eps = complex(eps)
    if not (math.isfinite(eps.real) and math.isfinite(eps.imag)):
        raise GeometryError(
            f"relative permittivity of {name} = {eps!r} is not finite", name=name, value=eps
        )
    if eps.real < 1.0 or eps.real > 1e4:
        raise GeometryError(
            f"relative permittivity of {name} = {eps.real:.6g} (dimensionless) is outside "
            "1 to 10000; a static dielectric has eps_r >= 1",
            name=name,
            value=eps.real,
            valid=(1.0, 1e4),
        )
    if eps.imag > 0:
        raise GeometryError(
            f"relative permittivity of {name} = {eps!r}: the imaginary part must be <= 0 "
            "(eps_r = eps' - j eps'', eps'' >= 0 for a passive material)",
            name=name,
            value=eps,
        )


def validate(g: Geometry) -> None:
    """Check a geometry for the errors that need no mesh (sizes, names, symmetry, ranges)."""
    if g.symmetry not in SYMMETRIES:
        raise GeometryError(f"symmetry = {g.symmetry!r}; valid: {SYMMETRIES}", value=g.symmetry)
    if not g.conductors:
        raise GeometryError("a fixture needs at least one conductor; got none")
    names = [p.name for p in (*g.conductors, *g.dielectrics)]
    for n in names:
        if not isinstance(n, str) or not n.strip():
            raise GeometryError(f"part name {n!r} must be a non-empty string", value=n)
    dup = {n for n in names if names.count(n) > 1}
    if dup or MEDIUM in names or GROUND in names:
        raise GeometryError(
            f"part names must be unique and not {MEDIUM!r} or {GROUND!r}; "
            f"repeated or reserved: {sorted(dup | ({MEDIUM, GROUND} & set(names)))}",
            names=names,
        )
    _limits_of_eps(g.medium_eps_r, MEDIUM)
    for d in g.dielectrics:
        _limits_of_eps(d.eps_r, d.name)
        if any(isinstance(s, Plate) for s in simple_shapes(d.shape)):
            raise GeometryError(
                f"dielectric {d.name!r} is a zero-thickness plate; a dielectric needs an area",
                name=d.name,
            )
    if g.axisymmetric:
        for p, s in (
            (part, s) for part in (*g.conductors, *g.dielectrics) for s in simple_shapes(part.shape)
        ):
            if isinstance(s, (Circle, Annulus)) and 0 < s.cx < (
                s.radius if isinstance(s, Circle) else s.outer
            ):
                raise GeometryError(
                    f"{p.name!r}: a circle centred at r = {s.cx:.6g} m crosses the axis; "
                    "centre it on the axis (r = 0 m, a sphere) or keep it in r >= 0 m "
                    "(a torus)",
                    name=p.name,
                    value=s.cx,
                )
            on_axis = isinstance(s, (Circle, Annulus)) and s.cx == 0.0
            x0 = 0.0 if on_axis else s.bbox[0]
            if x0 < 0:
                raise GeometryError(
                    f"{p.name!r} reaches r = {x0:.6g} m; an axisymmetric section lies in "
                    "r >= 0 m (the z axis is r = 0)",
                    name=p.name,
                    value=x0,
                )
            if isinstance(s, Plate) and s.x0 == 0 and s.x1 == 0:
                raise GeometryError(
                    f"{p.name!r} is a plate lying on the axis (r = 0 m): a wire of zero "
                    "radius has no capacitance; give it a radius",
                    name=p.name,
                )
    b = g.boundary
    if isinstance(b, Enclosure):
        if g.axisymmetric and b.x0 != 0:
            raise GeometryError(
                f"an axisymmetric enclosure is a cylinder about the axis: x0 must be 0 m, "
                f"got {b.x0:.6g} m",
                value=b.x0,
            )
        x0, y0, x1, y1 = g.bbox()
        if x0 < b.x0 or y0 < b.y0 or x1 > b.x1 or y1 > b.y1:
            raise GeometryError(
                f"parts reach ({x0:.6g} .. {x1:.6g}) x ({y0:.6g} .. {y1:.6g}) m, outside "
                f"the enclosure ({b.x0:.6g} .. {b.x1:.6g}) x ({b.y0:.6g} .. {b.y1:.6g}) m",
                bbox=(x0, y0, x1, y1),
                enclosure=b.bbox,
            )
    elif isinstance(b, OpenSpace) and b.ground_plane is not None:
        y0 = g.bbox()[1]
        if y0 < b.ground_plane:
            raise GeometryError(
                f"parts reach y = {y0:.6g} m, below the ground plane at {b.ground_plane:.6g} m",
                value=y0,
                plane=b.ground_plane,
            )


# --------------------------------------------------------------------------- fixture


@dataclass(frozen=True)
class Fixture:
    """A geometry with the terminals a bridge connects to.

    ``connection`` is ``PAIR`` (two-terminal: the capacitance between ``high`` and
    ``low`` carrying equal and opposite charges, every other conductor floating) or
    ``DIRECT`` (three-terminal: the direct capacitance between ``high`` and ``low``
    with every other conductor, the guard among them, held at the low's potential).

    ``length``: for a planar fixture, the length along the invariant direction; the
    terminal capacitance is then in F instead of F/m. ``kind`` and ``params`` record the
    builder call that made the fixture, so that a changed copy can be rebuilt.
    """

    geometry: Geometry
    high: str
    low: str
    connection: str = PAIR
    name: str = ""
    kind: str = "custom"
    params: tuple[tuple[str, object], ...] = ()
    length: float | None = None
    #: dielectric whose permittivity is the unknown when extracting (usually the specimen)
    specimen: str | None = None

    def __post_init__(self):
        names = (*self.geometry.conductor_names, GROUND)
        for role, n in (("high", self.high), ("low", self.low)):
            if n not in names:
                raise GeometryError(
                    f"{role} terminal {n!r} is not a conductor; valid: {list(names)}",
                    name=role,
                    value=n,
                )
        if self.high == self.low:
            raise GeometryError(
                f"high and low terminals are the same conductor {self.high!r}", value=self.high
            )
        if self.connection not in CONNECTIONS:
            raise GeometryError(
                f"connection = {self.connection!r}; valid: {CONNECTIONS}", value=self.connection
            )
        if self.length is not None:
            if self.geometry.axisymmetric:
                raise GeometryError("length applies only to planar fixtures", value=self.length)
            if not (math.isfinite(self.length) and self.length > 0):
                raise GeometryError(f"length = {self.length!r} m must be > 0 m", value=self.length)
        if self.specimen is not None and self.specimen not in self.geometry.permittivities():
            raise GeometryError(
                f"specimen region {self.specimen!r} is not a dielectric; valid: "
                f"{list(self.geometry.permittivities())}",
                value=self.specimen,
            )

    @property
    def axisymmetric(self) -> bool:
        return self.geometry.axisymmetric

    @property
    def param_dict(self) -> dict[str, object]:
        return dict(self.params)

    def with_permittivity(self, name: str, eps_r: complex) -> Fixture:
        """A copy with one region's permittivity changed (the mesh stays valid); the
        builder's recorded arguments follow, so a later ``with_changes`` keeps it."""
        from .rigs import params_with_permittivity

        return replace(
            self,
            geometry=self.geometry.with_permittivity(name, eps_r),
            params=params_with_permittivity(self, name, eps_r),
        )

    def with_changes(self, **changes) -> Fixture:
        """Rebuild through the builder that made this fixture, with some arguments changed."""
        from .rigs import rebuild

        return rebuild(self, **changes)
