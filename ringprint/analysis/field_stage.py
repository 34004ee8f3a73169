"""The field stage of ``ringprint run``: mode fields, which part rings, touch maps, files.

After the modes are known: :func:`ringprint.analysis.mode_fields.compute_fields`
(second pass; under mirror planes once per wall combination, unfolded to the whole
model by :mod:`ringprint.analysis.symmetry_fields`), the conductor loss of
:mod:`ringprint.analysis.conductor_loss` (``q`` becomes the combined Q and the bands
are judged again, before anything else uses Q),
:func:`ringprint.analysis.participation.participation` per mode
(into modes.json: ``participation``, ``participation_detail``, ``rings_in``; the
hazard entries gain ``part``), each mode's ``sensitivity`` and, with tolerances in
the case, its ``tolerance`` spread (:mod:`ringprint.analysis.sensitivity`), the touch
maps of :mod:`ringprint.analysis.touch` (modes.json ``touch``: the worst spots), then
``fields.h5`` and one VTK file per mode (``mode_NN.vti`` on a uniform lattice,
``mode_NN.vtr`` on a graded one).

When the budget ``output.field_memory`` cannot hold the fields of all the modes
found, the results are written without fields and a note says what to raise:
nothing of the first run is lost.
"""

from __future__ import annotations

import logging

from ringprint.analysis import conductor_loss as cl
from ringprint.analysis import lattice as lt
from ringprint.analysis import symmetry_fields, touch
from ringprint.analysis.fieldset_io import (FIELDS_NAME, IMAGE_SUFFIX, RECTILINEAR_SUFFIX,
                                            write_fieldset, write_mode_files)
from ringprint.analysis.modes import judge_modes
from ringprint.analysis.participation import Regions, participation
from ringprint.analysis.sensitivity import attach_sensitivities
from ringprint.errors import RingprintError

log = logging.getLogger("ringprint.run")

#: Tissue pressed on the outer surface for the touch maps (Gabriel et al. 1996).
TOUCH_TISSUE = "skin-dry"
#: Worst touch spots listed per mode.
WORST_SPOTS = 5
#: Predicted touch shift (percent) beyond which first order is only a warning sign.
FIRST_ORDER_LIMIT = 10.0


def remove_stale(out_dir) -> None:
    """Delete field files a previous run left in ``out_dir`` (they would not match)."""
    modes = [p for suffix in (IMAGE_SUFFIX, RECTILINEAR_SUFFIX) for p in out_dir.glob(f"mode_[0-9]*{suffix}")]
    for path in [out_dir / FIELDS_NAME, *modes]:
        path.unlink(missing_ok=True)


def field_section(summary, fs, images: bool = True) -> str:
    """The report's "what moves it" tables, then the per-hazard field pictures and touch
    maps (pictures only with fields and images; tables only with sensitivities)."""
    from ringprint.analysis.report_sensitivity import sensitivity_section
    if fs is None or not images:
        return sensitivity_section(summary)
    from ringprint.analysis.report_fields import hazard_field_section
    worst = {m["index"]: m.get("touch", {}).get("worst", []) for m in summary["modes"]}
    return sensitivity_section(summary) + hazard_field_section(summary, fs, worst)


def check_budget(model, budget_bytes: float) -> None:
    """Refuse, before any stepping, a budget too small for the field of even one mode."""
    lt.plan_lattice(model, 1, budget_bytes)


def run_field_stage(model, probe, ring, modes, hazards, out_dir, notes, progress=None, record=None):
    """Compute and attach everything field-derived; returns the FieldSet or None.

    ``ring`` is the run, or under mirror planes the list ``[(walls, Ringdown), ...]``
    of every wall combination (:func:`ringprint.analysis.symmetry_fields.compute`).
    ``record`` (a dict) receives what the field pass did (steps, stop reason, time)."""
    try:
        lat = lt.plan_lattice(model, len(modes), model.case.output.field_memory_bytes)
    except RingprintError as exc:
        notes.append(f"mode fields skipped: {exc}")
        log.warning("mode fields skipped: %s", exc)
        return None
    fs = symmetry_fields.compute(model, probe, ring, modes, lat, progress=progress, notes=notes,
                                 record=record)
    log.info("mode fields on every %d grid node(s): %s points", fs.decimation,
             "x".join(str(n) for n in fs.shape))
    losses = cl.mode_losses(fs, cl.conductor_surfaces(model))
    cl.attach_losses(modes, losses, fs)
    notes += cl.coverage_notes(losses)
    hazards[:] = judge_modes(modes, list(model.case.bands), model.case.analysis.detuning_margin)
    regions = Regions(fs)
    for m, mf in zip(modes, fs.modes):
        p = participation(fs, mf, regions)
        m["participation"] = p["share"]
        m["participation_detail"] = p["detail"]
        m["rings_in"] = p["rings_in"]
    for h in hazards:
        h["part"] = modes[h["mode"] - 1].get("rings_in")
    attach_sensitivities(modes, fs, model, notes)
    try:
        fs.touch = touch.touch_maps(fs, tissue=TOUCH_TISSUE)
    except RingprintError as exc:  # e.g. no air outside the parts: keep everything else
        notes.append(f"touch maps skipped: {exc}")
        log.warning("touch maps skipped: %s", exc)
    for m in modes:
        tmap = fs.touch.get(m["index"])
        if tmap is None:
            continue
        worst = touch.worst_spots(tmap, n=WORST_SPOTS, q_before=m["q"])
        m["touch"] = {"tissue": TOUCH_TISSUE, "pad_radius_m": touch.DEFAULT_PAD_RADIUS_M,
                      "worst": worst}
        m["touch_shift_percent"] = worst[0]["shift_percent"] if worst else 0.0
        if worst and abs(worst[0]["shift_percent"]) > FIRST_ORDER_LIMIT:
            notes.append(f"mode {m['index']}: a fingertip would pull it by about "
                         f"{worst[0]['shift_percent']:.0f} % to first order, beyond the range "
                         "where first order holds; read it as strongly touch-sensitive")
    write_fieldset(out_dir / FIELDS_NAME, fs)
    write_mode_files(out_dir, fs)
    return fs
