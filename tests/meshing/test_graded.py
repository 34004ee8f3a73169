"""The graded grid planner: the 1-D node planner, part lines, features, a handset.

References for the checks:

- nominal (air) cell ``c0 / (f_max n)`` with n cells per wavelength: Taflove, A. &
  Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005, sec. 4.6 (the
  phase error of the Yee grid falls with cells per wavelength; 20 is common practice);
- neighbouring spacings within a factor 1.3 (common practice for graded Yee meshes),
  two cells across a wall and three across a gap or slot (the planner's constants,
  ``WALL_CELLS``/``GAP_CELLS``, common practice);
- time step of a non-uniform Yee grid, ``dt = S / (c0 sqrt(sum_i 1/d_min,i^2))``
  (Taflove & Hagness 2005, eq. 4.95 with the smallest cell on each axis).
"""

from __future__ import annotations

import math

import meshio
import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy.constants import c as C0

from ringprint.fdtd import Grid as FdtdGrid, courant_time_step
from ringprint.meshing import (GAP_CELLS, GRADING, WALL_CELLS, find_features, load_parts, plan_axis,
                               plan_grid, prepare_surface)
from ringprint.meshing.graded import face_lines, merge_lines
from ringprint.meshing.primitives import box, sphere

MM = 1e-3
# ratios and sizes are compared to 1e-9 relative: round-off of sums of ~1e3 spacings
TIGHT = 1e-9


def _ratios(a):
    d = np.diff(a)
    return np.maximum(d[1:] / d[:-1], d[:-1] / d[1:])


@st.composite
def feature_sets(draw):
    """Random lines in 0..50 mm and targets: some between neighbouring lines (a wall
    or gap bounded by part faces), some anywhere between the first and last line."""
    lines = np.unique(np.round(np.array(draw(st.lists(st.floats(0, 50), min_size=1, max_size=10))), 3)) * MM
    targets = []
    for kind, fraction in draw(st.lists(st.tuples(st.booleans(), st.floats(0.01, 1)), max_size=6)):
        if kind and len(lines) > 1:
            i = draw(st.integers(0, len(lines) - 2))
            cells = draw(st.sampled_from([WALL_CELLS, GAP_CELLS]))
            targets.append((lines[i], lines[i + 1], (lines[i + 1] - lines[i]) / cells))
        else:
            lo = draw(st.floats(float(lines[0]), float(lines[-1])))
            hi = min(float(lines[-1]), lo + draw(st.floats(1e-5, 5e-3)))
            targets.append((lo, hi, fraction * MM))
    padding = draw(st.floats(0, 10)) * MM
    return lines, targets, padding


@settings(max_examples=60, deadline=None)
@given(feature_sets())
def test_plan_axis_keeps_its_rules(case):
    """Grading rule (ratio <= 1.3 everywhere), lines on nodes, every cell overlapping a
    target no larger than it, no cell above the nominal one, padding and a uniform
    absorbing layer. Tolerance 1e-9 relative (round-off only: the rule is exact).
    Hypothesis once drew a target 7e-18 m wide at the last line: such a target has no
    extent and is ignored by the planner's rule."""
    lines, targets, padding = case
    cell, bc = 1.0 * MM, 10
    a = plan_axis(lines, targets, cell, padding, bc)
    d = np.diff(a)
    assert np.all(d > 0)
    assert np.max(_ratios(a), initial=1.0) <= GRADING
    assert d.max() <= cell * (1 + TIGHT)
    for line in lines:
        assert np.min(np.abs(a - line)) == 0.0
    for lo, hi, h in targets:
        if hi - lo <= 1e-9 * cell:   # a target of round-off width is ignored (plan_axis)
            continue
        over = (a[1:] > lo) & (a[:-1] < hi)
        assert np.all(d[over] <= min(h, cell) * (1 + TIGHT)), (lo, hi, h, d[over].max())
    # padding kept, to the planner's count tolerance (1e-9 of a cell)
    assert a[bc] <= lines[0] - padding + TIGHT * cell and a[-1 - bc] >= lines[-1] + padding - TIGHT * cell
    np.testing.assert_allclose(d[:bc], d[bc], rtol=TIGHT)
    np.testing.assert_allclose(d[-bc:], d[-bc - 1], rtol=TIGHT)


