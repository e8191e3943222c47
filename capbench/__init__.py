"""capbench: permittivity and loss from capacitance readings, with the fixture's own field.

Typical use::

    import capbench as cb
    fx = cb.parallel_discs(radius="25 mm", gap="2.5 mm")
    sol = cb.solve(fx, rtol=1e-6)
    sol.capacitance, sol.rel_error
"""

from importlib import import_module
from typing import TYPE_CHECKING, Any

from ._version import __version__

# Where each public name lives. Importing capbench loads none of them: a name's module
# is imported on first use (``capbench --help`` and ``capbench log list`` start without
# scipy, scikit-fem, pint or matplotlib), then the name is kept here like any attribute.
_HOME: dict[str, tuple[str, str | None]] = {
    "AccuracySpec": ("uncertainty", "AccuracySpec"),
    "air_eps_r": ("materials", "air_eps_r"),
    "air_gap": ("extract", "air_gap"),
    "Annulus": ("geometry", "Annulus"),
    "astm_edge_capacitance": ("compare", "astm_edge_capacitance"),
    "AXISYMMETRIC": ("geometry", "AXISYMMETRIC"),
    "BenchLog": ("store", "BenchLog"),
    "Breakdown": ("compare", "Breakdown"),
    "Budget": ("uncertainty", "Budget"),
    "budget": ("uncertainty", "budget"),
    "CapbenchError": ("errors", "CapbenchError"),
    "CapbenchWarning": ("errors", "CapbenchWarning"),
    "Circle": ("geometry", "Circle"),
    "clear_caches": ("caches", "clear_caches"),
    "coaxial_cell": ("rigs", "coaxial_cell"),
    "Comparison": ("compare", "Comparison"),
    "Compound": ("geometry", "Compound"),
    "Conductor": ("geometry", "Conductor"),
    "contacting": ("extract", "contacting"),
    "coplanar_strips": ("rigs", "coplanar_strips"),
    "Dielectric": ("geometry", "Dielectric"),
    "DIRECT": ("geometry", "DIRECT"),
    "edge_field": ("guard", "edge_field"),
    "EdgeCase": ("guard", "EdgeCase"),
    "EdgeField": ("guard", "EdgeField"),
    "effective_area": ("guard", "effective_area"),
    "Enclosure": ("geometry", "Enclosure"),
    "EPS0": ("units", "EPS0"),
    "error_map": ("guard", "error_map"),
    "ErrorMap": ("guard", "ErrorMap"),
    "extract": ("extract", None),
    "Extraction": ("extract", "Extraction"),
    "ExtractionError": ("errors", "ExtractionError"),
    "FileFormatError": ("errors", "FileFormatError"),
    "files": ("files", None),
    "Fixture": ("geometry", "Fixture"),
    "formula_diameter": ("guard", "formula_diameter"),
    "four_electrode_section": ("rigs", "four_electrode_section"),
    "gap_factor": ("guard", "gap_factor"),
    "Geometry": ("geometry", "Geometry"),
    "GeometryError": ("errors", "GeometryError"),
    "GROUND": ("geometry", "GROUND"),
    "guard_check": ("guard", "guard_check"),
    "guard_design": ("guard", "guard_design"),
    "guard_effective_area": ("extract", "guard_effective_area"),
    "GuardCheck": ("guard", "GuardCheck"),
    "GuardDesign": ("guard", "GuardDesign"),
    "guarded_cell": ("rigs", "guarded_cell"),
    "InputError": ("errors", "InputError"),
    "interdigitated": ("rigs", "interdigitated"),
    "liquid": ("extract", "liquid"),
    "materials": ("materials", None),
    "measured_vs_ideal": ("compare", "measured_vs_ideal"),
    "Measurement": ("files", "Measurement"),
    "MEDIUM": ("geometry", "MEDIUM"),
    "micrometer": ("extract", "micrometer"),
    "monte_carlo": ("uncertainty", "monte_carlo"),
    "MonteCarloResult": ("uncertainty", "MonteCarloResult"),
    "OpenSpace": ("geometry", "OpenSpace"),
    "PAIR": ("geometry", "PAIR"),
    "parallel_discs": ("rigs", "parallel_discs"),
    "parallel_strips": ("rigs", "parallel_strips"),
    "PLANAR": ("geometry", "PLANAR"),
    "Plate": ("geometry", "Plate"),
    "Point": ("extract", "Point"),
    "Polygon": ("geometry", "Polygon"),
    "PotentialField": ("capacitance", "PotentialField"),
    "Q_": ("units", "Q_"),
    "read_fixture": ("files", "read_fixture"),
    "read_measurement": ("files", "read_measurement"),
    "Rect": ("geometry", "Rect"),
    "reference_eps_r": ("materials", "reference_eps_r"),
    "report": ("report", None),
    "RoundedRect": ("geometry", "RoundedRect"),
    "Solution": ("capacitance", "Solution"),
    "solve": ("capacitance", "solve"),
    "SolverError": ("errors", "SolverError"),
    "Specimen": ("rigs", "Specimen"),
    "store": ("store", None),
    "StoreError": ("errors", "StoreError"),
    "sweep": ("sweep", None),
    "SweepResult": ("sweep", "SweepResult"),
    "two_fluid": ("extract", "two_fluid"),
    "type_a": ("uncertainty", "type_a"),
    "type_a_correlated": ("uncertainty", "type_a_correlated"),
    "type_b": ("uncertainty", "type_b"),
    "uncertainty": ("uncertainty", None),
    "ureg": ("units", "ureg"),
    "water_eps_r": ("materials", "water_eps_r"),
    "write_fixture": ("files", "write_fixture"),
}


