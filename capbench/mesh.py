"""Triangulations of a fixture cross-section: seed, grading, refinement, far-field shell.

The pipeline:

1. :func:`planar_graph` splits every boundary edge of every part where it meets another,
   so that the boundaries form one planar straight-line-and-arc graph, and checks that no
   two conductors touch.
2. :func:`seed` places points with a size function that is small at electrode edges
   (where the field is singular), across narrow gaps and on tight curves, and large far
   away; triangulates them (Delaunay), recovers every boundary edge and removes the
   conductors' interiors.
3. :func:`star_refine` grades the mesh geometrically into each singular point: every
   triangle touching the point is cut into layers whose size falls by ``sigma`` per
   layer, down to a size set by the accuracy wanted. This is the geometric mesh of
   hp finite-element theory; it needs no tiny-triangle Delaunay work.
4. :func:`attach_shell` (open space only) wraps the box around the fixture in a shell
   of elements that the field module maps to infinity (see :class:`Shell`).
5. :func:`refined` splits every triangle into four (nested spaces, so the energy
   converges monotonically), re-projecting points onto curved boundaries.

The result is a :class:`TriMesh`: plain arrays, no pint, no scikit-fem.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field

import numpy as np
from scipy.spatial import Delaunay, cKDTree

from .errors import GeometryError
from .geometry import (
    Arc,
    Enclosure,
    Geometry,
    Line,
    OpenSpace,
    near_pairs,
    shape_corners,
    shape_edges,
)

# Edge tags (conductors are tagged with their index 0..n-1).
INTERFACE = -1  # dielectric interface or the inner face of the shell
GROUND_TAG = -2  # enclosure walls or ground plane
INFINITY_TAG = -3  # outer face of the shell: the point at infinity
AXIS_TAG = -4  # the symmetry axis (kept only to know where it is)

# Element regions (dielectrics are 1..n in the order of Geometry.dielectrics).
MEDIUM_REGION = 0
SHELL_REGION = -1


@dataclass(frozen=True)
class MeshOptions:
    """Knobs of the seed mesh. The defaults are tuned by ``benchmarks/accuracy_speed.py``.

    grading: how fast elements grow with distance from a singular point (size = h0 +
        grading * distance).
    max_size: largest element, as a fraction of the fixture size.
    across_gap: elements across the narrowest gap between two boundaries.
    arc_angle: largest angle (degrees) one element edge may span on a curved boundary.
    sigma: ratio of successive layer sizes in the star refinement at singular points.
    corner_size: size of the seed elements at a singular point, as a fraction of the
        local feature size.
    shell_layers: element layers across the far-field shell.
    shell_tail: extra layers toward infinity, each half as thick as the one before.
        Axisymmetric fields (infinity grounded) need them: a triangle that meets the
        shell's outer face (infinity) at one vertex only has a tangential stiffness that
        diverges logarithmically there, which quadrature truncates to a finite penalty
        the discrete field can lower its energy against (the capacitance of the isolated
        disc came out 5.2e-9 low at degree 8, more than the estimate). Halving layers put
        that outermost layer beyond 16 box sizes, where the field holds little energy
        (the error fell to 9e-10, inside the estimate).
    """

    grading: float = 0.35
    max_size: float = 0.25
    across_gap: float = 2.0
    arc_angle: float = 22.5
    sigma: float = 0.5
    corner_size: float = 0.25
    shell_layers: int = 4
    shell_ratio: float = 2.0
    shell_tail: int = 2


DEFAULT_OPTIONS = MeshOptions()


@dataclass(frozen=True)
class Shell:
    """The far-field shell of an open-space fixture.

    The shell is the set of points with 1 <= rho < ratio, where
    rho(x) = max(|x - cx| / hx, |y - cy| / hy) (a box-shaped "radius"; rho = 1 is the box
    that holds the fixture). The field module maps it onto the whole exterior
    1 <= rho' < infinity along rays from the centre with rho' = (ratio - 1)/(ratio - rho),
    which is exact (no truncation), and solves the mapped equation (the transformation
    method: F. Henrotte, B. Meys, H. Hedia, P. Dular and W. Legros, "Finite element
    modelling with transformation techniques", IEEE Trans. Magn. 35(3), 1434, 1999;
    A. Brunotte, G. Meunier and J.-F. Imhoff, IEEE Trans. Magn. 28(2), 1663, 1992).
    ``floating``: the point at infinity carries no charge and takes whatever potential
    the field gives it (planar sections, where a net charge would have infinite
    energy); otherwise it is grounded (3-D, or where a ground plane reaches infinity).
    """

    cx: float
    cy: float
    hx: float
    hy: float
    ratio: float
    floating: bool


@dataclass(frozen=True, eq=False)
class TriMesh:
    """A conforming triangulation with region and boundary tags.

    p: (2, N) vertex coordinates; t: (3, M) triangles; region: (M,) region code;
    edges: (2, E) tagged edges (sorted vertex pairs); edge_tag: (E,) tag (conductor
    index or one of the *_TAG constants); edge_arc: (E,) index into ``arcs`` of the
    circle the edge lies on, or -1; singular: vertex indices of singular points.
    """

    p: np.ndarray
    t: np.ndarray
    region: np.ndarray
    edges: np.ndarray
    edge_tag: np.ndarray
    edge_arc: np.ndarray
    arcs: tuple[tuple[float, float, float], ...]
    singular: np.ndarray
    axisymmetric: bool
    shell: Shell | None = None
    level: int = 0
    info: dict = field(default_factory=dict)
    #: derived data of this very mesh (never copied to a refined mesh)
    cache: dict = field(default_factory=dict, init=False, repr=False)

    @property
    def n_vertices(self) -> int:
        return self.p.shape[1]

    @property
    def n_elements(self) -> int:
        return self.t.shape[1]

    @property
    def curved(self) -> bool:
        return bool(np.any(self.edge_arc >= 0))

    def h(self) -> np.ndarray:
        """Longest edge of each triangle."""
        p, t = self.p, self.t
        e = [np.linalg.norm(p[:, t[i]] - p[:, t[(i + 1) % 3]], axis=0) for i in range(3)]
        return np.max(e, axis=0)

    def min_angle(self) -> float:
        """Smallest interior angle in degrees (a quality figure)."""
        p, t = self.p, self.t
        ang = []
        for i in range(3):
            a = p[:, t[(i + 1) % 3]] - p[:, t[i]]
            b = p[:, t[(i + 2) % 3]] - p[:, t[i]]
            c = np.sum(a * b, 0) / (np.linalg.norm(a, axis=0) * np.linalg.norm(b, axis=0))
            ang.append(np.degrees(np.arccos(np.clip(c, -1, 1))))
        return float(np.min(ang))


# --------------------------------------------------------------------------- graph


@dataclass
class _Piece:
    """One edge of the planar graph and everything that owns it."""

    edge: Line | Arc
    conductors: set
    ground: bool = False
    box: bool = False
    owners: set = field(default_factory=set)
    axis: bool = False


def _tol(g_size: float) -> float:
    return 1e-11 * g_size


def domain_box(geometry: Geometry) -> tuple[float, float, float, float]:
    """The box meshed directly: the enclosure, or the parts' box with a margin."""
    b = geometry.boundary
    if isinstance(b, Enclosure):
        return b.bbox
    x0, y0, x1, y1 = geometry.bbox()
    size = geometry.size()
    margin = 0.5 * size
    if geometry.axisymmetric:
        x0 = 0.0
    else:
        x0 -= margin
    x1 += margin
    y0 = y0 - margin if b.ground_plane is None else b.ground_plane
    y1 += margin
    return (x0, y0, x1, y1)


