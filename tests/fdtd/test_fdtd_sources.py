"""Source waveform and source geometry."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.fdtd import GaussianPulse, Grid
from ringprint.fdtd.sources import END_LEVEL, loop_edges


@pytest.mark.parametrize("band", [(1e9, 6e9), (0.3e9, 6e9), (2.4e9, 2.5e9)])
def test_pulse_covers_band_without_dc(band):
    p = GaussianPulse(*band)
    dt = 1 / (40 * band[1])
    t = np.arange(0, p.t_end + 20 * p.tau, dt)
    s = p(t)
    n = 1 << int(np.ceil(np.log2(t.size * 8)))
    spec = np.abs(np.fft.rfft(s, n))
    f = np.fft.rfftfreq(n, dt)
    inband = spec[(f >= band[0]) & (f <= band[1])]
    # at least -20 dB across the band (design: -10 dB at the edges)
    assert 20 * np.log10(inband.min() / spec.max()) >= -20.0
    # zero mean: the waveform is odd about t0 (numerical integral ~ 0)
    assert abs(np.sum(s) * dt) < 1e-9 * np.abs(s).max() * p.tau
    # smooth start, and the envelope is below 1e-8 of the peak after t_end
    assert abs(p(0.0)) < 1e-10 * p.amplitude
    late = t >= p.t_end
    assert np.abs(s[late]).max() <= END_LEVEL * p.amplitude


def test_pulse_refuses_bad_band():
    with pytest.raises(RingprintError, match="band"):
        GaussianPulse(5e9, 1e9)
    with pytest.raises(RingprintError, match="band"):
        GaussianPulse(0.0, 1e9)


def test_loop_edges_circulate_counterclockwise():
    """The loop's moment points along +normal: the signed area sum_edges (r x dl)/2 > 0."""
    g = Grid.uniform((8, 8, 8), 1e-3)
    for normal in "xyz":
        edges = loop_edges(g, (4e-3, 4e-3, 4e-3), normal, 2)
        a = "xyz".index(normal)
        moment = np.zeros(3)
        for comp, idx, orient, length in edges:
            coords = g.component_coords(comp)
            ax = "xyz".index(comp[1])
            for n in range(len(orient)):
                r = np.array([coords[d][idx[d][n]] for d in range(3)])
                dl = np.zeros(3)
                dl[ax] = orient[n] * length[n]
                moment += 0.5 * np.cross(r, dl)
        assert moment[a] == pytest.approx(4e-6, rel=1e-9)  # area of 2 x 2 cells
        assert np.allclose(np.delete(moment, a), 0, atol=1e-15)
