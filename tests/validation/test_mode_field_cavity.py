"""Mode fields of a closed PEC cavity against the analytic TE101 pattern.

Reference: Pozar, D. M., Microwave Engineering, 4th ed., Wiley, 2012, sec. 6.3
(rectangular cavity): for TE101 of an a x b x d box,
``E_y ~ sin(pi x / a) sin(pi z / d)``, ``H_x ~ sin(pi x / a) cos(pi z / d)``,
``H_z ~ cos(pi x / a) sin(pi z / d)``, and at resonance the time-averaged electric
and magnetic stored energies are equal.

The chain under test: the solver's running node DFT (:class:`ringprint.fdtd.NodeDft`),
the leakage-free separation of modes of known complex frequency
(:func:`ringprint.analysis.separation.separate`) and the 1 J normalization
(:func:`ringprint.analysis.mode_fields.normalize`).
"""

import numpy as np
import pytest

from ringprint import fdtd
from ringprint.analysis.inversion import harmonic_inversion
from ringprint.analysis.mode_fields import normalize, sample_every
from ringprint.analysis.separation import separate
from ringprint.fdtd import C0, EPS0, MU0

A, B, D = 0.020, 0.010, 0.030
CELL = 0.5e-3


def _correlation(u, v):
    u, v = np.ravel(u), np.ravel(v)
    return abs(np.vdot(u, v)) / (np.linalg.norm(u) * np.linalg.norm(v))


@pytest.fixture(scope="module")
def cavity():
    grid = fdtd.Grid.uniform((round(A / CELL), round(B / CELL), round(D / CELL)), CELL)
    media = fdtd.Media(grid)
    sim = fdtd.Simulation(grid, media, boundaries="pec", dtype=np.float64)
    pulse = fdtd.GaussianPulse(6e9, 12e9)
    src = fdtd.LoopSource(center=(0.37 * A, 0.5 * B, 0.2 * D), normal="x", waveform=pulse, size_cells=2)
    sim.add_source(src)
    sim.add_pickup(fdtd.FieldPickup("Ey", (0.31 * A, 0.4 * B, 0.43 * D)), "ey")
    sim.add_pickup(fdtd.FieldPickup("Hz", (0.13 * A, 0.6 * B, 0.21 * D)), "hz")
    start = int(np.ceil(sim.source_end_time / sim.dt))
    steps = start + 6000
    sim.run(steps)  # first pass: the record, for the complex frequencies
    rec = sim.records()
    sig = np.stack([rec["ey"][start:], rec["hz"][start:]])
    sig /= np.abs(sig).max(axis=1, keepdims=True)
    found = harmonic_inversion(sig, sim.dt, 4e9, 16e9)
    # second pass with the DFT
    sim2 = fdtd.Simulation(grid, media, boundaries="pec", dtype=np.float64)
    sim2.add_source(src)
    f = np.array([r.frequency_hz for r in found])
    dft = fdtd.NodeDft(f, stride=1, every=sample_every(sim2.dt, 16e9), start_step=start)
    sim2.add_dft(dft)
    sim2.run(steps)
    return grid, dft, found


def test_te101_pattern_matches_pozar(cavity):
    grid, dft, found = cavity
    f = np.array([r.frequency_hz for r in found])
    omega = 2 * np.pi * f - 1j * np.array([r.decay_rate for r in found])
    f101 = C0 / 2 * np.hypot(1 / A, 1 / D)
    k = int(np.argmin(abs(f - f101)))
    assert abs(f[k] / f101 - 1) < 5e-3  # Pozar closed form; grid dispersion below 0.5 %
    sums_e, sums_h = dft.sums()
    e, _ = separate(sums_e, dft.times_e, omega)
    h, _ = separate(sums_h, dft.times_h, omega)
    ii, jj, kk = dft.node_indices()
    x, y, z = (grid.nodes[a][i] for a, i in enumerate((ii, jj, kk)))
    eps = np.ones(dft.counts)
    ek, hk = normalize(e[k], h[k], eps, CELL ** 3)
    X, _, Z = np.meshgrid(x, y, z, indexing="ij")
    ey = np.sin(np.pi * X / A) * np.sin(np.pi * Z / D)
    hx = np.sin(np.pi * X / A) * np.cos(np.pi * Z / D)
    hz = np.cos(np.pi * X / A) * np.sin(np.pi * Z / D)
    assert _correlation(ek[1], ey) >= 0.99
    assert _correlation(np.stack([hk[0], hk[2]]), np.stack([hx * (np.pi / D), -hz * (np.pi / A)])) >= 0.99
    # the other E components hold almost nothing
    assert np.sum(abs(ek[0]) ** 2 + abs(ek[2]) ** 2) < 1e-3 * np.sum(abs(ek[1]) ** 2)
    # normalized to 1 J, and W_e = W_m at resonance (Pozar)
    we = 0.25 * EPS0 * np.sum(abs(ek) ** 2) * CELL ** 3
    wm = 0.25 * MU0 * np.sum(abs(hk) ** 2) * CELL ** 3
    assert we + wm == pytest.approx(1.0, rel=1e-9)
    # The lattice leaves out the wall nodes (their Yee neighbours lie outside), where
    # tangential H peaks: a node sum of cos^2 over N cells misses 2/N of the integral.
    # H_x (share (1/d^2)/(1/a^2 + 1/d^2) of W_m) misses 2/N_z, H_z misses 2/N_x.
    nx, nz = round(A / CELL), round(D / CELL)
    share_hx = (1 / D ** 2) / (1 / A ** 2 + 1 / D ** 2)
    missing = share_hx * 2 / nz + (1 - share_hx) * 2 / nx
    assert we / wm == pytest.approx(1 / (1 - missing), rel=5e-3)
