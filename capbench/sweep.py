"""Run many solves side by side: a local process pool, or a Dask cluster.

Design exploration means many independent field solves. :func:`executor` yields a
:class:`concurrent.futures.Executor`: a local :class:`~concurrent.futures.ProcessPoolExecutor`
by default, or, when a scheduler address is given, the executor of a Dask
``Client(address).get_executor(pure=False)``. :func:`run` maps a module-level task
function over plain-data items on it, in order, showing progress. :func:`solve_fixtures`
and :func:`solve_grid` are the ready-made sweeps of fixtures: workers rebuild each fixture
from its builder name and parameters (plain data) rather than receiving meshes.

Example::

    import capbench as cb
    specs = cb.sweep.grid("guarded_cell", electrode_radius="25 mm", guard_gap="0.5 mm",
                          guard_width=["4 mm", "8 mm"], specimen_thickness=["1 mm", "2 mm"])
    results = cb.sweep.solve_grid(specs, rtol=1e-5)                    # local cores
    results = cb.sweep.solve_grid(specs, scheduler="tcp://10.0.0.5:8786")  # a cluster
"""

from __future__ import annotations

import contextlib
import itertools
import math
import os
import sys
import time
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from concurrent.futures import Executor, Future, ProcessPoolExecutor, as_completed
from dataclasses import dataclass
from typing import Any, TextIO

import pint

from .errors import CapbenchError, InputError
from .geometry import Fixture
from .units import Q_

Progress = Callable[[int, int], None]

#: what :func:`run` does when a task raises: stop the sweep, or keep the message
ON_ERROR = ("raise", "keep")


class TaskFailed(CapbenchError, RuntimeError):
    """A task of a sweep raised; carries the item and the original message."""


class ClusterError(CapbenchError, ConnectionError):
    """The Dask scheduler at the given address could not be reached."""


#: seconds to wait for a Dask scheduler before giving up
CONNECT_TIMEOUT = 20.0


@contextlib.contextmanager
def executor(
    scheduler: str | Any | None = None, max_workers: int | None = None
) -> Iterator[Executor]:
    """An executor for independent tasks, closed on exit.

    Parameters
    ----------
    scheduler : str or dask.distributed.Client, optional
        None (default): a local process pool. A Dask scheduler address such as
        ``"tcp://10.0.0.5:8786"`` (or a ``Client`` already connected): the cluster's
        executor, ``Client(address).get_executor(pure=False)`` (``pure=False`` because
        a solve is not memoised by its arguments here).
    max_workers : int, optional
        Processes of the local pool (default: the machine's cores). Ignored for Dask.

    Yields
    ------
    concurrent.futures.Executor

    Raises
    ------
    InputError
        For a bad ``max_workers``, or a scheduler given while dask.distributed is not
        installed (it is in capbench's ``cluster`` extra).
    """
    if scheduler is None:
        n = _workers(max_workers)
        with ProcessPoolExecutor(max_workers=n, initializer=_one_blas_thread) as pool:
            yield pool
        return
    try:
        from dask.distributed import Client
    except ImportError:  # pragma: no cover - the cluster extra is installed by make install
        raise InputError(
            f"scheduler = {scheduler!r} needs dask.distributed; install capbench[cluster]",
            value=scheduler,
        ) from None
    if isinstance(scheduler, Client):
        yield scheduler.get_executor(pure=False)
        return
    if not isinstance(scheduler, str) or not scheduler.strip():
        raise InputError(
            f"scheduler = {scheduler!r}; give a Dask scheduler address such as "
            "'tcp://host:8786', a dask.distributed.Client, or None for the local pool",
            value=scheduler,
        )
    try:
        client = Client(scheduler, timeout=CONNECT_TIMEOUT)
    except (OSError, TimeoutError) as exc:
        raise ClusterError(
            f"no Dask scheduler answered at {scheduler!r} within {CONNECT_TIMEOUT:g} s "
            f"({exc}); start one (dask scheduler) or pass scheduler=None for local cores",
            address=scheduler,
        ) from None
    try:
        yield client.get_executor(pure=False)
    finally:
        client.close()


def _one_blas_thread() -> None:
    """Pool worker start-up: one BLAS thread per process.

    Each worker is a whole solve; BLAS threads on top of one process per core only
    contend (measured on this project's 2-core machine: a serial sweep ran 1.8 times
    faster with one BLAS thread). Dask's worker processes already start this way.
    """
    from threadpoolctl import threadpool_limits

    threadpool_limits(limits=1)


def _workers(max_workers: int | None) -> int:
    if max_workers is None:
        return os.cpu_count() or 1
    if isinstance(max_workers, bool) or not isinstance(max_workers, int) or max_workers < 1:
        raise InputError(
            f"max_workers = {max_workers!r}; valid: a whole number of processes >= 1",
            value=max_workers,
        )
    return max_workers


