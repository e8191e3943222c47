"""Write tests/cases/refusals.json: every refusal capbench gives, and what it must say.

Run from the repository root: python tests/cases/make_refusals.py

Each case names an entry point of the library, the files or the command (``entry``, see
tests/test_refusals.py for how each is called), the arguments, the error class expected
and the pieces of text the message must contain: the offending value with its unit and
the valid range (or, for refusals that are not about a range, what would be valid).
Long texts are written ``<<piece*N>>`` (the piece repeated N times), expanded by the test.

The expected texts are written out here by hand from the documented limits (README,
"Valid input"); they are not read from capbench, so a limit changed in the code but not
in the documentation fails the test.
"""

from __future__ import annotations

import json
import pathlib

HERE = pathlib.Path(__file__).resolve().parent
CASES: list[dict] = []


def case(id_: str, entry: str, args: dict, error: str, expect: list[str], **extra) -> None:
    CASES.append({"id": id_, "entry": entry, "args": args, "error": error, "expect": expect})
    CASES[-1].update(extra)


# --------------------------------------------------------------------------- LIMITS, both ends
# validate.check(value, what, name): each limit of the one table, just outside each end
RANGE = {
    "length": "1 um to 10 m",
    "eps_r": "1 to 10000",
    "loss": "0 to 10",
    "capacitance": "1 aF to 1 uF",
    "frequency": "1 mHz to 1 GHz",
    "temperature": "-200 degC to 500 degC",
    "conductance": "0 S to 1 S",
    "area": "1 um^2 to 100 m^2",
    "time": "0 s to 86400 s",
    "dofs": "100 to 100000000",
    "inductance": "0 nH to 100 uH",
    "resistance": "0 ohm to 100 ohm",
}
ENDS = {
    # what: (value below, shown, value above, shown)
    "length": ("0.999 um", "0.000999 mm", "10.01 m", "10010 mm"),
    "eps_r": (0.999, "0.999", 10010, "10010"),
    "loss": (-0.001, "-0.001", 10.01, "10.01"),
    "capacitance": ("0.999 aF", "9.99e-07 pF", "1.001 uF", "1.001e+06 pF"),
    "frequency": ("0.999 mHz", "0.000999 Hz", "1.001 GHz", "1.001e+09 Hz"),
    "temperature": ("-200.5 degC", "-200.5 degC", "500.5 degC", "500.5 degC"),
    "conductance": ("-0.001 S", "-0.001 S", "1.001 S", "1.001 S"),
    "area": ("0.999 um**2", "9.99e-07 mm^2", "100.1 m**2", "1.001e+08 mm^2"),
    "time": ("-1 s", "-1 s", "86401 s", "86401 s"),
    "dofs": (99, "99", 100_010_000, "1.0001e+08"),
    "inductance": ("-1 nH", "-1 nH", "100.1 uH", "100100 nH"),
    "resistance": ("-0.001 ohm", "-0.001 ohm", "100.1 ohm", "100.1 ohm"),
}
for what, (lo, lo_shown, hi, hi_shown) in ENDS.items():
    for end, value, shown in (("below", lo, lo_shown), ("above", hi, hi_shown)):
        case(
            f"limit-{what}-{end}",
            "check",
            {"value": value, "what": what, "name": f"the {what}"},
            "InputError",
            [f"the {what} = {shown}", RANGE[what]],
        )
# zero where a range starts at 0 but the quantity must be positive
case(
    "limit-conductance-zero-positive",
    "check",
    {"value": "0 S", "what": "conductance", "name": "G"},
    "InputError",
    ["G = 0 S", "0 S to 1 S", "must be > 0"],
)
# an optional correction: 0, or within the range
case(
    "stray-negative",
    "check_or_zero",
    {"value": "-0.5 pF", "what": "capacitance", "name": "stray"},
    "InputError",
    ["stray = -0.5 pF", "0, or 1 aF to 1 uF"],
)

# --------------------------------------------------------------------------- units
case(
    "unit-wrong-dimension",
    "to_si",
    {"value": "25 pF", "kind": "length", "name": "gap"},
    "InputError",
    ["gap = '25 pF'", "not a length", "give it in m"],
)
case(
    "unit-percent-is-not-a-length",
    "to_si",
    {"value": "5 %", "kind": "length", "name": "gap"},
    "InputError",
    ["gap = '5 %'", "not a length", "give it in m"],
)
case(
    "unit-arithmetic-refused",
    "to_si",
    {"value": "1 9**9**9 m", "kind": "length", "name": "gap"},
    "InputError",
    ["gap = '1 9**9**9 m'", "not a number with a unit", "e.g. '25 mm'"],
)
case(
    "unit-not-finite",
    "to_si",
    {"value": "inf mm", "kind": "length", "name": "gap"},
    "InputError",
    ["gap = 'inf mm'", "not a number with a unit"],
)
case(
    "unit-empty",
    "to_si",
    {"value": "  ", "kind": "length", "name": "gap"},
    "InputError",
    ["gap is empty", "e.g. '25 mm'"],
)
case(
    "unit-decimal-comma",
    "to_si",
    {"value": "2,5 mm", "kind": "length", "name": "gap"},
    "InputError",
    ["gap = '2,5 mm'", "not a number with a unit", "e.g. '25 mm'"],
)

