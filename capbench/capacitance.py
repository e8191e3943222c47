"""Capacitance of a fixture: Maxwell matrix, terminal capacitance, and its error bar.

:func:`solve` climbs a ladder of discretisations of one geometrically graded mesh
(element degree 2, 3, ... 8 on the base mesh, then uniform refinement at degree 8; each
step a nested space) and stops when the estimated relative error of the terminal
capacitance is below ``rtol``. Degree steps on a geometric mesh converge exponentially
(the hp finite-element method: I. Babuska and B. Q. Guo, "The h, p and h-p version of
the finite element method; basis theory and applications", Adv. Eng. Software 15, 159,
1992).

Error estimate. For successive results C_k the difference d_k = C_k - C_(k-1) is
measured. After a degree step the estimate is |d_k| itself, a bound whenever the step
contracts the error by at least half (the reference cases show at most 0.3), whatever
the signs of the errors (the three-terminal capacitance is not an energy and its error
can change sign). After a refinement step, if the error contracts by q per step, the
error of C_k is |d_k| q / (1 - q), with q measured on the previous refinement (floored at
Q_FLOOR) or, for the first, assumed (Q_REFINE, twice the contraction seen).
tests/test_reference_field.py checks that the estimate bounds the true error on every
reference case.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass, field, replace

import numpy as np
import pint

from . import field as fe
from . import mesh as mm
from . import validate
from .caches import Cache
from .errors import GeometryError, SolverError
from .geometry import DIRECT, GROUND, MEDIUM, PAIR, Fixture, Geometry, OpenSpace
from .units import EPS0, Q_

#: assumed error contraction of the first uniform refinement (reference cases: <= 0.06)
Q_REFINE = 0.125
#: smallest contraction credited to a measured refinement step (theory allows 1/256)
Q_FLOOR = 1.0 / 64
#: innermost element at a singular point, relative to the median seed element, per rtol
H_MIN_PER_RTOL = 0.1

DEFAULT_RTOL = 1e-6
DEFAULT_TIME_BUDGET = 120.0  # s
DEFAULT_MAX_DOFS = 3_000_000


@dataclass(frozen=True)
class Rung:
    """One discretisation on the ladder, and what it gave."""

    level: int
    degree: int
    n_dofs: int
    terminal: complex
    seconds: float
    rel_error: float = math.inf
    solver: str = "direct"  # "direct" or "multigrid" (see field.solve_unit_drives)


@dataclass(frozen=True)
class PotentialField:
    """The potential of the terminal drive on a triangulation, for plots and probes.

    ``x, y`` (vertices), ``triangles`` (n, 3), ``u`` (V at each vertex, real part),
    ``outlines``: for each conductor name, a list of (2, k) polylines of its boundary.
    Drive: PAIR, high and low at +1/2 V and -1/2 V apart from a common offset (others
    floating); DIRECT, high at 1 V, every other conductor at 0 V.
    """

    x: np.ndarray
    y: np.ndarray
    triangles: np.ndarray
    u: np.ndarray
    axisymmetric: bool
    outlines: dict
    shell_start: float | None = None  # region beyond the box is the mapped exterior

    def field_strength(self) -> np.ndarray:
        """|E| (V/m per volt applied) at every vertex, averaged from the triangles."""
        x, y, t, u = self.x, self.y, self.triangles, self.u
        x0, y0 = x[t[:, 0]], y[t[:, 0]]
        b1x, b1y = x[t[:, 1]] - x0, y[t[:, 1]] - y0
        b2x, b2y = x[t[:, 2]] - x0, y[t[:, 2]] - y0
        det = b1x * b2y - b1y * b2x
        du1, du2 = u[t[:, 1]] - u[t[:, 0]], u[t[:, 2]] - u[t[:, 0]]
        ex = (du1 * b2y - du2 * b1y) / det
        ey = (du2 * b1x - du1 * b2x) / det
        emag = np.hypot(ex, ey)
        area = np.abs(det) / 2
        num = np.zeros(x.size)
        den = np.zeros(x.size)
        for k in range(3):
            np.add.at(num, t[:, k], emag * area)
            np.add.at(den, t[:, k], area)
        return num / np.maximum(den, 1e-300)


@dataclass(frozen=True, eq=False)
class Solution:
    """Result of :func:`solve`.

    capacitance: the fixture's terminal capacitance (real part; F, or F/m for planar
    sections without a length); rel_error: its estimated relative error; matrix: the
    Maxwell capacitance matrix with rows and columns in the order of ``terminals``
    (w.r.t. ground where the fixture has one); potential: the terminal drive's field.
    """

    fixture: Fixture
    terminals: tuple[str, ...]
    maxwell: np.ndarray  # SI, energy form (complex where a dielectric is lossy)
    maxwell_charge: np.ndarray  # SI, charge form
    terminal: complex  # SI
    rel_error: float
    rungs: tuple[Rung, ...]
    grounded: bool
    seconds: float
    field: fe.FieldSolution | None = field(default=None, repr=False)

    @property
    def unit(self) -> str:
        per_length = not self.fixture.axisymmetric and self.fixture.length is None
        return "F/m" if per_length else "F"

    @property
    def _scale(self) -> float:
        return self.fixture.length or 1.0

    @property
    def capacitance(self) -> pint.Quantity:
        return Q_(self.terminal.real * self._scale, self.unit)

    @property
    def dissipation_factor(self) -> float:
        """C''/C' of the terminal capacitance (0 for lossless dielectrics)."""
        return float(-self.terminal.imag / self.terminal.real)

    @property
    def matrix(self) -> pint.Quantity:
        m = self.maxwell * self._scale
        return Q_(m.real if not np.iscomplexobj(m) or not np.any(m.imag) else m, self.unit)

    @property
    def n_dofs(self) -> int:
        return self.rungs[-1].n_dofs

    @property
    def energy_charge_mismatch(self) -> float:
        """Largest relative difference between the energy and the charge forms."""
        scale = np.max(np.abs(self.maxwell))
        return float(np.max(np.abs(self.maxwell - self.maxwell_charge)) / scale)

    @property
    def potential(self) -> PotentialField:
        return potential_field(self)

    def sensitivity(self, region: str) -> complex:
        """d(terminal capacitance)/d(eps_r of ``region``), in F (F/m) per unit eps_r.

        Exact for the discrete solution: with V the conductor potentials of the terminal
        drive, C_terminal = sum V_j V_k C_jk for PAIR (and -C_hl for DIRECT), and
        dC_jk/d eps = u_j^T K_region u_k (the solutions are stationary).
        """
        fs = self._need_field()
        g = self.fixture.geometry
        names = [d.name for d in g.dielectrics]
        if region == MEDIUM:
            codes = [mm.MEDIUM_REGION, mm.SHELL_REGION]
        elif region in names:
            codes = [names.index(region) + 1]
        else:
            raise GeometryError(
                f"no region named {region!r}; valid: {[*names, MEDIUM]}", value=region
            )
        asm = fs.assembly
        U = fs.potentials[: asm.n_skeleton]  # the condensed parts act on the skeleton
        dC = np.zeros((U.shape[1], U.shape[1]), dtype=U.dtype)
        for c in codes:
            if c in asm.parts:
                dC = dC + U.T @ (asm.parts[c] @ U) * EPS0
        fx = self.fixture
        return (
            terminal_derivative(
                fs.maxwell_energy, dC, self.terminals, fx.high, fx.low, fx.connection, self.grounded
            )
            * self._scale
        )

    def field_samples(self) -> tuple[np.ndarray, np.ndarray]:
        """Points (2, n) and field strength |E| (V/m per volt of terminal drive) at the
        quadrature points of every element outside the far-field shell, from the full
        finite-element solution (degree 3 or 4), for peak-field checks."""
        fs = self._need_field()
        fx = self.fixture
        V = drive_potentials(
            fs.maxwell_energy, self.terminals, fx.high, fx.low, fx.connection, self.grounded
        )
        u = np.real(fs.potentials @ V)
        asm = fs.assembly
        inside = np.nonzero(asm.mesh.region != mm.SHELL_REGION)[0]
        X, _ = fe.triangle_quadrature(2 * asm.degree)
        x, grad = fe.gradients_at(asm, u, X, inside)
        return x.reshape(2, -1), np.hypot(grad[0], grad[1]).ravel()

    def _need_field(self) -> fe.FieldSolution:
        if self.field is None:
            raise SolverError(
                "this solution carries no field (it was loaded from a file); "
                "solve the fixture again"
            )
        return self.field


