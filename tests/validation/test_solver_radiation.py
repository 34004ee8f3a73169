"""A small current loop in free space radiates its energy away.

References
----------
- Jackson, J. D., Classical Electrodynamics, 3rd ed., Wiley, 1999, sec. 9.3:
  a magnetic dipole m(t) radiates the instantaneous power
  ``P = mu0 |d^2 m/dt^2|^2 / (6 pi c^3)`` (the dual of Larmor's formula), so a
  loop of area A with current I(t) radiates ``W = mu0 A^2 / (6 pi c^3) int (I'')^2 dt``.
- Work done by a current source on the field: ``-int J . E dV dt`` (Poynting's
  theorem, same reference, sec. 6.7); for the loop ``-int I(t) EMF(t) dt``.
"""

from __future__ import annotations

import numpy as np

from ringprint.fdtd import (
    C0, MU0, GaussianPulse, Grid, LoopEmfPickup, LoopSource, Media, Simulation)

D = 1e-3
BAND = (5e9, 25e9)


def test_loop_radiates_larmor_energy_and_rings_down():
    grid = Grid.uniform((40, 40, 40), D)
    sim = Simulation(grid, Media(grid), dtype=np.float64)
    pulse = GaussianPulse(*BAND)
    loop = LoopSource(center=(20.5e-3, 20.5e-3, 20e-3), normal="z", waveform=pulse, size_cells=1)
    sim.add_source(loop)
    sim.add_pickup(LoopEmfPickup.of(loop), "emf")
    n_src = int(np.ceil(pulse.t_end / sim.dt))
    sim.run(n_src + 300, progress=False)
    rec = sim.records()
    emf, energy = rec["emf"], rec["energy"]

    # the EMF is finite, and after the source it decays far below its peak
    assert np.all(np.isfinite(emf))
    late = rec["time"] > pulse.t_end + 150 * sim.dt
    assert np.abs(emf[late]).max() < 1e-4 * np.abs(emf).max()
    # the field energy inside the region left of the CPML leaves: at the end it is a
    # tiny fraction of its peak
    assert energy[-1] < 1e-6 * energy.max()

    # work done by the loop current on the field (half-step average of the EMF)
    t_half = (np.arange(emf.size) + 0.5) * sim.dt
    current = pulse(t_half)
    emf_prev = np.concatenate([[0.0], emf[:-1]])
    work = -np.sum(current * 0.5 * (emf + emf_prev)) * sim.dt
    # magnetic-dipole radiation (Jackson 1999, sec. 9.3) of the same current
    t = np.linspace(0, pulse.t_end, 200_001)
    i2 = np.gradient(np.gradient(pulse(t), t), t)
    area = D * D
    w_rad = MU0 * area ** 2 / (6 * np.pi * C0 ** 3) * np.trapezoid(i2 ** 2, t)
    # tolerance 2 % (measured 0.5 %): a one-cell loop on a grid of 12 to 60 cells per wavelength has
    # a few percent of numerical dispersion (Taflove & Hagness 2005, ch. 4)
    assert abs(work / w_rad - 1) < 0.02, work / w_rad
