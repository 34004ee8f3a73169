"""Ring the model: drive the loop probe, record the pickups until the ring-down is done.

Record length (rules the report cites):

- the source is a Gaussian-modulated sine covering [f_min, f_max]; the ring-down
  starts at ``source_end_time``, when its envelope is below 1e-8 of its peak;
- the run stops when the field energy outside the absorbing layer has fallen to
  :data:`DECAY_LEVEL` (1e-8, -80 dB) of its peak after the source, but not before
  :data:`MIN_PERIODS` periods of f_min of ring-down;
- or, at the latest, after one amplitude e-folding time ``q_max / (pi f_min)`` of
  the sharpest mode the user asks to resolve at the lowest frequency: filter
  diagonalization recovers such a Q from a record of that length (its resolution
  is far finer than the Fourier limit ``1/T``; Mandelshtam & Taylor 1997).

A long run writes a checkpoint (HDF5 fields and records, plus a JSON note with the
case digest) every ``checkpoint_every_s`` seconds into the output directory;
:func:`ring` with ``resume=True`` continues from it.
"""

from __future__ import annotations

import json
import math
import os
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ringprint import fdtd
from ringprint.analysis import symmetry
from ringprint.analysis.outputs import atomic_write_text
from ringprint.errors import RingprintError

DECAY_LEVEL = 1e-8
MIN_PERIODS = 20
CHUNK_STEPS = 256
CHECKPOINT_NAME = "checkpoint.h5"
CHECKPOINT_NOTE = "checkpoint.json"


@dataclass
class Ringdown:
    """What the run recorded: pickup records (one row per pickup), their names, the
    time step, the first sample after the source and why the run stopped."""

    signals: np.ndarray
    names: list
    dt: float
    start_index: int
    steps: int
    stop_reason: str
    wall_time_s: float
    energy: np.ndarray
    probe_signal: int


def source_pulse(case) -> fdtd.GaussianPulse:
    """The probe's drive: a Gaussian-modulated sine covering [f_min, f_max]."""
    return fdtd.GaussianPulse(case.spectrum.f_min_hz, case.spectrum.f_max_hz)


def ringdown_time(case) -> float:
    """Longest ring-down recorded: one amplitude e-folding ``q_max / (pi f_min)`` (s)."""
    return case.analysis.q_max / (math.pi * case.spectrum.f_min_hz)


def record_limit(case, dt: float, source_end: float) -> int:
    """Largest number of steps the run may take (source plus one e-folding of q_max)."""
    return int(math.ceil((source_end + ringdown_time(case)) / dt))


def _pickup_name(k: int, comp: str) -> str:
    return f"p{k:02d}_{comp}"


def build_simulation(model, probe, pickups, dtype=np.float32):
    """The solver set up for the case: media, CPML, the loop probe and the pickups."""
    case = model.case
    model = symmetry.solver_model(model)   # the solved part and its walls under mirror planes
    grid = model.fdtd_grid()
    sim = fdtd.Simulation(grid, model.media(grid), boundaries=model.boundaries,
                          cpml_cells=model.grid.boundary_cells, dtype=dtype,
                          f_max=case.spectrum.f_max_hz)
    source = fdtd.LoopSource(center=probe.center, normal=probe.normal, waveform=source_pulse(case),
                             size_cells=probe.size_cells)
    sim.add_source(source)
    sim.add_pickup(fdtd.LoopEmfPickup.of(source), name="probe_emf")
    for k, (comp, point) in enumerate(pickups, start=1):
        sim.add_pickup(fdtd.FieldPickup(comp, point), name=_pickup_name(k, comp))
    return sim


def _paths(out_dir):
    out = Path(out_dir)
    return out / CHECKPOINT_NAME, out / CHECKPOINT_NOTE


def _save(sim, out_dir, digest: str, limit: int):
    h5, note = _paths(out_dir)
    sim.save_checkpoint(h5)
    atomic_write_text(note, json.dumps({"digest": digest, "step": sim.step_index, "limit": limit}))


def load_checkpoint(out_dir, digest: str):
    """The simulation saved in ``out_dir``, if it belongs to the case with ``digest``."""
    h5, note = _paths(out_dir)
    if not (h5.is_file() and note.is_file()):
        raise RingprintError(f"{out_dir}: no checkpoint to resume ({CHECKPOINT_NAME} and "
                             f"{CHECKPOINT_NOTE} missing); run without --resume")
    try:
        meta = json.loads(note.read_text())
    except (OSError, ValueError) as exc:
        raise RingprintError(f"{note}: unreadable checkpoint note ({exc}); run without --resume") from None
    if meta.get("digest") != digest:
        raise RingprintError(f"{out_dir}: the checkpoint belongs to another case (or the case or its "
                             "files changed since); run without --resume into a fresh directory")
    return fdtd.Simulation.load_checkpoint(h5)


def ring(model, sim, out_dir=None, digest: str = "", checkpoint_every_s: float = 300.0,
         progress=None, halt_after_steps: int | None = None) -> Ringdown:
    """Advance ``sim`` until the ring-down is complete (rules in the module docstring).

    Parameters
    ----------
    model : Model
    sim : fdtd.Simulation
        From :func:`build_simulation`, or resumed from a checkpoint.
    out_dir : path or None
        Where checkpoints go (none when None).
    digest : str
        The case digest stored with each checkpoint.
    checkpoint_every_s : float
        Wall-clock seconds between checkpoints.
    progress : callable or None
        ``progress(step, limit)`` after every chunk of steps.
    halt_after_steps : int or None
        Stop (after writing a checkpoint) once this many steps are done, as if the
        run had been killed; for tests of ``--resume``.
    """
    case = model.case
    dt = sim.dt
    t_src = sim.source_end_time
    start = int(math.ceil(t_src / dt))
    limit = record_limit(case, dt, t_src)
    min_steps = start + int(math.ceil(MIN_PERIODS / (case.spectrum.f_min_hz * dt)))
    t0 = time.perf_counter()
    last_save = t0
    reason = "time limit (q_max)"
    while sim.step_index < limit:
        n = min(CHUNK_STEPS, limit - sim.step_index)
        sim.run(n, progress=False)
        if progress is not None:
            progress(sim.step_index, limit)
        if sim.step_index >= min_steps:
            t_energy, energy = sim.energy_record()
            after = energy[t_energy >= start * dt]
            peak = after.max() if after.size else 0.0
            if peak > 0 and after[-1] <= DECAY_LEVEL * peak:
                reason = f"decayed to {DECAY_LEVEL:g} of the peak energy"
                break
        now = time.perf_counter()
        halt = halt_after_steps is not None and sim.step_index >= halt_after_steps
        if out_dir is not None and (now - last_save >= checkpoint_every_s or halt):
            _save(sim, out_dir, digest, limit)
            last_save = now
        if halt:
            raise RunHalted(sim.step_index)
    rec = sim.records()
    names = list(sim.pickups)
    signals = np.stack([rec[name] for name in names])
    return Ringdown(signals, names, dt, start, sim.step_index, reason,
                    time.perf_counter() - t0, rec["energy"], names.index("probe_emf"))


def remove_checkpoint(out_dir) -> None:
    """Delete a finished run's checkpoint files."""
    for p in _paths(out_dir):
        try:
            os.remove(p)
        except FileNotFoundError:
            pass


class RunHalted(RingprintError):
    """The run stopped on purpose part way (``halt_after_steps``); a checkpoint exists."""

    def __init__(self, step: int):
        super().__init__(f"run halted after step {step}; continue it with --resume")
        self.step = step
