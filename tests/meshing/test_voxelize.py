"""Voxelization: exact edge fractions, exact ray hits on vertices/edges, sheet edges,
surface cuts and the overlap rule."""

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.meshing import Surface, prepare_surface, resolve_overlaps, voxelize
from ringprint.meshing.primitives import box, plate

X = np.round(np.arange(-10, 11) * 0.1, 12)  # nodes -1.0 .. 1.0, h = 0.1


def _full(box_, comp, n=len(X)):
    shape = [n, n, n]
    shape["xyz".index(comp)] -= 1
    out = np.zeros(tuple(shape) if box_.data.ndim == 3 else (box_.data.shape[0],) + tuple(shape), box_.data.dtype)
    out[(Ellipsis,) + box_.slices] = box_.data
    return out


def test_box_fractions_are_exact_lengths():
    """Fraction of an Ex edge = overlap of [x_i, x_i+1] with the box / h (geometry)."""
    lo, hi = np.array([-0.33, -0.21, 0.04]), np.array([0.47, 0.36, 0.52])
    fill = voxelize(prepare_surface(box(lo, hi)), X, X, X, subrays=3)
    xc0, xc1 = X[:-1], X[1:]
    overlap = np.clip(np.minimum(xc1, hi[0]) - np.maximum(xc0, lo[0]), 0, None) / 0.1
    ex = _full(fill.centre("x"), "x")
    inside_yz = ((X >= lo[1]) & (X <= hi[1]))[:, None] & ((X >= lo[2]) & (X <= hi[2]))[None, :]
    expected = overlap[:, None, None] * inside_yz[None]
    assert np.allclose(ex, expected, atol=1e-6)


def test_rays_through_vertices_and_edges_count_once():
    """Octahedron |x|+|y|+|z| <= 1 with grid lines through its vertices and along its
    edges: each ray still sees the exact chord (closed form 2(1-|y|-|z|))."""
    v = np.array([[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1]], float)
    f = np.array([[0, 2, 4], [2, 1, 4], [1, 3, 4], [3, 0, 4], [2, 0, 5], [1, 2, 5], [3, 1, 5], [0, 3, 5]])
    s = prepare_surface(Surface("octa", v, f))
    assert s.volume == pytest.approx(4 / 3)
    fill = voxelize(s, X, X, X, subrays=1)
    ex = _full(fill.centre("x"), "x")
    chord = np.clip(2 * (1 - np.abs(X)[:, None] - np.abs(X)[None, :]), 0, None)
    got = ex.sum(axis=0) * 0.1
    interior = chord > 0
    assert np.allclose(got[interior], chord[interior], atol=1e-9)
    # on the boundary lines (|y|+|z| = 1) the ray grazes a vertex or an edge: it is
    # either fully outside or counts a zero-length chord, never a spurious streak
    assert np.all(got[~interior] <= 1e-9)


def test_box_on_grid_nodes_has_exact_volume():
    """Faces on grid planes: boundary rays are assigned to one side consistently, so
    the n=1 volume is exact (10 x 10 x 10 cells)."""
    s = prepare_surface(box((0, 0, 0), (1.0, 1.0, 1.0)))
    fill = voxelize(s, X, X, X, subrays=1)
    vol = fill.volume(X, X, X)
    assert all(v == pytest.approx(1.0, rel=1e-12) for v in vol.values())


def test_plate_marks_exactly_the_expected_edges():
    """Zero-thickness plate normal to z: Ex/Ey edges of the nearest z plane inside its
    outline, no Ez edges (rule of surface_cuts)."""
    xlo, xhi, ylo, yhi, zp = -0.42, 0.47, -0.26, 0.33, 0.23
    fill = voxelize(prepare_surface(plate((xlo, ylo), (xhi, yhi), zp), conductor=True), X, X, X)
    assert fill.fractions is None
    xc = (X[:-1] + X[1:]) / 2
    k = np.argmin(np.abs(X - zp))
    ex = np.zeros((20, 21, 21), bool)
    ex[np.ix_((xc >= xlo) & (xc <= xhi), (X >= ylo) & (X <= yhi), [True if i == k else False for i in range(21)])] = True
    ey = np.zeros((21, 20, 21), bool)
    ey[np.ix_((X >= xlo) & (X <= xhi), (xc >= ylo) & (xc <= yhi), [i == k for i in range(21)])] = True
    assert np.array_equal(_full(fill.cuts["x"], "x"), ex) and ex.sum() == 9 * 6
    assert np.array_equal(_full(fill.cuts["y"], "y"), ey)
    assert not _full(fill.cuts["z"], "z").any()


def test_thin_closed_shell_keeps_cut_edges():
    """A conductor slab 0.02 thick (a fifth of a cell) between z planes: no edge is
    half inside, but the cut mask marks the Ex/Ey edges of the nearest plane."""
    s = prepare_surface(box((-0.32, -0.32, 0.21), (0.32, 0.32, 0.23)), conductor=True)
    fill = voxelize(s, X, X, X, subrays=1, cuts=True)
    assert _full(fill.centre("x"), "x").max() < 0.5
    cx = _full(fill.cuts["x"], "x")
    assert cx.sum() > 0 and set(np.argwhere(cx)[:, 2]) == {int(np.argmin(np.abs(X - 0.22)))}