def planar_graph(geometry: Geometry, box: tuple[float, float, float, float]) -> list[_Piece]:
    """Split every boundary where it meets another; merge coincident pieces.

    Raises GeometryError where two conductors (or a conductor and the grounded
    boundary) touch or overlap.
    """
    axi = geometry.axisymmetric
    size = max(box[2] - box[0], box[3] - box[1])
    tol = _tol(size)
    pieces: list[_Piece] = []
    for k, c in enumerate(geometry.conductors):
        for e in shape_edges(c.shape, axi):
            pieces.append(_Piece(e, {k}, owners={c.name}))
    for d in geometry.dielectrics:
        for e in shape_edges(d.shape, axi):
            pieces.append(_Piece(e, set(), owners={d.name}))
    bx0, by0, bx1, by1 = box
    b = geometry.boundary
    grounded_box = isinstance(b, Enclosure)
    sides = [
        Line((bx0, by0), (bx1, by0)),
        Line((bx1, by0), (bx1, by1)),
        Line((bx1, by1), (bx0, by1)),
        Line((bx0, by1), (bx0, by0)),
    ]
    for i, e in enumerate(sides):
        on_axis = axi and i == 3  # a natural boundary, meshed like any other
        ground = not on_axis and (
            grounded_box or (isinstance(b, OpenSpace) and b.ground_plane is not None and i == 0)
        )
        pieces.append(_Piece(e, set(), ground=ground, box=True, owners={"boundary"}, axis=on_axis))

    pieces = _split_all(pieces, tol)
    pieces = _merge_coincident(pieces, tol)

    # Drop pieces inside a conductor (a dielectric outline running through an electrode).
    # Only conductors whose box holds the midpoint are asked (1,000 conductors made this
    # a million point-in-shape tests).
    conductors = geometry.conductors
    mids = np.array([pc.edge.point(np.array([0.5]))[:, 0] for pc in pieces]).reshape(-1, 2)
    cboxes = np.array([c.shape.bbox for c in conductors], float).reshape(-1, 4)
    n = len(pieces)
    lo = np.vstack([mids, cboxes[:, :2]])
    hi = np.vstack([mids, cboxes[:, 2:]])
    inside = np.zeros(n, bool)
    for i, j in near_pairs(lo, hi, tol).tolist():
        if i < n <= j and not inside[i] and conductors[j - n].shape.contains(mids[i][:, None])[0]:
            inside[i] = True
    pieces = [pc for pc, ins in zip(pieces, inside, strict=True) if pc.conductors or not ins]

    # Conductors may not touch each other or the grounded boundary, even at a point.
    owner_at: dict[tuple[int, int], set] = {}
    for pc in pieces:
        tags = set(pc.conductors) | ({"ground"} if pc.ground else set())
        for pt in (pc.edge.a, pc.edge.b):
            key = (round(pt[0] / tol), round(pt[1] / tol))
            owner_at.setdefault(key, set()).update(tags)
    names = geometry.conductor_names
    for key, tags in owner_at.items():
        if len(tags) > 1:
            who = sorted(names[t] if t != "ground" else "the grounded boundary" for t in tags)
            x, y = key[0] * tol, key[1] * tol
            raise GeometryError(
                f"conductors {who} touch or overlap at ({x:.6g} m, {y:.6g} m); "
                "electrodes at different potentials need a gap > 0 m",
                conductors=who,
                point=(x, y),
            )
    return pieces


def _line_params_on(line: Line, pts: np.ndarray, tol: float) -> np.ndarray:
    """Fractions s in (0, 1) at which points lie on ``line``."""
    a, b = np.asarray(line.a), np.asarray(line.b)
    d = b - a
    L2 = float(d @ d)
    s = ((pts - a) @ d) / L2
    foot = a + s[:, None] * d
    dist = np.linalg.norm(pts - foot, axis=1)
    L = math.sqrt(L2)
    ok = (dist < tol) & (s * L > tol) & ((1 - s) * L > tol)
    return s[ok]


def _arc_params_on(arc: Arc, pts: np.ndarray, tol: float) -> np.ndarray:
    r = np.hypot(pts[:, 0] - arc.cx, pts[:, 1] - arc.cy)
    th = np.arctan2(pts[:, 1] - arc.cy, pts[:, 0] - arc.cx)
    th = arc.t0 + np.mod(th - arc.t0, 2 * math.pi)
    span = arc.t1 - arc.t0
    s = (th - arc.t0) / span
    L = arc.length
    ok = (np.abs(r - arc.radius) < tol) & (s * L > tol) & ((1 - s) * L > tol)
    return s[ok]


def _intersections(e: Line | Arc, f: Line | Arc, tol: float) -> np.ndarray:
    """Points where two edges cross (not counting shared or touching end points)."""
    out = []
    if isinstance(e, Line) and isinstance(f, Line):
        p, r = np.asarray(e.a), np.asarray(e.b) - np.asarray(e.a)
        q, s = np.asarray(f.a), np.asarray(f.b) - np.asarray(f.a)
        den = r[0] * s[1] - r[1] * s[0]
        if abs(den) > 1e-14 * np.linalg.norm(r) * np.linalg.norm(s):
            qp = q - p
            t = (qp[0] * s[1] - qp[1] * s[0]) / den
            u = (qp[0] * r[1] - qp[1] * r[0]) / den
            if -1e-12 <= t <= 1 + 1e-12 and -1e-12 <= u <= 1 + 1e-12:
                out.append(p + t * r)
    else:
        line, arc = (e, f) if isinstance(e, Line) else (f, e)
        if isinstance(line, Line):
            out.extend(_line_circle(line, arc))
        else:
            out.extend(_circle_circle(e, f))
    return np.array(out).reshape(-1, 2)


def _line_circle(line: Line, arc: Arc) -> list[np.ndarray]:
    a = np.asarray(line.a)
    d = np.asarray(line.b) - a
    m = a - np.array([arc.cx, arc.cy])
    A, B, C = d @ d, 2 * m @ d, m @ m - arc.radius**2
    disc = B * B - 4 * A * C
    # a line tangent to the circle (a flat face meeting a rounded edge) touches it once;
    # rounding would otherwise give two points 1e-12 m apart
    if disc <= 1e-12 * (B * B + 4 * A * arc.radius**2):
        disc = 0.0 if disc > -1e-12 * (B * B + 4 * A * arc.radius**2) else -1.0
    if disc < 0:
        return []
    root = math.sqrt(disc)
    return [
        a + t * d
        for t in ((-B - root) / (2 * A), (-B + root) / (2 * A))
        if -1e-12 <= t <= 1 + 1e-12
    ]


