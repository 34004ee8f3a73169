"""``ringprint run``: one case from files to resonance list, hazards and report.

Stages: read and validate the case; mesh it (:mod:`ringprint.analysis.model`);
place the probe and pickups (:mod:`~ringprint.analysis.placement`); ring it
(:mod:`~ringprint.analysis.ringdown`); invert the ring-down and judge the modes
(:mod:`~ringprint.analysis.modes`); on request run the case again on one or two
coarser grids and give each mode its grid uncertainty, else the stated bound
(:mod:`~ringprint.analysis.uncertainty`); write the results
(:mod:`~ringprint.analysis.report`). A killed run continues with ``resume=True`` (the
coarser runs are short and are run again from the start).
"""

from __future__ import annotations

import dataclasses
import logging
import sys
import time
from pathlib import Path

import numpy as np

from ringprint import __version__
from ringprint.analysis import placement, ringdown, symmetry_run
from ringprint.analysis.bounds import enclosing_sphere
from ringprint.analysis.case import load_case
from ringprint.analysis.conductor_loss import mark_without_losses, no_fields_note
from ringprint.analysis.field_stage import check_budget, field_section, remove_stale, run_field_stage
from ringprint.analysis.grid_study import CoarseRun, annotate
from ringprint.analysis.model import build_model
from ringprint.analysis.modes import find_resonances
from ringprint.analysis.outputs import RunLogHandler, atomic_write_text, prepare_output_dir
from ringprint.analysis.report import format_summary_table, write_results
from ringprint.analysis.report_s11 import probe_section, run_probe_port
from ringprint.analysis.uncertainty import GRID_RATIO, check_grid_study
from ringprint.errors import RingprintError

log = logging.getLogger("ringprint.run")

#: Version of the results directory layout (2: mode fields, participation, touch maps).
RESULTS_LAYOUT = 2


def default_out_dir(case_path) -> Path:
    p = Path(case_path)
    return p.with_name(p.stem + "_run")


class _Progress:
    """One bar across meshing (0-10 %), stepping (10-90 %) and analysis (90-100 %)."""

    def __init__(self, show: bool):
        self.bar = None
        if show:
            from tqdm import tqdm
            self.bar = tqdm(total=1000, unit="‰", bar_format="{desc:<10} {percentage:3.0f}%|{bar}| "
                                                              "[{elapsed}<{remaining}]", file=sys.stderr)

    def at(self, fraction: float, what: str):
        if self.bar is not None:
            self.bar.set_description_str(what, refresh=False)
            self.bar.update(max(0, int(1000 * fraction) - self.bar.n))

    def close(self):
        if self.bar is not None:
            self.bar.close()


def _case_summary(case, model) -> dict:
    parts = []
    for p in model.parts:
        eps_r, sigma, pec = case.medium(p.part)
        m = p.part.material
        parts.append({"name": p.name, "material": p.part.material_name or m.name,
                      "eps_r": eps_r, "sigma_s_per_m": m.sigma if m.is_conductor else sigma,
                      "loss_tangent": None if m.is_conductor else m.loss_tangent,
                      "conductor": bool(m.is_conductor), "perfect_conductor": bool(pec),
                      "kind": ", ".join(sorted({s.kind for s in p.surfaces})),
                      "triangles": int(sum(s.n_triangles for s in p.surfaces)),
                      "volume_m3": float(sum(s.volume for s in p.surfaces)),
                      "eps_r": None if case.medium(p.part)[2] else float(case.medium(p.part)[0]),
                      "thinner_than_a_cell": bool(p.thin)})
    stem = case.source.stem
    name = f"{case.source.parent.name}/{stem}" if stem == "case" else stem  # "tag/case", not "case"
    return {"name": name, "title": case.title, "file": str(case.source), "units": case.units,
            "digest": case.digest(), "parts": parts,
            "spectrum": {"f_min_hz": case.spectrum.f_min_hz, "f_max_hz": case.spectrum.f_max_hz,
                         "loss_at_hz": case.spectrum.loss_at_hz}}


def _grid_summary(model) -> dict:
    g = model.grid
    return {"nodes": list(g.shape), "cells": int(np.prod(np.subtract(g.shape, 1))),
            "step_min_m": float(min(np.diff(a).min() for a in g.axes)),
            "step_max_m": float(max(np.diff(a).max() for a in g.axes)),
            "cpml_cells": int(g.boundary_cells), "padding_m": float(g.padding),
            "origin_m": [float(g.x[0]), float(g.y[0]), float(g.z[0])]}


def _field_pass_facts(done: dict) -> dict:
    """modes.json ``run`` entries of the field pass (none without one): the step it began
    at, the ring-down steps it took, why it stopped and its wall time."""
    if not done:
        return {}
    return {"field_pass_start_step": int(done["start_step"]),
            "field_pass_steps": int(done["steps"] - done["start_step"]),
            "field_pass_stop_reason": done["stop_reason"],
            "field_pass_time_s": float(done["wall_time_s"])}