# --------------------------------------------------------------------------- builders
case(
    "discs-radius-below",
    "builder",
    {"builder": "parallel_discs", "radius": "0.5 um", "gap": "1 mm"},
    "InputError",
    ["radius = 0.0005 mm", "1 um to 10 m"],
)
case(
    "discs-gap-above",
    "builder",
    {"builder": "parallel_discs", "radius": "25 mm", "gap": "12 m"},
    "InputError",
    ["gap = 12000 mm", "1 um to 10 m"],
)
case(
    "discs-gap-millimetres-as-metres",
    "builder",
    {"builder": "parallel_discs", "radius": "25 mm", "gap": 2.5e3},
    "InputError",
    ["gap = 2.5e+06 mm", "1 um to 10 m"],
)
case(
    "discs-specimen-eps-below",
    "builder",
    {
        "builder": "parallel_discs",
        "radius": "25 mm",
        "gap": "2 mm",
        "specimen": {"thickness": "1 mm", "eps_r": 0.5},
    },
    "InputError",
    ["specimen eps_r = 0.5", "1 to 10000"],
)
case(
    "discs-specimen-thicker-than-gap",
    "builder",
    {
        "builder": "parallel_discs",
        "radius": "25 mm",
        "gap": "2 mm",
        "specimen": {"thickness": "3 mm", "eps_r": 2.0},
    },
    "GeometryError",
    ["specimen thickness 3 mm", "exceeds the gap 2 mm", "valid: 0 mm to 2 mm"],
)
case(
    "discs-edge-radius-over-half-thickness",
    "builder",
    {
        "builder": "parallel_discs",
        "radius": "25 mm",
        "gap": "2 mm",
        "thickness": "1 mm",
        "edge_radius": "0.6 mm",
    },
    "GeometryError",
    ["edge radius = 0.6 mm", "valid: 0 mm to 0.5 mm"],
)
case(
    "discs-edge-radius-without-thickness",
    "builder",
    {"builder": "parallel_discs", "radius": "25 mm", "gap": "2 mm", "edge_radius": "0.2 mm"},
    "GeometryError",
    ["edge_radius = 0.2 mm", "electrode thickness > 0 mm"],
)
case(
    "guarded-eps-above",
    "builder",
    {
        "builder": "guarded_cell",
        "electrode_radius": "25 mm",
        "guard_gap": "0.5 mm",
        "guard_width": "10 mm",
        "specimen_thickness": "2 mm",
        "specimen_eps_r": 2e4,
    },
    "InputError",
    ["specimen_eps_r = 20000", "1 to 10000"],
)
case(
    "guarded-complex-eps-gain",
    "builder",
    {
        "builder": "guarded_cell",
        "electrode_radius": "25 mm",
        "guard_gap": "0.5 mm",
        "guard_width": "10 mm",
        "specimen_thickness": "2 mm",
        "specimen_eps_r": [2.0, 0.1],
    },
    "InputError",
    ["specimen_eps_r = (2+0.1j)", "between -10 eps' and 0"],
)
case(
    "guarded-unguarded-radius-too-small",
    "builder",
    {
        "builder": "guarded_cell",
        "electrode_radius": "25 mm",
        "guard_gap": "0.5 mm",
        "guard_width": "10 mm",
        "specimen_thickness": "2 mm",
        "unguarded_radius": "20 mm",
    },
    "GeometryError",
    ["unguarded radius 20 mm", "must exceed the guarded electrode radius 25 mm"],
)
case(
    "coaxial-outer-inside-inner",
    "builder",
    {"builder": "coaxial_cell", "inner_radius": "10 mm", "outer_radius": "5 mm", "length": "50 mm"},
    "GeometryError",
    ["outer radius 5 mm", "must exceed the inner radius 10 mm"],
)
case(
    "interdigitated-fingers-above",
    "builder",
    {"builder": "interdigitated", "finger_width": "10 um", "finger_gap": "10 um", "n_fingers": 201},
    "GeometryError",
    ["n_fingers = 201", "valid: a whole number 2 to 200"],
)
case(
    "four-electrode-gap-too-wide",
    "builder",
    {"builder": "four_electrode_section", "width": "10 mm", "gap": "3 mm"},
    "GeometryError",
    ["gap = 3 mm", "below a fifth of the smaller side (2 mm)"],
)

