"""Figures (matplotlib): fixture cross-sections, potential and field lines, edge errors.

Every function draws on an Axes you pass (or on a new Figure if you pass none) and
returns the Figure. Figures are made with :class:`matplotlib.figure.Figure`, never
through pyplot, so nothing global changes, no window opens, and the functions are safe
under the Agg backend, in worker processes and in a web page. Lengths are shown in mm.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from matplotlib.axes import Axes
from matplotlib.colors import LogNorm
from matplotlib.figure import Figure
from matplotlib.patches import PathPatch
from matplotlib.path import Path
from matplotlib.tri import LinearTriInterpolator, Triangulation

from .capacitance import Solution
from .errors import InputError
from .geometry import Annulus, Circle, Fixture, Plate, RoundedRect, simple_shapes
from .guard import EdgeCase, ErrorMap, GuardCheck

MM = 1e3  # metres to millimetres for the axes

CONDUCTOR_COLOUR = "#4a4f57"
DIELECTRIC_COLOURS = ("#e9c46a", "#8ecae6", "#b5e48c", "#f4a261", "#cdb4db")
AXIS_COLOUR = "#777777"


def _axes(ax: Axes | None, size: tuple[float, float] = (7.0, 4.5)) -> tuple[Figure, Axes]:
    if ax is None:
        fig = Figure(figsize=size, layout="constrained")
        return fig, fig.add_subplot()
    if not isinstance(ax, Axes):
        raise InputError(f"ax = {ax!r} is not a matplotlib Axes; pass one or None", value=repr(ax))
    return ax.figure, ax


def _loop(edges) -> np.ndarray:
    """Points (n, 2) along a closed chain of edges, in order."""
    pts = []
    for e in edges:
        n = 2 if e.__class__.__name__ == "Line" else 48
        pts.append(e.point(np.linspace(0.0, 1.0, n)).T)
    return np.vstack(pts)


def _shape_path(shape, axisymmetric: bool) -> Path | None:
    """A closed matplotlib Path of a shape's outline in mm (None for a plate)."""
    if isinstance(shape, Plate):
        return None
    if isinstance(shape, Annulus):
        outer = _loop([Circle(shape.cx, shape.cy, shape.outer).edges()[0]])
        inner = _loop([Circle(shape.cx, shape.cy, shape.inner).edges()[0]])[::-1]
        verts = np.vstack((outer, outer[:1], inner, inner[:1])) * MM
        codes = (
            [Path.MOVETO]
            + [Path.LINETO] * (len(outer) - 1)
            + [Path.CLOSEPOLY]
            + [Path.MOVETO]
            + [Path.LINETO] * (len(inner) - 1)
            + [Path.CLOSEPOLY]
        )
        return Path(verts, codes)
    # the full outline, square on the axis side, so that the fill closes
    if isinstance(shape, RoundedRect):
        edges = shape.edges(axis_at_x0=axisymmetric and shape.x0 == 0.0)
    elif isinstance(shape, Circle):
        edges = shape.edges(axis_at_x0=axisymmetric and shape.cx == 0.0)
    else:
        edges = shape.edges()
    pts = _loop(edges) * MM
    return Path(np.vstack((pts, pts[:1])), closed=True)


