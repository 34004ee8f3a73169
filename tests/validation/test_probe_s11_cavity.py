"""The loop probe's S11 in a closed, lossy-filled PEC cavity against its TE101 mode.

A 12 x 6 x 10 mm box (1 mm cells) filled with a slightly conducting medium
(``sigma = w101 eps0 / 100``) holds one mode, TE101, between 15 and 24 GHz; a
one-cell loop probe with its axis along x rings it. The checks:

- the impedance ``Z = V/I`` of the probe has its pole (a circle fit on Z itself:
  the open-circuit resonance) at the Yee grid's own TE101 frequency to 1e-4, within
  the grid's dispersion of Pozar's continuum value, and with ``Q = w eps / sigma``
  to 0.5 %;
- the reflection ``S11 = (Z - 50)/(Z + 50)`` measured as on a bench (vector fitting
  and the circle fit of :mod:`ringprint.analysis.bench_q`) gives the unloaded
  ``Q_0 = Q_L (1 + kappa) = w eps / sigma`` to 0.5 %, and the loaded frequency where
  the circuit model says: the loop's reactance X in series with the resonator moves
  the loaded pole by ``df/f = kappa X / (2 Z0 Q_0)`` (for ``Z = jX + R/(1 + 2j Q_0
  delta)``, the pole of ``(Z - Z0)/(Z + Z0)`` sits at ``2 Q_0 delta = -j - j R/(Z0 +
  jX)``; derived here);
- the port is passive (``Re Z >= 0``) and inductive below the mode (the loop's own
  inductance);
- a record cut at three amplitude e-foldings, continued by its poles, gives the
  same S11 as one four times longer, to 1e-4 (without the continuation the
  difference is 30 times larger).

References
----------
Pozar, D. M., Microwave Engineering, 4th ed., Wiley, 2012: sec. 6.3 (rectangular
cavity, ``f101 = c/2 sqrt(1/a^2 + 1/d^2)``; dielectric loss ``Q = w eps / sigma``),
sec. 4.3 (``Gamma = (Z - Z0)/(Z + Z0)``). Taflove, A. & Hagness, S. C.,
Computational Electrodynamics, 3rd ed., 2005 (Yee dispersion relation, exact for
the grid's cavity modes). Kajfez, D. & Hwan, E. J., IEEE Trans. Microw. Theory
Tech. 32(7):666-670, 1984 (reflection-type Q measurement).
"""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.analysis.bench_q import circle_fit, reflection_resonances
from ringprint.analysis.inversion import harmonic_inversion
from ringprint.analysis.probe_s11 import band_frequencies, port_impedance, reflection
from ringprint.fdtd import C0, EPS0, GaussianPulse, Grid, LoopEmfPickup, LoopSource, Media, Simulation

CELLS = (12, 6, 10)
D = 1e-3
A, B, L = (n * D for n in CELLS)
F101 = C0 / 2 * np.sqrt(1 / A ** 2 + 1 / L ** 2)          # Pozar sec. 6.3
Q_TARGET = 100.0
SIGMA = 2 * np.pi * F101 * EPS0 / Q_TARGET
BAND = (15e9, 24e9)
Z0 = 50.0


def _yee_f101(dt):
    """Taflove & Hagness: sin^2(w dt/2)/(c dt)^2 = sum_i sin^2(k_i d/2)/d^2, k = (pi/a, 0, pi/L)."""
    s = (np.sin(np.pi / A * D / 2) ** 2 + np.sin(np.pi / L * D / 2) ** 2) / D ** 2
    return 2.0 / dt * np.arcsin(C0 * dt * np.sqrt(s)) / (2 * np.pi)


@pytest.fixture(scope="module")
def cavity():
    grid = Grid.uniform(CELLS, D)
    sim = Simulation(grid, Media(grid, eps_r=1.0, sigma=SIGMA), boundaries="pec", dtype=np.float64)
    pulse = GaussianPulse(*BAND)
    src = LoopSource((6e-3, 3e-3, 2e-3), "x", pulse, 1)
    sim.add_source(src)
    sim.add_pickup(LoopEmfPickup.of(src), "emf")
    n_src = int(np.ceil(pulse.t_end / sim.dt))
    e_fold = Q_TARGET / (np.pi * F101) / sim.dt                # steps per amplitude e-folding
    sim.run(n_src + int(12 * e_fold), progress=False)
    emf = sim.records()["emf"]
    poles = harmonic_inversion(emf[n_src:], sim.dt, *BAND)
    f = band_frequencies(*BAND, poles)
    z, share = port_impedance(emf, sim.dt, pulse, f, poles, n_src)
    return dict(sim=sim, pulse=pulse, emf=emf, n_src=n_src, e_fold=e_fold, poles=poles, f=f, z=z)


def test_impedance_pole_is_the_te101_mode(cavity):
    f, z, dt = cavity["f"], cavity["z"], cavity["sim"].dt
    fit = circle_fit(f, z / Z0, F101, Q_TARGET)
    f_yee = _yee_f101(dt)
    assert abs(fit.frequency_hz / f_yee - 1) < 1e-4
    assert f_yee < F101 and abs(fit.frequency_hz / F101 - 1) < 2 * (1 - f_yee / F101) + 1e-4
    assert abs(fit.q_loaded / Q_TARGET - 1) < 5e-3


def test_port_is_passive_and_inductive_below_the_mode(cavity):
    f, z = cavity["f"], cavity["z"]
    assert np.all(z.real > -1e-9 * np.abs(z))
    below = f < 0.9 * F101
    assert np.all(z[below].imag > 0)


def test_s11_measured_as_on_the_bench_gives_the_unloaded_q_and_the_loaded_shift(cavity):
    f, z = cavity["f"], cavity["z"]
    s = reflection(z, Z0)
    found = reflection_resonances(f, s, Z0)
    assert len(found) == 1
    fit = found[0].fit
    assert abs(fit.q_unloaded / Q_TARGET - 1) < 5e-3
    assert 0.01 < fit.coupling < 1                           # a one-cell loop couples weakly
    f0 = circle_fit(f, z / Z0, F101, Q_TARGET).frequency_hz
    x = float(np.interp(f0, f, z.imag))     # the series reactance: R/(1 + 2jQ delta) is real at f0
    predicted = f0 * (1 + fit.coupling * x / (2 * Z0 * fit.q_unloaded))
    assert abs(fit.frequency_hz / predicted - 1) < 2e-4
    assert fit.frequency_hz > f0                              # the inductive loop pulls it up


def test_a_short_record_continued_by_its_poles_gives_the_same_s11(cavity):
    emf, n_src, e_fold = cavity["emf"], cavity["n_src"], cavity["e_fold"]
    cut = n_src + int(3 * e_fold)
    f, dt, pulse, poles = cavity["f"], cavity["sim"].dt, cavity["pulse"], cavity["poles"]
    s_long = reflection(cavity["z"], Z0)
    z_cut, share = port_impedance(emf[:cut], dt, pulse, f, poles, n_src)
    err = np.max(np.abs(reflection(z_cut, Z0) - s_long))
    z_bare, _ = port_impedance(emf[:cut], dt, pulse, f, (), n_src)
    err_bare = np.max(np.abs(reflection(z_bare, Z0) - s_long))
    print(f"cut at 3 e-foldings: |dS11| {err:.2e} continued, {err_bare:.2e} bare; tail share {share:.3g}")
    assert err < 1e-4
    assert share > 1e-3                                       # the continuation did work
    assert err_bare > 30 * err