# --------------------------------------------------------------------------- closed forms
case(
    "contacting-capacitance-above",
    "ideal_contacting",
    {"capacitance": "2 uF", "thickness": "2 mm", "area": "1963 mm**2"},
    "InputError",
    ["capacitance = 2e+06 pF", "1 aF to 1 uF"],
)
case(
    "contacting-area-above",
    "ideal_contacting",
    {"capacitance": "20 pF", "thickness": "2 mm", "area": "200 m**2"},
    "InputError",
    ["area = 2e+08 mm^2", "1 um^2 to 100 m^2"],
)
case(
    "contacting-area-not-an-area",
    "ideal_contacting",
    {"capacitance": "20 pF", "thickness": "2 mm", "area": "25 mm"},
    "InputError",
    ["area = '25 mm'", "not a area", "m**2"],
)
case(
    "contacting-result-below-vacuum",
    "ideal_contacting",
    {"capacitance": "1 pF", "thickness": "2 mm", "area": "1963 mm**2"},
    "ExtractionError",
    ["eps_r = 0.115", "valid range 1 to 10000"],
)
case(
    "air-gap-readings-reversed",
    "ideal_air_gap",
    {"empty": "12 pF", "loaded": "10 pF", "thickness": "2 mm", "spacing": "3 mm"},
    "ExtractionError",
    ["(10 pF)", "empty reading (12 pF)", "must raise the capacitance"],
)
case(
    "air-gap-specimen-thicker-than-spacing",
    "ideal_air_gap",
    {"empty": "10 pF", "loaded": "12 pF", "thickness": "3 mm", "spacing": "2 mm"},
    "ExtractionError",
    ["specimen (3 mm)", "spacing (2 mm)", "needs thickness < spacing"],
)
case(
    "air-gap-result-beyond-limit",
    "ideal_air_gap",
    {"empty": "10 pF", "loaded": "30 pF", "thickness": "1 mm", "spacing": "1.5 mm"},
    "ExtractionError",
    ["10 pF empty, 30 pF loaded", "beyond 10000"],
)
case(
    "micrometer-no-root",
    "ideal_micrometer",
    {"thickness": "2 mm", "loaded_spacing": "2 mm", "empty_spacing": "2.5 mm"},
    "ExtractionError",
    ["re-set spacing 2.5 mm after 2 mm", "1 to 10000", "0 <= s1 - s2 < t"],
)
case(
    "micrometer-specimen-thicker-than-spacing",
    "ideal_micrometer",
    {"thickness": "3 mm", "loaded_spacing": "2 mm", "empty_spacing": "1 mm"},
    "ExtractionError",
    ["specimen (3 mm)", "loaded spacing (2 mm)", "valid: thickness <= loaded spacing"],
)
case(
    "two-fluid-same-fluids",
    "ideal_two_fluid",
    {
        "fluid1": "10 pF",
        "fluid1_with_specimen": "12 pF",
        "fluid2": "20 pF",
        "fluid2_with_specimen": "22 pF",
        "eps_fluid1": 2.0,
        "eps_fluid2": 2.0,
    },
    "ExtractionError",
    ["same permittivity (2, 2)", "two different fluids"],
)
case(
    "two-fluid-zero-denominator",
    "ideal_two_fluid",
    {
        "fluid1": "10 pF",
        "fluid1_with_specimen": "30 pF",
        "fluid2": "20 pF",
        "fluid2_with_specimen": "60 pF",
        "eps_fluid1": 1.0,
        "eps_fluid2": 2.0,
    },
    "ExtractionError",
    ["(10 pF, 30 pF, 20 pF, 60 pF)", "check their order"],
)
case(
    "two-fluid-eps-below",
    "ideal_two_fluid",
    {
        "fluid1": "10 pF",
        "fluid1_with_specimen": "12 pF",
        "fluid2": "20 pF",
        "fluid2_with_specimen": "22 pF",
        "eps_fluid1": 0.5,
        "eps_fluid2": 2.0,
    },
    "InputError",
    ["eps_r of fluid 1 = 0.5", "1 to 10000"],
)
case(
    "liquid-readings-reversed",
    "ideal_liquid",
    {"empty": "10 pF", "filled": "9 pF"},
    "ExtractionError",
    ["filled reading (9 pF)", "empty reading (10 pF)", "must raise the capacitance"],
)
case(
    "liquid-stray-above-empty",
    "ideal_liquid",
    {"empty": "10 pF", "filled": "20 pF", "stray": "11 pF"},
    "ExtractionError",
    [
        "stray capacitance (11 pF)",
        "empty reading (10 pF)",
        "valid: 0 pF to below the empty reading",
    ],
)
case(
    "liquid-result-above-limit",
    "ideal_liquid",
    {"empty": "0.001 pF", "filled": "20 pF"},
    "ExtractionError",
    ["eps_r = 20000", "valid range 1 to 10000"],
)
case(
    "guard-area-gap-above",
    "guard_effective_area",
    {"electrode_radius": "25 mm", "guard_gap": "11 m", "thickness": "2 mm"},
    "InputError",
    ["guard_gap = 11000 mm", "1 um to 10 m"],
)