def _circle_circle(e: Arc, f: Arc) -> list[np.ndarray]:
    c1, c2 = np.array([e.cx, e.cy]), np.array([f.cx, f.cy])
    d = float(np.linalg.norm(c2 - c1))
    r1, r2 = e.radius, f.radius
    if d == 0 or d > r1 + r2 or d < abs(r1 - r2):
        return []
    a = (r1 * r1 - r2 * r2 + d * d) / (2 * d)
    h = math.sqrt(max(r1 * r1 - a * a, 0.0))
    mid = c1 + a * (c2 - c1) / d
    perp = np.array([-(c2 - c1)[1], (c2 - c1)[0]]) / d
    return [mid + h * perp, mid - h * perp]


def _split_all(pieces: list[_Piece], tol: float) -> list[_Piece]:
    """Split each piece at every end point of, or crossing with, any other piece."""
    cuts: list[list[float]] = [[] for _ in pieces]
    boxes = np.array([_edge_bbox(pc.edge) for pc in pieces], float).reshape(-1, 4)
    # only pieces whose boxes meet can cut each other (an end point of one lying on the
    # other, or a crossing): not every pair, which 1,000 parts made slow
    for i, j in near_pairs(boxes[:, :2], boxes[:, 2:], tol).tolist():
        e, f = pieces[i].edge, pieces[j].edge
        finder = _line_params_on if isinstance(e, Line) else _arc_params_on
        finder_j = _line_params_on if isinstance(f, Line) else _arc_params_on
        crossings = np.asarray(_intersections(e, f, tol), float).reshape(-1, 2)
        cuts[i].extend(finder(e, np.vstack([[f.a, f.b], crossings]), tol))
        cuts[j].extend(finder_j(f, np.vstack([[e.a, e.b], crossings]), tol))
    out = []
    for pc, c in zip(pieces, cuts, strict=True):
        s = np.unique(np.concatenate(([0.0], np.asarray(c, float), [1.0])))
        if len(s) > 2:
            L = pc.edge.length
            s = s[np.concatenate(([True], np.diff(s) * L > tol))]
            s[-1] = 1.0
        for s0, s1 in itertools.pairwise(s):
            out.append(
                _Piece(
                    _sub_edge(pc.edge, s0, s1),
                    set(pc.conductors),
                    pc.ground,
                    pc.box,
                    set(pc.owners),
                    pc.axis,
                )
            )
    return _weld(out, tol)


def _weld(pieces: list[_Piece], tol: float) -> list[_Piece]:
    """End points closer than ``tol`` become the same point, exactly.

    A split point is recomputed as a + s (b - a), which can land 1e-18 m from the end
    point of the piece that caused the split; every later test that asks whether two
    pieces share an end (rounding to a grid of ``tol``) then disagrees when the two
    floats straddle a grid line, and a guarded cell whose electrode lies on its specimen
    was refused for a "gap" of 2.6e-18 m at some thickness readings. Each cluster of end
    points takes one representative: an arc's end if there is one (an arc's ends follow
    from its angles and cannot move), else the first seen; lines take it exactly.
    """
    if not pieces:
        return pieces
    pts = np.array([pt for pc in pieces for pt in (pc.edge.a, pc.edge.b)], float)
    parent = np.arange(len(pts))

    def root(k: int) -> int:
        while parent[k] != k:
            parent[k] = parent[parent[k]]
            k = parent[k]
        return k

    for i, j in cKDTree(pts).query_pairs(tol, output_type="ndarray").tolist():
        ri, rj = root(i), root(j)
        if ri != rj:
            parent[max(ri, rj)] = min(ri, rj)
    is_arc = np.repeat([isinstance(pc.edge, Arc) for pc in pieces], 2)
    rep: dict[int, tuple[float, float]] = {}
    for k in range(len(pts)):
        r = root(k)
        if r not in rep or (is_arc[k] and not is_arc[r] and rep[r] == tuple(pts[r])):
            rep[r] = (float(pts[k][0]), float(pts[k][1]))
    out = []
    for n, pc in enumerate(pieces):
        e = pc.edge
        if isinstance(e, Line):
            a, b = rep[root(2 * n)], rep[root(2 * n + 1)]
            if a != e.a or b != e.b:
                pc = _Piece(Line(a, b), pc.conductors, pc.ground, pc.box, pc.owners, pc.axis)
        out.append(pc)
    return out


def _edge_bbox(e: Line | Arc) -> tuple[float, float, float, float]:
    if isinstance(e, Line):
        return (min(e.a[0], e.b[0]), min(e.a[1], e.b[1]), max(e.a[0], e.b[0]), max(e.a[1], e.b[1]))
    return (e.cx - e.radius, e.cy - e.radius, e.cx + e.radius, e.cy + e.radius)


def _sub_edge(e: Line | Arc, s0: float, s1: float) -> Line | Arc:
    if isinstance(e, Line):
        pa, pb = e.point(np.array([s0, s1])).T
        a = e.a if s0 == 0 else (float(pa[0]), float(pa[1]))
        b = e.b if s1 == 1 else (float(pb[0]), float(pb[1]))
        return Line(a, b)
    span = e.t1 - e.t0
    return Arc(e.cx, e.cy, e.radius, e.t0 + s0 * span, e.t0 + s1 * span)


def _merge_coincident(pieces: list[_Piece], tol: float) -> list[_Piece]:
    """Pieces with the same end points (and the same shape) become one."""
    merged: dict[tuple, _Piece] = {}
    for pc in pieces:
        e = pc.edge
        ka = (round(e.a[0] / tol), round(e.a[1] / tol))
        kb = (round(e.b[0] / tol), round(e.b[1] / tol))
        mid = e.point(np.array([0.5]))[:, 0]
        km = (round(mid[0] / (1e3 * tol)), round(mid[1] / (1e3 * tol)))
        key = (min(ka, kb), max(ka, kb), km)
        if key in merged:
            m = merged[key]
            m.conductors |= pc.conductors
            m.ground |= pc.ground
            m.box |= pc.box
            m.axis |= pc.axis
            m.owners |= pc.owners
            if len(m.conductors) > 1:
                raise GeometryError(
                    f"conductors {sorted(m.owners)} share a boundary at ({mid[0]:.6g} m, "
                    f"{mid[1]:.6g} m); electrodes at different potentials need a gap > 0 m",
                    owners=sorted(m.owners),
                )
        else:
            merged[key] = pc
    return list(merged.values())


# --------------------------------------------------------------------------- sizing


