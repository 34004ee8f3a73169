"""Closed rectangular cavities: mode frequencies and Q against closed forms.

References
----------
- Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., Artech
  House, 2005: numerical dispersion of the Yee scheme,
  ``sin^2(w dt/2)/(c dt)^2 = sum_i sin^2(k_i d_i/2)/d_i^2``; in a PEC box the
  grid's modes satisfy it exactly with ``k_i = m_i pi / L_i``.
- Pozar, D. M., Microwave Engineering, 4th ed., Wiley, 2012, sec. 6.3 (rectangular
  cavity ``f = c/2 sqrt((m/a)^2 + (n/b)^2 + (l/d)^2)``) and sec. 6.3/6.7
  (dielectric loss: ``Q_d = 1/tan(delta) = w eps / sigma``).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from ringprint.fdtd import C0, DipoleSource, FieldPickup, GaussianPulse, Grid, Media, Simulation
from _ringdown import ringdown_poles

CELLS = (12, 10, 8)
D = 1e-3
SIDES = tuple(n * D for n in CELLS)  # a, b, d = 12, 10, 8 mm


def _modes(f_lo, f_hi, eps_r):
    """(m, n, l) of the box modes (at least two indices non-zero) in a band,
    with continuum and Yee-grid frequencies (eps_r: uniform filling)."""
    c = C0 / np.sqrt(eps_r)
    out = []
    for mnl in itertools.product(range(4), repeat=3):
        if sum(v > 0 for v in mnl) < 2:
            continue
        k = np.array(mnl) * np.pi / np.array(SIDES)
        f_cont = c / (2 * np.pi) * np.linalg.norm(k)
        if f_lo <= f_cont <= f_hi:
            out.append((mnl, k, f_cont))
    return out


def _discrete(k, dt, eps_r):
    """Taflove & Hagness (2005) Yee dispersion relation solved for f."""
    c = C0 / np.sqrt(eps_r)
    s = np.sum(np.sin(k * D / 2) ** 2 / D ** 2)
    return 2.0 / dt * np.arcsin(c * dt * np.sqrt(s)) / (2 * np.pi)


def _ring(eps_r, sigma, band, n_after):
    grid = Grid.uniform(CELLS, D)
    sim = Simulation(grid, Media(grid, eps_r=eps_r, sigma=sigma), boundaries="pec", dtype=np.float64)
    pulse = GaussianPulse(*band)
    # three dipoles and three pickups at generic (non-symmetric) points excite and see every mode
    for comp, pos in (("Ex", (3.5e-3, 3.0e-3, 2.0e-3)), ("Ey", (7.0e-3, 2.5e-3, 5.0e-3)),
                      ("Ez", (4.0e-3, 7.0e-3, 2.5e-3))):
        sim.add_source(DipoleSource(pos, comp, pulse))
    for comp, pos in (("Ex", (8.5e-3, 7.0e-3, 3.0e-3)), ("Ey", (2.0e-3, 6.5e-3, 6.0e-3)),
                      ("Ez", (9.0e-3, 3.0e-3, 4.5e-3))):
        sim.add_pickup(FieldPickup(comp, pos), comp)
    n_src = int(np.ceil(pulse.t_end / sim.dt))
    sim.run(n_src + n_after, progress=False)
    rec = sim.records()
    after = rec["time"] > pulse.t_end
    signal = rec["Ex"][after] + rec["Ey"][after] + rec["Ez"][after]
    return sim, signal


def test_pec_cavity_matches_yee_dispersion_and_pozar():
    """Every box mode between 17 and 30 GHz is found at the Yee-grid frequency to
    1e-5 (the relation is exact for this grid; 1e-5 leaves room for the pole
    estimator), and within the analytic dispersion bound of Pozar's continuum value."""
    band = (12e9, 36e9)
    sim, signal = _ring(1.0, 0.0, band, 4000)
    poles = ringdown_poles(signal, sim.dt, 15e9, 32e9)
    found = np.array([p.frequency_hz for p in poles])
    expected = _modes(17e9, 30e9, 1.0)
    assert len(expected) >= 5
    for mnl, k, f_cont in expected:
        f_disc = _discrete(k, sim.dt, 1.0)
        f = found[np.argmin(np.abs(found - f_disc))]
        assert abs(f - f_disc) / f_disc <= 1e-5, (mnl, f, f_disc)
        # Dispersion bound from sin x >= x (1 - x^2/6) and asin y <= y / sqrt(1 - y^2):
        # sqrt(1 - max(k_i d)^2/12) <= f_grid / f_cont <= 1/sqrt(1 - y0^2), y0 = c dt k / 2.
        lower = np.sqrt(1 - np.max(k * D) ** 2 / 12)
        y0 = C0 * sim.dt * np.linalg.norm(k) / 2
        upper = 1 / np.sqrt(1 - y0 ** 2)
        assert lower <= f / f_cont <= upper, (mnl, f / f_cont, lower, upper)
        # the grid error is real here (10x the tolerance above), so the first check
        # distinguishes the discrete relation from the continuum one
        assert abs(f_disc - f_cont) / f_cont > 1e-4
    # no spurious in-band resonance: every strong pole is a box mode
    predicted = np.array([_discrete(k, sim.dt, 1.0) for _m, k, _f in _modes(14e9, 33e9, 1.0)])
    for p in poles:
        assert np.min(np.abs(predicted - p.frequency_hz)) / p.frequency_hz < 1e-5, p