# --------------------------------------------------------------------------- extraction methods
case(
    "contacting-frequency-above",
    "contacting",
    {"fixture": "discs", "capacitance": "20 pF", "frequency": "2 GHz"},
    "InputError",
    ["frequency = 2e+09 Hz", "1 mHz to 1 GHz"],
)
case(
    "contacting-dissipation-above",
    "contacting",
    {"fixture": "discs", "capacitance": "20 pF", "dissipation": 12},
    "InputError",
    ["dissipation factor = 12", "0 to 10"],
)
case(
    "contacting-conductance-above",
    "contacting",
    {"fixture": "discs", "capacitance": "20 pF", "conductance": "2 S", "frequency": "1 kHz"},
    "InputError",
    ["conductance = 2 S", "0 S to 1 S"],
)
case(
    "contacting-d-from-g-above",
    "contacting",
    {"fixture": "discs", "capacitance": "20 pF", "conductance": "1 mS", "frequency": "1 kHz"},
    "InputError",
    ["D = G / (2 pi f C)", "= 7957.75", "0 to 10"],
)
case(
    "contacting-stray-negative",
    "contacting",
    {"fixture": "discs", "capacitance": "20 pF", "stray": "-1 pF"},
    "InputError",
    ["stray capacitance = -1 pF", "0, or 1 aF to 1 uF"],
)
case(
    "contacting-reading-below-stray",
    "contacting",
    {"fixture": "discs", "capacitance": "2 pF", "stray": "3 pF"},
    "ExtractionError",
    ["reading 2 pF", "stray capacitance 3 pF", "valid: a reading above the stray"],
)
case(
    "contacting-thickness-above",
    "contacting",
    {"fixture": "discs", "capacitance": "20 pF", "thickness": "20 m"},
    "InputError",
    ["thickness = 20000 mm", "1 um to 10 m"],
)
case(
    "contacting-readings-count-mismatch",
    "contacting",
    {
        "fixture": "discs",
        "capacitance": ["20 pF", "21 pF", "22 pF"],
        "frequency": ["1 kHz", "10 kHz"],
    },
    "InputError",
    ["frequency: 2 values for 3 readings", "give one, or one per reading"],
)
case(
    "contacting-unknown-dimension",
    "contacting",
    {"fixture": "discs", "capacitance": "20 pF", "dimensions": {"colour": "1 mm"}},
    "InputError",
    ["'colour'", "valid: ['radius'"],
)
case(
    "contacting-rtol-above",
    "contacting",
    {"fixture": "discs", "capacitance": "20 pF", "fem": True, "rtol": 0.5},
    "InputError",
    ["rtol = 0.5", "valid: 1e-9 to 1e-2"],
)

# --------------------------------------------------------------------------- materials
case(
    "water-temperature-below-table",
    "water_eps_r",
    {"temperature": "-210 degC"},
    "InputError",
    ["water temperature = -210 degC", "-200 degC to 500 degC"],
)
case(
    "air-temperature-above",
    "air_eps_r",
    {"temperature": "600 degC"},
    "InputError",
    ["air temperature = 600 degC", "-200 degC to 500 degC"],
)
case(
    "air-pressure-above",
    "air_eps_r",
    {"pressure": "300 kPa"},
    "InputError",
    ["air pressure = 300000 Pa", "1 kPa to 200 kPa"],
)
case(
    "reference-fluid-temperature-above",
    "reference_eps_r",
    {"name": "cyclohexane", "temperature": "501 degC"},
    "InputError",
    ["cyclohexane temperature = 501 degC", "-200 degC to 500 degC"],
)

case(
    "air-humidity-as-a-number-of-percent",
    "air_eps_r",
    {"relative_humidity": 50},
    "InputError",
    ["relative humidity = 50", "a fraction 0 to 1"],
)
case(
    "edge-field-samples-below",
    "edge_field",
    {"fixture": "discs", "samples": 2},
    "InputError",
    ["samples = 2", "valid: a whole number 8 to 100000"],
)

# --------------------------------------------------------------------------- solver budgets
case(
    "solve-rtol-above",
    "solve",
    {"fixture": "discs", "rtol": 0.1},
    "SolverError",
    ["rtol = 0.1", "valid: a relative tolerance 1e-9 to 1e-2"],
)
case(
    "solve-time-budget-zero",
    "solve",
    {"fixture": "discs", "time_budget": 0.0},
    "InputError",
    ["time_budget = 0 s", "0 s to 86400 s", "must be > 0"],
)
case(
    "solve-time-budget-nan",
    "solve",
    {"fixture": "discs", "time_budget": "nan s"},
    "InputError",
    ["time_budget = 'nan s'", "not a number with a unit"],
)
case(
    "solve-max-dofs-fraction",
    "solve",
    {"fixture": "discs", "max_dofs": 1000.5},
    "InputError",
    ["max_dofs = 1000.5", "not a whole number", "100 to 100000000"],
)
case(
    "solve-max-dofs-above",
    "solve",
    {"fixture": "discs", "max_dofs": 1e9},
    "InputError",
    ["max_dofs = 1e+09", "100 to 100000000"],
)

