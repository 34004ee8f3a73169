"""Checkpoint round trip: run 2N == run N, save, load, run N (bitwise)."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.fdtd import (
    DipoleSource, FieldPickup, GaussianPulse, Grid, LoopEmfPickup, LoopSource, Media, Simulation)


def _sim(dtype):
    grid = Grid.uniform((26, 24, 28), 1e-3)
    eps = np.ones(grid.component_shape("Ey"))
    eps[12:15, 10:14, 12:16] = 3.0
    sim = Simulation(grid, Media(grid, eps_r=(1.0, eps, 1.0), sigma=0.01),
                     boundaries={"x-": "pmc", "z+": "pec"}, cpml_cells=8, dtype=dtype, energy_every=3)
    pulse = GaussianPulse(5e9, 20e9)
    loop = LoopSource((13e-3, 12e-3, 14e-3), "x", pulse)
    sim.add_source(loop)
    sim.add_source(DipoleSource((3e-3, 11e-3, 12e-3), "Ez", pulse))
    sim.add_pickup(LoopEmfPickup.of(loop), "emf")
    sim.add_pickup(FieldPickup("Hz", (10e-3, 13e-3, 15e-3)), "hz")
    return sim


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_checkpoint_round_trip_is_bitwise(tmp_path, dtype):
    n = 150
    ref = _sim(dtype)
    ref.run(2 * n, progress=False)
    first = _sim(dtype)
    first.run(n, progress=False)
    path = tmp_path / "state.h5"
    first.save_checkpoint(path)
    second = Simulation.load_checkpoint(path)
    assert second.step_index == n and second.dt == ref.dt
    second.run(n, progress=False)
    a, b = ref.records(), second.records()
    assert set(a) == set(b)
    for key in a:
        np.testing.assert_array_equal(a[key], b[key], err_msg=key)
    for c in ("Ex", "Ey", "Ez", "Hx", "Hy", "Hz"):
        np.testing.assert_array_equal(ref.get_field(c), second.get_field(c))
    for p, q in zip(ref.psi_arrays, second.psi_arrays):
        np.testing.assert_array_equal(p, q)
    assert any(np.any(p != 0) for p in ref.psi_arrays)  # the CPML state was really exercised


def test_psi_arrays_live_only_in_the_layers():
    sim = _sim(np.float32)
    n_psi = sum(p.size for p in sim.psi_arrays)
    n_fields = sum(f.size for f in sim.fields.values())
    assert n_psi < n_fields  # the slabs, not the whole domain


def test_load_refuses_other_files(tmp_path):
    with pytest.raises(RingprintError, match="no such file"):
        Simulation.load_checkpoint(tmp_path / "missing.h5")
    bad = tmp_path / "bad.h5"
    bad.write_text("not hdf5")
    with pytest.raises(RingprintError, match="not a readable HDF5"):
        Simulation.load_checkpoint(bad)
