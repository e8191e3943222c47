"""capbench: permittivity and loss from capacitance readings, with the fixture's own field.

Typical use::

    import capbench as cb
    fx = cb.parallel_discs(radius="25 mm", gap="2.5 mm")
    sol = cb.solve(fx, rtol=1e-6)
    sol.capacitance, sol.rel_error
"""

from importlib.metadata import PackageNotFoundError, version

# extraction of permittivity and loss, uncertainty, reference materials, measurement files
from . import extract, files, materials, uncertainty
from .capacitance import PotentialField, Solution, solve
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
from .files import Measurement, read_measurement
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
    "AccuracySpec",
    "Annulus",
    "Budget",
    "CapbenchError",
    "CapbenchWarning",
    "Circle",
    "Compound",
    "Conductor",
    "Dielectric",
    "Enclosure",
    "Extraction",
    "ExtractionError",
    "FileFormatError",
    "Fixture",
    "Geometry",
    "GeometryError",
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
    "__version__",
    "air_eps_r",
    "air_gap",
    "budget",
    "coaxial_cell",
    "contacting",
    "coplanar_strips",
    "extract",
    "files",
    "four_electrode_section",
    "guard_effective_area",
    "guarded_cell",
    "interdigitated",
    "liquid",
    "materials",
    "micrometer",
    "monte_carlo",
    "parallel_discs",
    "parallel_strips",
    "read_measurement",
    "reference_eps_r",
    "solve",
    "two_fluid",
    "type_a",
    "type_a_correlated",
    "type_b",
    "uncertainty",
    "ureg",
    "water_eps_r",
)