# --------------------------------------------------------------------------- uncertainty
case(
    "accuracy-text-unreadable",
    "accuracy",
    {"text": "about 1 %"},
    "InputError",
    ["accuracy = 'about 1 %'", "e.g. '0.05 % of reading + 0.002 pF'"],
)
case(
    "accuracy-negative-percent",
    "accuracy",
    {"text": "-1 % of reading"},
    "InputError",
    ["-1.0 % of reading", "must be >= 0 %"],
)
case(
    "type-a-one-reading",
    "type_a",
    {"readings": ["2.01 mm"], "name": "thickness"},
    "InputError",
    ["thickness", "got 1", "at least 2 readings"],
)
case(
    "coverage-probability-above",
    "coverage_factor",
    {"dof": 10, "p": 1.5},
    "InputError",
    ["p = 1.5", "valid: 0 < p < 1"],
)

# --------------------------------------------------------------------------- fixture files
# each replaces text in fixtures/quillfield/bench3-guarded-cell.toml (read as case.toml)
FIX = "fixture_demo"
case(
    "fixture-file-length-without-unit",
    FIX,
    {"replace": [['guard_gap = "0.5 mm"', "guard_gap = 0.5"]]},
    "FileFormatError",
    ["case.toml, line 14", "guard_gap", "= 0.5 has no unit", "e.g. '2.5 mm'"],
)
case(
    "fixture-file-length-above",
    FIX,
    {"replace": [['guard_width = "10 mm"', 'guard_width = "11 m"']]},
    "FileFormatError",
    ["case.toml, line 15", "guard_width", "11000 mm", "1 um to 10 m"],
)
case(
    "fixture-file-eps-above",
    FIX,
    {"replace": [["specimen_eps_r = 2.0", "specimen_eps_r = 12000.0"]]},
    "FileFormatError",
    ["case.toml, line 17", "specimen_eps_r", "12000", "valid range 1 to 10000"],
)
case(
    "fixture-file-code-as-value",
    FIX,
    {"replace": [['guard_gap = "0.5 mm"', "guard_gap = \"__import__('os').system('exit 3')\""]]},
    "FileFormatError",
    ["case.toml, line 14", "guard_gap", "__import__('os')", "e.g. '25 mm'"],
)
case(
    "fixture-file-unknown-argument",
    FIX,
    {"replace": [["medium_eps_r = 1.0", "medium_eps_r = 1.0\ncolour = 'red'"]]},
    "FileFormatError",
    ["case.toml, line 23", "colour", "valid: ['air_gap'"],
)
case(
    "fixture-file-unknown-kind",
    FIX,
    {"replace": [['kind = "guarded_cell"', 'kind = "teapot"']]},
    "FileFormatError",
    ["case.toml, line 11", "'teapot'", "valid: ['coaxial_cell'"],
)
case(
    "fixture-file-wrong-schema",
    FIX,
    {"replace": [['schema = "capbench-fixture/1"', 'schema = "capbench-fixture/9"']]},
    "FileFormatError",
    ["case.toml, line 10", "'capbench-fixture/9'", "'capbench-fixture/1'"],
)
case(
    "fixture-file-deep-nesting",
    FIX,
    {"replace": [["medium_eps_r = 1.0", "medium_eps_r = 1.0\nx = " + "[" * 40 + "]" * 40]]},
    "FileFormatError",
    ["case.toml", "nested at least 9 deep", "at most 8 levels"],
)
case(
    "fixture-file-not-toml",
    FIX,
    {"replace": [['guard_gap = "0.5 mm"', "guard_gap = = 0.5 mm"]]},
    "FileFormatError",
    ["case.toml", "not valid TOML", "line 14"],
)
case(
    "fixture-file-long-name",
    FIX,
    {"replace": [['name = "Quillfield bench 3 guarded cell"', 'name = "<<q*10001>>"']]},
    "FileFormatError",
    ["case.toml, line 12", "name", "10,001 characters", "at most 10,000"],
)
case(
    "fixture-file-too-many-fingers",
    "fixture_text",
    {
        "text": 'schema = "capbench-fixture/1"\nkind = "interdigitated"\n'
        'finger_width = "10 um"\nfinger_gap = "10 um"\nn_fingers = 99999999999\n'
    },
    "FileFormatError",
    ["case.toml", "n_fingers = 99999999999", "valid: a whole number 2 to 200"],
)
case(
    "fixture-file-custom-coordinate-above",
    "fixture_text",
    {
        "text": 'schema = "capbench-fixture/1"\nkind = "custom"\nsymmetry = "planar"\n'
        'high = "a"\nlow = "b"\n[[conductor]]\nname = "a"\nshape = "rect"\n'
        'x0 = "0 mm"\ny0 = "0 mm"\nx1 = "11 m"\ny1 = "1 mm"\n'
    },
    "FileFormatError",
    ["case.toml, line 11", "x1", "'11 m'", "valid range -10 m to 10 m"],
)