class TerminalBar:
    """A one-line progress bar on a terminal stream (stderr by default).

    Call it with (done, total). Where the stream is not a terminal it prints a line
    every tenth of the way instead of redrawing.
    """

    def __init__(self, label: str = "sweep", stream: TextIO | None = None, width: int = 30):
        self.label = label
        self.stream = stream if stream is not None else sys.stderr
        self.width = width
        self.start = time.perf_counter()
        self._last_decile = -1

    def __call__(self, done: int, total: int) -> None:
        frac = done / total if total else 1.0
        elapsed = time.perf_counter() - self.start
        text = f"{self.label} {done}/{total} {elapsed:6.1f} s"
        tty = getattr(self.stream, "isatty", lambda: False)()
        if tty:
            filled = round(frac * self.width)
            bar = "#" * filled + "-" * (self.width - filled)
            self.stream.write(f"\r{self.label} [{bar}] {done}/{total} {elapsed:6.1f} s")
            if done >= total:
                self.stream.write("\n")
        else:
            decile = int(frac * 10)
            if decile != self._last_decile or done >= total:
                self._last_decile = decile
                self.stream.write(text + "\n")
        self.stream.flush()


def _progress(progress: bool | Progress | None, label: str) -> Progress | None:
    if progress is True:
        return TerminalBar(label)
    if progress in (False, None):
        return None
    if callable(progress):
        return progress
    raise InputError(
        f"progress = {progress!r}; valid: True (a terminal bar), False, or a callable "
        "(done, total)",
        value=progress,
    )


def run(
    task: Callable[[Any], Any],
    items: Iterable[Any],
    *,
    scheduler: str | Any | None = None,
    max_workers: int | None = None,
    progress: bool | Progress | None = True,
    on_error: str = "raise",
    label: str = "sweep",
) -> list[Any]:
    """Apply ``task`` to every item on an executor and return the results in order.

    Parameters
    ----------
    task : callable
        A module-level function (it must pickle by reference) taking one plain-data item.
    items : iterable
        Plain data (numbers, strings, tuples, dicts, frozen dataclasses).
    scheduler, max_workers
        See :func:`executor`. ``max_workers=1`` with no scheduler runs in this process,
        without a pool (for debugging and as the serial baseline).
    progress : bool or callable(done, total)
        True: a bar on the terminal; a callable: called after each finished task (a web
        page passes its own progress element's update here).
    on_error : {"raise", "keep"}
        "raise": the first failing task stops the sweep with :class:`TaskFailed`;
        "keep": its place in the result holds the exception instead.

    Returns
    -------
    list
        One result per item, in the order of ``items``.
    """
    if on_error not in ON_ERROR:
        raise InputError(f"on_error = {on_error!r}; valid: {ON_ERROR}", value=on_error)
    items = list(items)
    report = _progress(progress, label)
    total = len(items)
    results: list[Any] = [None] * total
    if report:
        report(0, total)
    if scheduler is None and max_workers == 1:
        for i, item in enumerate(items):
            results[i] = _guarded(task, item, on_error)
            if report:
                report(i + 1, total)
        return results
    with executor(scheduler, max_workers) as ex:
        futures: dict[Future, int] = {ex.submit(task, item): i for i, item in enumerate(items)}
        done = 0
        try:
            for fut in as_completed(futures):
                i = futures[fut]
                exc = fut.exception()
                if exc is None:
                    results[i] = fut.result()
                elif on_error == "keep":
                    results[i] = exc
                else:
                    raise TaskFailed(
                        f"task {i} of {total} ({_short(items[i])}) failed: {exc}",
                        index=i,
                        cause=str(exc),
                    ) from exc
                done += 1
                if report:
                    report(done, total)
        finally:
            for fut in futures:
                fut.cancel()
    return results


def _guarded(task, item, on_error):
    try:
        return task(item)
    except Exception as exc:
        if on_error == "keep":
            return exc
        raise


def _short(item: Any, limit: int = 120) -> str:
    text = repr(item)
    return text if len(text) <= limit else text[: limit - 3] + "..."


# --------------------------------------------------------------------------- fixtures


def spec_of(fixture: Fixture) -> dict:
    """Plain data from which a worker rebuilds ``fixture``: builder name, arguments and
    the permittivity of every region (a changed permittivity survives the rebuild).

    A fixture made without a builder (``kind == "custom"``) travels whole; it is a
    frozen dataclass of shapes, small next to a mesh.
    """
    if not isinstance(fixture, Fixture):
        raise InputError(
            f"expected a capbench Fixture, got {type(fixture).__name__}", value=repr(fixture)
        )
    eps = {k: complex(v) for k, v in fixture.geometry.permittivities().items()}
    if fixture.kind == "custom":
        return {"kind": "custom", "fixture": fixture, "eps": eps}
    return {"kind": fixture.kind, "params": dict(fixture.params), "name": fixture.name, "eps": eps}