def test_feature_between_lines_gets_exactly_its_cells():
    """A 0.5 mm gap between two faces gets exactly GAP_CELLS cells of 0.5/3 mm, a 1 mm
    wall 9 mm away exactly WALL_CELLS of 0.5 mm (the finer gap's cells grade up to
    0.5 mm within about 2 mm); far air reaches the nominal cell exactly."""
    lines = np.array([0.0, 1.0, 10.0, 10.5, 30.0]) * MM
    a = plan_axis(lines, [(10.0 * MM, 10.5 * MM, 0.5 * MM / GAP_CELLS), (0.0, 1.0 * MM, 1.0 * MM / WALL_CELLS)],
                  2.0 * MM, 10 * MM, 8)
    for lo, hi, cells in ((10.0, 10.5, GAP_CELLS), (0.0, 1.0, WALL_CELLS)):
        inside = a[(a >= lo * MM - 1e-15) & (a <= hi * MM + 1e-15)]
        assert len(inside) - 1 == cells
        np.testing.assert_allclose(np.diff(inside), (hi - lo) * MM / cells, rtol=TIGHT)
    assert np.diff(a).max() == pytest.approx(2.0 * MM, rel=TIGHT)


def test_face_lines_and_merging():
    """A box has one flat face group on each side of each axis, at its coordinates; a
    sphere (no axis-normal faces) has none. Lines closer than the merge distance keep
    the heavier one."""
    b = prepare_surface(box((0, 0, 0), (3, 2, 1)))
    for axis, top in enumerate((3, 2, 1)):
        coords, areas = face_lines(b, axis, 0.0)
        np.testing.assert_allclose(np.sort(coords), [0, top], atol=1e-15)
        # face area = product of the two other sides
        assert areas.sum() == pytest.approx(2 * 6 / top, rel=1e-12)
    assert face_lines(prepare_surface(sphere(1.0)), 0, 1e-6)[0].size == 0
    merged = merge_lines([0.0, 0.05, 1.0, 1.02], [1.0, 2.0, 5.0, 1.0], 0.1)
    np.testing.assert_allclose(merged, [0.05, 1.0])


def test_grazing_chords_of_a_sphere_are_not_features():
    """A solid sphere 10 mm across on a 2 mm nominal cell: every chord shorter than two
    cells lies near its silhouette and changes length quickly from ray to ray, so no
    wall is reported (a thin shell would be, see the handset)."""
    s = prepare_surface(sphere(5 * MM))
    lo, hi = s.bounds
    for axis in range(3):
        assert find_features([s], ["ball"], axis, lo, hi, 2 * MM, 0.05 * MM) == []


def _write_box(folder, name, lo, hi):
    b = box(np.asarray(lo, float), np.asarray(hi, float), name=name)
    path = folder / f"{name}.stl"
    meshio.write_points_cells(path, b.vertices, [("triangle", b.faces)], binary=True)
    return path


def handset(folder):
    """An invented handset, 72 x 150 x 9 mm (mm): a 1 mm metal frame around the edge
    whose two long rails each have a 1.5 mm slot through them, a 1 mm board at
    z = 2..3, a battery 0.5 mm above it, a glass display on top and a plastic back.
    Returns ``[(part, [files], eps_r)]``."""
    frame = [((0, 0, 0), (72, 1, 9)), ((0, 149, 0), (72, 150, 9)),
             ((0, 1, 0), (1, 40, 9)), ((0, 41.5, 0), (1, 149, 9)),          # slot y 40..41.5
             ((71, 1, 0), (72, 100, 9)), ((71, 101.5, 0), (72, 149, 9))]    # slot y 100..101.5
    parts = [("frame", [_write_box(folder, f"frame{i}", lo, hi) for i, (lo, hi) in enumerate(frame)], 1.0),
             ("board", [_write_box(folder, "board", (1, 1, 2), (71, 149, 3))], 1.0),
             ("battery", [_write_box(folder, "battery", (5, 20, 3.5), (67, 120, 8))], 1.0),
             ("display", [_write_box(folder, "display", (0, 0, 9), (72, 150, 9.7))], 6.0),
             ("back", [_write_box(folder, "back", (0, 0, -1), (72, 150, 0))], 3.0)]
    return parts


F_MAX, CPW = 6e9, 20


@pytest.fixture(scope="module")
def handset_grid(tmp_path_factory):
    folder = tmp_path_factory.mktemp("handset")
    surfaces, names, eps = [], [], []
    for name, files, e in handset(folder):
        for f in files:
            for s in load_parts(f, unit="mm", conductor=e == 1.0):
                surfaces.append(s)
                names.append(name)
                eps.append(e)
    return plan_grid(None, F_MAX, cells_per_wavelength=CPW, surfaces=surfaces, eps_r=eps, names=names)