class SizeField:
    """Target element size h(x): small at singular points, across gaps, on curves.

    h(x) = min(h_max, min_i(h_i + grading * |x - x_i|), lfs(x) / across_gap), where x_i
    are point sources (singular points, curve samples) and lfs(x) is a local feature
    size: the distance to the nearest boundary plus the distance to the nearest boundary
    that does not touch it.
    """

    def __init__(
        self,
        src: np.ndarray,
        src_h: np.ndarray,
        grading: float,
        h_max: float,
        seg_a: np.ndarray,
        seg_b: np.ndarray,
        seg_group: np.ndarray,
        adjacent: np.ndarray,
        across_gap: float,
    ):
        self.src, self.src_h = src, src_h
        self.grading, self.h_max = grading, h_max
        self.seg_a, self.seg_d = seg_a, seg_b - seg_a
        self.seg_L2 = np.maximum(np.sum(self.seg_d**2, axis=0), 1e-300)
        self.seg_group, self.adjacent = seg_group, adjacent
        self.across_gap = across_gap

    def __call__(self, x: np.ndarray) -> np.ndarray:
        h = np.full(x.shape[1], self.h_max)
        if self.src.shape[1]:
            for lo in range(0, x.shape[1], 4096):
                xs = x[:, lo : lo + 4096]
                d = np.hypot(xs[0][:, None] - self.src[0], xs[1][:, None] - self.src[1])
                h[lo : lo + 4096] = np.minimum(
                    h[lo : lo + 4096], np.min(self.src_h + self.grading * d, axis=1)
                )
        if self.seg_a.shape[1] > 1:
            h = np.minimum(h, self.local_feature_size(x) / self.across_gap)
        return h

    def local_feature_size(self, x: np.ndarray) -> np.ndarray:
        out = np.empty(x.shape[1])
        groups = self.seg_group
        n_groups = int(groups.max()) + 1
        for lo in range(0, x.shape[1], 2048):
            xs = x[:, lo : lo + 2048]
            rel0 = xs[0][:, None] - self.seg_a[0]
            rel1 = xs[1][:, None] - self.seg_a[1]
            s = np.clip((rel0 * self.seg_d[0] + rel1 * self.seg_d[1]) / self.seg_L2, 0, 1)
            d = np.hypot(rel0 - s * self.seg_d[0], rel1 - s * self.seg_d[1])
            # nearest distance per group
            dg = np.empty((xs.shape[1], n_groups))
            for gidx in range(n_groups):
                dg[:, gidx] = np.min(d[:, groups == gidx], axis=1)
            # min over pairs of non-adjacent boundaries of d_i + d_j, taking i among the
            # few nearest (a vertex is at distance 0 from every piece that meets there)
            k = min(4, n_groups)
            near = (
                np.argpartition(dg, k - 1, axis=1)[:, :k]
                if n_groups > k
                else np.tile(np.arange(n_groups), (dg.shape[0], 1))
            )
            rows = np.arange(dg.shape[0])
            best = np.full(dg.shape[0], np.inf)
            for c in range(near.shape[1]):
                i = near[:, c]
                far = np.where(self.adjacent[i], np.inf, dg)
                best = np.minimum(best, dg[rows, i] + np.min(far, axis=1))
            out[lo : lo + 2048] = best
        return out


def _size_field(
    geometry: Geometry, pieces: list[_Piece], opts: MeshOptions, corner_h: float | None
) -> tuple[SizeField, np.ndarray]:
    size = geometry.size()
    h_max = opts.max_size * size
    # feature segments (arcs as chords) with group = piece
    seg_a, seg_b, seg_group = [], [], []
    for gi, pc in enumerate(pieces):
        e = pc.edge
        if isinstance(e, Line):
            pts = np.array([e.a, e.b]).T
        else:
            n = max(2, math.ceil(abs(e.t1 - e.t0) / math.radians(10)))
            pts = e.point(np.linspace(0, 1, n + 1))
        seg_a.append(pts[:, :-1])
        seg_b.append(pts[:, 1:])
        seg_group.extend([gi] * (pts.shape[1] - 1))
    seg_a = np.hstack(seg_a)
    seg_b = np.hstack(seg_b)
    seg_group = np.asarray(seg_group)
    n = len(pieces)
    tol = _tol(size)
    keys = [
        (
            (round(pc.edge.a[0] / tol), round(pc.edge.a[1] / tol)),
            (round(pc.edge.b[0] / tol), round(pc.edge.b[1] / tol)),
        )
        for pc in pieces
    ]
    adjacent = np.eye(n, dtype=bool)
    # Pieces that meet, or lie on one line or circle without belonging to different
    # conductors, do not count as a gap to each other. Coplanar electrodes do.
    for i in range(n):
        for j in range(i + 1, n):
            ci, cj = pieces[i].conductors, pieces[j].conductors
            split = bool(ci) and bool(cj) and ci != cj
            if set(keys[i]) & set(keys[j]) or (
                not split and _same_carrier(pieces[i].edge, pieces[j].edge, tol)
            ):
                adjacent[i, j] = adjacent[j, i] = True

    corners = _singular_points(geometry, pieces, tol)
    lfs_field = SizeField(
        np.zeros((2, 0)), np.zeros(0), opts.grading, h_max, seg_a, seg_b, seg_group, adjacent, 1.0
    )
    src, src_h = [], []
    if len(corners):
        lfs_c = lfs_field.local_feature_size(corners.T)
        h_c = (
            np.minimum(lfs_c, h_max) * opts.corner_size
            if corner_h is None
            else np.full(len(corners), corner_h)
        )
        src.append(corners.T)
        src_h.append(h_c)
    # curves: samples along each arc limit the angle an element edge spans
    for pc in pieces:
        e = pc.edge
        if isinstance(e, Arc):
            n_s = max(2, math.ceil(abs(e.t1 - e.t0) / math.radians(opts.arc_angle)))
            pts = e.point(np.linspace(0, 1, n_s + 1))
            src.append(pts)
            src_h.append(np.full(pts.shape[1], e.radius * math.radians(opts.arc_angle)))
    src = np.hstack(src) if src else np.zeros((2, 0))
    src_h = np.concatenate(src_h) if src_h else np.zeros(0)
    sf = SizeField(
        src, src_h, opts.grading, h_max, seg_a, seg_b, seg_group, adjacent, opts.across_gap
    )
    return sf, corners


def _singular_points(geometry: Geometry, pieces: list[_Piece], tol: float) -> np.ndarray:
    """Kinks of every part, and graph vertices where boundaries of different parts meet
    (a material junction), off the symmetry axis. Shape (n, 2)."""
    pts = []
    for part in (*geometry.conductors, *geometry.dielectrics):
        pts.extend(shape_corners(part.shape, geometry.axisymmetric))
    owners_at: dict[tuple[int, int], list] = {}
    on_arc: set[tuple[int, int]] = set()
    for pc in pieces:
        if pc.box and not pc.ground:
            continue
        for pt in (pc.edge.a, pc.edge.b):
            key = (round(pt[0] / tol), round(pt[1] / tol))
            owners_at.setdefault(key, []).append(frozenset(pc.owners))
            if isinstance(pc.edge, Arc):
                on_arc.add(key)
    for key, owner_sets in owners_at.items():
        # junctions on a curve are left ungraded: where a flat face leaves a rounded
        # electrode tangentially the air wedge is a cusp, with no field singularity
        if len(set(owner_sets)) > 1 and key not in on_arc:
            pts.append((key[0] * tol, key[1] * tol))
    if not pts:
        return np.zeros((0, 2))
    out = np.unique(np.round(np.asarray(pts, float) / tol) * tol, axis=0)
    if geometry.axisymmetric:
        out = out[out[:, 0] > 10 * tol]
    return out


def _same_carrier(e, f, tol) -> bool:
    if isinstance(e, Arc) and isinstance(f, Arc):
        return abs(e.cx - f.cx) < tol and abs(e.cy - f.cy) < tol and abs(e.radius - f.radius) < tol
    if isinstance(e, Line) and isinstance(f, Line):
        d = np.asarray(e.b) - np.asarray(e.a)
        n = np.array([-d[1], d[0]]) / np.linalg.norm(d)
        return abs(n @ (np.asarray(f.a) - e.a)) < tol and abs(n @ (np.asarray(f.b) - e.a)) < tol
    return False