def coarse_run(case, level: int, allow_memory: bool = False) -> CoarseRun:
    """The case run on a grid ``GRID_RATIO ** level`` times coarser (no checkpoints, no
    fields): the modes the grid study compares with the main run's."""
    cells = case.grid.cells_per_wavelength / GRID_RATIO ** level
    coarse = dataclasses.replace(case, grid=dataclasses.replace(case.grid, cells_per_wavelength=cells))
    model = build_model(coarse, allow_memory=allow_memory)
    probe = placement.place_probe(model)
    ring = ringdown.ring(model, ringdown.build_simulation(model, probe, placement.pickup_points(model)))
    runs = [(model.walls, ring)] + symmetry_run.other_runs(model, probe)
    res = [r for _walls, each in runs for r in find_resonances(each, case.spectrum.f_min_hz,
                                                                case.spectrum.f_max_hz)[0]]
    res.sort(key=lambda r: r.frequency_hz)
    log.info("grid check: cells per wavelength %.4g, cell %.4g m, %d steps, %d modes, %.1f s",
             cells, model.grid.cell, ring.steps, len(res), ring.wall_time_s)
    return CoarseRun(cells, float(model.grid.cell), np.array([r.frequency_hz for r in res], float),
                     np.array([r.q for r in res], float), np.array([r.error for r in res], float),
                     int(ring.steps))


