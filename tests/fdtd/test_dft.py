"""Running node DFT (ringprint.fdtd.NodeDft): input checks, lattice, and the sums
against a direct DFT of the node values taken step by step, on a uniform and on a
graded grid. The node value is the linear (E, two edges) or bilinear (H, four faces)
interpolation of the Yee samples to the node by distance (Yee 1966 sample
positions); the reference here computes those weights from the sample coordinates
themselves (``grid.component_coords``), not from the spacings the code uses."""

import numpy as np
import pytest

from _graded import graded_nodes
from ringprint import fdtd
from ringprint.errors import RingprintError


def _graded_grid():
    """Graded along every axis; y is coarse first, then fine."""
    return fdtd.Grid(graded_nodes(1e-3, 2e-3, 1.3, 4, 3), graded_nodes(0.8e-3, 1.6e-3, 1.3, 3, 3, reverse=True),
                     graded_nodes(1.1e-3, 2.2e-3, 1.3, 2, 2))


def _sim(grid=None):
    grid = fdtd.Grid.uniform((12, 10, 8), 1e-3) if grid is None else grid
    sim = fdtd.Simulation(grid, fdtd.Media(grid), boundaries="pec", dtype=np.float64)
    sim.add_source(fdtd.DipoleSource(position=tuple(0.5 * (a[a.size // 2 - 1] + a[a.size // 2]) for a in grid.nodes), component="Ez", waveform=fdtd.GaussianPulse(20e9, 60e9)))
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


def _interp_weights(grid, comp, axis, nodes):
    """Linear-interpolation weights of the samples of ``comp`` just below and above each
    node along ``axis``, from their coordinates."""
    at = grid.component_coords(comp)[axis]
    lo, hi = at[nodes - 1], at[nodes]
    x = grid.nodes[axis][nodes]
    return (hi - x) / (hi - lo), (x - lo) / (hi - lo)


def _node_values(grid, g, ii, jj, kk):
    """E and H at the inner nodes from the Yee samples, by distance weighting."""
    idx = (ii, jj, kk)
    e, h = [], []
    for a in range(3):
        comp = "E" + "xyz"[a]
        lo, hi = _interp_weights(grid, comp, a, idx[a].ravel())
        shape = [1, 1, 1]
        shape[a] = -1
        lo, hi = lo.reshape(shape), hi.reshape(shape)
        down = list(idx)
        down[a] = idx[a] - 1
        e.append(lo * g[comp][tuple(down)] + hi * g[comp][idx])
        comp = "H" + "xyz"[a]
        b, c = [d for d in range(3) if d != a]
        total = 0.0
        wb = _interp_weights(grid, comp, b, idx[b].ravel())
        wc = _interp_weights(grid, comp, c, idx[c].ravel())
        for sb in (0, 1):
            for sc in (0, 1):
                shb, shc = [1, 1, 1], [1, 1, 1]
                shb[b], shc[c] = -1, -1
                at = list(idx)
                at[b], at[c] = idx[b] - 1 + sb, idx[c] - 1 + sc
                total = total + wb[sb].reshape(shb) * wc[sc].reshape(shc) * g[comp][tuple(at)]
        h.append(total)
    return e, h


@pytest.mark.parametrize("graded", [False, True])
def test_sums_equal_a_direct_dft_of_distance_weighted_node_values(graded):
    """On a uniform grid the weights are 1/2 (edges) and 1/4 (faces): the plain mean.
    Tolerance 1e-12 of the largest sum: the same float64 products summed in another
    order."""
    grid = _graded_grid() if graded else None
    sim = _sim(grid)
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
        e, h = _node_values(sim.grid, sim.fields, ii, jj, kk)
        pe = np.exp(2j * np.pi * f * sim.step_index * sim.dt)
        ph = np.exp(2j * np.pi * f * (sim.step_index - 0.5) * sim.dt)
        want_e += pe[:, None, None, None, None] * np.array(e)[None]
        want_h += ph[:, None, None, None, None] * np.array(h)[None]
    got_e, got_h = dft.sums()
    scale = np.abs(want_e).max()
    assert scale > 0 and np.abs(want_h).max() > 0
    np.testing.assert_allclose(got_e, want_e, atol=1e-12 * scale)
    np.testing.assert_allclose(got_h, want_h, atol=1e-12 * np.abs(want_h).max())
    if not graded:  # the plain mean of the two edges: the rule before graded grids
        g = sim.fields
        mean = 0.5 * (g["Ex"][ii - 1, jj, kk] + g["Ex"][ii, jj, kk])
        np.testing.assert_allclose(_node_values(sim.grid, g, ii, jj, kk)[0][0], mean, rtol=1e-12)


def test_graded_weights_are_not_the_mean():
    """The graded test grid really has unequal neighbouring cells (else the graded case
    above would prove nothing), and the weights sum to 1 (a constant is interpolated
    exactly)."""
    grid = _graded_grid()
    dft = fdtd.NodeDft([30e9])
    sim = _sim(grid)
    sim.add_dft(dft)
    for w in dft.weights:
        np.testing.assert_allclose(w.sum(axis=0), 1.0, rtol=1e-14)
    assert max(float(np.abs(w - 0.5).max()) for w in dft.weights) > 0.05


def test_half_step_times_on_a_graded_grid():
    """The Yee half step is unchanged by grading: H samples sit half a step before E."""
    sim = _sim(_graded_grid())
    dft = fdtd.NodeDft([30e9], every=2, start_step=3)
    sim.add_dft(dft)
    sim.run(9)
    n = np.arange(3, 10, 2)
    np.testing.assert_allclose(dft.times_e, n * sim.dt)
    np.testing.assert_allclose(dft.times_h, (n - 0.5) * sim.dt)
