"""capbench: permittivity and loss from capacitance readings, with the fixture's own field.

Typical use::

    import capbench as cb
    fx = cb.parallel_discs(radius="25 mm", gap="2.5 mm")
    sol = cb.solve(fx, rtol=1e-6)
    sol.capacitance, sol.rel_error
"""

from importlib.metadata import PackageNotFoundError, version

from . import sweep
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
from .sweep import SweepResult
from .units import EPS0, Q_, ureg
from .validate import CapbenchWarning

try:
    __version__ = version("capbench")
except PackageNotFoundError:  # running from a source tree without installation
    __version__ = "0.0.0+unknown"

__all__ = (
    "AXISYMMETRIC",
    "DIRECT",
    "EPS0",
    "GROUND",
    "MEDIUM",
    "PAIR",
    "PLANAR",
    "Q_",
    "Annulus",
    "Breakdown",
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
    "ExtractionError",
    "FileFormatError",
    "Fixture",
    "Geometry",
    "GeometryError",
    "GuardCheck",
    "GuardDesign",
    "InputError",
    "OpenSpace",
    "Plate",
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
    "astm_edge_capacitance",
    "coaxial_cell",
    "coplanar_strips",
    "edge_field",
    "effective_area",
    "error_map",
    "formula_diameter",
    "four_electrode_section",
    "gap_factor",
    "guard_check",
    "guard_design",
    "guarded_cell",
    "interdigitated",
    "measured_vs_ideal",
    "parallel_discs",
    "parallel_strips",
    "solve",
    "sweep",
    "ureg",
)
