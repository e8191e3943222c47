"""The layering DEVELOPERS.md describes, checked on the source (issue 16): the engine
imports nothing above it, the library never imports pyplot, there are no import cycles
among capbench's modules at import time, and the command line starts without the heavy
libraries (issue 17: ``capbench --help`` is a parser, not a physics stack)."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

PKG = Path(__file__).resolve().parents[1] / "capbench"
ENGINE = {
    "errors",
    "options",
    "units",
    "validate",
    "geometry",
    "mesh",
    "field",
    "multigrid",
    "capacitance",
    "caches",
    "_version",
}
# the one known exception, inside functions only: Fixture.with_changes and
# with_permittivity ask the builder that made a fixture (capbench.rigs) to rebuild it;
# it goes when each fixture kind carries its own builder (issue 16's RigKind)
KNOWN = {("geometry", "rigs")}


def _imports(path: Path, top_level_only: bool) -> set[str]:
    """capbench modules ``path`` imports (at module level only, or anywhere)."""
    tree = ast.parse(path.read_text())
    nodes = tree.body if top_level_only else list(ast.walk(tree))
    out = set()
    for node in nodes:
        if isinstance(node, ast.If):  # `if TYPE_CHECKING:` blocks do not run
            continue
        if isinstance(node, ast.ImportFrom) and node.level == 1:
            if node.module:
                out.add(node.module.split(".")[0])
            else:
                out.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("capbench."):
            out.add(node.module.split(".")[1])
    return out


def _modules() -> dict[str, Path]:
    return {p.stem: p for p in PKG.glob("*.py") if p.stem != "__main__"}


def test_the_engine_imports_nothing_above_it():
    for name in ("geometry", "mesh", "field", "multigrid", "capacitance", "caches"):
        above = {
            m
            for m in _imports(_modules()[name], top_level_only=False) - ENGINE
            if (name, m) not in KNOWN
        }
        assert not above, f"{name} imports {sorted(above)} from above the engine"


def test_no_import_cycles_at_import_time():
    mods = _modules()
    graph = {m: _imports(p, top_level_only=True) & set(mods) - {m} for m, p in mods.items()}
    graph["__init__"] = set()  # lazy: imports its names on first use
    seen: dict[str, int] = {}

    def visit(m: str, stack: list[str]) -> None:
        if seen.get(m) == 1:
            raise AssertionError("import cycle: " + " -> ".join([*stack, m]))
        if seen.get(m) == 2:
            return
        seen[m] = 1
        for n in sorted(graph.get(m, ())):
            visit(n, [*stack, m])
        seen[m] = 2

    for m in sorted(graph):
        visit(m, [])


def test_no_pyplot_in_the_library():
    # figures are made with matplotlib.figure.Figure: no global state, no window (STYLE)
    for p in PKG.rglob("*.py"):  # subpackages too (capbench.dispersion's figures)
        tree = ast.parse(p.read_text())
        for node in ast.walk(tree):
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                names = [a.name for a in node.names] + [getattr(node, "module", "") or ""]
                assert not any("pyplot" in n for n in names), f"{p.name} imports pyplot"


def test_the_command_line_starts_without_the_physics_stack():
    code = (
        "import sys, contextlib, io\n"
        "from capbench.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        "    main(['--help'])\n"
        "heavy = [m for m in ('pint', 'scipy', 'skfem', 'matplotlib', 'numpy') "
        "if m in sys.modules]\n"
        "print(','.join(heavy))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "", f"--help loaded {out.stdout.strip()}"


def test_the_public_names_are_one_list():
    """__init__ keeps three views of the public names for three readers (the lazy table,
    the literal __all__ that ruff and type checkers read, the TYPE_CHECKING imports):
    they must name the same things."""
    import capbench

    assert set(capbench.__all__) == set(capbench._HOME) | {"__version__"}
    for name in capbench.__all__:
        assert getattr(capbench, name) is not None, name