# --------------------------------------------------------------------------- seed


def _discretise(pieces: list[_Piece], sf: SizeField, arcs_out: list, tol: float):
    """Points along every piece, spaced by the size field; returns points and segments."""
    pts: list[np.ndarray] = []
    segs, seg_tag, seg_arc, seg_box = [], [], [], []
    index: dict[tuple[int, int], int] = {}

    def vid(x, y):
        key = (round(x / tol), round(y / tol))
        if key not in index:
            index[key] = len(pts)
            pts.append(np.array([x, y]))
        return index[key]

    for pc in pieces:
        e = pc.edge
        s = _spacing(e, sf)
        xy = e.point(s)
        ids = [vid(*e.a)] + [vid(xy[0, i], xy[1, i]) for i in range(1, len(s) - 1)] + [vid(*e.b)]
        if pc.conductors:
            tag = next(iter(pc.conductors))
        elif pc.ground:
            tag = GROUND_TAG
        elif pc.axis:
            tag = AXIS_TAG
        else:
            tag = INTERFACE
        arc_id = -1
        if isinstance(e, Arc):
            arc_id = len(arcs_out)
            arcs_out.append((e.cx, e.cy, e.radius))
        for i in range(len(ids) - 1):
            segs.append((ids[i], ids[i + 1]))
            seg_tag.append(tag)
            seg_arc.append(arc_id)
            seg_box.append(pc.box)
    return (
        np.array(pts).T,
        np.array(segs).T,
        np.array(seg_tag),
        np.array(seg_arc),
        np.array(seg_box),
    )


def _spacing(e: Line | Arc, sf: SizeField) -> np.ndarray:
    """Fractions 0 = s0 < s1 < ... < 1 with steps following the size field."""
    L = e.length
    # sample the size field finely, integrate ds / h(s) to get the number of steps
    n_probe = 64
    s = np.linspace(0, 1, n_probe + 1)
    h = sf(e.point(s))
    # refine probes where h is small relative to the probe spacing (graded ends)
    for _ in range(40):
        ds = np.diff(s) * L
        bad = ds > 0.5 * np.minimum(h[:-1], h[1:])
        if not bad.any():
            break
        mids = 0.5 * (s[:-1] + s[1:])[bad]
        s = np.sort(np.concatenate((s, mids)))
        h = sf(e.point(s))
    inv = 1.0 / h
    cum = np.concatenate(([0.0], np.cumsum(0.5 * (inv[:-1] + inv[1:]) * np.diff(s) * L)))
    if cum[-1] > MAX_SEED_POINTS / 8:
        raise GeometryError(
            f"a boundary {L:.3g} m long would need {cum[-1]:,.0f} mesh points: a gap of "
            f"about {2 * float(np.min(h)):.3g} m runs along it, over {L / (2 * np.min(h)):,.0f} "
            "times thinner than the parts are long; close the gap (let the parts touch) "
            "or widen it",
            points=int(cum[-1]),
            limit=MAX_SEED_POINTS // 8,
        )
    n = max(1, math.ceil(cum[-1] - 1e-9))
    if isinstance(e, Arc):
        n = max(n, math.ceil(abs(e.t1 - e.t0) / math.radians(90)))
    targets = np.linspace(0, cum[-1], n + 1)
    out = np.interp(targets, cum, s)
    out[0], out[-1] = 0.0, 1.0
    return out


def _quadtree_points(box, sf: SizeField, h_floor: float) -> np.ndarray:
    """Centres of the leaves of a quadtree refined until each leaf is below h(centre)."""
    x0, y0, x1, y1 = box
    W, H = x1 - x0, y1 - y0
    s0 = min(W, H, sf.h_max * 2)
    nx, ny = max(1, round(W / s0)), max(1, round(H / s0))
    sx, sy = W / nx, H / ny
    ix, iy = np.meshgrid(np.arange(nx), np.arange(ny), indexing="ij")
    cx = x0 + (ix.ravel() + 0.5) * sx
    cy = y0 + (iy.ravel() + 0.5) * sy
    wx = np.full(cx.size, sx)
    wy = np.full(cy.size, sy)
    leaves = []
    count = 0
    for _ in range(60):
        h = sf(np.vstack((cx, cy)))
        split = (np.maximum(wx, wy) > h) & (np.maximum(wx, wy) > 2 * h_floor)
        leaves.append(np.vstack((cx[~split], cy[~split], np.maximum(wx, wy)[~split])))
        count += int(np.count_nonzero(~split)) + 4 * int(np.count_nonzero(split))
        if count > MAX_SEED_POINTS:
            raise GeometryError(
                f"this fixture needs more than {MAX_SEED_POINTS:,} seed mesh points: a gap "
                f"of {2 * float(np.min(h)):.3g} m runs along parts up to {max(W, H):.3g} m "
                "long; widen the thinnest gap or shorten the parts beside it",
                points=count,
                limit=MAX_SEED_POINTS,
            )
        if not split.any():
            break
        cx, cy, wx, wy = cx[split], cy[split], wx[split] / 2, wy[split] / 2
        cx = np.concatenate([cx - wx / 2, cx + wx / 2, cx - wx / 2, cx + wx / 2])
        cy = np.concatenate([cy - wy / 2, cy - wy / 2, cy + wy / 2, cy + wy / 2])
        wx = np.tile(wx, 4)
        wy = np.tile(wy, 4)
    return np.hstack(leaves)


