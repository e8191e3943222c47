"""No unit string, number or table within the documented limits makes capbench work
without bound (issue 15). The timeouts below guard against a hang; they are not timing
goals (those live in benchmarks/)."""

from __future__ import annotations

import pytest

from capbench import files, units
from capbench.errors import CapbenchError, GeometryError, InputError

FIXTURE = """schema = "capbench-fixture/1"
kind = "parallel_discs"
radius = "{radius}"
gap = "2 mm"
"""


@pytest.mark.timeout(10)
@pytest.mark.parametrize(
    "text",
    [
        "1 mm**9**9**9",  # pint computed 9**(9**9) here: a hang
        "1 mm**9**9",
        "1 mm^9^9^9",
        "1 (mm**9)**9",
        "1 ((mm**3)**3)**3",
        "1 mm**99",
        "1 (((((mm)))))",
        "1 mm" + "**2" * 30,
    ],
)
def test_exponent_chains_are_refused_before_pint_sees_them(text):
    with pytest.raises(InputError) as info:
        units.to_si(text, "length", "electrode radius")
    assert "electrode radius" in str(info.value)
    assert "not a unit capbench reads" in str(info.value)


@pytest.mark.parametrize(
    "text, kind, si",
    [
        ("2 mm**2", "area", 2e-6),
        ("3 (mm)**2", "area", 3e-6),
        ("1 (mm**3)**4 / mm**10", "area", 1e-6),
        ("5 S/m", "siemens / meter", 5.0),
        ("4.7 pF", "capacitance", 4.7e-12),
        ("1 kV/mm", "volt / meter", 1e6),
        ("50 Hz", "frequency", 50.0),
    ],
)
def test_ordinary_units_still_read(text, kind, si):
    if " " in kind:  # no capbench kind: convert with pint directly
        q = units.parse_quantity(text, "x").to(kind)
        assert q.magnitude == pytest.approx(si, rel=1e-12)
    else:
        assert units.to_si(text, kind, "x") == pytest.approx(si, rel=1e-12)


@pytest.mark.timeout(10)
def test_a_fixture_file_with_an_exponent_chain_is_refused(tmp_path):
    with pytest.raises(CapbenchError) as info:
        files.fixture_from_toml(FIXTURE.format(radius="25 mm**9**9**9"), "disc.toml")
    assert "disc.toml" in str(info.value)


@pytest.mark.timeout(10)
def test_a_readings_header_with_an_exponent_chain_is_refused():
    text = "frequency [kHz**9**9**9],capacitance [pF]\n1,20.6\n"
    with pytest.raises(CapbenchError) as info:
        files.readings_from_csv(text, "bench.csv")
    assert "bench.csv, line 1" in str(info.value)


@pytest.mark.timeout(60)
def test_the_documented_largest_readings_table_reads():
    """MAX_ROWS rows read, each value scaled by its column's unit parsed once: the same
    numbers as parsing every cell with its unit (pint), which took about 2 ms a row."""
    n = files.MAX_ROWS
    body = "\n".join(f"{1 + i % 5},{20.6 + (i % 7) * 1e-3:.4f},0.0009" for i in range(n))
    rows = files.readings_from_csv("frequency [kHz],capacitance [pF],dissipation factor\n" + body)
    assert len(rows) == n
    assert rows[8].frequency == units.to_si("4 kHz", "frequency")
    assert rows[8].capacitance == pytest.approx(units.to_si("20.6010 pF", "capacitance"), 1e-15)
    with pytest.raises(CapbenchError, match="more than 100,000 readings"):
        files.readings_from_csv(
            "frequency [kHz],capacitance [pF]\n" + "\n".join(["1,20.6"] * (n + 1))
        )


def test_a_huge_integer_is_refused_with_its_name():
    with pytest.raises(InputError, match=r"gap = 1000.* too large"):
        units.to_si(10**400, "length", "gap")


# ------------------------------------------------------------------ geometry checks


def _star(n, cx=0.05, cy=0.05):
    import math

    import numpy as np

    th = np.linspace(0, 2 * math.pi, n, endpoint=False)
    r = 0.01 * (1 + 0.1 * np.sin(40 * th))
    return tuple(zip((r * np.cos(th) + cx).tolist(), (r * np.sin(th) + cy).tolist(), strict=True))