@pytest.mark.parametrize("q_target", [40.0])
def test_lossy_dielectric_cavity_q(q_target):
    """Cavity filled with eps_r = 2 and conductivity sigma: every mode decays with
    Q = w eps / sigma (Pozar 2012, dielectric-loss Q) within 1 %."""
    eps_r = 2.0
    f_ref = _modes(10e9, 30e9, eps_r)[0][2]
    sigma = 2 * np.pi * f_ref * eps_r * 8.8541878128e-12 / q_target
    sim, signal = _ring(eps_r, sigma, (8e9, 26e9), 2500)
    poles = ringdown_poles(signal, sim.dt, 10e9, 22e9, min_rel_amplitude=1e-3)
    expected = _modes(12e9, 20e9, eps_r)
    assert len(expected) >= 3
    found = np.array([p.frequency_hz for p in poles])
    for mnl, k, _f in expected:
        f_disc = _discrete(k, sim.dt, eps_r)
        p = poles[int(np.argmin(np.abs(found - f_disc)))]
        assert abs(p.frequency_hz - f_disc) / f_disc < 2e-3, (mnl, p)
        q_pozar = 2 * np.pi * p.frequency_hz * eps_r * 8.8541878128e-12 / sigma
        assert abs(p.q - q_pozar) / q_pozar <= 0.01, (mnl, p.q, q_pozar)


def test_pmc_wall_is_an_exact_mirror():
    """A PMC wall at x = 0 with PEC elsewhere: by image theory (Harrington 1961, sec. 3-6)
    the box is half of a PEC box of length 2a, keeping the modes with tangential E even
    about the wall, so k_x = (m + 1/2) pi / a. Their Yee-grid frequencies follow the same
    dispersion relation (Taflove & Hagness 2005) to 1e-5, because the wall update is the
    exact discrete mirror."""
    grid = Grid.uniform(CELLS, D)
    walls = {"x-": "pmc", "x+": "pec", "y-": "pec", "y+": "pec", "z-": "pec", "z+": "pec"}
    sim = Simulation(grid, Media(grid), boundaries=walls, dtype=np.float64)
    pulse = GaussianPulse(8e9, 30e9)
    for comp, pos in (("Ey", (2.0e-3, 2.5e-3, 5.0e-3)), ("Ez", (5.0e-3, 7.0e-3, 2.5e-3))):
        sim.add_source(DipoleSource(pos, comp, pulse))
    for comp, pos in (("Ey", (0.0, 6.5e-3, 6.0e-3)), ("Ez", (9.0e-3, 3.0e-3, 4.5e-3))):
        sim.add_pickup(FieldPickup(comp, pos), comp)
    sim.run(int(np.ceil(pulse.t_end / sim.dt)) + 4000, progress=False)
    rec = sim.records()
    after = rec["time"] > pulse.t_end
    poles = ringdown_poles(rec["Ey"][after] + rec["Ez"][after], sim.dt, 10e9, 26e9)
    found = np.array([p.frequency_hz for p in poles])
    a, b, d = SIDES
    checked = 0
    for m, n, l in itertools.product(range(3), range(3), range(3)):
        if n == 0 and l == 0:
            continue  # no field: E tangential to y and z walls needs n or l > 0
        k = np.array([(m + 0.5) * np.pi / a, n * np.pi / b, l * np.pi / d])
        f_disc = _discrete(k, sim.dt, 1.0)
        if 12e9 <= f_disc <= 25e9:
            f = found[np.argmin(np.abs(found - f_disc))]
            assert abs(f - f_disc) / f_disc <= 1e-5, ((m, n, l), f, f_disc)
            checked += 1
    assert checked >= 4
