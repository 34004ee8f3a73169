"""Running node DFT (ringprint.fdtd.NodeDft): input checks, lattice, and the sums
against a direct DFT of the node-averaged fields taken step by step."""

import numpy as np
import pytest

from ringprint import fdtd
from ringprint.errors import RingprintError


def _sim():
    grid = fdtd.Grid.uniform((12, 10, 8), 1e-3)
    sim = fdtd.Simulation(grid, fdtd.Media(grid), boundaries="pec", dtype=np.float64)
    sim.add_source(fdtd.DipoleSource(position=(5.5e-3, 4.5e-3, 3.5e-3), component="Ez", waveform=fdtd.GaussianPulse(20e9, 60e9)))
    return sim


@pytest.mark.parametrize("kwargs", [{"frequencies_hz": []}, {"frequencies_hz": [-1.0]},
                                    {"frequencies_hz": [np.nan]}, {"frequencies_hz": [1e9], "stride": 0},
                                    {"frequencies_hz": [1e9], "every": 1.5},
                                    {"frequencies_hz": [1e9], "start_step": -1}])
def test_bad_arguments_are_refused(kwargs):
    with pytest.raises(RingprintError):
        fdtd.NodeDft(**kwargs)


def test_box_outside_the_grid_is_refused():
    sim = _sim()
    with pytest.raises(RingprintError, match="holds no inner node"):
        sim.add_dft(fdtd.NodeDft([30e9], box=((20, 20, 20), (30, 30, 30))))


def test_lattice_and_sample_times():
    sim = _sim()
    dft = fdtd.NodeDft([30e9, 45e9], stride=2, every=3, start_step=5)
    sim.add_dft(dft)
    assert dft.lo == (1, 1, 1)
    assert dft.counts == (6, 5, 4)          # nodes 1..11 step 2 along x (inner nodes 1..11)
    assert [list(i) for i in dft.node_indices()][2] == [1, 3, 5, 7]
    sim.run(20)
    n = np.arange(5, 21, 3)
    np.testing.assert_allclose(dft.times_e, n * sim.dt)
    np.testing.assert_allclose(dft.times_h, (n - 0.5) * sim.dt)


def test_sums_equal_a_direct_dft_of_node_averages():
    sim = _sim()
    f = np.array([31e9, 47e9])
    dft = fdtd.NodeDft(f, stride=1, every=2, start_step=4)
    sim.add_dft(dft)
    ii, jj, kk = np.ix_(*[np.arange(1, n - 1) for n in sim.grid.shape])
    want_e = np.zeros((2, 3) + dft.counts, complex)
    want_h = np.zeros_like(want_e)
    for _ in range(30):
        sim.run(1)
        if sim.step_index < 4 or (sim.step_index - 4) % 2:
            continue
        g = sim.fields
        e = [0.5 * (g["Ex"][ii - 1, jj, kk] + g["Ex"][ii, jj, kk]),
             0.5 * (g["Ey"][ii, jj - 1, kk] + g["Ey"][ii, jj, kk]),
             0.5 * (g["Ez"][ii, jj, kk - 1] + g["Ez"][ii, jj, kk])]
        h = [0.25 * (g["Hx"][ii, jj - 1, kk - 1] + g["Hx"][ii, jj, kk - 1] + g["Hx"][ii, jj - 1, kk]
                     + g["Hx"][ii, jj, kk]),
             0.25 * (g["Hy"][ii - 1, jj, kk - 1] + g["Hy"][ii, jj, kk - 1] + g["Hy"][ii - 1, jj, kk]
                     + g["Hy"][ii, jj, kk]),
             0.25 * (g["Hz"][ii - 1, jj - 1, kk] + g["Hz"][ii, jj - 1, kk] + g["Hz"][ii - 1, jj, kk]
                     + g["Hz"][ii, jj, kk])]
        pe = np.exp(2j * np.pi * f * sim.step_index * sim.dt)
        ph = np.exp(2j * np.pi * f * (sim.step_index - 0.5) * sim.dt)
        want_e += pe[:, None, None, None, None] * np.array(e)[None]
        want_h += ph[:, None, None, None, None] * np.array(h)[None]
    got_e, got_h = dft.sums()
    scale = np.abs(want_e).max()
    assert scale > 0
    np.testing.assert_allclose(got_e, want_e, atol=1e-12 * scale)
    np.testing.assert_allclose(got_h, want_h, atol=1e-12 * np.abs(want_h).max())
