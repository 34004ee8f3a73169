"""Simulation: refusals, stepping, records, energy bookkeeping and the guard."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.fdtd import (
    C0, DipoleSource, FieldPickup, GaussianPulse, Grid, LoopEmfPickup, LoopSource, Media, Simulation)

D = 1e-3
PULSE = GaussianPulse(5e9, 25e9)


def _cavity(dtype=np.float64, energy_every=1, eps_r=1.0, sigma=0.0):
    grid = Grid.uniform((12, 10, 8), D)
    sim = Simulation(grid, Media(grid, eps_r=eps_r, sigma=sigma), boundaries="pec", dtype=dtype,
                     energy_every=energy_every)
    sim.add_source(DipoleSource((3.5e-3, 3e-3, 2e-3), "Ex", PULSE))
    sim.add_source(LoopSource((7e-3, 5e-3, 4e-3), "y", PULSE, size_cells=2))
    sim.add_pickup(FieldPickup("Ez", (9e-3, 3e-3, 4.5e-3)), "ez")
    sim.add_pickup(FieldPickup("Hy", (4.2e-3, 6.1e-3, 3.3e-3), "trilinear"), "hy")
    sim.add_pickup(LoopEmfPickup((7e-3, 5e-3, 4e-3), "y", 2), "emf")
    return sim


def _open(**kw):
    grid = Grid.uniform((30, 30, 30), D)
    return Simulation(grid, Media(grid), **kw)


# ------------------------------------------------------------------ refusals
def test_f_max_too_high_for_the_grid():
    grid = Grid.uniform((30, 30, 30), D)
    media = Media(grid, eps_r=4.0)
    ok = C0 / (10 * D * 2.0)  # 10 cells per wavelength in eps_r = 4 (common practice)
    Simulation(grid, media, f_max=0.99 * ok)
    with pytest.raises(RingprintError, match=r"f_max = 1\.6\d* ?e\+10 Hz is too high") as info:
        Simulation(grid, media, f_max=1.1 * ok)
    assert "eps_r 4" in str(info.value)


def test_courant_factor_refused_by_the_simulation():
    with pytest.raises(RingprintError, match="courant factor 1.0"):
        _open(courant=1.0)


@pytest.mark.parametrize("pos, word", [((40e-3, 15e-3, 15e-3), "outside the grid"),
                                       ((15e-3, 5e-3, 15e-3), "CPML layer on face y-"),
                                       ((15e-3, 15e-3, 25e-3), "CPML layer on face z+")])
def test_source_outside_or_in_cpml(pos, word):
    sim = _open()
    with pytest.raises(RingprintError, match=word) as info:
        sim.add_source(DipoleSource(pos, "Ez", PULSE))
    assert "DipoleSource at (" in str(info.value)


def test_loop_reaching_into_the_cpml():
    sim = _open()
    with pytest.raises(RingprintError, match="CPML"):
        sim.add_source(LoopSource((11e-3, 15e-3, 15e-3), "z", PULSE, size_cells=4))


def test_pickup_in_cpml_and_source_in_pec():
    sim = _open()
    with pytest.raises(RingprintError, match="FieldPickup 'p'"):
        sim.add_pickup(FieldPickup("Hx", (2e-3, 15e-3, 15e-3)), "p")
    grid = Grid.uniform((30, 30, 30), D)
    pec = np.zeros(grid.component_shape("Ez"), bool)
    pec[15, 15, :] = True
    sim = Simulation(grid, Media(grid, pec=(False, False, pec)))
    with pytest.raises(RingprintError, match="inside a PEC conductor"):
        sim.add_source(DipoleSource((15e-3, 15e-3, 15.5e-3), "Ez", PULSE))


def test_bad_boundaries_and_thick_layers():
    with pytest.raises(RingprintError, match="x0"):
        _open(boundaries={"x0": "pec"})
    with pytest.raises(RingprintError, match="'absorb'"):
        _open(boundaries="absorb")
    with pytest.raises(RingprintError, match="too few"):
        _open(cpml_cells=15)


# ------------------------------------------------------------------ stepping
def test_run_in_pieces_equals_one_run():
    a, b = _cavity(), _cavity()
    a.run(300, progress=False)
    b.run(120, progress=False)
    b.run(180, progress=False)
    ra, rb = a.records(), b.records()
    for key in ("ez", "hy", "emf", "energy", "time"):
        assert np.array_equal(ra[key], rb[key])
    assert a.step_index == b.step_index == 300 and a.time == pytest.approx(300 * a.dt)
    assert ra["ez"].dtype == np.float64 and ra["ez"].size == 300
    assert np.array_equal(a.get_field("Hz"), b.get_field("Hz"))


def test_energy_conserved_in_lossless_pec_cavity():
    """Half-step energy (eps E^n.E^n + mu0 H^(n-1/2).H^(n+1/2))/2 is an exact invariant of
    the Yee scheme in a closed lossless cavity (Taflove & Hagness 2005): after the sources
    end it stays constant, up to round-off and the work of the pulse tail (its envelope
    is 1e-8 of the peak at t_end; measured drift 2e-9)."""
    sim = _cavity()
    sim.run(int(PULSE.t_end / sim.dt) + 2000, progress=False)
    rec = sim.records()
    after = rec["energy"][rec["energy_time"] > PULSE.t_end]
    assert after.max() > 0
    assert (after.max() - after.min()) / after.max() < 1e-7
    # float32 fields: bounded drift
    s32 = _cavity(np.float32)
    s32.run(int(PULSE.t_end / s32.dt) + 2000, progress=False)
    r32 = s32.records()
    e32 = r32["energy"][r32["energy_time"] > PULSE.t_end]
    assert (e32.max() - e32.min()) / e32.max() < 1e-4


def test_float32_agrees_with_float64():
    a, b = _cavity(np.float64), _cavity(np.float32)
    a.run(800, progress=False)
    b.run(800, progress=False)
    for key in ("ez", "hy", "emf"):
        x, y = a.records()[key], b.records()[key]
        assert np.abs(x - y).max() < 1e-4 * np.abs(x).max(), key


def test_lossy_medium_dissipates():
    sim = _cavity(eps_r=2.0, sigma=0.5)
    sim.run(int(PULSE.t_end / sim.dt) + 600, progress=False)
    e = sim.records()["energy"]
    assert e[-1] < 1e-3 * e.max()


def test_guard_stops_non_finite_fields():
    sim = _cavity()
    sim.run(10, progress=False)
    sim.fields["Ey"][5, 5, 5] = np.nan
    with pytest.raises(RingprintError, match="non-finite.*Courant factor"):
        sim.run(10, progress=False)


def test_guard_stops_growing_energy():
    sim = _cavity()
    sim.run(int(PULSE.t_end / sim.dt) + 10, progress=False)
    sim._ca[1] = 1.01  # an unphysical gain: the energy must not be allowed to grow
    with pytest.raises(RingprintError, match="energy grew"):
        sim.run(500, progress=False)


def test_energy_sampling_interval():
    sim = _cavity(energy_every=7)
    sim.run(50, progress=False)
    rec = sim.records()
    assert np.array_equal(rec["energy_time"], np.arange(0, 50, 7) * sim.dt)
    assert np.all(np.isfinite(rec["energy"]))
    with pytest.raises(RingprintError, match="energy_every"):
        _open(energy_every=0)


def test_default_energy_sampling_keeps_each_runs_last_step():
    """By default the energy is taken every 16 steps and on the last step of each run
    call (a caller running in chunks, like the ring-down, sees each chunk's end); the
    sampled values are the same numbers a per-step record holds at those steps."""
    every = _cavity(energy_every=1)
    every.run(64, progress=False)
    grid = Grid.uniform((12, 10, 8), D)
    sparse = Simulation(grid, Media(grid), boundaries="pec", dtype=np.float64)
    for s in every.sources:
        sparse.add_source(s)
    sparse.run(40, progress=False)
    sparse.run(24, progress=False)
    t, e = sparse.energy_record()
    steps = np.array([0, 16, 32, 39, 48, 63])
    np.testing.assert_array_equal(t, steps * sparse.dt)
    np.testing.assert_array_equal(e, every.records()["energy"][steps])


def test_progress_bar_can_be_forced(capsys):
    sim = _cavity()
    sim.run(40, progress=True)
    assert "step" in capsys.readouterr().err
    sim.run(5, progress=False)
    assert capsys.readouterr().err == ""


def test_fused_step_does_not_depend_on_the_runs_of_planes():
    """The fused step updates E on plane i right after H on plane i and leaves the
    first plane of each run of planes (one run per thread) until every run is done.
    The Yee update itself (Yee 1966) does not depend on that order, so any cut into
    runs must give the same fields and CPML state bit for bit as a single run."""
    from ringprint.fdtd import _kernels

    grid = Grid.uniform((21, 9, 12), D)
    eps = [np.ones(grid.component_shape(c)) for c in ("Ex", "Ey", "Ez")]
    pec = [np.zeros(grid.component_shape(c), bool) for c in ("Ex", "Ey", "Ez")]
    for e, p in zip(eps, pec):
        e[6:12, 2:6, 3:8] = 3.0  # rows mixed along k, and uniform ones
        p[13:15, 3:5, 2:9] = True
    media = Media(grid, eps_r=tuple(eps), pec=tuple(pec), sigma=0.02)
    bounds = {"x-": "cpml", "x+": "cpml", "y-": "pmc", "y+": "cpml", "z-": "cpml", "z+": "pec"}
    rng = np.random.default_rng(7)
    start = {c: rng.standard_normal(grid.component_shape(c))
             for c in ("Ex", "Ey", "Ez", "Hx", "Hy", "Hz")}
    results = []
    for nchunk in (1, 2, 3, 7):
        sim = Simulation(grid, media, boundaries=bounds, cpml_cells=3)
        for c, v in start.items():
            sim.fields[c][...] = v
        sums = [_kernels.step(nchunk, *sim._sweep_args(), True) for _ in range(12)]
        results.append((sim, np.array(sums)))
    ref, ref_sums = results[0]
    assert any(np.any(p != 0) for p in ref.psi_arrays)
    for sim, sums in results[1:]:
        for c in start:
            np.testing.assert_array_equal(sim.fields[c], ref.fields[c], err_msg=c)
        for p, q in zip(sim.psi_arrays, ref.psi_arrays):
            np.testing.assert_array_equal(p, q)
        np.testing.assert_allclose(sums, ref_sums, rtol=1e-12)  # only the summation order differs
