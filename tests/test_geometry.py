"""Geometry and builder validation: every refusal names the value, its unit and what
would be valid (issue: field engine, item 3)."""

from __future__ import annotations

import pickle

import pytest
from conftest import assert_close

import capbench as cb
from capbench import mesh as mm
from capbench.geometry import (
    AXISYMMETRIC,
    DIRECT,
    GROUND,
    PLANAR,
    Circle,
    Conductor,
    Dielectric,
    Enclosure,
    Fixture,
    Geometry,
    Plate,
    Rect,
)


def test_lengths_accept_quantities_strings_and_metres():
    a = cb.parallel_discs(radius="25 mm", gap="2.5 mm")
    b = cb.parallel_discs(radius=cb.Q_(2.5, "cm"), gap=cb.Q_(2500, "um"))
    c = cb.parallel_discs(radius=0.025, gap=0.0025)
    assert a.geometry == b.geometry == c.geometry


@pytest.mark.parametrize(
    ("kwargs", "words"),
    [
        ({"radius": "-25 mm", "gap": "2 mm"}, ["radius", "-25 mm", "1 um to 10 m"]),
        ({"radius": "25 mm", "gap": "0 mm"}, ["gap", "0 mm", "1 um to 10 m"]),
        ({"radius": "25 pF", "gap": "2 mm"}, ["radius", "not a length", "m"]),
        ({"radius": "25 mm", "gap": "20 m"}, ["gap", "20000 mm", "1 um to 10 m"]),
        ({"radius": "twenty", "gap": "2 mm"}, ["radius", "'twenty'", "number with a unit"]),
    ],
)
def test_builder_refusals_name_value_unit_and_range(kwargs, words):
    with pytest.raises(cb.InputError) as info:
        cb.parallel_discs(**kwargs)
    for w in words:
        assert w in str(info.value), str(info.value)
    assert isinstance(info.value, ValueError)


def test_specimen_thicker_than_gap_is_refused():
    with pytest.raises(cb.GeometryError, match=r"specimen thickness 3 mm .* exceeds the gap 2 mm"):
        cb.parallel_discs(radius="25 mm", gap="2 mm", specimen=cb.Specimen("3 mm", 2.0))


def test_permittivity_below_one_is_refused():
    with pytest.raises(cb.InputError, match=r"0\.5 is outside the valid range 1 to 10000"):
        cb.guarded_cell(
            electrode_radius="25 mm",
            guard_gap="0.5 mm",
            guard_width="10 mm",
            specimen_thickness="2 mm",
            specimen_eps_r=0.5,
        )
    with pytest.raises(cb.GeometryError, match="eps_r >= 1"):
        Geometry(PLANAR, (Conductor("a", Plate(0, 0, 1, 0)),), medium_eps_r=0.9)


def test_touching_conductors_are_refused_with_both_names():
    g = Geometry(
        PLANAR, (Conductor("left", Rect(0, 0, 1, 1)), Conductor("right", Rect(1, 0, 2, 1)))
    )
    with pytest.raises(cb.GeometryError, match=r"\['left', 'right'\].*gap > 0 m"):
        mm.seed(g)


def test_overlapping_conductors_are_refused():
    g = Geometry(PLANAR, (Conductor("a", Rect(0, 0, 1, 1)), Conductor("b", Rect(0.5, 0.5, 2, 2))))
    with pytest.raises(cb.GeometryError, match="touch or overlap"):
        mm.seed(g)


def test_conductor_outside_enclosure_is_refused():
    with pytest.raises(cb.GeometryError, match="outside the enclosure"):
        Geometry(
            PLANAR, (Conductor("a", Rect(0, 0, 1, 1)),), boundary=Enclosure(-0.5, -0.5, 0.8, 2)
        )


def test_conductor_touching_enclosure_is_refused():
    g = Geometry(PLANAR, (Conductor("a", Rect(0, 0, 1, 1)),), boundary=Enclosure(-1, 0, 2, 2))
    with pytest.raises(cb.GeometryError, match="the grounded boundary"):
        mm.seed(g)


def test_axisymmetric_parts_stay_in_r_ge_0():
    with pytest.raises(cb.GeometryError, match=r"r = -0\.01 m.*r >= 0 m"):
        Geometry(AXISYMMETRIC, (Conductor("a", Rect(-0.01, 0, 1, 1)),))
    with pytest.raises(cb.GeometryError, match="crosses the axis"):
        Geometry(AXISYMMETRIC, (Conductor("a", Circle(0.005, 0, 0.01)),))


