"""Figures: to scale, on the caller's Axes, no global pyplot state, Agg-safe (the
figures are saved to PNG without a display)."""

from __future__ import annotations

import io

import matplotlib.pyplot as plt  # only to check that no pyplot figure leaks
import numpy as np
import pytest
from matplotlib.figure import Figure

import capbench as cb
from capbench import guard, plots


@pytest.fixture(scope="module")
def cell():
    return cb.guarded_cell(
        electrode_radius="12 mm",
        guard_gap="0.5 mm",
        guard_width="4 mm",
        specimen_thickness="1.5 mm",
        specimen_eps_r=3.0,
        unguarded_radius="18 mm",
        electrode_thickness="1 mm",
        name="plot cell",
    )


@pytest.fixture(scope="module")
def solved(cell):
    return cb.solve(cell, rtol=1e-4)


def png_bytes(fig: Figure) -> int:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=60)
    return len(buf.getvalue())


def test_fixture_drawing_is_to_scale(cell):
    before = plt.get_fignums()
    fig = plots.draw_fixture(cell)
    assert isinstance(fig, Figure) and plt.get_fignums() == before
    ax = fig.axes[0]
    assert ax.get_aspect() == 1.0
    # every solid part is a patch whose extent is its shape's bounding box, in mm
    boxes = sorted(tuple(np.round(p.get_path().get_extents().bounds, 9)) for p in ax.patches)
    expected = sorted(
        tuple(np.round((x0 * 1e3, y0 * 1e3, (x1 - x0) * 1e3, (y1 - y0) * 1e3), 9))
        for x0, y0, x1, y1 in (
            part.shape.bbox for part in (*cell.geometry.conductors, *cell.geometry.dielectrics)
        )
    )
    assert boxes == expected
    x0, x1 = ax.get_xlim()
    assert x0 <= 0 and x1 >= 18.0
    assert ax.get_xlabel() == "r (mm)"
    assert png_bytes(fig) > 1000


def test_drawing_on_a_given_axes_and_plates():
    fig = Figure()
    ax = fig.add_subplot()
    fx = cb.parallel_strips(width="10 mm", gap="2 mm")
    assert plots.draw_fixture(fx, ax) is fig
    # zero-thickness electrodes are drawn as lines at their true position
    ys = sorted(line.get_ydata()[0] for line in ax.lines)
    assert ys == pytest.approx([-1.0, 1.0])
    assert ax.get_xlabel() == "x (mm)"


def test_potential_map_spans_the_drive(solved):
    before = plt.get_fignums()
    fig = plots.potential_map(solved, field_lines=8, grid=60)
    assert plt.get_fignums() == before
    ax = fig.axes[0]
    # DIRECT drive: high at 1 V, every other conductor at 0 V; by the maximum principle
    # (e.g. L. C. Evans, Partial Differential Equations, 2nd ed., 2010, section 2.2.3)
    # the potential lies between them, so the filled levels span 0 to 1 V
    cs = next(c for c in ax.get_children() if hasattr(c, "levels"))
    levels = np.asarray(cs.levels)
    assert levels[0] == pytest.approx(0.0, abs=1e-6)
    assert levels[-1] == pytest.approx(1.0, abs=1e-6)
    assert png_bytes(fig) > 1000
    zoom = plots.potential_map(solved, window=(0.011, 0.014, -0.001, 0.002), field_lines=0)
    assert zoom.axes[0].get_xlim() == pytest.approx((11.0, 14.0))


def synthetic_cases():
    # built by hand (no FEM): effective-area cases at two permittivities
    out = []
    for eps in (2.0, 6.0):
        for t in (0.5e-3, 1e-3, 2e-3):
            c0 = cb.EPS0 * eps * np.pi * (10e-3 + 0.2e-3) ** 2 / t
            out.append(guard.EdgeCase(20e-3, 0.5e-3, 5e-3, t, eps, c0, 1e-7))
    return out


def test_area_error_plot():
    cases = synthetic_cases()
    chk = guard.GuardCheck(10e-3, 0.5e-3, 5e-3, 1e-3, "formula", tuple(cases))
    fig = plots.area_error_plot(chk)
    ax = fig.axes[0]
    data = [line for line in ax.lines if len(line.get_xdata()) == 3]
    assert len(data) == 4  # two permittivities x (formula, bare)
    xs = sorted(data[0].get_xdata())
    assert xs == pytest.approx([0.25, 0.5, 1.0])
    first = data[0].get_ydata()
    expect = sorted((c for c in cases if c.eps_r == 2.0), key=lambda c: c.guard_gap / c.thickness)
    assert first == pytest.approx([c.error_formula * 100 for c in expect])
    assert ax.get_xscale() == "log"
    fig2 = Figure()
    ax2 = fig2.add_subplot()
    assert plots.area_error_plot(cases, ax2, target=2e-3) is fig2


def test_error_map_plot():
    gaps = (0.2e-3, 0.5e-3, 1.0e-3)
    widths = (2e-3, 4e-3, 8e-3, 16e-3)
    err = np.array([[g * 1e3 / w * 1e-3 for w in widths] for g in gaps])
    emap = guard.ErrorMap(10e-3, gaps, widths, err, 1e-4, "formula", (1e-3,), (2.0,))
    fig = plots.error_map_plot(emap)
    ax = fig.axes[0]
    assert ax.get_xlabel() == "guard width (mm)" and ax.get_ylabel() == "guard gap (mm)"
    mesh = ax.collections[0]
    assert np.asarray(mesh.get_array()).size == err.size
    assert png_bytes(fig) > 1000


def test_plots_refuse_bad_input(solved):
    with pytest.raises(cb.InputError, match="Fixture"):
        plots.draw_fixture("cell")
    with pytest.raises(cb.InputError, match="Axes"):
        plots.draw_fixture(solved.fixture, ax="left")
    with pytest.raises(cb.InputError, match="Solution"):
        plots.potential_map(solved.fixture)
    with pytest.raises(cb.InputError, match="window"):
        plots.potential_map(solved, window=(1, 0, 0, 1))
    with pytest.raises(cb.InputError, match="EdgeCase"):
        plots.area_error_plot([])
    with pytest.raises(cb.InputError, match="ErrorMap"):
        plots.error_map_plot({"gaps": []})