# --------------------------------------------------------------------------- terminals


def has_ground(geometry: Geometry) -> bool:
    """True where some conductor is grounded: an enclosure, a ground plane, or 3-D
    infinity. A planar section in open space has none (infinity floats)."""
    b = geometry.boundary
    return geometry.axisymmetric or not isinstance(b, OpenSpace) or b.ground_plane is not None


def terminal_capacitance(
    C: np.ndarray, names: tuple[str, ...], high: str, low: str, connection: str, grounded: bool
) -> complex:
    """Terminal capacitance from a Maxwell matrix (see :class:`~capbench.geometry.Fixture`).

    Notes
    -----
    DIRECT: minus the Maxwell coefficient between high and low (with the ground as an
    extra conductor whose coefficients make every row sum to zero).
    PAIR: with charges +q, -q on high and low and none elsewhere, C = 1 / (q^T C^-1 q)
    for unit q; potentials are taken relative to ground, or, without ground, relative to
    the low conductor.
    """
    n = len(names)
    if GROUND in (high, low) and not grounded:
        raise GeometryError(
            "this fixture has no ground (a planar section in open space): infinity floats; "
            f"choose two of its conductors {list(names)} as terminals",
            value=GROUND,
        )
    idx = {nm: i for i, nm in enumerate(names)}
    if connection == DIRECT:
        ext = np.zeros((n + 1, n + 1), dtype=C.dtype)
        ext[:n, :n] = C
        ext[:n, n] = -C.sum(axis=1)
        ext[n, :n] = -C.sum(axis=0)
        ext[n, n] = C.sum()
        i = idx.get(high, n)
        j = idx.get(low, n)
        return complex(-ext[i, j])
    if connection != PAIR:
        raise GeometryError(f"connection = {connection!r}; valid: {PAIR!r}, {DIRECT!r}")
    if grounded:
        q = np.zeros(n, dtype=C.dtype)
        if high in idx:
            q[idx[high]] += 1
        if low in idx:
            q[idx[low]] -= 1
        return complex(1.0 / (q @ np.linalg.solve(C, q)))
    if n < 2:
        raise GeometryError(
            "a planar section in open space needs two conductors for a "
            "capacitance (a single one has none per unit length)"
        )
    keep = [k for k in range(n) if k != idx[low]]
    Cr = C[np.ix_(keep, keep)]
    e = np.zeros(n - 1, dtype=C.dtype)
    e[keep.index(idx[high])] = 1.0
    return complex(1.0 / np.linalg.solve(Cr, e)[keep.index(idx[high])])