def seed(
    geometry: Geometry, opts: MeshOptions = DEFAULT_OPTIONS, corner_h: float | None = None
) -> TriMesh:
    """The seed triangulation of a geometry (no star refinement, no shell)."""
    box = domain_box(geometry)
    size = geometry.size()
    tol = _tol(max(box[2] - box[0], box[3] - box[1]))
    pieces = planar_graph(geometry, box)
    _check_resolvable(pieces, size)
    sf, corners = _size_field(geometry, pieces, opts, corner_h)
    arcs: list = []
    bp, segs, seg_tag, seg_arc, seg_box = _discretise(pieces, sf, arcs, tol)

    leaves = _quadtree_points(box, sf, h_floor=1e-9 * size)
    q = leaves[:2]
    qh = leaves[2]
    # keep bulk points strictly inside the box, out of conductors, away from boundaries
    bx0, by0, bx1, by1 = box
    m = (
        (q[0] > bx0 + 0.5 * qh)
        & (q[0] < bx1 - 0.5 * qh)
        & (q[1] > by0 + 0.5 * qh)
        & (q[1] < by1 - 0.5 * qh)
    )
    q, qh = q[:, m], qh[m]
    inside = np.zeros(q.shape[1], bool)
    for c in geometry.conductors:
        inside |= c.shape.contains(q)
    q, qh = q[:, ~inside], qh[~inside]
    tree = cKDTree(bp.T)
    dist, _ = tree.query(q.T)
    keep = dist > 0.75 * qh
    q = q[:, keep]
    # diametral circles of boundary segments must be empty for Delaunay to keep them
    q = _clear_diametral(bp, segs, q)

    p = np.hstack((bp, q))
    n_boundary = bp.shape[1]
    for _ in range(12):
        tri = Delaunay(p.T, qhull_options="Qbb Qc Qz Q12 Qt")
        t = tri.simplices.T.astype(np.int64)
        missing = _missing_segments(t, segs)
        if not missing.any():
            break
        p, segs, seg_tag, seg_arc, seg_box, n_boundary = _split_segments(
            p, segs, seg_tag, seg_arc, seg_box, missing, n_boundary, arcs
        )
        q = _clear_diametral(p[:, :n_boundary], segs, p[:, n_boundary:])
        p = np.hstack((p[:, :n_boundary], q))
    else:
        raise GeometryError(
            "could not build a conforming mesh for this geometry (boundary segments keep "
            "crossing); check for parts meeting at very small angles",
            size=size,
        )

    # remove triangles inside conductors (their holes) and degenerate ones
    cen = p[:, t].mean(axis=1)
    dead = np.zeros(t.shape[1], bool)
    for c in geometry.conductors:
        dead |= c.shape.contains(cen)
    area = _signed_area(p, t)
    dead |= np.abs(area) <= 1e-14 * size**2
    t = t[:, ~dead]
    area = area[~dead]
    t[[1, 2]] = np.where(area < 0, t[[2, 1]], t[[1, 2]])  # counter-clockwise
    region = _classify(geometry, p, t)
    used = np.unique(t)
    remap = -np.ones(p.shape[1], np.int64)
    remap[used] = np.arange(used.size)
    p = p[:, used]
    t = remap[t]
    segs = remap[segs]
    keep_seg = np.all(segs >= 0, axis=0)
    segs, seg_tag, seg_arc = segs[:, keep_seg], seg_tag[keep_seg], seg_arc[keep_seg]
    segs = np.sort(segs, axis=0)
    # the singular vertices
    if len(corners):
        d, idx = cKDTree(p.T).query(corners)
        singular = np.unique(idx[d < 10 * tol])
    else:
        singular = np.zeros(0, np.int64)
    mesh = TriMesh(
        p=p,
        t=t,
        region=region,
        edges=segs,
        edge_tag=seg_tag,
        edge_arc=seg_arc,
        arcs=tuple(arcs),
        singular=singular,
        axisymmetric=geometry.axisymmetric,
        info={"box": box},
    )
    _project_arcs(mesh)
    return mesh


MAX_SEED_POINTS = 300_000


def _check_resolvable(pieces: list[_Piece], size: float) -> None:
    """Refuse boundary pieces and gaps below 1e-7 of the fixture size."""
    _check_gaps(pieces, size)
    for pc in pieces:
        if pc.edge.length < 1e-7 * size and not pc.box:
            x, y = pc.edge.a
            raise GeometryError(
                f"a boundary piece of {sorted(pc.owners)} near ({x:.6g} m, {y:.6g} m) is "
                f"{pc.edge.length:.3g} m long, below what a mesh of a {size:.3g} m fixture "
                f"can resolve (1e-7 of its size = {1e-7 * size:.3g} m); align the parts or "
                "separate them further",
                length=pc.edge.length,
                minimum=1e-7 * size,
            )


def _check_gaps(pieces: list[_Piece], size: float) -> None:
    tol = _tol(size)
    chords = []
    for i, pc in enumerate(pieces):
        e = pc.edge
        n = 1 if isinstance(e, Line) else max(2, math.ceil(abs(e.t1 - e.t0) / 0.2))
        pts = e.point(np.linspace(0, 1, n + 1))
        chords.extend((pts[:, k], pts[:, k + 1], i) for k in range(n))
    ends = {
        i: {
            (round(pc.edge.a[0] / tol), round(pc.edge.a[1] / tol)),
            (round(pc.edge.b[0] / tol), round(pc.edge.b[1] / tol)),
        }
        for i, pc in enumerate(pieces)
    }
    a = np.array([c[0] for c in chords])
    b = np.array([c[1] for c in chords])
    for k, m in near_pairs(np.minimum(a, b), np.maximum(a, b), 1e-7 * size).tolist():
        (a0, a1, i), (b0, b1, j) = chords[k], chords[m]
        if i == j or ends[i] & ends[j]:
            continue
        gap = _segment_distance(a0, a1, b0, b1)
        if gap < 1e-7 * size:
            names = sorted(pieces[i].owners | pieces[j].owners)
            raise GeometryError(
                f"the gap between {names} near ({a0[0]:.6g} m, {a0[1]:.6g} m) is "
                f"{gap:.3g} m, below what a mesh of a {size:.3g} m fixture can resolve "
                f"(1e-7 of its size = {1e-7 * size:.3g} m); separate the parts further "
                "or let them touch",
                gap=gap,
                minimum=1e-7 * size,
            )


def _segment_distance(a0, a1, b0, b1) -> float:
    """Shortest distance between segments a0-a1 and b0-b1 (they do not cross here)."""

    def point_seg(p, s0, s1):
        d = s1 - s0
        L2 = float(d @ d)
        s = 0.0 if L2 == 0 else min(1.0, max(0.0, float((p - s0) @ d) / L2))
        return float(np.linalg.norm(p - (s0 + s * d)))

    return min(
        point_seg(a0, b0, b1), point_seg(a1, b0, b1), point_seg(b0, a0, a1), point_seg(b1, a0, a1)
    )


def _signed_area(p, t):
    a, b, c = p[:, t[0]], p[:, t[1]], p[:, t[2]]
    return 0.5 * ((b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0]))


def _clear_diametral(bp: np.ndarray, segs: np.ndarray, q: np.ndarray) -> np.ndarray:
    if q.shape[1] == 0:
        return q
    mid = 0.5 * (bp[:, segs[0]] + bp[:, segs[1]])
    rad = 0.5 * np.linalg.norm(bp[:, segs[0]] - bp[:, segs[1]], axis=0)
    tree = cKDTree(q.T)
    hits = tree.query_ball_point(mid.T, r=rad * 1.02)
    bad = np.zeros(q.shape[1], bool)
    for h in hits:
        if h:
            bad[h] = True
    return q[:, ~bad]