def test_partially_overlapping_dielectrics_are_refused_nested_ones_allowed():
    parts = (Conductor("a", Plate(0, 0, 1, 0)), Conductor("b", Plate(0, 2, 1, 2)))
    crossing = Geometry(
        PLANAR,
        parts,
        (Dielectric("x", Rect(0, 0, 0.6, 1), 2.0), Dielectric("y", Rect(0.4, 0, 1, 1), 3.0)),
    )
    with pytest.raises(cb.GeometryError, match="overlap without one lying inside the other"):
        mm.seed(crossing)
    nested = Geometry(
        PLANAR,
        parts,
        (Dielectric("x", Rect(0, 0, 1, 1), 2.0), Dielectric("y", Rect(0.2, 0.2, 0.8, 0.8), 3.0)),
    )
    mesh = mm.seed(nested)
    inner = Rect(0.2, 0.2, 0.8, 0.8).contains(mesh.p[:, mesh.t].mean(axis=1))
    assert set(mesh.region[inner]) == {2}  # the inner dielectric holds inside


def test_unresolvable_gap_is_refused():
    parts = (Conductor("a", Rect(0, 0, 1, 1)), Conductor("b", Rect(0, 1 + 1e-9, 1, 2)))
    with pytest.raises(cb.GeometryError, match="below what a mesh"):
        mm.seed(Geometry(PLANAR, parts))


def test_planar_open_section_has_no_ground_terminal():
    g = Geometry(PLANAR, (Conductor("a", Plate(0, 0, 1, 0)), Conductor("b", Plate(0, 1, 1, 1))))
    fx = Fixture(g, high="a", low=GROUND, connection=DIRECT)
    with pytest.raises(cb.GeometryError, match="no ground"):
        cb.solve(fx, rtol=1e-4)


def test_terminal_names_are_checked():
    g = Geometry(PLANAR, (Conductor("a", Plate(0, 0, 1, 0)),))
    with pytest.raises(cb.GeometryError, match=r"'z' is not a conductor; valid: \['a', 'ground'\]"):
        Fixture(g, high="z", low="a")


def test_errors_pickle_with_their_values():
    with pytest.raises(cb.InputError) as info:
        cb.parallel_discs(radius="-1 mm", gap="1 mm")
    exc = info.value
    back = pickle.loads(pickle.dumps(exc))
    assert type(back) is type(exc) and str(back) == str(exc)
    assert back.value == exc.value and back.valid == exc.valid


def test_with_changes_rebuilds_and_with_permittivity_copies():
    fx = cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="0.5 mm",
        guard_width="10 mm",
        specimen_thickness="2 mm",
        specimen_eps_r=2.3,
    )
    wider = fx.with_changes(guard_gap="1 mm")
    assert wider.param_dict["guard_gap"] == 1e-3 and fx.param_dict["guard_gap"] == 5e-4
    other = fx.with_permittivity("specimen", 4.0)
    assert other.geometry.permittivities()["specimen"] == 4.0
    assert fx.geometry.permittivities()["specimen"] == 2.3
    with pytest.raises(cb.GeometryError, match="no argument"):
        fx.with_changes(gap="1 mm")
    # a permittivity set on the copy survives a later rebuild
    assert other.with_changes(guard_gap="1 mm").geometry.permittivities()["specimen"] == 4.0
    discs = cb.parallel_discs(radius="25 mm", gap="2 mm", specimen=cb.Specimen("1 mm", 2.0))
    assert (
        discs.with_permittivity("specimen", 3.5)
        .with_changes(gap="3 mm")
        .geometry.permittivities()["specimen"]
        == 3.5
    )


def test_suspicious_gap_warns():
    with pytest.warns(cb.CapbenchWarning, match="over 1000 times smaller"):
        cb.parallel_discs(radius="25 mm", gap="10 um")


def test_lossy_dielectric_gives_dissipation_factor():
    # A specimen filling a shielded two-plate gap completely: D of the capacitance equals
    # the specimen's loss tangent only where all field lines cross it; with fringing in
    # air, D is diluted by the air share (common practice, no source). Check the bounds.
    tan_d = 1e-3
    fx = cb.parallel_discs(
        radius="25 mm", gap="2 mm", specimen=cb.Specimen("2 mm", complex(3.0, -3.0 * tan_d))
    )
    sol = cb.solve(fx, rtol=1e-6)
    assert 0.9 * tan_d < sol.dissipation_factor < tan_d
    assert_close(
        sol.capacitance.to("pF").magnitude,
        cb.solve(fx.with_permittivity("specimen", 3.0), rtol=1e-6).capacitance.to("pF").magnitude,
        rtol=1e-5,
    )
