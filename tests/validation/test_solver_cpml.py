"""CPML reflection against a reference run in a domain so large that nothing
returns from its boundary within the recorded window.

Method: Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005,
ch. 7 (reflection of a PML measured as the difference between a test domain and
a large reference domain, normalized to the reference field, per frequency).
The CPML itself: Roden, J. A. & Gedney, S. D., Microw. Opt. Technol. Lett.
27(5):334-339, 2000. The -60 dB requirement is the project's target for a 10-cell
layer (Taflove & Hagness report reflections of -60 to -100 dB for well-graded
10-cell CPMLs, from memory).

Thin domain: one thick cell between two PEC plates along the thin axis makes the
problem two-dimensional (field uniform across the plates), which keeps the
reference domain cheap; the test runs once with the plates normal to x (CPML on
the y and z faces) and once normal to y (CPML on x and z).
"""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.fdtd import C0, DipoleSource, FieldPickup, GaussianPulse, Grid, Media, Simulation

D = 1e-3           # in-plane cell (m)
THICK = 10e-3      # the one cell across the plates
N_TEST = 50        # test domain: 50 x 50 cells, 10 of them CPML on each side
PAD = 105          # reference domain: 170 extra cells on each side
BAND = (5e9, 25e9)  # 12 to 60 cells per wavelength
N_STEPS = 320
# in-plane positions (m): source at the centre, pickups 2 cells in front of the layer
SOURCE = (25.3e-3, 25.3e-3)
PICKUPS = {"normal": (38e-3, 25.3e-3), "oblique_30": (38e-3, 33.0e-3),
           "oblique_45": (38e-3, 38e-3)}


def _place(thin, inplane, across):
    """3-D point from two in-plane coordinates and the across-plates one."""
    if thin == "y":
        return (inplane[0], across, inplane[1])
    return (across, inplane[0], inplane[1])


def _run(thin, pad):
    n = N_TEST + 2 * pad
    plane = -pad * D + D * np.arange(n + 1)
    across = np.array([0.0, THICK])
    axes = (plane, across, plane) if thin == "y" else (across, plane, plane)
    grid = Grid(*axes)
    walls = {thin + "-": "pec", thin + "+": "pec"}
    sim = Simulation(grid, Media(grid), boundaries=walls, cpml_cells=10, dtype=np.float64)
    comp = "E" + thin
    sim.add_source(DipoleSource(_place(thin, SOURCE, THICK / 2), comp, GaussianPulse(*BAND)))
    for name, pos in PICKUPS.items():
        sim.add_pickup(FieldPickup(comp, _place(thin, pos, THICK / 2)), name)
    sim.run(N_STEPS, progress=False)
    return sim


@pytest.mark.parametrize("thin", ["x", "y"])
def test_cpml_reflection_below_minus_60_db(thin):
    test, ref = _run(thin, 0), _run(thin, PAD)
    assert abs(test.dt - ref.dt) < 1e-12 * ref.dt
    # nothing returns from the reference boundary within the window (light-cone check)
    # (source and pickups are >= 12 mm inside the test domain's outer boundary, so any
    # path via the reference boundary is longer than 2 PAD D + 2 * 12 mm)
    reach = C0 * N_STEPS * ref.dt
    assert reach < 2 * PAD * D + 2 * 12e-3
    rt, rr = test.records(), ref.records()
    f = np.fft.rfftfreq(8 * N_STEPS, test.dt)
    band = (f >= BAND[0]) & (f <= BAND[1])
    for name in PICKUPS:
        inc = np.abs(np.fft.rfft(rr[name], 8 * N_STEPS))[band]
        err = np.abs(np.fft.rfft(rt[name] - rr[name], 8 * N_STEPS))[band]
        refl_db = 20 * np.log10(err.max() / inc.max()), 20 * np.log10(np.max(err / inc))
        # per-frequency ratio across the band
        assert refl_db[1] < -60.0, (thin, name, refl_db)
        # The measurement is real: the truncated domain differs from the reference by
        # far more than float64 rounding (~-300 dB), so the layer is really there and the
        # check above is not passed by two identical runs. Measured -75 to -86 dB
        # (peak over peak); -140 dB leaves room for a much better layer.
        assert refl_db[0] > -140.0, (thin, name, refl_db)