def draw_fixture(
    fixture: Fixture, ax: Axes | None = None, *, labels: bool = True, outline_only: bool = False
) -> Figure:
    """A to-scale drawing of the fixture's cross-section: conductors dark, dielectrics
    coloured, the symmetry axis dash-dotted (axisymmetric fixtures), lengths in mm.

    Parameters
    ----------
    fixture : Fixture
    ax : matplotlib Axes, optional
        Draw here; else on a new Figure.
    labels : bool
        Name each part.
    outline_only : bool
        Outlines without fills (to overlay a field map).

    Returns
    -------
    matplotlib.figure.Figure
    """
    if not isinstance(fixture, Fixture):
        raise InputError(
            f"expected a capbench Fixture, got {type(fixture).__name__}", value=repr(fixture)
        )
    fig, ax = _axes(ax)
    g = fixture.geometry
    axi = g.axisymmetric
    for i, d in enumerate(g.dielectrics):
        colour = DIELECTRIC_COLOURS[i % len(DIELECTRIC_COLOURS)]
        for s in simple_shapes(d.shape):
            path = _shape_path(s, axi)
            ax.add_patch(
                PathPatch(
                    path,
                    facecolor="none" if outline_only else colour,
                    edgecolor=colour if outline_only else "#6b6b6b",
                    lw=0.8,
                    alpha=1.0 if outline_only else 0.75,
                    label=d.name,
                )
            )
    for c in g.conductors:
        for s in simple_shapes(c.shape):
            path = _shape_path(s, axi)
            if path is None:
                ax.plot(
                    np.array([s.x0, s.x1]) * MM,
                    np.array([s.y0, s.y1]) * MM,
                    color=CONDUCTOR_COLOUR,
                    lw=2.5,
                    solid_capstyle="butt",
                )
            else:
                ax.add_patch(
                    PathPatch(
                        path,
                        facecolor="none" if outline_only else CONDUCTOR_COLOUR,
                        edgecolor=CONDUCTOR_COLOUR,
                        lw=1.5 if outline_only else 0.8,
                    )
                )
        if labels:
            x0, y0, x1, y1 = c.shape.bbox
            ax.annotate(
                c.name,
                ((x0 + x1) / 2 * MM, y1 * MM),
                xytext=(0, 4),
                textcoords="offset points",
                ha="center",
                va="bottom",
                fontsize=8,
                color=CONDUCTOR_COLOUR,
            )
    x0, y0, x1, y1 = g.bbox()
    span = max(x1 - x0, y1 - y0)
    pad = 0.08 * span
    if axi:
        ax.axvline(0.0, color=AXIS_COLOUR, lw=0.8, ls="-.")
        ax.set_xlim(-0.02 * span * MM, (x1 + pad) * MM)
    else:
        ax.set_xlim((x0 - pad) * MM, (x1 + pad) * MM)
    ax.set_ylim((y0 - pad) * MM, (y1 + pad) * MM)
    ax.set_aspect("equal")
    ax.set_xlabel("r (mm)" if axi else "x (mm)")
    ax.set_ylabel("z (mm)" if axi else "y (mm)")
    if labels and g.dielectrics and not outline_only:
        ax.legend(loc="upper right", fontsize=8, frameon=False)
    if not ax.get_title():
        ax.set_title(fixture.name or "fixture", fontsize=10)
    return fig


def potential_map(
    solution: Solution,
    ax: Axes | None = None,
    *,
    window: Sequence[float] | None = None,
    levels: int = 21,
    field_lines: int = 24,
    grid: int = 160,
) -> Figure:
    """Potential over the cross-section (filled contours, V per volt of drive) with
    field lines and the electrodes drawn.

    Parameters
    ----------
    solution : Solution
        A solved fixture that carries its field.
    ax : matplotlib Axes, optional
    window : (x0, x1, y0, y1) in metres, optional
        The region shown; default the fixture's parts with a margin. Zoom into a guard
        gap by giving a small window around it.
    levels : int
        Filled contour levels.
    field_lines : int
        Approximate number of field lines (0 for none).
    grid : int
        Points per side of the grid the field lines are traced on.

    Returns
    -------
    matplotlib.figure.Figure

    Notes
    -----
    Field lines follow E = -grad u of the piecewise-linear interpolant of the solution
    at the mesh vertices (a drawing aid; field values for checks come from
    :func:`capbench.guard.edge_field`).
    """
    if not isinstance(solution, Solution):
        raise InputError(
            f"expected a capbench Solution, got {type(solution).__name__}",
            value=repr(solution),
        )
    pf = solution.potential
    fig, ax = _axes(ax)
    fx = solution.fixture
    if window is None:
        x0, y0, x1, y1 = fx.geometry.bbox()
        span = max(x1 - x0, y1 - y0)
        pad = 0.1 * span
        window = (0.0 if fx.axisymmetric else x0 - pad, x1 + pad, y0 - pad, y1 + pad)
    try:
        wx0, wx1, wy0, wy1 = (float(w) for w in window)
    except (TypeError, ValueError):
        raise InputError(
            f"window = {window!r}; give (x0, x1, y0, y1) in metres", value=repr(window)
        ) from None
    if not (wx1 > wx0 and wy1 > wy0):
        raise InputError(
            f"window = {window!r} m: needs x1 > x0 and y1 > y0", value=tuple(window), unit="m"
        )
    tri = Triangulation(pf.x * MM, pf.y * MM, pf.triangles)
    lo, hi = float(np.min(pf.u)), float(np.max(pf.u))
    if hi - lo < 1e-12:
        hi = lo + 1.0
    cs = ax.tricontourf(tri, pf.u, levels=np.linspace(lo, hi, levels), cmap="viridis")
    fig.colorbar(cs, ax=ax, label="potential (V per V applied)", shrink=0.85)
    if field_lines > 0:
        xs = np.linspace(wx0, wx1, grid) * MM
        ys = np.linspace(wy0, wy1, grid) * MM
        X, Y = np.meshgrid(xs, ys)
        gx, gy = LinearTriInterpolator(tri, pf.u).gradient(X, Y)
        ex = -np.ma.filled(gx, 0.0)
        ey = -np.ma.filled(gy, 0.0)
        speed = np.hypot(ex, ey)
        if np.any(speed > 0):
            density = max(0.3, field_lines / 24.0)
            ax.streamplot(
                xs,
                ys,
                ex,
                ey,
                color="white",
                linewidth=0.6,
                density=density,
                arrowsize=0.6,
                broken_streamlines=True,
            )
    draw_fixture(fx, ax, labels=False, outline_only=True)
    for name, lines in pf.outlines.items():
        if name in fx.geometry.conductor_names:
            for pts in lines:
                ax.plot(pts[0] * MM, pts[1] * MM, color="black", lw=2.0)
    ax.set_xlim(wx0 * MM, wx1 * MM)
    ax.set_ylim(wy0 * MM, wy1 * MM)
    ax.set_aspect("equal")
    shown = "potential and field lines" if field_lines > 0 else "potential"
    ax.set_title(f"{fx.name or 'fixture'}: {shown}", fontsize=10)
    return fig


