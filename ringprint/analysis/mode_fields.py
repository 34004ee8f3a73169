"""The field of every mode: a second run of the ring-down with running DFTs.

Choice (the issue leaves it open): the mode frequencies are known only after the
first run has been inverted, so the fields come from a **second pass**. The solver
continues from its own state at the end of the source, as the first run saved it
(the update is deterministic, so the fields are the same as in the first run); from
there on, every ``every`` steps (about
``SAMPLES_PER_PERIOD`` samples per period at f_max) it adds E and H on the lattice of
:mod:`ringprint.analysis.lattice` into one running DFT per mode, at the mode's
frequency. :func:`ringprint.analysis.separation.separate` then removes the leakage
between modes of known complex frequency exactly, and each mode's phasors are
normalized to 1 J of stored energy (each node weighted by the volume it stands
for, so a graded lattice is integrated correctly) with the phase of ``sum(E . E)``
set to zero (:mod:`ringprint.analysis.fieldset`). The pass restarts from the
solver state the first pass saved at the start of the ring-down and stops once the
separated fields have converged (:mod:`ringprint.analysis.field_window` states the
rule); without that snapshot (a run resumed from a checkpoint written before it
existed) it starts again from step 0, and with ``stop_when_converged = false`` it
runs the first pass's full length. Its cost is that of the steps it takes plus the
DFT sums (their share grows with the number of modes and the lattice).
A run killed during this pass resumes from the first pass's last checkpoint and
repeats the pass.
"""

from __future__ import annotations

import logging
import math
from pathlib import Path

import numpy as np

from ringprint import fdtd
from ringprint.analysis import lattice as lt
from ringprint.analysis.fieldset import FieldSet, ModeField, stored_energy
from ringprint.analysis.field_window import run_window
from ringprint.analysis.ringdown import build_simulation
from ringprint.analysis.separation import separate

log = logging.getLogger("ringprint.run")

#: DFT samples per period at f_max (above Nyquist, so no in-band mode aliases onto another).
SAMPLES_PER_PERIOD = 3.0
#: Condition number of the mode separation above which the run notes that modes mix.
MIXING_CONDITION = 1e3


def sample_every(dt: float, f_max: float) -> int:
    """Steps between DFT samples."""
    return max(1, int(1.0 / (SAMPLES_PER_PERIOD * f_max * dt)))


def normalize(e: np.ndarray, h: np.ndarray, eps_r: np.ndarray, volumes):
    """Scale and turn ``(E, H)`` to 1 J of stored energy and a real ``sum(E . E)``.

    Stored energy ``W = 1/4 sum(eps0 eps_r |E|^2 + mu0 |H|^2) dV`` (time average),
    ``dV`` the node volumes (an array shaped like ``eps_r``, or one number on a
    uniform lattice; :meth:`ringprint.analysis.fieldset.FieldSet.node_volumes`).
    """
    w = stored_energy(eps_r, e, h, volumes)
    if not (w > 0 and np.isfinite(w)):
        return e, h
    turn = np.exp(-0.5j * np.angle(np.sum(e * e)))
    scale = turn / math.sqrt(w)
    return e * scale, h * scale


def loop_side_m(grid, probe) -> float:
    """Side of the probe loop (m) as the solver lays it: the sum of its edge lengths / 4
    (on a graded grid its cells need not all be ``grid.cell`` wide)."""
    edges = fdtd.sources.loop_edges(fdtd.Grid(*grid.axes), probe.center, probe.normal, probe.size_cells)
    return float(sum(np.sum(length) for *_, length in edges)) / 4.0


def compute_fields(model, probe, ring, modes, lat: lt.Lattice, progress=None, notes=None,
                   converge: bool | None = None, record: dict | None = None) -> FieldSet:
    """Run the field pass and return every mode's normalized field on the lattice.

    Parameters
    ----------
    model : Model
    probe : ProbePlacement
        The probe of the first run.
    ring : Ringdown
        The first run (its step count and ring-down start).
    modes : list of dict
        The mode table (``index``, ``frequency_hz``, ``q``, ``decay_rate_per_s``).
    lat : Lattice
        Where the fields are taken (:func:`ringprint.analysis.lattice.plan_lattice`).
    progress : callable or None
        ``progress(step, total)``.
    notes : list or None
        Receives a line when two modes are too close to separate cleanly.
    converge : bool or None
        Stop the pass once the fields have converged; None: as the case's
        ``analysis.stop_when_converged`` says. False: the first pass's full length.
    record : dict or None
        Receives what the pass did (``steps``, ``start_step``, ``stop_reason``,
        ``wall_time_s``, ``checks``).

    References
    ----------
    Harrington, R. F., Time-Harmonic Electromagnetic Fields, 1961 (phasors, stored energy).
    """
    eps_r, sigma, pec = lt.node_media(model, lat)
    masks = lt.part_masks(model, lat)
    axes = [ax[i] for ax, i in zip(model.grid.axes, lat.indices())]
    fs = FieldSet(*axes, eps_r=eps_r, sigma=sigma, pec=pec, parts=masks,
                  conductors=tuple(p.name for p in model.parts if p.is_conductor),
                  decimation=lat.stride, digest=model.case.digest(),
                  probe={"center_m": [float(v) for v in probe.center], "normal": probe.normal,
                         "size_m": loop_side_m(model.grid, probe)})
    if not modes:
        return fs
    f = np.array([m["frequency_hz"] for m in modes])
    omega = 2 * np.pi * f - 1j * np.array([m["decay_rate_per_s"] for m in modes])
    snap = ring.start_snapshot
    sim = fdtd.Simulation.load_checkpoint(snap) if snap and Path(snap).is_file() else None
    if sim is None or sim.step_index != ring.start_index:
        sim = build_simulation(model, probe, [])
    dft = fdtd.NodeDft(f, stride=lat.stride, every=sample_every(sim.dt, model.case.spectrum.f_max_hz),
                       start_step=ring.start_index, box=lat.box())
    sim.add_dft(dft)
    assert dft.counts == lat.counts, (dft.counts, lat.counts)
    if sim.step_index == ring.start_index:
        dft.sample(sim)          # the sample a pass from step 0 takes on reaching the start
    converge = model.case.analysis.stop_when_converged if converge is None else bool(converge)
    done = run_window(sim, dft, ring.start_index, ring.steps, omega, eps_r, fs.node_volumes(),
                      MIXING_CONDITION, converge=converge, f_min=model.case.spectrum.f_min_hz,
                      progress=progress)
    for line in done["checks"]:
        log.info(line)
    log.info("field pass: steps %d to %d, stopped on %s, %.1f s", done["start_step"], done["steps"],
             done["stop_reason"], done["wall_time_s"])
    if record is not None:
        record.update(done)
    sums_e, sums_h = dft.sums()
    del sim
    e, cond = separate(sums_e, dft.times_e, omega, dtype=np.complex64)
    del sums_e
    h, _ = separate(sums_h, dft.times_h, omega, dtype=np.complex64)
    del sums_h, dft
    if notes is not None and cond > MIXING_CONDITION:
        notes.append(f"mode fields: some modes lie too close to tell their fields apart cleanly "
                     f"(condition {cond:.3g}); their field pictures may mix")
    volumes = fs.node_volumes()
    for k, m in enumerate(modes):
        ek, hk = normalize(e[k], h[k], eps_r, volumes)
        fs.modes.append(ModeField(int(m["index"]), float(m["frequency_hz"]), float(m["q"]),
                                  ek.astype(np.complex64), hk.astype(np.complex64)))
    return fs