def terminal_derivative(
    C: np.ndarray,
    dC: np.ndarray,
    names: tuple[str, ...],
    high: str,
    low: str,
    connection: str,
    grounded: bool,
) -> complex:
    """Derivative of :func:`terminal_capacitance` for a change dC of the Maxwell matrix."""
    if connection == DIRECT:
        return terminal_capacitance(dC, names, high, low, DIRECT, grounded)
    V = drive_potentials(C, names, high, low, connection, grounded)
    # C_pair = 1/(q^T C^-1 q) = V^T C V with V the normalised drive; stationary in V
    return complex(V @ dC @ V)


def drive_potentials(
    C: np.ndarray, names: tuple[str, ...], high: str, low: str, connection: str, grounded: bool
) -> np.ndarray:
    """Conductor potentials (V) of the terminal drive with 1 V between high and low."""
    n = len(names)
    idx = {nm: i for i, nm in enumerate(names)}
    if connection == DIRECT:
        V = np.zeros(n, dtype=C.dtype)
        if high in idx:
            V[idx[high]] = 1.0
        return V
    q = np.zeros(n, dtype=C.dtype)
    if high in idx:
        q[idx[high]] += 1
    if low in idx:
        q[idx[low]] -= 1
    if grounded:
        V = np.linalg.solve(C, q)
    else:  # potentials relative to the low conductor
        keep = [k for k in range(n) if k != idx[low]]
        V = np.zeros(n, dtype=C.dtype)
        V[keep] = np.linalg.solve(C[np.ix_(keep, keep)], q[keep])
    vh = V[idx[high]] if high in idx else 0.0
    vl = V[idx[low]] if low in idx else 0.0
    return V / (vh - vl)


# --------------------------------------------------------------------------- meshes


def _mesh_key(g: Geometry) -> tuple:
    """What the mesh depends on: the shapes and the boundary, not the permittivities."""
    return (g.symmetry, g.conductors, tuple((d.name, d.shape) for d in g.dielectrics), g.boundary)