# --------------------------------------------------------------------------- readings files
CSV = "readings_csv"
case(
    "readings-capacitance-above",
    CSV,
    {"text": "frequency [Hz],capacitance [pF]\n1000,2e6\n"},
    "FileFormatError",
    ["case.csv, line 2", "capacitance = 2e+06 pF", "1 aF to 1 uF"],
)
case(
    "readings-capacitance-below",
    CSV,
    {"text": "frequency [Hz],capacitance [F]\n1000,1e-19\n"},
    "FileFormatError",
    ["case.csv, line 2", "capacitance = 1e-07 pF", "1 aF to 1 uF"],
)
case(
    "readings-frequency-below",
    CSV,
    {"text": "frequency [Hz],capacitance [pF]\n0.0001,20\n"},
    "FileFormatError",
    ["case.csv, line 2", "frequency = 0.0001 Hz", "1 mHz to 1 GHz"],
)
case(
    "readings-dissipation-above",
    CSV,
    {"text": "frequency [Hz],capacitance [pF],dissipation factor\n1000,20,11\n"},
    "FileFormatError",
    ["case.csv, line 2", "dissipation = 11", "0 to 10"],
)
case(
    "readings-dissipation-negative",
    CSV,
    {"text": "frequency [Hz],capacitance [pF],dissipation factor\n1000,20,-0.001\n"},
    "FileFormatError",
    ["case.csv, line 2", "dissipation = -0.001", "0 to 10"],
)
case(
    "readings-formula-cell",
    CSV,
    {"text": 'frequency [Hz],capacitance [pF]\n1000,"=HYPERLINK(""x"")"\n'},
    "FileFormatError",
    [
        "case.csv, line 2",
        "capacitance = '=HYPERLINK(\"x\")'",
        "spreadsheet formula",
        "plain numbers",
    ],
)
case(
    "readings-decimal-comma",
    CSV,
    {"text": "frequency [Hz],capacitance [pF]\n1000,20,61\n"},
    "FileFormatError",
    ["case.csv, line 2", "3 values, the header has 2", "write 20.61, not 20,61"],
)
case(
    "readings-unit-not-a-capacitance",
    CSV,
    {"text": "frequency [Hz],capacitance [mm]\n1000,20\n"},
    "FileFormatError",
    ["case.csv, line 1", "'mm' is not a unit of capacitance", "[pF]"],
)
case(
    "readings-unknown-column",
    CSV,
    {"text": "frequency [Hz],capacitance [pF],colour\n1000,20,red\n"},
    "FileFormatError",
    ["case.csv, line 1", "'colour'", "valid columns: frequency [Hz]"],
)
case(
    "readings-quoted-cell-runs-on",
    CSV,
    {"text": 'frequency [Hz],capacitance [pF]\n1000,"20\n30"\n'},
    "FileFormatError",
    ["case.csv, line 2", "one reading per line"],
)
case(
    "readings-too-many-rows",
    CSV,
    {"text": "frequency [Hz],capacitance [pF]\n<<1000,20\n*100001>>"},
    "FileFormatError",
    ["case.csv", "more than 100,000 readings", "split the table"],
)