def _cells_between(a, lo, hi):
    """Cells whose centre lies in (lo, hi) mm."""
    centre = (a[:-1] + a[1:]) / 2
    return int(np.count_nonzero((centre > lo * MM) & (centre < hi * MM)))


def test_handset_gap_slots_board_and_ratio(handset_grid):
    g = handset_grid
    x, y, z = g.axes
    # the 0.5 mm board-battery gap (z 3..3.5) and both 1.5 mm slots (y) get >= 3 cells
    assert _cells_between(z, 3.0, 3.5) >= GAP_CELLS
    assert _cells_between(y, 40.0, 41.5) >= GAP_CELLS and _cells_between(y, 100.0, 101.5) >= GAP_CELLS
    # the board faces are nodes
    for face in (2.0, 3.0):
        assert np.min(np.abs(z - face * MM)) < 1e-12
    # grading rule everywhere
    for a in g.axes:
        assert np.max(_ratios(a)) <= GRADING
    # the largest cell is the nominal air cell c0 / (f_max n), to round-off
    assert g.max_cell == pytest.approx(C0 / (F_MAX * CPW), rel=TIGHT)
    assert g.cell == pytest.approx(g.max_cell, rel=TIGHT)
    assert not g.uniform
    kinds = {(r.kind, r.parts, r.axis) for r in g.refinements if r.refined}
    assert ("gap", ("battery", "board"), "z") in kinds and ("slot", ("frame",), "y") in kinds
    # the most restrictive refinement comes first: the 0.5 mm gap, 0.5/3 mm cells
    first = g.refinements[0]
    assert first.kind == "gap" and first.size_m == pytest.approx(0.5 * MM, rel=1e-9)
    assert first.cell_m == pytest.approx(0.5 * MM / GAP_CELLS, rel=1e-9)


def test_handset_cells_and_time_step_against_uniform(handset_grid, capsys):
    """Cell count of the graded grid against a uniform grid fine enough for the gap
    (0.5 mm / 3) over the same domain, and both time steps (Taflove & Hagness eq. 4.95)."""
    g = handset_grid
    fine = 0.5 * MM / GAP_CELLS
    box_mm = (np.array([0, 0, -1.0]) * MM, np.array([72, 150, 9.7]) * MM)
    uniform = plan_grid(box_mm, F_MAX, eps_r_max=(C0 / (F_MAX * CPW) / fine) ** 2, cells_per_wavelength=CPW,
                        padding=g.padding, boundary_cells=g.boundary_cells, graded=False)
    assert uniform.cell == pytest.approx(fine, rel=1e-12)
    n_graded = math.prod(n - 1 for n in g.shape)
    n_uniform = math.prod(n - 1 for n in uniform.shape)
    dt_graded = courant_time_step(FdtdGrid(*g.axes), 0.99)
    d_min = [d.min() for d in g.spacing]
    assert dt_graded == pytest.approx(0.99 / (C0 * math.sqrt(sum(1 / d ** 2 for d in d_min))), rel=1e-12)
    dt_uniform = courant_time_step(FdtdGrid(*uniform.axes), 0.99)
    with capsys.disabled():
        print(f"\nhandset: graded {g.shape} = {n_graded:,} cells, dt {dt_graded:.4g} s; uniform "
              f"{uniform.shape} = {n_uniform:,} cells, dt {dt_uniform:.4g} s; ratio {n_uniform / n_graded:.0f}")
    # the graded grid needs far fewer cells (most of the volume sits at the air cell)
    assert n_uniform > 20 * n_graded


def test_min_feature_leaves_thinner_features_sub_cell(tmp_path):
    """A 0.05 mm gap between two plates: with min_feature 0.1 mm it is listed but not
    refined (no cell near 0.05/3 mm); with min_feature 0.01 mm it gets 3 cells."""
    a = prepare_surface(box((0, 0, 0), (20 * MM, 20 * MM, 1 * MM), name="lower"))
    b = prepare_surface(box((0, 0, 1.05 * MM), (20 * MM, 20 * MM, 2 * MM), name="upper"))
    coarse = plan_grid(None, 6e9, surfaces=[a, b], eps_r=[1, 1], min_feature=0.1 * MM)
    gap = [r for r in coarse.refinements if r.kind == "gap"]
    assert gap and not any(r.refined for r in gap)
    assert coarse.min_cell > 0.05 * MM
    fine = plan_grid(None, 6e9, surfaces=[a, b], eps_r=[1, 1], min_feature=0.01 * MM)
    assert _cells_between(fine.z, 1.0, 1.05) == GAP_CELLS
    assert fine.min_cell == pytest.approx(0.05 * MM / GAP_CELLS, rel=1e-9)