def build(spec: Mapping) -> Fixture:
    """The fixture a spec (from :func:`spec_of` or :func:`grid`) describes."""
    from .rigs import BUILDERS

    if not isinstance(spec, Mapping) or "kind" not in spec:
        raise InputError(
            f"fixture spec {_short(spec)} must be a mapping with a 'kind' (a builder name)",
            value=_short(spec),
        )
    kind = spec["kind"]
    if kind == "custom":
        fx = spec["fixture"]
    elif kind in BUILDERS:
        fx = BUILDERS[kind](name=spec.get("name", ""), **dict(spec.get("params", {})))
    else:
        raise InputError(
            f"fixture kind {kind!r} has no builder; valid: {sorted(BUILDERS)} or 'custom'",
            value=kind,
        )
    for region, value in dict(spec.get("eps", {})).items():
        if complex(value) != fx.geometry.permittivities().get(region):
            fx = fx.with_permittivity(region, _eps_value(value))
    return fx


def _eps_value(value: Any) -> complex | float:
    value = complex(value)
    return value.real if value.imag == 0 else value


def grid(kind: str, **axes: Any) -> list[dict]:
    """Specs for every combination of the builder arguments given as lists.

    A list or tuple is an axis of the grid; any other value is held fixed. The order is
    that of :func:`itertools.product` over the axes in the order given.

    Example: ``grid("guarded_cell", electrode_radius="25 mm", guard_gap="0.5 mm",
    guard_width=["4 mm", "8 mm"], specimen_thickness=["1 mm", "2 mm"])`` gives 4 specs.
    """
    from .rigs import BUILDERS

    if kind not in BUILDERS:
        raise InputError(f"kind = {kind!r}; valid: {sorted(BUILDERS)}", value=kind)
    names = list(axes)
    values = [v if isinstance(v, (list, tuple)) else [v] for v in axes.values()]
    for name, vals in zip(names, values, strict=True):
        if len(vals) == 0:
            raise InputError(f"grid axis {name!r} is empty; give at least one value", name=name)
    out = []
    for combo in itertools.product(*values):
        params = dict(zip(names, combo, strict=True))
        fx = BUILDERS[kind](**params)  # validates every combination here, not in a worker
        out.append(spec_of(fx))
    return out


@dataclass(frozen=True)
class SweepResult:
    """One solved fixture of a sweep.

    spec: the plain data it was built from; capacitance: terminal capacitance (F, or
    F/m for planar sections without a length); rel_error: its estimated relative error;
    dissipation_factor: C''/C'; n_dofs, seconds: the cost of the solve (in the worker).
    """

    spec: dict
    capacitance: pint.Quantity
    rel_error: float
    dissipation_factor: float
    n_dofs: int
    seconds: float

    def param(self, name: str) -> Any:
        """A builder argument of this fixture (SI float for lengths)."""
        return self.spec.get("params", {})[name]


def solve_task(item: tuple[Mapping, float]) -> dict:
    """Worker task: rebuild a fixture from its spec and solve it to rtol (plain data out)."""
    from .capacitance import solve

    spec, rtol = item
    fx = build(spec)
    sol = solve(fx, rtol=rtol)
    return {
        "terminal": complex(sol.terminal),
        "unit": sol.unit,
        "scale": fx.length or 1.0,
        "rel_error": float(sol.rel_error),
        "n_dofs": int(sol.n_dofs),
        "seconds": float(sol.seconds),
    }


def solve_grid(
    specs: Sequence[Mapping],
    rtol: float = 1e-6,
    *,
    scheduler: str | Any | None = None,
    max_workers: int | None = None,
    progress: bool | Progress | None = True,
) -> list[SweepResult]:
    """Solve every spec (from :func:`grid` or :func:`spec_of`) to ``rtol``, in parallel.

    Returns one :class:`SweepResult` per spec, in order. See :func:`run` for the other
    arguments.
    """
    _check_rtol(rtol)
    specs = [dict(s) for s in specs]
    for s in specs:
        build(s)  # refuse bad specs here, before any worker starts
    raw = run(
        solve_task,
        [(s, rtol) for s in specs],
        scheduler=scheduler,
        max_workers=max_workers,
        progress=progress,
        label="solving",
    )
    return [
        SweepResult(
            spec=s,
            capacitance=Q_(r["terminal"].real * r["scale"], r["unit"]),
            rel_error=r["rel_error"],
            dissipation_factor=float(-r["terminal"].imag / r["terminal"].real),
            n_dofs=r["n_dofs"],
            seconds=r["seconds"],
        )
        for s, r in zip(specs, raw, strict=True)
    ]


def solve_fixtures(
    fixtures: Sequence[Fixture],
    rtol: float = 1e-6,
    *,
    scheduler: str | Any | None = None,
    max_workers: int | None = None,
    progress: bool | Progress | None = True,
) -> list[SweepResult]:
    """Solve a list of fixtures in parallel (each travels as plain data, see
    :func:`spec_of`). Results in the order of ``fixtures``."""
    return solve_grid(
        [spec_of(f) for f in fixtures],
        rtol,
        scheduler=scheduler,
        max_workers=max_workers,
        progress=progress,
    )


def _check_rtol(rtol: Any) -> None:
    if not (isinstance(rtol, (int, float)) and math.isfinite(rtol) and 1e-9 <= rtol <= 1e-2):
        raise InputError(
            f"rtol = {rtol!r}; valid: a relative tolerance 1e-9 to 1e-2",
            value=rtol,
            valid=(1e-9, 1e-2),
        )