#: meshes of the ladder by geometry, options, innermost size class and level
MESHES = Cache("meshes", 32)
#: assembled systems by the same key and element degree (the chain to level 3 fits in 6)
ASSEMBLIES = Cache("assemblies", 6)
#: finished solutions by fixture, tolerance, mesh options and solver: the same question
#: gets the same answer without solving again (a solve is deterministic)
SOLUTIONS = Cache("solutions", 64)
#: solutions larger than this many unknowns are not kept (their fields are large)
SOLUTION_KEEP_DOFS = 500_000


def base_mesh(
    geometry: Geometry, rtol: float, options: mm.MeshOptions = mm.DEFAULT_OPTIONS
) -> mm.TriMesh:
    """Seed, star refinement at the singular points, and shell (level 0 of the ladder)."""
    key = (_mesh_key(geometry), options, _h_min_class(rtol))

    def make():
        seed = mm.seed(geometry, options)
        h_seed = float(np.median(seed.h()))
        h_min = _h_min_class(rtol) * h_seed
        star = mm.star_refine(seed, h_min=h_min, sigma=options.sigma)
        return mm.attach_shell(star, geometry, options)

    return MESHES.get_or(key, make)


def _h_min_class(rtol: float) -> float:
    """Innermost element size relative to the median seed element, in decades, so that
    nearby tolerances share one mesh."""
    return 10.0 ** math.floor(math.log10(max(rtol, 1e-14) * H_MIN_PER_RTOL))


def level_mesh(
    geometry: Geometry, rtol: float, level: int, options: mm.MeshOptions = mm.DEFAULT_OPTIONS
) -> mm.TriMesh:
    key = (_mesh_key(geometry), options, _h_min_class(rtol), level)
    if level == 0:
        return base_mesh(geometry, rtol, options)
    return MESHES.get_or(key, lambda: mm.refined(level_mesh(geometry, rtol, level - 1, options)))


def _assembly(
    geometry: Geometry, rtol: float, level: int, degree: int, options: mm.MeshOptions
) -> fe.Assembly:
    key = (_mesh_key(geometry), options, _h_min_class(rtol), level, degree)
    return ASSEMBLIES.get_or(
        key,
        lambda: fe.assemble(
            level_mesh(geometry, rtol, level, options), degree, len(geometry.conductors)
        ),
    )


def eps_by_region(geometry: Geometry) -> dict[int, complex]:
    out = {mm.MEDIUM_REGION: complex(geometry.medium_eps_r)}
    for i, d in enumerate(geometry.dielectrics):
        out[i + 1] = complex(d.eps_r)
    return out


# --------------------------------------------------------------------------- solve


#: (refinement level, element degree): degrees 2 to 8 on the base mesh first (each step
#: about 1.3 times the unknowns of the last, the error falling 3 to 30 times), then
#: uniform refinement at degree 8
LADDER = (*((0, p) for p in range(2, 9)), (1, 8), (2, 8), (3, 8))


def _ladder(rtol: float) -> tuple[tuple[int, int], ...]:
    """The ladder from the degree that the tolerance calls for: on the reference cases
    degree p reaches about 10^-(p+1), so rtol = 10^-m starts at degree m - 2 (the
    estimate needs the rung below the one that meets rtol)."""
    m = -math.log10(rtol)
    start = min(max(2, math.floor(m) - 2), 7)
    return tuple(r for r in LADDER if r[0] > 0 or r[1] >= start)