def test_overlap_later_part_wins():
    a = voxelize(prepare_surface(box((-0.5, -0.5, -0.5), (0.5, 0.5, 0.5), name="frame")), X, X, X)
    b = voxelize(prepare_surface(box((0.05, -0.2, -0.2), (0.75, 0.2, 0.2), name="screw")), X, X, X)
    shapes = {"x": (20, 21, 21), "y": (21, 20, 21), "z": (21, 21, 20)}
    ra, rb = resolve_overlaps([a, b], shapes)
    for c in "xyz":
        fa, fb = _full(ra.fractions[c], c), _full(rb.fractions[c], c)
        assert np.array_equal(fb, _full(b.fractions[c], c))  # winner unchanged
        assert np.all(fa + fb <= 1 + 1e-6)
    # with a higher rank the frame wins instead
    ra2, rb2 = resolve_overlaps([a, b], shapes, rank=[1, 0])
    assert np.array_equal(_full(ra2.fractions["x"], "x"), _full(a.fractions["x"], "x"))
    with pytest.raises(RingprintError, match="rank"):
        resolve_overlaps([a, b], shapes, rank=[1])


@pytest.mark.parametrize("kw,match", [({"subrays": 0}, "1 to 9"), ({"subrays": 11}, "1 to 9"),
                                      ({"subrays": 2.5}, "integer")])
def test_bad_subrays(kw, match):
    with pytest.raises(RingprintError, match=match):
        voxelize(prepare_surface(box((0, 0, 0), (0.5, 0.5, 0.5))), X, X, X, **kw)


def test_bad_grid_and_unchecked_and_outside():
    s = prepare_surface(box((0, 0, 0), (0.5, 0.5, 0.5)))
    with pytest.raises(RingprintError, match="strictly increasing"):
        voxelize(s, X[::-1], X, X)
    with pytest.raises(RingprintError, match="prepare_surface"):
        voxelize(box((0, 0, 0), (0.5, 0.5, 0.5)), X, X, X)
    with pytest.raises(RingprintError, match="outside the grid"):
        voxelize(prepare_surface(box((5, 5, 5), (6, 6, 6))), X, X, X)


def test_shield_can_thinner_than_a_cell():
    """A closed can with 0.1 mm walls on a 1 mm grid: fractions stay <= 0.1 (no edge
    is mostly metal) but the cut mask keeps every wall conducting, and thickness()
    reads the wall (cavity oriented inward by the nesting rule)."""
    from ringprint.meshing import thickness

    o = box((0, 0, 0), (0.02, 0.015, 0.003))
    i = box((1e-4, 1e-4, 1e-4), (0.02 - 1e-4, 0.015 - 1e-4, 0.003 - 1e-4))
    can = prepare_surface(Surface("can", np.r_[o.vertices, i.vertices], np.r_[o.faces, i.faces + 8]), conductor=True)
    assert can.volume == pytest.approx(o.volume - i.volume)
    assert thickness(can, 5e-4) == pytest.approx(1e-4, rel=1e-6)
    g = np.arange(-0.002, 0.0221, 0.001) + 1.3e-4
    fill = voxelize(can, g, g, g, subrays=1, cuts=True)
    for c in "xyz":
        assert fill.centre(c).data.max() <= 0.1 + 1e-6
    # the lid and floor (normal to z) cut Ex/Ey edges on two z planes; the side walls
    # cut Ez edges: every component has marks
    assert all(fill.cuts[c].data.any() for c in "xyz")
    zplanes = {int(k) + fill.cuts["x"].offset[2] for k in np.argwhere(fill.cuts["x"].data)[:, 2]}
    assert {int(np.argmin(np.abs(g - 0.0))), int(np.argmin(np.abs(g - 0.003)))} <= zplanes


def test_even_subrays_split_a_face_on_a_grid_plane_evenly():
    """With 4 x 4 sub-rays none lies on the dual centre: a box face on the node plane
    z = 0.5 gives the edges in that plane a volume fraction of exactly 1/2 (the share of
    their dual cell below it), where 3 x 3 sub-rays give 1/3 or 2/3."""
    grid = np.linspace(-0.25, 1.25, 13)     # node at z = 0.5
    s = prepare_surface(box((0.1, 0.1, 0.0), (0.9, 0.9, 0.5)))
    k = int(np.argmin(np.abs(grid - 0.5)))
    for n, want in ((4, {0.5}), (3, {1 / 3, 2 / 3})):
        fx = voxelize(s, grid, grid, grid, subrays=n).fractions["x"]
        full = np.zeros((grid.size - 1, grid.size, grid.size))
        full[fx.slices] = fx.data.mean(axis=0)
        inner = full[4, 4:8, k]                # Ex edges well inside the face's outline
        got = {round(float(v), 6) for v in inner}
        assert got <= {round(w, 6) for w in want} and got, (n, inner)
