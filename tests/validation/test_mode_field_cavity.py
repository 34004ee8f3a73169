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

The same chain runs on a hand-made graded grid too (cells of 0.4 to 0.8 mm along x
and z, neighbours within 1.25 of each other), where the node DFT interpolates by
distance and the 1 J normalization weights every node by its volume
(:meth:`ringprint.analysis.fieldset.FieldSet.node_volumes`).
"""

import numpy as np
import pytest

from _graded import graded_nodes
from ringprint import fdtd
from ringprint.analysis.fieldset import FieldSet, stored_energy
from ringprint.analysis.inversion import harmonic_inversion
from ringprint.analysis.mode_fields import normalize, sample_every
from ringprint.analysis.separation import separate
from ringprint.fdtd import C0, EPS0, MU0

A, B, D = 0.020, 0.010, 0.030
CELL = 0.5e-3


def _correlation(u, v):
    u, v = np.ravel(u), np.ravel(v)
    return abs(np.vdot(u, v)) / (np.linalg.norm(u) * np.linalg.norm(v))


def _ring(grid):
    """The cavity on ``grid`` rung by a small loop; first pass for the complex
    frequencies, second pass with the node DFT at those frequencies."""
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


@pytest.fixture(scope="module")
def cavity():
    return _ring(fdtd.Grid.uniform((round(A / CELL), round(B / CELL), round(D / CELL)), CELL))


def _te101(run):
    """``(f / f101 - 1, E, H, (x, y, z))``: the separated phasors of the mode nearest
    TE101 (Pozar eq. 6.46, ``f101 = (c/2) sqrt(1/a^2 + 1/d^2)``) and the lattice nodes."""
    grid, dft, found = run
    f = np.array([r.frequency_hz for r in found])
    omega = 2 * np.pi * f - 1j * np.array([r.decay_rate for r in found])
    f101 = C0 / 2 * np.hypot(1 / A, 1 / D)
    k = int(np.argmin(abs(f - f101)))
    sums_e, sums_h = dft.sums()
    e, _ = separate(sums_e, dft.times_e, omega)
    h, _ = separate(sums_h, dft.times_h, omega)
    nodes = tuple(grid.nodes[a][i] for a, i in enumerate(dft.node_indices()))
    return f[k] / f101 - 1, e[k], h[k], nodes


def test_te101_pattern_matches_pozar(cavity):
    f_error, e_k, h_k, (x, y, z) = _te101(cavity)
    assert abs(f_error) < 5e-3  # Pozar closed form; grid dispersion below 0.5 %
    eps = np.ones((x.size, y.size, z.size))
    ek, hk = normalize(e_k, h_k, eps, CELL ** 3)
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


# --- the same cavity on a graded grid -----------------------------------------------

FINE, COARSE = 0.4e-3, 0.8e-3


def _weighted_correlation(u, v, w):
    """|<u, v>_w| / (|u|_w |v|_w) with node weights w (the node volumes)."""
    u, v, w = (np.ravel(a) for a in (u, v, np.broadcast_to(w, np.shape(u))))
    return abs(np.sum(w * np.conj(u) * v)) / np.sqrt(np.sum(w * abs(u) ** 2) * np.sum(w * abs(v) ** 2))


@pytest.fixture(scope="module")
def graded_cavity():
    """Along x cells of 0.4 mm near x = 0 growing by 1.25 per cell to 0.8 mm, along z
    0.8 mm cells shrinking to 0.4 mm near z = d, 0.5 mm along y."""
    x = graded_nodes(FINE, COARSE, 1.25, until=A, fit=True)
    z = graded_nodes(FINE, COARSE, 1.25, until=D, fit=True, reverse=True)
    return _ring(fdtd.Grid(x, np.linspace(0.0, B, round(B / CELL) + 1), z))


def test_grid_is_graded(graded_cavity):
    grid, _, _ = graded_cavity
    for d in (grid.spacing[0], grid.spacing[2]):
        ratio = d[1:] / d[:-1]
        assert d.max() / d.min() > 1.9 and np.all(np.maximum(ratio, 1 / ratio) <= 1.3 + 1e-12)


def test_te101_on_a_graded_grid_matches_pozar(graded_cavity):
    f_error, e_k, h_k, (x, y, z) = _te101(graded_cavity)
    # Pozar eq. 6.46; the coarsest cell is 1/40 of the wavelength: measured -0.035 %
    assert abs(f_error) < 2e-3
    eps = np.ones((x.size, y.size, z.size))
    fs = FieldSet(x, y, z, eps_r=eps, sigma=np.zeros_like(eps), pec=np.zeros(eps.shape, bool), parts={})
    assert not fs.uniform
    vol = fs.node_volumes()
    ek, hk = normalize(e_k, h_k, eps, vol)
    # 1 J with node volumes, and with volumes built here from the coordinates alone
    assert stored_energy(eps, ek, hk, vol) == pytest.approx(1.0, rel=1e-9)
    own = [np.gradient(a) for a in (x, y, z)]          # (a[i+1] - a[i-1]) / 2 inside
    for w, a in zip(own, (x, y, z)):
        w[0], w[-1] = a[1] - a[0], a[-1] - a[-2]
    dv = own[0][:, None, None] * own[1][None, :, None] * own[2][None, None, :]
    we = 0.25 * EPS0 * np.sum(dv * np.sum(abs(ek) ** 2, axis=0))
    wm = 0.25 * MU0 * np.sum(dv * np.sum(abs(hk) ** 2, axis=0))
    assert we + wm == pytest.approx(1.0, rel=1e-9)
    # the pattern (Pozar eq. 6.42), compared with node-volume weights. Measured: 1 - 2e-8
    # (E) and 1 - 3e-7 (H); 0.9999 leaves room for the grid's O(h^2) error and still
    # fails for a misplaced or mixed mode (a TE102 admixture of 1 % of the energy gives ~0.995)
    X, _, Z = np.meshgrid(x, y, z, indexing="ij")
    ey = np.sin(np.pi * X / A) * np.sin(np.pi * Z / D)
    hx = np.sin(np.pi * X / A) * np.cos(np.pi * Z / D) * (np.pi / D)
    hz = np.cos(np.pi * X / A) * np.sin(np.pi * Z / D) * (np.pi / A)
    assert _weighted_correlation(ek[1], ey, vol) >= 0.9999
    assert _weighted_correlation(np.stack([hk[0], hk[2]]), np.stack([hx, -hz]), vol) >= 0.9999
    assert np.sum(vol * (abs(ek[0]) ** 2 + abs(ek[2]) ** 2)) < 1e-3 * np.sum(vol * abs(ek[1]) ** 2)
    # W_e / W_m: equal in the continuum (Pozar); the lattice leaves out the wall nodes,
    # where tangential H peaks, so compare with the same node sums of the analytic field
    kk = np.hypot(np.pi / A, np.pi / D)             # k of TE101 (Pozar eq. 6.46)
    eta = np.sqrt(MU0 / EPS0)
    want = (EPS0 * np.sum(vol * ey ** 2)) / (MU0 * np.sum(vol * (hx ** 2 + hz ** 2)) / (kk * eta) ** 2)
    # measured +0.29 %; 5e-3: grid dispersion and the O(h^2) error of the node
    # interpolation next to the walls, where H is largest
    assert we / wm == pytest.approx(want, rel=5e-3)