def __getattr__(name: str) -> Any:
    try:
        module, attr = _HOME[name]
    except KeyError:
        raise AttributeError(f"module 'capbench' has no attribute {name!r}") from None
    value = import_module(f".{module}", __name__)
    if attr is not None:
        value = getattr(value, attr)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_HOME))


if TYPE_CHECKING:  # the same names, eagerly, for type checkers and editors
    from . import (
        extract,
        files,
        materials,
        report,  # reports: HTML, PDF, JSON (matplotlib loaded on use)
        store,  # the bench log (SQLite)
        sweep,
        uncertainty,
    )
    from .caches import clear_caches
    from .capacitance import PotentialField, Solution, solve
    from .compare import Breakdown, Comparison, astm_edge_capacitance, measured_vs_ideal
    from .errors import (
        CapbenchError,
        ExtractionError,
        FileFormatError,
        GeometryError,
        InputError,
        SolverError,
        StoreError,
    )
    from .extract import (
        Extraction,
        Point,
        air_gap,
        contacting,
        guard_effective_area,
        liquid,
        micrometer,
        two_fluid,
    )
    from .files import Measurement, read_fixture, read_measurement, write_fixture
    from .geometry import (
        AXISYMMETRIC,
        DIRECT,
        GROUND,
        MEDIUM,
        PAIR,
        PLANAR,
        Annulus,
        Circle,
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
    from .guard import (
        EdgeCase,
        EdgeField,
        ErrorMap,
        GuardCheck,
        GuardDesign,
        edge_field,
        effective_area,
        error_map,
        formula_diameter,
        gap_factor,
        guard_check,
        guard_design,
    )
    from .materials import air_eps_r, reference_eps_r, water_eps_r
    from .rigs import (
        Specimen,
        coaxial_cell,
        coplanar_strips,
        four_electrode_section,
        guarded_cell,
        interdigitated,
        parallel_discs,
        parallel_strips,
    )
    from .store import BenchLog
    from .sweep import SweepResult
    from .uncertainty import (
        AccuracySpec,
        Budget,
        MonteCarloResult,
        budget,
        monte_carlo,
        type_a,
        type_a_correlated,
        type_b,
    )
    from .units import EPS0, Q_, ureg
    from .validate import CapbenchWarning

__all__ = (
    "AXISYMMETRIC",
    "DIRECT",
    "EPS0",
    "GROUND",
    "MEDIUM",
    "PAIR",
    "PLANAR",
    "Q_",
    "AccuracySpec",
    "Annulus",
    "BenchLog",
    "Breakdown",
    "Budget",
    "CapbenchError",
    "CapbenchWarning",
    "Circle",
    "Comparison",
    "Compound",
    "Conductor",
    "Dielectric",
    "EdgeCase",
    "EdgeField",
    "Enclosure",
    "ErrorMap",
    "Extraction",
    "ExtractionError",
    "FileFormatError",
    "Fixture",
    "Geometry",
    "GeometryError",
    "GuardCheck",
    "GuardDesign",
    "InputError",
    "Measurement",
    "MonteCarloResult",
    "OpenSpace",
    "Plate",
    "Point",
    "Polygon",
    "PotentialField",
    "Rect",
    "RoundedRect",
    "Solution",
    "SolverError",
    "Specimen",
    "StoreError",
    "SweepResult",
    "__version__",
    "air_eps_r",
    "air_gap",
    "astm_edge_capacitance",
    "budget",
    "clear_caches",
    "coaxial_cell",
    "contacting",
    "coplanar_strips",
    "edge_field",
    "effective_area",
    "error_map",
    "extract",
    "files",
    "formula_diameter",
    "four_electrode_section",
    "gap_factor",
    "guard_check",
    "guard_design",
    "guard_effective_area",
    "guarded_cell",
    "interdigitated",
    "liquid",
    "materials",
    "measured_vs_ideal",
    "micrometer",
    "monte_carlo",
    "parallel_discs",
    "parallel_strips",
    "read_fixture",
    "read_measurement",
    "reference_eps_r",
    "report",
    "solve",
    "store",
    "sweep",
    "two_fluid",
    "type_a",
    "type_a_correlated",
    "type_b",
    "uncertainty",
    "ureg",
    "water_eps_r",
    "write_fixture",
)
