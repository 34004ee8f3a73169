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

- or, with ``[analysis] stop_when_converged`` (default), as soon as the mode list
  found from the record so far is stable over two successive checks, which may be
  before the floor of ``MIN_PERIODS`` periods (:mod:`ringprint.analysis.convergence`
  states the rule and its schedule).

A long run writes a checkpoint (HDF5 fields and records, plus a JSON note with the
case digest) every ``checkpoint_every_s`` seconds into the output directory;
:func:`ring` with ``resume=True`` continues from it. On request (``snapshot``) the
run also saves the solver's full state at the first step of the ring-down
(:data:`START_SNAPSHOT` in the output directory, or a temporary file without one):
the field pass restarts from there (:mod:`ringprint.analysis.mode_fields`).
"""

from __future__ import annotations

import json
import math
import os
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ringprint import fdtd
from ringprint.analysis import symmetry
from ringprint.analysis.convergence import Watch, first_check
from ringprint.analysis.outputs import atomic_write_text
from ringprint.errors import RingprintError

DECAY_LEVEL = 1e-8
MIN_PERIODS = 20
CHUNK_STEPS = 256
CHECKPOINT_NAME = "checkpoint.h5"
CHECKPOINT_NOTE = "checkpoint.json"
START_SNAPSHOT = "ringdown_start.h5"


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
    #: Solver state saved at ``start_index`` (a path), or None.
    start_snapshot: str | None = None
    #: One line per convergence check (for the run log).
    checks: tuple = ()


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
         progress=None, halt_after_steps: int | None = None, converge: bool | None = None,
         snapshot: bool = False) -> Ringdown:
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
    converge : bool or None
        Stop once the mode list has converged (:mod:`ringprint.analysis.convergence`);
        None: as the case's ``analysis.stop_when_converged`` says.
    snapshot : bool
        Save the solver state at the first ring-down step (``Ringdown.start_snapshot``;
        a run resumed past that step finds it in ``out_dir`` if an earlier part saved it).

    References
    ----------
    Mandelshtam, V. A. & Taylor, H. S., J. Chem. Phys. 107(17):6756-6769, 1997
    (filter diagonalization, used by the convergence checks).
    """
    case = model.case
    dt = sim.dt
    t_src = sim.source_end_time
    start = int(math.ceil(t_src / dt))
    limit = record_limit(case, dt, t_src)
    min_steps = start + int(math.ceil(MIN_PERIODS / (case.spectrum.f_min_hz * dt)))
    converge = case.analysis.stop_when_converged if converge is None else bool(converge)
    watch = (Watch(start, first_check(case.spectrum.f_min_hz, dt), limit - start, dt,
                   case.spectrum.f_min_hz, case.spectrum.f_max_hz, case.analysis.q_max)
             if converge else None)
    snap = _snapshot_path(out_dir) if snapshot else None
    t0 = time.perf_counter()
    last_save = t0
    reason = "time limit (q_max)"
    while sim.step_index < limit:
        end = min(limit, (sim.step_index // CHUNK_STEPS + 1) * CHUNK_STEPS)
        if snap is not None and sim.step_index < start < end:     # split the chunk at start
            sim.run(start - sim.step_index, progress=False)
        if snap is not None and sim.step_index == start:
            sim.save_checkpoint(snap)
        sim.run(end - sim.step_index, progress=False)
        if progress is not None:
            progress(sim.step_index, limit)
        if sim.step_index >= min_steps:
            t_energy, energy = sim.energy_record()
            after = energy[t_energy >= start * dt]
            peak = after.max() if after.size else 0.0
            if peak > 0 and after[-1] <= DECAY_LEVEL * peak:
                reason = f"decayed to {DECAY_LEVEL:g} of the peak energy"
                break
        if watch is not None and watch.due(sim.step_index):
            stop = watch.check(_record(sim))
            if stop is not None:
                reason = stop
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
    if snap is not None and not snap.is_file():
        snap = None                               # resumed past the start without a snapshot
    return Ringdown(signals, names, dt, start, sim.step_index, reason,
                    time.perf_counter() - t0, rec["energy"], names.index("probe_emf"),
                    start_snapshot=None if snap is None else str(snap),
                    checks=tuple(watch.lines) if watch is not None else ())


def _record(sim) -> np.ndarray:
    """All pickup records so far, one row per pickup (float64)."""
    rec = sim.records()
    return np.stack([rec[name] for name in sim.pickups])


def _snapshot_path(out_dir) -> Path:
    """Where the ring-down start goes: the output directory, or a new temporary file."""
    if out_dir is not None:
        return Path(out_dir) / START_SNAPSHOT
    fd, name = tempfile.mkstemp(prefix="ringprint_start_", suffix=".h5")
    os.close(fd)
    os.remove(name)          # written (atomically) when the run reaches the start
    return Path(name)


def remove_snapshot(ring: Ringdown) -> None:
    """Delete the ring-down start snapshot of ``ring`` (once the field pass is done)."""
    if ring.start_snapshot:
        Path(ring.start_snapshot).unlink(missing_ok=True)


def remove_checkpoint(out_dir) -> None:
    """Delete a finished run's checkpoint files."""
    for p in (*_paths(out_dir), Path(out_dir) / START_SNAPSHOT):
        try:
            os.remove(p)
        except FileNotFoundError:
            pass


class RunHalted(RingprintError):
    """The run stopped on purpose part way (``halt_after_steps``); a checkpoint exists."""

    def __init__(self, step: int):
        super().__init__(f"run halted after step {step}; continue it with --resume")
        self.step = step