def solve(
    fixture: Fixture,
    rtol: float = DEFAULT_RTOL,
    *,
    time_budget: float = DEFAULT_TIME_BUDGET,
    max_dofs: int = DEFAULT_MAX_DOFS,
    options: mm.MeshOptions = mm.DEFAULT_OPTIONS,
    progress: Callable[[float, str], None] | None = None,
    solver: str = "auto",
) -> Solution:
    """Solve the fixture's field until the terminal capacitance's estimated relative
    error is below ``rtol``.

    Parameters
    ----------
    fixture : Fixture
    rtol : float
        Relative accuracy wanted, 1e-2 to 1e-9.
    time_budget : float
        Seconds; the ladder stops with :class:`SolverError` before a step that would
        exceed it.
    max_dofs : int
        Degrees of freedom beyond which a step is not taken (memory guard).
    progress : callable(fraction, message), optional
    solver : {"auto", "direct", "multigrid"}
        How the refined levels' systems are solved: by sparse factorisation, or by
        multigrid CG over the levels below (time nearly in proportion to the unknowns,
        less memory; see :mod:`capbench.multigrid`). "auto" takes multigrid from
        ``capbench.field.MULTIGRID_FROM`` (2 million) unknowns, where it was measured
        faster. Degree steps on the base mesh are always factorised.

    Returns
    -------
    Solution

    Raises
    ------
    SolverError
        When ``rtol`` cannot be reached within the budgets; the best result so far is
        attached as ``.partial``.
    """
    if not (isinstance(rtol, (int, float)) and 1e-9 <= rtol <= 1e-2):
        raise SolverError(
            f"rtol = {rtol!r}; valid: a relative tolerance 1e-9 to 1e-2",
            value=rtol,
            valid=(1e-9, 1e-2),
        )
    time_budget, max_dofs = validate.solver_budget(time_budget, max_dofs)
    validate.solver(solver)
    memo_key = (fixture, float(rtol), options, solver)
    kept = SOLUTIONS.get(memo_key)
    if kept is not None:
        if progress:
            progress(1.0, "done")
        return kept
    t_start = time.perf_counter()
    g = fixture.geometry
    names = g.conductor_names
    grounded = has_ground(g)
    eps = eps_by_region(g)
    rungs: list[Rung] = []
    last_fs = None
    for step, (level, degree) in enumerate(_ladder(rtol)):
        if rungs:
            est_dofs, est_time = _predict(rungs, level, degree)
            elapsed = time.perf_counter() - t_start
            if est_dofs > max_dofs or elapsed + est_time > time_budget:
                why = (
                    f"the next step needs about {est_dofs:,} unknowns, over max_dofs = {max_dofs:,}"
                    if est_dofs > max_dofs
                    else f"the next step would take about {est_time:.3g} s more, beyond "
                    f"time_budget = {time_budget:.3g} s ({elapsed:.3g} s used)"
                )
                reached = rungs[-1].rel_error
                got = (
                    f"reached {reached:.1e}"
                    if math.isfinite(reached)
                    else "one step solved, no error estimate yet"
                )
                partial = _finish(fixture, names, grounded, rungs, last_fs, t_start)
                raise SolverError(
                    f"could not reach rtol = {rtol:.1e}: {why}; {got}. Loosen rtol (valid "
                    "1e-9 to 1e-2), or raise time_budget (up to 86400 s) or max_dofs (up to "
                    "1e8)",
                    rtol=rtol,
                    reached=rungs[-1].rel_error,
                    partial=partial,
                )
        if progress:
            progress(min(0.95, step / 4), f"solving level {level}, degree {degree}")
        t0 = time.perf_counter()
        try:
            asm = _assembly(g, rtol, level, degree, options)
            coarser = ()
            if level > 0 and fe.multigrid_wanted(asm, solver):
                # the levels below, to cycle over (the ladder assembled them already)
                coarser = tuple(_assembly(g, rtol, k, degree, options) for k in range(level))
            fs = fe.solve_unit_drives(asm, eps, coarser=coarser, start=last_fs, solver=solver)
        except MemoryError:
            # the machine ran out before max_dofs did: a clear stop, not a crash
            partial = _finish(fixture, names, grounded, rungs, last_fs, t_start) if rungs else None
            biggest = f"{rungs[-1].n_dofs:,}" if rungs else "none"
            raise SolverError(
                f"ran out of memory at refinement level {level}, degree {degree} (largest step "
                f"solved: {biggest} unknowns); lower max_dofs (now {max_dofs:,}; valid 100 to "
                "1e8) below what this machine holds, or loosen rtol (valid 1e-9 to 1e-2)",
                rtol=rtol,
                max_dofs=max_dofs,
                partial=partial,
            ) from None
        Ct = terminal_capacitance(
            fs.maxwell_energy, names, fixture.high, fixture.low, fixture.connection, grounded
        )
        rungs.append(
            Rung(
                level,
                degree,
                asm.n_dofs,
                Ct,
                time.perf_counter() - t0,
                solver=fs.seconds.get("solver", "direct"),
            )
        )
        rungs[-1] = replace(rungs[-1], rel_error=_estimate(rungs))
        last_fs = fs
        if rungs[-1].rel_error <= rtol:
            break
    else:
        partial = _finish(fixture, names, grounded, rungs, last_fs, t_start)
        raise SolverError(
            f"could not reach rtol = {rtol:.1e} on the finest mesh; reached "
            f"{rungs[-1].rel_error:.1e}. Loosen rtol to above the error reached "
            "(valid: 1e-9 to 1e-2)",
            rtol=rtol,
            partial=partial,
        )
    if progress:
        progress(1.0, "done")
    sol = _finish(fixture, names, grounded, rungs, last_fs, t_start)
    if sol.rungs[-1].n_dofs <= SOLUTION_KEEP_DOFS:
        SOLUTIONS.put(memo_key, sol)
    return sol