def run_case(case_path, out_dir=None, resume: bool = False, progress: bool | None = None,
             checkpoint_every_s: float = 300.0, allow_memory: bool = False,
             halt_after_steps: int | None = None, echo=print, fields: bool | None = None,
             grid_check: int | None = None, stop_when_converged: bool | None = None) -> dict:
    """Run one case end to end and write its results; returns the modes.json summary.

    Parameters
    ----------
    case_path : path
        The case file.
    out_dir : path or None
        Results directory (default ``<case stem>_run`` beside the case file).
    resume : bool
        Continue from the checkpoint in ``out_dir`` (same case digest required).
    progress : bool or None
        Progress bar on stderr; None: only on a terminal.
    checkpoint_every_s : float
        Seconds between checkpoints of a long run.
    allow_memory : bool
        Run even when the memory estimate exceeds what is available.
    halt_after_steps : int or None
        Stop after this many steps, leaving a checkpoint (tests of ``resume``).
    echo : callable
        Where the final summary table goes (None: nowhere).
    fields : bool or None
        Compute the mode fields (second pass, participation, touch maps, fields.h5,
        mode_NN.vti); None: as the case's ``output.fields`` says.
    grid_check : int or None
        Grids of the grid study (0: none, 2 or 3); None: as the case's
        ``analysis.grid_check`` says.
    stop_when_converged : bool or None
        End the ring-down and the field pass once their results are stable; None: as
        the case's ``analysis.stop_when_converged`` says.
    """
    t_start = time.perf_counter()
    case = load_case(case_path)
    if stop_when_converged is not None:
        case = dataclasses.replace(case, analysis=dataclasses.replace(
            case.analysis, stop_when_converged=bool(stop_when_converged)))
    grids = case.analysis.grid_check if grid_check is None else int(grid_check)
    problem = check_grid_study(case.grid.cells_per_wavelength, grids)
    if problem:
        raise RingprintError(f"{case.source}: {problem}")
    out = Path(out_dir if out_dir is not None else default_out_dir(case_path))
    digest = case.digest()
    fields = case.output.fields if fields is None else bool(fields)
    sim = ringdown.load_checkpoint(out, digest) if resume else None  # refuse before creating out
    out = prepare_output_dir(out)
    handler = RunLogHandler(out)
    log.addHandler(handler)
    log.setLevel(logging.INFO)
    bar = _Progress(sys.stderr.isatty() if progress is None else progress)
    try:
        log.info("ringprint %s, case %s (digest %s)", __version__, case.source, digest[:16])
        for note in case.notes:
            log.warning(note)
        bar.at(0.0, "meshing")
        model = build_model(case, allow_memory=allow_memory,
                            progress=lambda d, n, what: bar.at(0.1 * d / n, "meshing"))
        for note in model.warnings:
            log.warning(note)
        if fields:
            check_budget(model, case.output.field_memory_bytes)
        log.info("grid %s nodes, cell %.4g m", model.grid.shape, model.grid.cell)
        if sim is None:
            probe = placement.place_probe(model)
            pickups = placement.pickup_points(model)
            sim = ringdown.build_simulation(model, probe, pickups)
        else:
            src = sim.sources[0]
            probe = placement.ProbePlacement(tuple(src.center), src.normal, src.size_cells, "checkpoint")
            log.info("resumed at step %d", sim.step_index)
        log.info("probe at %s m, normal %s, %d cell(s) (%s); %d pickups", probe.center, probe.normal,
                 probe.size_cells, probe.chosen, len(sim.pickups))
        ring = ringdown.ring(model, sim, out, digest, checkpoint_every_s,
                             progress=lambda s, n: bar.at(0.1 + (0.4 if fields else 0.8) * s / n,
                                                          "stepping"),
                             halt_after_steps=halt_after_steps, snapshot=fields)
        for line in ring.checks:
            log.info(line)
        log.info("%d steps, dt %.4g s, stopped on %s, %.1f s", ring.steps, ring.dt, ring.stop_reason,
                 ring.wall_time_s)
        bar.at(0.9, "analysis")
        runs = [(model.walls, ring)] + symmetry_run.other_runs(model, probe, snapshot=fields)
        _centre, radius = enclosing_sphere(model.vertices())    # the whole assembly's
        bands = list(case.bands)
        modes, hazards, res = symmetry_run.merged_modes(runs, case.spectrum.f_min_hz, case.spectrum.f_max_hz,
                                                        radius, bands, case.analysis.detuning_margin)
        notes = list(case.notes) + list(model.warnings)
        coarse = []
        for level in range(1, grids if modes else 1):       # nothing to compare without modes
            bar.at(0.9, "grid check")
            coarse.append(coarse_run(case, level, allow_memory))
        uncertainty = annotate(modes, model, ring.dt, coarse)
        if uncertainty["grid_study"]:
            notes += [f"mode {u['mode']}: {u['reason']}; its uncertainty is the stated bound"
                      for u in uncertainty["grid_study"]["unmatched"]]
        fs = None
        remove_stale(out)
        mark_without_losses(modes)
        field_pass = {}
        if fields:
            fs = run_field_stage(model, probe, runs, modes, hazards, out, notes,
                                 progress=lambda s, n: bar.at(0.5 + 0.4 * s / n, "fields"),
                                 record=field_pass)
        for _walls, each in runs:
            ringdown.remove_snapshot(each)
        notes += no_fields_note(model, fs)
        port = run_probe_port(ring, ringdown.source_pulse(case), res, case, modes, out, bands, notes)
        notes += [f"mode {m['index']}: Q {m['q_solver']:.3g} (ring-down) is below the Chu bound "
                  f"{m['q_chu']:.3g}; "
                  "treat it as suspect" for m in modes if m["below_chu"] and m["chu_applies"]]
        summary = {
            "results_layout": RESULTS_LAYOUT,
            "case": _case_summary(case, model),
            "grid": _grid_summary(model),
            "modes": modes,
            "hazards": hazards,
            "chu_sphere": {"radius_m": float(radius)},
            "symmetry": symmetry_run.summary_block(model, runs),
            "uncertainty": uncertainty,
            "run": {"steps": int(ring.steps), "dt_s": float(ring.dt),
                    "wall_time_s": float(time.perf_counter() - t_start),
                    "stepping_time_s": float(ring.wall_time_s),
                    "memory_bytes": int(model.memory["total"]), "stop_reason": ring.stop_reason,
                    "ringdown_start_s": float(ring.start_index * ring.dt),
                    "probe": {"center_m": list(probe.center), "normal": probe.normal,
                              "size_cells": probe.size_cells, "placed": probe.chosen},
                    "pickups": ring.names,
                    "convergence_checks": len(ring.checks),
                    **_field_pass_facts(field_pass)},
            "notes": notes,
            "probe_s11": port.summary,
            "fields": None if fs is None else {
                "file": "fields.h5", "lattice_step_m": fs.spacing if fs.uniform else None,
                "lattice_step_min_m": fs.min_step,
                "lattice_step_max_m": fs.max_step, "uniform": fs.uniform, "decimation": fs.decimation,
                "nodes": list(fs.shape), "normalization": "1 J stored energy per mode"},
        }
        spectrum = {"record": ring.signals[ring.probe_signal], "dt_s": ring.dt,
                    "start_index": ring.start_index}
        atomic_write_text(out / "case.resolved.toml", case.resolved_toml(relative_to=out))
        log.info("%d modes, %d hazards", len(modes), len(hazards))
        handler.flush()
        write_results(out, summary, spectrum, bands, log_lines=None,
                      extra_html=field_section(summary, fs, case.output.images)
                      + probe_section(port, modes, bands, case.output.images))
        ringdown.remove_checkpoint(out)
        bar.at(1.0, "done")
    except BaseException as exc:   # the log of a failed (or halted) run ends with why
        if isinstance(exc, ringdown.RunHalted):
            log.warning("%s", exc)
        else:
            log.error("run failed: %s", exc if isinstance(exc, RingprintError)
                      else f"{type(exc).__name__}: {exc}")
        raise
    finally:
        bar.close()
        handler.flush()
        log.removeHandler(handler)
        handler.close()
    if echo is not None:
        echo(format_summary_table(summary))
        echo(f"results in {out}")
    return summary
