"""Test utility: the solver's own TE101 field of a closed PEC box as a FieldSet.

A Yee grid of ``a x b x d`` with PEC outer boundaries is rung by a small loop; the
first pass finds the complex frequencies (filter diagonalization), the second records
the node DFT at the one nearest TE101 (Pozar, D. M., *Microwave Engineering*, 4th ed.,
Wiley, 2012, eq. 6.40: ``f101 = (c/2) sqrt(1/a^2 + 1/d^2)``), which is separated
(:func:`ringprint.analysis.separation.separate`) and normalized to 1 J. The lattice is
every grid node; the wall nodes are PEC and carry no field, as a run's lattice holds a
metal wall.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import c as C0

from ringprint import fdtd
from ringprint.analysis.fieldset import FieldSet, ModeField
from ringprint.analysis.inversion import harmonic_inversion
from ringprint.analysis.mode_fields import normalize, sample_every
from ringprint.analysis.separation import separate


def _box_sim(grid, a, b, d):
    sim = fdtd.Simulation(grid, fdtd.Media(grid), boundaries="pec", dtype=np.float64)
    sim.add_source(fdtd.LoopSource(center=(0.37 * a, 0.5 * b, 0.2 * d), normal="x",
                                   waveform=fdtd.GaussianPulse(6e9, 12e9), size_cells=2))
    return sim


def te101_fieldset(a: float, b: float, d: float, cell: float, steps: int = 6000) -> FieldSet:
    """The TE101 mode of the ``a x b x d`` box (m) on a uniform grid of ``cell``."""
    grid = fdtd.Grid.uniform((round(a / cell), round(b / cell), round(d / cell)), cell)
    sim = _box_sim(grid, a, b, d)
    sim.add_pickup(fdtd.FieldPickup("Ey", (0.31 * a, 0.4 * b, 0.43 * d)), "ey")
    sim.add_pickup(fdtd.FieldPickup("Hz", (0.13 * a, 0.6 * b, 0.21 * d)), "hz")
    start = int(np.ceil(sim.source_end_time / sim.dt))
    steps = start + steps
    sim.run(steps)
    rec = sim.records()
    sig = np.stack([rec["ey"][start:], rec["hz"][start:]])
    found = harmonic_inversion(sig / np.abs(sig).max(axis=1, keepdims=True), sim.dt, 4e9, 16e9)
    f101 = C0 / 2 * math.hypot(1 / a, 1 / d)
    mode = min(found, key=lambda r: abs(r.frequency_hz - f101))
    sim2 = _box_sim(grid, a, b, d)
    dft = fdtd.NodeDft(np.array([mode.frequency_hz]), stride=1,
                       every=sample_every(sim2.dt, 16e9), start_step=start)
    sim2.add_dft(dft)
    sim2.run(steps)
    omega = np.array([2 * np.pi * mode.frequency_hz - 1j * mode.decay_rate])
    sums_e, sums_h = dft.sums()
    e, _ = separate(sums_e, dft.times_e, omega)
    h, _ = separate(sums_h, dft.times_h, omega)
    ek, hk = normalize(e[0], h[0], np.ones(dft.counts), cell ** 3)
    pad = ((0, 0), (1, 1), (1, 1), (1, 1))
    x, y, z = grid.nodes
    shape = (x.size, y.size, z.size)
    wall = np.ones(shape, bool)
    wall[1:-1, 1:-1, 1:-1] = False
    fs = FieldSet(x, y, z, eps_r=np.ones(shape, np.float32), sigma=np.zeros(shape, np.float32),
                  pec=wall, parts={})
    fs.modes.append(ModeField(1, mode.frequency_hz, mode.q, np.pad(ek, pad), np.pad(hk, pad)))
    return fs