@pytest.mark.timeout(20)
def test_the_largest_polygon_is_checked_and_a_larger_one_refused():
    from capbench.geometry import MAX_POLYGON_POINTS, Polygon

    Polygon(_star(MAX_POLYGON_POINTS))  # about 0.1 s here; the pairwise check took 130 s
    pts = list(_star(MAX_POLYGON_POINTS))
    pts[10], pts[5000] = pts[5000], pts[10]  # two far-apart points swapped: edges cross
    with pytest.raises(GeometryError, match="cross"):
        Polygon(tuple(pts))
    with pytest.raises(GeometryError, match="at most 10,000"):
        Polygon(_star(MAX_POLYGON_POINTS + 1))


def test_near_pairs_finds_exactly_the_meeting_boxes():
    """Against the plain pairwise test on random boxes shaped like fixture parts (many
    small, a few long thin plates): the grid must neither miss nor invent a pair."""
    import numpy as np

    from capbench.geometry import near_pairs

    rng = np.random.default_rng(7)
    lo = rng.uniform(0, 0.1, (300, 2))
    size = rng.lognormal(-7, 1.0, (300, 2))
    size[:10, 0] = 0.08  # long electrodes
    hi = lo + size
    got = {tuple(p) for p in near_pairs(lo, hi, 1e-4).tolist()}
    want = {
        (i, j)
        for i in range(300)
        for j in range(i + 1, 300)
        if np.all(lo[i] - 1e-4 <= hi[j] + 1e-4) and np.all(lo[j] - 1e-4 <= hi[i] + 1e-4)
    }
    assert got == want
    assert len(want) > 10  # the case has pairs to find


@pytest.mark.timeout(60)
def test_a_thousand_conductors_are_checked_in_bounded_time():
    from capbench import mesh
    from capbench.geometry import PLANAR, Conductor, Geometry, Rect

    parts = tuple(
        Conductor(
            f"c{i}",
            Rect(
                0.01 * (i % 32), 0.01 * (i // 32), 0.01 * (i % 32) + 0.004, 0.01 * (i // 32) + 0.004
            ),
        )
        for i in range(1000)
    )
    g = Geometry(PLANAR, parts)
    pieces = mesh.planar_graph(g, mesh.domain_box(g))  # 21 s before the grid, 0.5 s after
    assert len(pieces) == 4 * 1000 + 4
    mesh._check_resolvable(pieces, g.size())
    # two of them 1e-9 m apart (below 1e-7 of the fixture's size) are refused
    close = (*parts[:-1], Conductor("c999", Rect(0.0040000001, 0.0, 0.006, 0.004)))
    g2 = Geometry(PLANAR, close)
    with pytest.raises(GeometryError, match="gap between"):
        mesh._check_resolvable(mesh.planar_graph(g2, mesh.domain_box(g2)), g2.size())


@pytest.mark.timeout(10)
@pytest.mark.parametrize("text", ["1" * 20000 + "." + "1" * 20000 + "e", "9" * 40000 + "x mm"])
def test_a_page_box_with_a_huge_number_is_refused_at_once(text):
    """The page's boxes parse with the one number pattern (units.NUMBER_PATTERN); its own
    copy backtracked quadratically (7 s on the first string here, more on longer)."""
    from capbench import workbench as wb

    with pytest.raises(CapbenchError):
        wb.parse_value(text, "Guard gap", "length", limits="length")


def test_a_semicolon_table_with_decimal_commas_reads_as_the_same_numbers():
    """Issue 21: a table saved where the decimal mark is a comma (cells separated by
    semicolons) gave "'Hz];capacitance [pF];...' is not a unit of frequency"; it now reads
    to exactly the numbers of its comma-separated twin."""
    semi = "frequency [kHz];capacitance [pF];dissipation factor\n1;20,613;0,000254\n10;20,6;3e-4\n"
    plain = "frequency [kHz],capacitance [pF],dissipation factor\n1,20.613,0.000254\n10,20.6,3e-4\n"
    assert files.readings_from_csv(semi) == files.readings_from_csv(plain)