def _edge_keys(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    lo, hi = np.minimum(a, b), np.maximum(a, b)
    return lo.astype(np.int64) * (1 << 32) + hi.astype(np.int64)


def _missing_segments(t: np.ndarray, segs: np.ndarray) -> np.ndarray:
    ek = np.unique(np.concatenate([_edge_keys(t[i], t[(i + 1) % 3]) for i in range(3)]))
    sk = _edge_keys(segs[0], segs[1])
    return ~np.isin(sk, ek)


def _split_segments(p, segs, seg_tag, seg_arc, seg_box, missing, n_boundary, arcs):
    """Split missing boundary segments at their middle (on the curve for arcs)."""
    bp = p[:, :n_boundary]
    q = p[:, n_boundary:]
    idx = np.nonzero(missing)[0]
    mids = 0.5 * (bp[:, segs[0, idx]] + bp[:, segs[1, idx]])
    for k, i in enumerate(idx):
        if seg_arc[i] >= 0:
            cx, cy, r = arcs[seg_arc[i]]
            v = mids[:, k] - (cx, cy)
            mids[:, k] = (cx, cy) + r * v / np.linalg.norm(v)
    new_ids = n_boundary + np.arange(idx.size)
    bp = np.hstack((bp, mids))
    keep = np.ones(segs.shape[1], bool)
    keep[idx] = False
    segs = np.hstack(
        (segs[:, keep], np.vstack((segs[0, idx], new_ids)), np.vstack((new_ids, segs[1, idx])))
    )
    seg_tag = np.concatenate((seg_tag[keep], seg_tag[idx], seg_tag[idx]))
    seg_arc = np.concatenate((seg_arc[keep], seg_arc[idx], seg_arc[idx]))
    seg_box = np.concatenate((seg_box[keep], seg_box[idx], seg_box[idx]))
    return np.hstack((bp, q)), segs, seg_tag, seg_arc, seg_box, bp.shape[1]


def _classify(geometry: Geometry, p: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Region code of every triangle; checks that dielectrics nest rather than overlap."""
    cen = p[:, t].mean(axis=1)
    region = np.full(t.shape[1], MEDIUM_REGION, np.int64)
    masks = [d.shape.contains(cen) for d in geometry.dielectrics]
    order = np.argsort([-float(np.count_nonzero(m)) for m in masks], kind="stable")
    # larger regions first, so that a region nested inside another wins
    for i in order:
        region[masks[i]] = i + 1
    for i in range(len(masks)):
        for j in range(i + 1, len(masks)):
            both = masks[i] & masks[j]
            if both.any() and not (np.all(masks[i] <= masks[j]) or np.all(masks[j] <= masks[i])):
                a, b = geometry.dielectrics[i].name, geometry.dielectrics[j].name
                raise GeometryError(
                    f"dielectrics {a!r} and {b!r} overlap without one lying inside the "
                    "other; split them so each point has one permittivity",
                    regions=(a, b),
                )
    return region


def _project_arcs(mesh: TriMesh) -> None:
    """Move vertices of curved edges exactly onto their circles (in place)."""
    if not mesh.curved:
        return
    on = mesh.edge_arc >= 0
    for k in (0, 1):
        v = mesh.edges[k, on]
        arc = mesh.edge_arc[on]
        c = np.array([mesh.arcs[a][:2] for a in arc]).T
        r = np.array([mesh.arcs[a][2] for a in arc])
        d = mesh.p[:, v] - c
        mesh.p[:, v] = c + d * (r / np.linalg.norm(d, axis=0))


# --------------------------------------------------------------------------- refinement


def star_refine(mesh: TriMesh, h_min: float, sigma: float) -> TriMesh:
    """Grade geometrically into every singular vertex down to element size ``h_min``.

    Every triangle (v, a, b) at a singular vertex v becomes layers between the points
    v + sigma^k (a - v) and v + sigma^k (b - v), k = 1..K, and an innermost triangle of
    size about h_min. Edges from v are shared between neighbouring triangles, so the
    result is conforming without any closure.
    """
    if mesh.singular.size == 0 or h_min <= 0:
        return mesh
    p = [mesh.p]
    n = mesh.p.shape[1]
    t_keep = np.ones(mesh.t.shape[1], bool)
    new_t, new_r = [], []
    edge_key = _edge_keys(mesh.edges[0], mesh.edges[1])
    edge_lookup = {int(k): i for i, k in enumerate(edge_key)}
    new_edges, new_tag, new_arc = [], [], []
    drop_edge = np.zeros(mesh.edges.shape[1], bool)
    is_sing = np.zeros(n, bool)
    is_sing[mesh.singular] = True
    skipped: list[int] = []
    for v in mesh.singular:
        star = np.nonzero(np.any(mesh.t == v, axis=0))[0]
        if star.size == 0:
            continue
        nbrs = np.unique(mesh.t[:, star])
        nbrs = nbrs[nbrs != v]
        if is_sing[nbrs].any():
            raise GeometryError(
                "two singular points are joined by one element edge; the seed mesh is "
                "too coarse there (reduce MeshOptions.corner_size)"
            )
        if _star_min_angle(mesh, v, star) < 2.0:
            # a cusp (a boundary leaving another tangentially) is not a field
            # singularity, and geometric layers there would have no area
            skipped.append(v)
            continue
        lengths = np.linalg.norm(mesh.p[:, nbrs] - mesh.p[:, [v]], axis=0)
        # one layer count per vertex, so that neighbouring triangles share their rays
        K = math.ceil(math.log(h_min / float(np.mean(lengths))) / math.log(sigma))
        K = min(max(K, 0), 80)
        frac = sigma ** np.arange(1, K + 1)
        rays: dict[int, list[int]] = {}
        for a in nbrs:
            p.append(mesh.p[:, [v]] + (mesh.p[:, [a]] - mesh.p[:, [v]]) * frac)
            rays[int(a)] = list(range(n, n + K))
            n += K
            ki = edge_lookup.get(int(_edge_keys(np.array([v]), np.array([a]))[0]))
            if ki is not None:
                chain = [int(a), *rays[int(a)], int(v)]
                drop_edge[ki] = True
                for i in range(len(chain) - 1):
                    new_edges.append(sorted((chain[i], chain[i + 1])))
                    new_tag.append(mesh.edge_tag[ki])
                    new_arc.append(mesh.edge_arc[ki])
        for e in star:
            tri = list(mesh.t[:, e])
            k = tri.index(v)
            a, b = int(tri[(k + 1) % 3]), int(tri[(k + 2) % 3])
            ca, cb = [a, *rays[a]], [b, *rays[b]]
            for i in range(K):
                new_t.append((ca[i], cb[i], cb[i + 1]))
                new_t.append((ca[i], cb[i + 1], ca[i + 1]))
                new_r.extend([mesh.region[e]] * 2)
            new_t.append((ca[-1], cb[-1], int(v)))
            new_r.append(mesh.region[e])
            t_keep[e] = False
    p = np.hstack(p)
    t = np.hstack((mesh.t[:, t_keep], np.array(new_t, np.int64).T))
    region = np.concatenate((mesh.region[t_keep], np.asarray(new_r, np.int64)))
    edges = np.hstack(
        (
            mesh.edges[:, ~drop_edge],
            np.array(new_edges, np.int64).T if new_edges else np.zeros((2, 0), np.int64),
        )
    )
    tag = np.concatenate((mesh.edge_tag[~drop_edge], np.asarray(new_tag, np.int64)))
    arc = np.concatenate((mesh.edge_arc[~drop_edge], np.asarray(new_arc, np.int64)))
    out = TriMesh(
        p=p,
        t=t,
        region=region,
        edges=edges,
        edge_tag=tag,
        edge_arc=arc,
        arcs=mesh.arcs,
        singular=np.setdiff1d(mesh.singular, skipped),
        axisymmetric=mesh.axisymmetric,
        shell=mesh.shell,
        level=mesh.level,
        info=dict(mesh.info),
    )
    _fix_orientation(out)
    _project_arcs(out)
    return out


def _star_min_angle(mesh: TriMesh, v: int, star: np.ndarray) -> float:
    """Smallest angle (degrees) at vertex v among the triangles of its star."""
    out = 180.0
    for e in star:
        tri = list(mesh.t[:, e])
        k = tri.index(v)
        a = mesh.p[:, tri[(k + 1) % 3]] - mesh.p[:, v]
        b = mesh.p[:, tri[(k + 2) % 3]] - mesh.p[:, v]
        c = float(a @ b / (np.linalg.norm(a) * np.linalg.norm(b)))
        out = min(out, math.degrees(math.acos(max(-1.0, min(1.0, c)))))
    return out


def _fix_orientation(mesh: TriMesh) -> None:
    area = _signed_area(mesh.p, mesh.t)
    flip = area < 0
    mesh.t[1, flip], mesh.t[2, flip] = mesh.t[2, flip], mesh.t[1, flip].copy()


def refined(mesh: TriMesh) -> TriMesh:
    """Split every triangle into four; tagged edges into two (tags and arcs inherited)."""
    p, t = mesh.p, mesh.t
    n = p.shape[1]
    all_e = np.hstack([np.sort(np.vstack((t[i], t[(i + 1) % 3])), axis=0) for i in range(3)])
    keys = _edge_keys(all_e[0], all_e[1])
    uk, inv = np.unique(keys, return_inverse=True)
    first = np.zeros(uk.size, np.int64)
    first[inv] = np.arange(keys.size)
    ue = all_e[:, first]
    mid = n + inv.reshape(3, -1)  # mid[i] is the midpoint of edge (t[i], t[i+1])
    newp = 0.5 * (p[:, ue[0]] + p[:, ue[1]])
    p2 = np.hstack((p, newp))
    m01, m12, m20 = mid
    t0, t1, t2 = t
    t_new = np.hstack(
        (
            np.vstack((t0, m01, m20)),
            np.vstack((t1, m12, m01)),
            np.vstack((t2, m20, m12)),
            np.vstack((m01, m12, m20)),
        )
    )
    region = np.tile(mesh.region, 4)
    ek = _edge_keys(mesh.edges[0], mesh.edges[1])
    pos = np.searchsorted(uk, ek)
    mids = n + pos
    edges = np.hstack(
        (
            np.sort(np.vstack((mesh.edges[0], mids)), axis=0),
            np.sort(np.vstack((mids, mesh.edges[1])), axis=0),
        )
    )
    out = TriMesh(
        p=p2,
        t=t_new,
        region=region,
        edges=edges,
        edge_tag=np.tile(mesh.edge_tag, 2),
        edge_arc=np.tile(mesh.edge_arc, 2),
        arcs=mesh.arcs,
        singular=mesh.singular,
        axisymmetric=mesh.axisymmetric,
        shell=mesh.shell,
        level=mesh.level + 1,
        info=dict(mesh.info),
    )
    _project_arcs(out)
    return out


# --------------------------------------------------------------------------- shell


def attach_shell(mesh: TriMesh, geometry: Geometry, opts: MeshOptions = DEFAULT_OPTIONS) -> TriMesh:
    """Wrap the box of an open-space mesh in the far-field shell (see :class:`Shell`)."""
    b = geometry.boundary
    if not isinstance(b, OpenSpace):
        return mesh
    x0, y0, x1, y1 = mesh.info["box"]
    axi = mesh.axisymmetric
    plane = b.ground_plane
    cx = 0.0 if axi else 0.5 * (x0 + x1)
    cy = plane if plane is not None else 0.5 * (y0 + y1)
    hx = x1 - cx
    hy = max(y1 - cy, cy - y0)
    if plane is None:
        # the box must be centred on the shell centre in y
        pass
    lam = opts.shell_ratio
    shell = Shell(cx=cx, cy=cy, hx=hx, hy=hy, ratio=lam, floating=(not axi and plane is None))
    # boundary chain of the box, counter-clockwise, from the box's boundary edges
    p = mesh.p
    on_box = _box_vertices(p, (x0, y0, x1, y1), axi, plane)
    chain = _ordered_chain(p, on_box, (cx, cy), closed=(not axi and plane is None))
    rho = 1.0 + (lam - 1.0) * np.arange(1, opts.shell_layers + 1) / opts.shell_layers
    if opts.shell_tail:
        last = lam - (lam - rho[-2]) * 0.5 ** np.arange(1, opts.shell_tail + 1)
        rho = np.concatenate((rho[:-1], last, [lam]))
    L = len(rho)
    n0 = p.shape[1]
    m = len(chain)
    base = p[:, chain]
    rings = [base]
    for r in rho:
        rings.append(np.array([[cx], [cy]]) + (base - np.array([[cx], [cy]])) * r)
    newp = np.hstack(rings[1:])
    ids = np.vstack(
        [np.asarray(chain)[None, :]] + [n0 + j * m + np.arange(m)[None, :] for j in range(L)]
    )  # (L+1, m)
    closed = not axi and plane is None
    cols = m if closed else m - 1
    tris = []
    for j in range(L):
        for i in range(cols):
            a, bb = ids[j, i], ids[j, (i + 1) % m]
            c, d = ids[j + 1, (i + 1) % m], ids[j + 1, i]
            tris.append((a, bb, c))
            tris.append((a, c, d))
    t = np.hstack((mesh.t, np.array(tris, np.int64).T))
    region = np.concatenate((mesh.region, np.full(len(tris), SHELL_REGION)))
    # outer face: infinity; radial faces on a ground plane or the axis
    outer = [sorted((ids[L, i], ids[L, (i + 1) % m])) for i in range(cols)]
    e_new, tag_new = list(outer), [INFINITY_TAG] * len(outer)
    if not closed:
        for end in (0, m - 1):
            for j in range(L):
                e_new.append(sorted((ids[j, end], ids[j + 1, end])))
                pt = p[:, chain[end]]
                on_plane = plane is not None and abs(pt[1] - plane) <= 1e-9 * hy
                tag_new.append(GROUND_TAG if on_plane else AXIS_TAG)
    edges = np.hstack((mesh.edges, np.array(e_new, np.int64).T))
    tag = np.concatenate((mesh.edge_tag, tag_new))
    arc = np.concatenate((mesh.edge_arc, -np.ones(len(e_new), np.int64)))
    out = TriMesh(
        p=np.hstack((p, newp)),
        t=t,
        region=region,
        edges=edges,
        edge_tag=tag,
        edge_arc=arc,
        arcs=mesh.arcs,
        singular=mesh.singular,
        axisymmetric=axi,
        shell=shell,
        level=mesh.level,
        info=dict(mesh.info),
    )
    _fix_orientation(out)
    return out


def _box_vertices(p, box, axi, plane) -> np.ndarray:
    x0, y0, x1, y1 = box
    tol = 1e-9 * max(x1 - x0, y1 - y0)
    x, y = p
    on = (np.abs(x - x1) < tol) | (np.abs(y - y1) < tol)
    if not axi:
        on |= np.abs(x - x0) < tol
    if plane is None:
        on |= np.abs(y - y0) < tol
    # on a ground plane only the box's corners join the chain (they are already in)
    return np.nonzero(on)[0]


def _ordered_chain(p, verts, centre, closed) -> list[int]:
    """Vertices of the box boundary in counter-clockwise order about the centre."""
    ang = np.arctan2(p[1, verts] - centre[1], p[0, verts] - centre[0])
    if not closed:
        # open chains start on the ground plane or the axis, at angle -pi/2 or 0
        ang = np.where(ang < -math.pi / 2 - 1e-12, ang + 2 * math.pi, ang)
    order = np.argsort(ang, kind="stable")
    return [int(v) for v in verts[order]]
