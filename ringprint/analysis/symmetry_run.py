"""Runs under mirror planes: one ring-down per wall combination, their modes merged.

A PEC wall on a plane keeps the modes whose tangential E is odd about it, a PMC wall
those whose tangential E is even (:mod:`ringprint.analysis.symmetry`). With
``"both"`` on an axis, the case is rung once per combination of walls (the first
combination with checkpoints and resume, as a case without mirrors; the others
after it, without). Each run is inverted on its own; the mode lists are merged in
order of frequency and renumbered, every mode keeping its wall combination
(modes.json ``symmetry``, e.g. ``{"x": "pec"}``, and ``symmetry_class``,
``"x:pec"``, the modes.csv column). Amplitudes and visibilities are relative within
the run that found the mode. A mode found in two combinations is two modes of the
whole model (e.g. two orientations of a degenerate dipole) and stays listed twice.
"""

from __future__ import annotations

import logging

from ringprint.analysis import placement, ringdown
from ringprint.analysis._case_symmetry import class_label, wall_classes
from ringprint.analysis.modes import find_resonances, judge_modes, mode_table
from ringprint.analysis.symmetry import with_walls

log = logging.getLogger("ringprint.run")


def other_runs(model, probe, progress=None, snapshot: bool = False) -> list:
    """``[(walls, Ringdown), ...]`` for every wall combination after the model's own
    (same probe; pickups by :func:`ringprint.analysis.placement.pickup_points`); with
    ``snapshot`` each keeps its ring-down start for a field pass."""
    out = []
    classes = wall_classes(model.case.grid.symmetry)[1:] if model.half is not None else []
    pickups = placement.pickup_points(model) if classes else []
    for k, walls in enumerate(classes):
        each = with_walls(model, walls)
        sim = ringdown.build_simulation(each, probe, pickups)
        ring = ringdown.ring(each, sim, progress=None if progress is None else
                             (lambda s, n, k=k: progress((k + s / n) / len(classes))), snapshot=snapshot)
        log.info("walls %s: %d steps, stopped on %s, %.1f s", class_label(walls), ring.steps,
                 ring.stop_reason, ring.wall_time_s)
        out.append((walls, ring))
    return out


def merged_modes(runs, f_min: float, f_max: float, radius_m: float, bands, margin: float):
    """The ``modes`` and ``hazards`` of every run, merged (rules in the module docstring),
    and the resonances of the first run (the poles of the probe record the report shows)."""
    modes, first = [], None
    for walls, ring in runs:
        res, rows = find_resonances(ring, f_min, f_max)
        first = res if first is None else first
        found, _ = mode_table(res, rows, ring.probe_signal, radius_m, bands, margin)
        for m in found:
            if walls:
                m["symmetry"] = dict(walls)
                m["symmetry_class"] = class_label(walls)
        modes += found
    modes.sort(key=lambda m: m["frequency_hz"])
    for k, m in enumerate(modes):
        m["index"] = k + 1
    return modes, judge_modes(modes, bands, margin), first


def summary_block(model, runs) -> dict | None:
    """modes.json ``symmetry``: the planes, their walls, the cells saved and each run."""
    if model.half is None:
        return None
    cells = [int((model.grid.x.size - 1) * (model.grid.y.size - 1) * (model.grid.z.size - 1)),
             int((model.half.grid.x.size - 1) * (model.half.grid.y.size - 1) * (model.half.grid.z.size - 1))]
    asked = dict(model.case.grid.symmetry)
    return {"planes": [{"axis": "xyz"[a], "at_m": float(c), "wall": asked["xyz"[a]]}
                       for a, c in model.grid.mirrors],
            "cells_whole": cells[0], "cells_solved": cells[1],
            "runs": [{"symmetry": dict(walls), "steps": int(ring.steps),
                      "stepping_time_s": float(ring.wall_time_s), "stop_reason": ring.stop_reason}
                     for walls, ring in runs]}