# --------------------------------------------------------------------------- measurement files
# each replaces text in fixtures/quillfield/qf-pe-03.toml (copied beside its readings)
MEAS = "measurement_demo"
case(
    "measurement-temperature-above",
    MEAS,
    {"replace": [['temperature = "23.1 degC"', 'temperature = "520 degC"']]},
    "FileFormatError",
    ["case.toml, line 45", "temperature", "520 degC", "-200 degC to 500 degC"],
)
case(
    "measurement-temperature-kelvin-below",
    MEAS,
    {"replace": [['temperature = "23.1 degC"', 'temperature = "50 K"']]},
    "FileFormatError",
    ["case.toml, line 45", "temperature", "-223.15 degC", "-200 degC to 500 degC"],
)
case(
    "measurement-temperature-uncertainty-above",
    MEAS,
    {"replace": [['temperature_uncertainty = "0.3 K"', 'temperature_uncertainty = "300 K"']]},
    "FileFormatError",
    ["case.toml, line 46", "'300 K'", "valid range 0 K to 100 K"],
)
case(
    "measurement-thickness-above",
    MEAS,
    {"replace": [['"2.0126 mm"]', '"20 m"]']]},
    "FileFormatError",
    ["case.toml", "thickness[4]", "20000 mm", "1 um to 10 m"],
)
case(
    "measurement-tolerance-above-nominal",
    MEAS,
    {"replace": [['electrode_radius = "0.01 mm"', 'electrode_radius = "30 mm"']]},
    "FileFormatError",
    ["case.toml, line 37", "'30 mm'", "> 0 mm and below the nominal 25 mm"],
)
case(
    "measurement-micrometer-above",
    MEAS,
    {"replace": [['micrometer = "1.5 um"', 'micrometer = "1.5 mm"']]},
    "FileFormatError",
    ["case.toml", "micrometer", "'1.5 mm'", "valid: 0 mm to 0.20121 mm"],
)
case(
    "measurement-unknown-method",
    MEAS,
    {"replace": [['name = "contacting"', 'name = "guesswork"']]},
    "FileFormatError",
    [
        "case.toml",
        "'guesswork'",
        "valid: ['contacting', 'air_gap', 'liquid', 'micrometer', 'two_fluid']",
    ],
)
case(
    "measurement-accuracy-unreadable",
    MEAS,
    {"replace": [['"0.05 % of reading + 0.002 pF"', '"=1+1"']]},
    "FileFormatError",
    ["case.toml, line 41", "'=1+1'", "e.g. '0.05 % of reading + 0.002 pF'"],
)
case(
    "measurement-lead-inductance-above",
    MEAS,
    {"replace": [["[method]", '[leads]\ninductance = "2 mH"\n\n[method]']]},
    "FileFormatError",
    ["case.toml, line 49", "[leads] inductance", "'2 mH'", "0 nH to 100 uH"],
)
case(
    "measurement-lead-unknown-key",
    MEAS,
    {"replace": [["[method]", '[leads]\ncapacitance = "1 pF"\n\n[method]']]},
    "FileFormatError",
    ["case.toml, line 49", "[leads] capacitance", "valid: ['inductance',"],
)
case(
    "measurement-readings-not-csv",
    MEAS,
    {"replace": [['readings = "qf-pe-03_readings.csv"', 'readings = "run.py"']]},
    "FileFormatError",
    ["case.toml", "'run.py'", "must name a .csv readings file"],
)
case(
    "measurement-fixture-file-not-toml",
    MEAS,
    {
        "replace": [
            ['kind = "guarded_cell"\nelectrode_radius = "25 mm"', 'file = "cell.pickle"'],
            ['guard_gap = "0.5 mm"\nguard_width = "10 mm"\nunguarded_radius = "50 mm"\n', ""],
            ['specimen_thickness = "2 mm"', "#"],
            ['name = "Quillfield bench 3 guarded cell"', "#"],
        ]
    },
    "FileFormatError",
    ["case.toml", "'cell.pickle'", "must name a .toml fixture file"],
)
case(
    "measurement-too-large",
    MEAS,
    {"replace": [["[lab]", "# <<x*1048576>>\n[lab]"]]},
    "FileFormatError",
    ["case.toml", "bytes is over the 1,048,576-byte limit"],
)

# the micrometer and two-fluid demos (fixtures/quillfield/qf-ps-07.toml, qf-pmma-02.toml):
# "demo" names the file, "csv" replaces text in its readings
case(
    "measurement-two-fluid-fluid-not-1-or-2",
    MEAS,
    {"demo": "qf-pmma-02", "replace": [], "csv": [["1000,2,14.45150", "1000,3,14.45150"]]},
    "FileFormatError",
    ["qf-pmma-02_readings.csv, line 6", "fluid = '3'", "valid: 1 or 2"],
)
case(
    "measurement-two-fluid-missing-fluid-rows",
    MEAS,
    {"demo": "qf-pmma-02", "replace": [], "csv": [["10000,2,", "20000,2,"]] * 2},
    "FileFormatError",
    ["qf-pmma-02_readings.csv", "no row in fluid 2 at 10000 Hz", "fluid = 1 or 2"],
)
case(
    "measurement-two-fluid-name-and-value",
    MEAS,
    {"demo": "qf-pmma-02", "replace": [['fluid1 = "air"', 'fluid1 = "air"\neps_fluid1 = 1.0005']]},
    "FileFormatError",
    ["case.toml, line", "[method] fluid1 = 'air'", "eps_fluid1 = 1.0005", "exactly one of fluid1"],
)
case(
    "measurement-two-fluid-neither",
    MEAS,
    {"demo": "qf-pmma-02", "replace": [['fluid1 = "air"', "#"]]},
    "FileFormatError",
    ["case.toml, line", "neither fluid1 nor eps_fluid1", "exactly one"],
)
case(
    "measurement-two-fluid-unknown-material",
    MEAS,
    {"demo": "qf-pmma-02", "replace": [['fluid2 = "cyclohexane"', 'fluid2 = "glycerol"']]},
    "FileFormatError",
    ["case.toml, line", "fluid2 = 'glycerol'", "valid: ['air', 'benzene'"],
)
case(
    "measurement-micrometer-missing-spacing",
    MEAS,
    {"demo": "qf-ps-07", "replace": [], "csv": [[",1.6035,0.6170", ",1.6035,"]]},
    "FileFormatError",
    ["qf-ps-07_readings.csv, line 4", "needs a 'empty spacing' reading in every row"],
)
case(
    "measurement-micrometer-spacing-above",
    MEAS,
    {"demo": "qf-ps-07", "replace": [], "csv": [[",1.6035,0.6170", ",1.6035,11000"]]},
    "FileFormatError",
    ["qf-ps-07_readings.csv, line 4", "empty spacing = 11000 mm", "1 um to 10 m"],
)

