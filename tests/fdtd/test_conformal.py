"""Cut faces of conformal metal (ringprint.fdtd.conformal): bookkeeping and the rule."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint import fdtd
from ringprint.errors import RingprintError
from ringprint.fdtd.conformal import MIN_STEP_FACTOR, conformal_faces


def _grid(n=8, h=1e-3):
    return fdtd.Grid.uniform((n, n, n), h)


def _ones(grid, comps):
    return tuple(np.ones(grid.component_shape(c), np.float32) for c in comps)


E, H = ("Ex", "Ey", "Ez"), ("Hx", "Hy", "Hz")


def test_uncut_grid_has_no_cut_faces_and_the_plain_step():
    g = _grid()
    cf = conformal_faces(g, _ones(g, E), _ones(g, H))
    assert cf.size == 0 and cf.step_factor == 1.0 and cf.enlarged == 0
    assert cf.ptr.size == g.shape[0] + 1 and cf.ptr[-1] == 0


def test_metal_on_a_grid_plane_needs_no_cut_face_and_steps_like_the_staircase():
    """A wall on a node plane cuts no face partly: the conformal run is the plain PEC
    run to the last bit (Dey & Mittra 1997 reduce to Yee where nothing is cut)."""
    g = _grid()
    length, area = [np.array(v) for v in _ones(g, E)], [np.array(v) for v in _ones(g, H)]
    length[0][:, :, :3] = 0.0            # Ex edges on z nodes 0..2: inside metal (z <= 2h)
    length[1][:, :, :3] = 0.0
    length[2][:, :, :2] = 0.0            # Ez edges of the cells below z = 2h
    area[0][:, :, :2] = 0.0              # Hx, Hy faces in those cells; Hz faces on z nodes 0..2
    area[1][:, :, :2] = 0.0
    area[2][:, :, :3] = 0.0
    pec = tuple(v == 0 for v in length)
    runs = []
    for conf in (False, True):
        media = fdtd.Media(g, pec=pec, free_length=tuple(length) if conf else None,
                           free_area=tuple(area) if conf else None)
        if conf:
            assert media.conformal.size == 0 and media.step_factor == 1.0
        sim = fdtd.Simulation(g, media, boundaries="pec", dtype=np.float64)
        sim.add_source(fdtd.DipoleSource((4e-3, 4e-3, 5e-3), "Ez",
                                         fdtd.GaussianPulse(20e9, 60e9)))
        sim.run(60)
        runs.append({c: sim.get_field(c) for c in E + H})
    for c in E + H:
        np.testing.assert_array_equal(runs[0][c], runs[1][c])


def test_a_small_free_area_is_enlarged_to_keep_the_step_factor():
    """One face with 2 % free area and a whole free edge (a sliver along the edge) is
    the stiffest case of the rule: its area is raised until the factor is s_min."""
    g = _grid()
    length, area = [np.array(v) for v in _ones(g, E)], [np.array(v) for v in _ones(g, H)]
    area[2][3, 3, 4] = 0.02
    length[0][3, 4, 4] = 0.0   # the far edge (Ex at j+1) is in metal, the sides nearly
    length[1][3, 3, 4] = length[1][4, 3, 4] = 0.02
    cf = conformal_faces(g, length, area)
    # the face, plus the 3 other faces around each of its two partly free edges
    assert cf.size == 7 and cf.enlarged == 1
    assert cf.step_factor == pytest.approx(MIN_STEP_FACTOR, rel=2e-3)

    def entry(c):
        n = [m for m in range(c.ptr[3], c.ptr[4]) if (c.comp[m], c.j[m], c.k[m]) == (2, 3, 4)]
        return n[0]

    assert 1.0 / cf.inv_area[entry(cf)] > 0.02
    loose = conformal_faces(g, length, area, min_step_factor=0.1)
    assert loose.enlarged == 0 and loose.inv_area[entry(loose)] == pytest.approx(50.0, rel=1e-6)
    assert loose.step_factor < 0.5   # measured 0.40: far below s_min without the enlargement


def test_entries_are_sorted_by_plane_with_their_edge_fractions():
    g = _grid()
    length, area = [np.array(v) for v in _ones(g, E)], [np.array(v) for v in _ones(g, H)]
    area[0][5, 2, 2] = 0.5
    length[2][5, 2, 2] = 0.5     # Hx(5,2,2): p0 = Ez(5,2,2)
    area[1][1, 3, 3] = 0.6
    cf = conformal_faces(g, length, area)
    # planes 1 (Hy), 5 (Hx and Hy(5,2,2) around the half-free Ez) and 4 (Hy(4,2,2))
    assert list(np.diff(cf.ptr).nonzero()[0]) == [1, 4, 5]
    assert cf.size == 5
    n = [m for m in range(cf.ptr[5], cf.ptr[6]) if cf.comp[m] == 0 and cf.j[m] == 2][0]
    assert (cf.comp[n], cf.j[n], cf.k[n]) == (0, 2, 2)
    assert cf.inv_area[n] == pytest.approx(2.0) and cf.lengths[n, 0] == pytest.approx(0.5)
    assert cf.edge_comp.tolist() == [2] and cf.edge_index.tolist() == [[5, 2, 2]]


def test_refusals():
    g = _grid()
    with pytest.raises(RingprintError, match="both"):
        fdtd.Media(g, free_length=_ones(g, E))
    bad = [np.array(v) for v in _ones(g, H)]
    bad[0][0, 0, 0] = 1.5
    with pytest.raises(RingprintError, match=r"\[0, 1\]"):
        fdtd.Media(g, free_length=_ones(g, E), free_area=tuple(bad))
    with pytest.raises(RingprintError, match="min_step_factor"):
        conformal_faces(g, _ones(g, E), _ones(g, H), min_step_factor=0.0)


def test_checkpoint_keeps_the_cut_faces(tmp_path):
    """A run saved and resumed continues bit for bit with its cut faces."""
    g = _grid()
    length, area = [np.array(v) for v in _ones(g, E)], [np.array(v) for v in _ones(g, H)]
    area[2][3, 3, 4] = 0.3
    length[0][3, 4, 4] = 0.4
    media = fdtd.Media(g, free_length=tuple(length), free_area=tuple(area))
    sim = fdtd.Simulation(g, media, boundaries="pec", dtype=np.float64)
    sim.add_source(fdtd.DipoleSource((4e-3, 4e-3, 4.5e-3), "Ez", fdtd.GaussianPulse(20e9, 60e9)))
    sim.run(20)
    sim.save_checkpoint(tmp_path / "c.h5")
    back = fdtd.Simulation.load_checkpoint(tmp_path / "c.h5")
    assert back.dt == sim.dt and back.media.conformal.size == media.conformal.size
    sim.run(30)
    back.run(30)
    for c in E + H:
        np.testing.assert_array_equal(sim.get_field(c), back.get_field(c))
