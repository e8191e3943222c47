"""capbench: permittivity and loss from capacitance readings, with the fixture's own field.

Typical use::

    import capbench as cb
    fx = cb.parallel_discs(radius="25 mm", gap="2.5 mm")
    sol = cb.solve(fx, rtol=1e-6)
    sol.capacitance, sol.rel_error
"""

# extraction of permittivity and loss, uncertainty, reference materials, measurement files
from . import (
    extract,
    files,
    materials,
    report,  # reports: HTML, PDF, JSON (matplotlib loaded on use)
    store,  # the bench log (SQLite)
    sweep,
    uncertainty,
)
from ._version import __version__
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