def _finish(fixture, names, grounded, rungs, fs, t_start) -> Solution:
    return Solution(
        fixture=fixture,
        terminals=names,
        maxwell=_clean(fs.maxwell_energy),
        maxwell_charge=_clean(fs.maxwell_charge),
        terminal=rungs[-1].terminal,
        rel_error=rungs[-1].rel_error,
        rungs=tuple(rungs),
        grounded=grounded,
        seconds=time.perf_counter() - t_start,
        field=fs,
    )


def _clean(C: np.ndarray) -> np.ndarray:
    C = 0.5 * (C + C.T)
    if np.iscomplexobj(C) and not np.any(C.imag):
        C = C.real
    return C


def _estimate(rungs: list[Rung]) -> float:
    """Estimated relative error of the last rung (see the module notes)."""
    if len(rungs) < 2:
        return math.inf
    c = [r.terminal for r in rungs]
    d = abs(c[-1] - c[-2])
    floor = 1e-13 * math.sqrt(rungs[-1].n_dofs)  # rounding in the solve
    if rungs[-1].level == rungs[-2].level:
        # a degree step: the whole difference (safe while each step contracts the error
        # by 0.5 or better; the reference cases show 0.3 at worst, and sign changes of
        # the error, which a ratio would misjudge, are covered too)
        return d / abs(c[-1]) + floor
    q = Q_REFINE
    if len(rungs) >= 3 and rungs[-2].level != rungs[-3].level:
        d_prev = abs(c[-2] - c[-3])
        if d_prev > 0:
            # the previous refinement measured the contraction; keep a floor
            q = max(d / d_prev, Q_FLOOR)
    if q >= 0.9:
        return math.inf if d > 0 else 0.0
    return d * q / (1 - q) / abs(c[-1]) + floor


def _predict(rungs: list[Rung], level: int, degree: int) -> tuple[int, float]:
    last = rungs[-1]
    growth = (
        4.0 ** (level - last.level)
        * ((degree + 1) * (degree + 2))
        / ((last.degree + 1) * (last.degree + 2))
    )
    dofs = int(last.n_dofs * growth)
    return dofs, last.seconds * growth**1.2


# --------------------------------------------------------------------------- fields


def potential_field(sol: Solution) -> PotentialField:
    """The terminal drive's potential on the solved mesh, as vertices and triangles."""
    fs = sol.field
    if fs is None:
        raise SolverError("this solution carries no field (it was loaded from a file)")
    fx = sol.fixture
    V = drive_potentials(
        fs.maxwell_energy, sol.terminals, fx.high, fx.low, fx.connection, sol.grounded
    )
    u = fs.potentials @ V
    asm = fs.assembly
    mesh = asm.mesh
    inside = mesh.region != mm.SHELL_REGION
    tri = asm.skmesh.t[:, inside].T
    nv = asm.skmesh.p.shape[1]
    uv = np.real(u[asm.dofs.nodal_dofs[0, :nv]])
    outlines = _outlines(fx.geometry)
    return PotentialField(
        x=asm.skmesh.p[0].copy(),
        y=asm.skmesh.p[1].copy(),
        triangles=tri,
        u=uv,
        axisymmetric=fx.axisymmetric,
        outlines=outlines,
    )


def _outlines(g: Geometry) -> dict:
    from .geometry import shape_edges

    out = {}
    for part in (*g.conductors, *g.dielectrics):
        lines = []
        for e in shape_edges(part.shape, g.axisymmetric):
            n = 2 if e.__class__.__name__ == "Line" else 33
            lines.append(e.point(np.linspace(0, 1, n)))
        out[part.name] = lines
    return out
