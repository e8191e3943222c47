"""Mesh sanity on every rig of the trade: conforming, positively oriented, tagged,
reasonable shapes (common practice for finite-element meshes, no source)."""

from __future__ import annotations

import numpy as np
import pytest

import capbench as cb
from capbench import capacitance as cc
from capbench.field import SHELL_REGION

RIGS = {
    "parallel-discs": lambda: cb.parallel_discs(radius="25 mm", gap="2.5 mm"),
    "discs-thick-rounded-specimen": lambda: cb.parallel_discs(
        radius="25 mm",
        gap="3 mm",
        thickness="2 mm",
        edge_radius="0.5 mm",
        specimen=cb.Specimen("2 mm", 3.0),
    ),
    "guarded-cell": lambda: cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="0.5 mm",
        guard_width="10 mm",
        specimen_thickness="2 mm",
        specimen_eps_r=2.3,
        unguarded_radius="50 mm",
    ),
    "guarded-cell-shielded": lambda: cb.guarded_cell(
        electrode_radius="25 mm",
        guard_gap="1 mm",
        guard_width="5 mm",
        specimen_thickness="1 mm",
        electrode_thickness="3 mm",
        shield=("60 mm", "40 mm"),
    ),
    "coaxial-cell-guarded": lambda: cb.coaxial_cell(
        inner_radius="5 mm",
        outer_radius="8 mm",
        length="40 mm",
        fill_eps_r=2.0,
        guard_length="10 mm",
        guard_gap="1 mm",
    ),
    "coplanar-strips": lambda: cb.coplanar_strips(
        width="1 mm", gap="0.2 mm", substrate_thickness="0.5 mm", substrate_eps_r=4.4
    ),
    "interdigitated": lambda: cb.interdigitated(
        finger_width="50 um",
        finger_gap="50 um",
        n_fingers=4,
        substrate_thickness="0.5 mm",
        substrate_eps_r=9.8,
        finger_length="2 mm",
    ),
    "four-electrode": lambda: cb.four_electrode_section(width="20 mm", gap="0.2 mm"),
}


def _edges(t):
    e = np.hstack([np.sort(np.vstack((t[i], t[(i + 1) % 3])), axis=0) for i in range(3)])
    keys, counts = np.unique(e[0] * (1 << 32) + e[1], return_counts=True)
    return keys, counts


@pytest.mark.parametrize("name", list(RIGS))
def test_mesh_is_conforming_and_tagged(name):
    fx = RIGS[name]()
    mesh = cc.base_mesh(fx.geometry, 1e-6)
    p, t = mesh.p, mesh.t
    area = 0.5 * (
        (p[0, t[1]] - p[0, t[0]]) * (p[1, t[2]] - p[1, t[0]])
        - (p[1, t[1]] - p[1, t[0]]) * (p[0, t[2]] - p[0, t[0]])
    )
    assert np.all(area > 0), "every triangle counter-clockwise with positive area"
    keys, counts = _edges(t)
    assert counts.max() <= 2, "no edge shared by more than two triangles"
    assert np.unique(t).size == p.shape[1], "no unused vertex"
    tagged = mesh.edges[0] * (1 << 32) + mesh.edges[1]
    assert np.all(np.isin(tagged, keys)), "every tagged boundary edge is a mesh edge"
    # boundary edges of the triangulation are conductor surfaces, the axis, the ground or
    # infinity, never an untagged hole
    boundary = keys[counts == 1]
    tag_of = dict(zip(tagged.tolist(), mesh.edge_tag.tolist(), strict=True))
    assert all(b in tag_of for b in boundary.tolist())
    # Angles: no angle near 180 degrees (the maximum-angle condition of I. Babuska and
    # A. K. Aziz, SIAM J. Numer. Anal. 13, 214, 1976, keeps interpolation accurate).
    # Small angles are allowed only in a cusp, where a specimen surface leaves a rounded
    # electrode tangentially and the air wedge between them has zero angle.
    ang = _angles(p, t)
    assert ang.max() < 170.0
    # The far-field shell's halving tail layers are thin in the drawn coordinates by design
    # (mapped toward infinity, each is as thick relative to its distance as the one before),
    # so the small-angle check applies to the drawn fixture only (capbench's own margin).
    drawn = mesh.region != SHELL_REGION
    if name != "discs-thick-rounded-specimen":
        assert ang[:, drawn].min() > 5.0


def _angles(p, t):
    ang = []
    for i in range(3):
        a = p[:, t[(i + 1) % 3]] - p[:, t[i]]
        b = p[:, t[(i + 2) % 3]] - p[:, t[i]]
        c = np.sum(a * b, 0) / (np.linalg.norm(a, axis=0) * np.linalg.norm(b, axis=0))
        ang.append(np.degrees(np.arccos(np.clip(c, -1, 1))))
    return np.array(ang)


@pytest.mark.parametrize("name", list(RIGS))
def test_every_rig_solves_to_1e5(name):
    fx = RIGS[name]()
    sol = cb.solve(fx, rtol=1e-5)
    assert sol.terminal.real > 0
    assert sol.rel_error <= 1e-5


def test_regions_follow_the_shapes():
    fx = RIGS["discs-thick-rounded-specimen"]()
    mesh = cc.base_mesh(fx.geometry, 1e-6)
    cen = mesh.p[:, mesh.t].mean(axis=1)
    spec = fx.geometry.dielectrics[0].shape.contains(cen)
    assert np.all(mesh.region[spec] == 1)
    assert np.all(mesh.region[~spec] != 1)