def _cases_of(source) -> list[EdgeCase]:
    if isinstance(source, GuardCheck):
        return list(source.cases)
    cases = list(source)
    if not cases or not all(isinstance(c, EdgeCase) for c in cases):
        raise InputError(
            "give a GuardCheck or a non-empty sequence of EdgeCase (from capbench.guard)",
            value=repr(source)[:80],
        )
    return cases


def area_error_plot(
    source: GuardCheck | Sequence[EdgeCase],
    ax: Axes | None = None,
    *,
    target: float | None = None,
) -> Figure:
    """Error in eps_r from the effective-area formula (solid) and from the bare
    electrode area (dashed) against gap / thickness, one series per eps_r.

    Parameters
    ----------
    source : GuardCheck or sequence of EdgeCase
    ax : matplotlib Axes, optional
    target : float, optional
        Draw +-target (a GuardCheck's own target by default).

    Returns
    -------
    matplotlib.figure.Figure
    """
    cases = _cases_of(source)
    if target is None and isinstance(source, GuardCheck):
        target = source.target
    fig, ax = _axes(ax)
    for k, eps in enumerate(sorted({c.eps_r for c in cases})):
        sel = sorted((c for c in cases if c.eps_r == eps), key=lambda c: c.guard_gap / c.thickness)
        x = [c.guard_gap / c.thickness for c in sel]
        colour = f"C{k % 10}"
        ax.plot(
            x,
            [c.error_formula * 100 for c in sel],
            "o-",
            color=colour,
            label=f"eps_r {eps:.3g}, d1 + B g",
        )
        ax.plot(
            x,
            [c.error_bare * 100 for c in sel],
            "s--",
            color=colour,
            alpha=0.7,
            label=f"eps_r {eps:.3g}, bare d1",
        )
    if target is not None:
        for sgn in (1, -1):
            ax.axhline(sgn * target * 100, color="crimson", lw=0.8, ls=":")
    ax.axhline(0.0, color="black", lw=0.5)
    ax.set_xscale("log")
    ax.set_xlabel("guard gap / specimen thickness")
    ax.set_ylabel("error in eps_r (%)")
    ax.set_title("effective-area error against gap / thickness", fontsize=10)
    ax.legend(fontsize=7, frameon=False)
    return fig


def error_map_plot(emap: ErrorMap, ax: Axes | None = None) -> Figure:
    """|error in eps_r| over guard width (x) and guard gap (y), log colour scale, with
    the target contour; the worst case over the specimens at each design.

    Returns
    -------
    matplotlib.figure.Figure
    """
    if not isinstance(emap, ErrorMap):
        raise InputError(
            f"expected a capbench.guard.ErrorMap, got {type(emap).__name__}",
            value=repr(emap)[:80],
        )
    fig, ax = _axes(ax)
    W = np.asarray(emap.widths) * MM
    G = np.asarray(emap.gaps) * MM
    Z = np.abs(emap.error) * 100
    zmin = max(float(Z[Z > 0].min()) if np.any(Z > 0) else 1e-6, 1e-6)
    zmax = max(float(Z.max()), zmin * 10)
    mesh = ax.pcolormesh(W, G, Z, shading="nearest", norm=LogNorm(zmin, zmax), cmap="magma_r")
    fig.colorbar(mesh, ax=ax, label="|error in eps_r| (%)")
    if len(W) > 1 and len(G) > 1 and zmin < emap.target * 100 < zmax:
        cs = ax.contour(W, G, Z, levels=[emap.target * 100], colors="cyan", linewidths=1.5)
        ax.clabel(cs, fmt=lambda z: f"target {z:.3g} %", fontsize=7)
    ts = emap.thicknesses
    ax.set_xlabel("guard width (mm)")
    ax.set_ylabel("guard gap (mm)")
    basis = "d1 + B g" if emap.basis == "formula" else "bare d1"
    ax.set_title(
        f"worst eps_r error with {basis}, t {ts[0] * MM:.3g} to {ts[-1] * MM:.3g} mm",
        fontsize=10,
    )
    return fig