# --------------------------------------------------------------------------- command line
# argv with {fixture} (the demo fixture file) and {measurement} placeholders; exit code 1
# (input) or 2 (usage); the one stderr line must contain the texts
case(
    "cli-rtol-above",
    "cli",
    {"argv": ["solve", "{fixture}", "--rtol", "0.5"]},
    "exit 2",
    ["--rtol", "0.5 is outside the valid range 1e-9 to 1e-2"],
)
case(
    "cli-time-budget-zero",
    "cli",
    {"argv": ["solve", "{fixture}", "--time-budget", "0"]},
    "exit 2",
    ["--time-budget", "0 s is outside the valid range 0 s to 86400 s"],
)
case(
    "cli-max-dofs-below",
    "cli",
    {"argv": ["solve", "{fixture}", "--max-dofs", "5"]},
    "exit 2",
    ["--max-dofs", "5 is outside the valid range 100 to 100000000"],
)
case(
    "cli-workers-above",
    "cli",
    {"argv": ["guard", "{fixture}", "--workers", "1000"]},
    "exit 2",
    ["--workers", "1000 is outside the valid range 1 to 256"],
)
case(
    "cli-guard-eps-above",
    "cli",
    {"argv": ["guard", "{fixture}", "--eps", "20000", "--workers", "1"]},
    "exit 1",
    ["--eps value 1 = 20000", "1 to 10000"],
)
case(
    "cli-guard-thickness-above",
    "cli",
    {"argv": ["guard", "{fixture}", "--thickness", "11 m", "--workers", "1"]},
    "exit 1",
    ["--thickness value 1 = 11000 mm", "1 um to 10 m"],
)
case(
    "cli-guard-target-above",
    "cli",
    {"argv": ["guard", "{fixture}", "--target", "0.9", "--workers", "1"]},
    "exit 1",
    ["target = 0.9", "between 0 and 0.5"],
)
case(
    "cli-compare-measured-above",
    "cli",
    {"argv": ["compare", "{fixture}", "--measured", "2 uF"]},
    "exit 1",
    ["measured = 2e+06 pF", "1 aF to 1 uF"],
)
case(
    "cli-compare-stray-negative",
    "cli",
    {"argv": ["compare", "{fixture}", "--measured", "18 pF", "--stray", "-1 pF"]},
    "exit 1",
    ["stray = -1 pF", "0, or 1 aF to 1 uF"],
)
case(
    "cli-sweep-value-above",
    "cli",
    {"argv": ["sweep", "{fixture}", "--vary", "guard_width=4 mm,20 m", "--workers", "1"]},
    "exit 1",
    ["guard_width", "20000 mm", "1 um to 10 m"],
)
case(
    "cli-sweep-unknown-argument",
    "cli",
    {"argv": ["sweep", "{fixture}", "--vary", "colour=red,blue"]},
    "exit 1",
    ["--vary 'colour'", "valid: ['air_gap'"],
)
case(
    "cli-report-format",
    "cli",
    {"argv": ["report", "{fixture}", "--format", "docx"]},
    "exit 1",
    ["--format 'docx'", "valid: html, pdf, json"],
)
case(
    "cli-log-show-missing",
    "cli",
    {"argv": ["log", "show", "99", "--log-file", "{log}"]},
    "exit 1",
    ["no bench-log entry 99", "the log has no entries yet"],
)
case(
    "coaxial-guard-gap-without-guard-length",
    "builder",
    {
        "builder": "coaxial_cell",
        "inner_radius": "5 mm",
        "outer_radius": "8 mm",
        "length": "50 mm",
        "guard_gap": "1 mm",
    },
    "GeometryError",
    ["guard_gap = '1 mm' needs guard_length", "give both, or neither"],
)
case(
    "fixture-file-unit-exponent-chain",
    "fixture_text",
    {
        "text": 'schema = "capbench-fixture/1"\nkind = "parallel_discs"\n'
        'radius = "25 mm**9**9**9"\ngap = "2 mm"\n'
    },
    "FileFormatError",
    ["case.toml", "'25 mm**9**9**9'", "not a unit capbench reads"],
)
case(
    "cli-relax-monte-carlo-too-few",
    "cli",
    {"argv": ["relax", "{measurement}", "--closed-form", "--monte-carlo", "5"]},
    "exit 1",
    ["draws = 5", "valid: a whole number from 20 to 100000"],
)
case(
    "cli-report-relaxation-of-a-fixture",
    "cli",
    {"argv": ["report", "{fixture}", "--relaxation"]},
    "exit 1",
    ["--relaxation needs a measurement file with loss readings", "is a fixture file"],
)
case(
    "cli-solve-budget-exceeded",
    "cli",
    {"argv": ["solve", "{fixture}", "--rtol", "1e-8", "--max-dofs", "1000"]},
    "exit 1",
    ["over max_dofs = 1,000", "--rtol, --time-budget, --max-dofs"],
)


def main() -> None:
    ids = [c["id"] for c in CASES]
    assert len(ids) == len(set(ids)), "case ids must be unique"
    out = HERE / "refusals.json"
    out.write_text(json.dumps(CASES, indent=1) + "\n")
    print(f"wrote {len(CASES)} cases to {out}")


if __name__ == "__main__":
    main()
