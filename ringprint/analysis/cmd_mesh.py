"""Mesh a case and show what the solver would get, without running it.

Reads CASE.toml, reads and checks every part, plans the grid and voxelizes. Prints
each part (triangles, closed solid or open sheet, volume, size, material, notes),
the grid (cells, smallest and largest cell per axis, padding, absorbing layer, time
step, and on a graded grid the walls, gaps and slots that forced its fine cells), the
memory a run needs and an estimate of its run time. Writes into DIR (default
<case folder>/<case name>_mesh/): model.vti on a uniform grid or model.vtr on a
graded one (part id, eps_r and conductor flag per cell, for a 3-D viewer), model.png
(a preview picture) and case.resolved.toml (the case with every default filled in).
Nothing is written when anything fails.
"""

from __future__ import annotations

import argparse
import contextlib
from pathlib import Path

import numpy as np

from ringprint import fdtd, meshing
from ringprint.analysis import placement, ringdown, symmetry, voxel_image
from ringprint.analysis._case_symmetry import wall_classes
from ringprint.analysis.field_plots import probe_corners
from ringprint.analysis.case import Case, load_case
from ringprint.analysis.mode_fields import loop_side_m
from ringprint.analysis.model import Model, build_model
from ringprint.analysis.outputs import atomic_path, prepare_output_dir
from ringprint.analysis.textformat import format_bytes, format_duration, format_frequency, format_si
from ringprint.errors import RingprintError
from ringprint.meshing import available_memory

#: Courant factor the time step is quoted for (the solver's default, fdtd.courant_time_step).
COURANT = 0.99
#: Solver throughput (cell updates per second, absorbing layer, pickups and energy
#: included) assumed for the run-time estimate. Measured on the project's 2-core machine
#: on 2026-12-01, idle (load 0.6), numba cache warm: the tag demo (134k cells, 8704
#: steps) stepped at 118 Mcells/s; ``ringprint bench --size 160`` gave 140-180. The first
#: run after installing also compiles the kernels (about a minute). Re-measure when the
#: solver changes and update this figure.
THROUGHPUT_CELLS_PER_S = 100e6
FILES = ("model.png", "case.resolved.toml")
#: Either voxel model name may be written (uniform / graded grid).
MODEL_FILES = ("model.vti", "model.vtr")
#: Refinement lines the summary prints (most restrictive first).
SHOWN_REFINEMENTS = 6


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("case", metavar="CASE.toml", help="the case file")
    parser.add_argument("--out", metavar="DIR", default=None,
                        help="output directory (default: <case folder>/<case name>_mesh/)")
    parser.add_argument("--ignore-memory-check", action="store_true",
                        help="go on even when the run would need more memory than is available")


def default_out_dir(case_path: str | Path) -> Path:
    """``<case folder>/<case stem>_mesh``."""
    path = Path(case_path)
    return path.parent / f"{path.stem}_mesh"


def run_time_estimate(model: Model, throughput: float = THROUGHPUT_CELLS_PER_S) -> dict:
    """Expected time steps and wall time of a run of this model.

    Basis: the record the run needs is the source pulse (a Gaussian-modulated sine
    over ``[f_min, f_max]``, :class:`ringprint.fdtd.GaussianPulse`, until its envelope
    is below 1e-8 of its peak) plus the ring-down time ``q_max / (pi f_min)``: the
    1/e amplitude time of the highest-Q mode at the lowest frequency (a mode
    ``exp(-pi f t / Q) cos(2 pi f t)`` decays to 1/e at ``t = Q / (pi f)``). Steps
    are that time over the Courant time step; wall time is cells x steps over
    ``throughput``, once more for the mode-field pass when the case asks for fields
    (``passes``; :mod:`ringprint.analysis.mode_fields`), once per wall combination
    (``runs``) under mirror planes, whose ``cells`` are those of the solved part
    (``cells_whole``: the whole model's).

    Returns
    -------
    dict
        ``dt_s, step_factor, source_s, ringdown_s, steps, cells, throughput, passes,
        cells_whole, runs, seconds`` (``step_factor``: what conformal metal asks of the Courant step).

    References
    ----------
    Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005, ch. 4
    (Courant limit); Pozar, D. M., Microwave Engineering, 4th ed., 2012, sec. 6.1
    (Q as stored energy over loss per radian, hence the decay rate pi f / Q).
    """
    case = model.case
    solved = symmetry.solver_model(model)   # under mirror planes: the part the solver runs
    grid = solved.fdtd_grid()
    # conformal metal may need a shorter step (ringprint.fdtd.conformal): the same media
    # the run builds decide it
    factor = solved.media(grid).step_factor if solved.free_length is not None else 1.0
    dt = fdtd.courant_time_step(grid, COURANT) * factor
    source = float(ringdown.source_pulse(case).t_end)
    steps = ringdown.record_limit(case, dt, source)
    cells = int(np.prod([n - 1 for n in solved.grid.shape]))
    passes = 2 if case.output.fields else 1
    runs = len(wall_classes(case.grid.symmetry))   # one per wall combination (1 without mirrors)
    return {"dt_s": dt, "step_factor": factor, "source_s": source,
            "ringdown_s": ringdown.ringdown_time(case),
            "steps": steps, "cells": cells, "throughput": float(throughput), "passes": passes,
            "cells_whole": int(np.prod([n - 1 for n in model.grid.shape])), "runs": runs,
            "seconds": runs * passes * cells * steps / throughput}


def _length(metres: float, case: Case, digits: int = 4) -> str:
    value = metres / case.unit_m
    return f"{value:.{digits}g}"


def _part_rows(model: Model, owners: np.ndarray) -> list[str]:
    case = model.case
    u = case.units
    counts = np.bincount(owners.ravel(), minlength=len(model.parts) + 1)
    owned = voxel_image.cell_volumes(model.grid, owners, len(model.parts))
    rows = []
    for i, p in enumerate(model.parts):
        kinds = sorted({s.kind for s in p.surfaces})
        triangles = sum(s.n_triangles for s in p.surfaces)
        lo = np.min([s.bounds[0] for s in p.surfaces], axis=0)
        hi = np.max([s.bounds[1] for s in p.surfaces], axis=0)
        size = " x ".join(_length(h - lo_, case) for lo_, h in zip(lo, hi))
        material = p.part.material_name or p.part.material.name
        medium = _medium(case, p.part)
        bodies = f"{len(p.surfaces)} bodies, " if len(p.surfaces) > 1 else ""
        kind = {("solid",): "closed solid", ("sheet",): "open sheet"}.get(tuple(kinds), "+".join(kinds))
        line = f"  {i + 1}. {p.name}: {bodies}{triangles} triangles, {kind}"
        n_cells = int(counts[i + 1])
        volume = sum(s.volume for s in p.surfaces) / case.unit_m ** 3
        notes = []
        if not voxel_image.shows_crossed_cells(p):
            voxels = owned[i + 1] / case.unit_m ** 3
            line += f", volume {volume:.4g} {u}^3, voxels {voxels:.4g} {u}^3 ({n_cells} cells)"
            notes += _volume_note(volume, voxels, model, case)
        else:
            if "solid" in kinds:
                line += f", volume {volume:.4g} {u}^3"
            line += f", {n_cells} cells crossed"
        rows.append(line)
        rows.append(f"     size {size} {u} (from {_length(lo[0], case)}, {_length(lo[1], case)}, "
                    f"{_length(lo[2], case)}), material {material} ({medium})")
        notes = [n for s in p.surfaces for n in s.notes] + notes
        if p.thin:
            notes.append("thinner than one cell, so staircased to whole edges; the voxel model "
                         "shows every cell its surface crosses")
        elif voxel_image.shows_crossed_cells(p) and "solid" in kinds:
            notes.append("a conductor under 1.5 cells thick: the edges its surface cuts are made "
                         "conducting too; the voxel model shows every cell its surface crosses")
        if counts[i + 1] == 0:
            notes.append("owns no cell in the voxel model (hidden by another part, or smaller than a cell)")
        rows.extend(f"     note: {n}" for n in notes)
    return rows


#: A voxel volume this far (fraction) from the mesh volume gets a note saying why.
VOLUME_NOTE = 0.05


def _volume_note(volume: float, voxels: float, model: Model, case: Case) -> list[str]:
    """Why the voxel picture's volume differs from the mesh's, when it differs much."""
    if volume <= 0 or abs(voxels - volume) <= VOLUME_NOTE * volume:
        return []
    more = "more" if voxels > volume else "less"
    sizes = list(dict.fromkeys(_length(c, case) for c in (model.grid.min_cell, model.grid.max_cell)))
    return [f"the voxel model holds {abs(voxels / volume - 1) * 100:.0f} % {more} than the mesh "
            f"volume: it shows whole {' to '.join(sizes)} {case.units} cells, each owned by the "
            "part its centre line lies in; the solver does not use that picture but each "
            "edge's and face's exact share of the part, so the run sees its true shape"]


def _medium(case: Case, part) -> str:
    """The medium as the solver sees it, a loss tangent beside the conductivity it became."""
    eps, sigma, is_pec = case.medium(part)
    m = part.material
    if is_pec:
        return "perfect conductor" + (f"; sigma {m.sigma:.3g} S/m for its surface loss" if m.sigma else "")
    text = f"eps_r {eps:g}"
    if m.loss_tangent is not None:
        text += (f", loss tangent {m.loss_tangent:g} -> sigma {sigma:.3g} S/m at "
                 f"{format_frequency(case.spectrum.loss_at_hz, digits=4, trim=True)}")
    return text + (f", sigma {sigma:.3g} S/m" if m.loss_tangent is None and sigma else "")


def _refinement_row(r, case: Case) -> str:
    where = ", ".join(_length(v, case) for v in r.position)
    parts = " / ".join(r.parts)
    if not r.refined:
        return (f"    {r.kind} {parts} along {r.axis}: {_length(r.size_m, case)} {case.units} at ({where}), "
                f"thinner than min_feature: not refined, stays sub-cell")
    what = "wavelength in" if r.kind == "dielectric" else f"{r.kind} of"
    return (f"    {what} {parts} along {r.axis}: {_length(r.size_m, case)} {case.units} at ({where}) "
            f"-> cells <= {_length(r.cell_m, case)} {case.units}")


def _grid_rows(model: Model, estimate: dict) -> list[str]:
    """The grid lines of the summary: cells, spacings, padding, layer, refinements."""
    case, grid = model.case, model.grid
    u = case.units
    cells = [n - 1 for n in grid.shape]
    if grid.uniform:
        size = (f"cell {_length(grid.cell, case)} {u} ({case.grid.cells_per_wavelength:g} per "
                "wavelength at f_max in the densest material)")
    else:
        per_axis = ", ".join(f"{n} {_length(d.min(), case)}..{_length(d.max(), case)}"
                             for n, d in zip("xyz", grid.spacing))
        size = (f"graded, cells {_length(grid.min_cell, case)} to {_length(grid.max_cell, case)} {u} "
                f"({per_axis} {u}; air cell {_length(grid.cell, case)} {u} = "
                f"{case.grid.cells_per_wavelength:g} per wavelength at f_max, neighbours within "
                f"x{meshing.GRADING:g})")
    bc = grid.boundary_cells
    layer = min(a[bc] - a[0] for a in grid.axes)
    rows = [f"grid: {cells[0]} x {cells[1]} x {cells[2]} cells = {estimate['cells_whole']:,}, {size}, "
            f"padding {_length(grid.padding, case)} {u}, absorbing layer {bc} cells "
            f"({_length(layer, case)} {u}) on each face"]
    if grid.mirrors:
        rows[0] = rows[0].replace("on each face", "on each outer face")
        rows += symmetry.mesh_rows(model, estimate)
    fine = [r for r in grid.refinements if r.refined and r.cell_m < grid.cell]
    if fine:
        rows.append(f"  fine cells forced by ({len(fine)}, most restrictive first):")
        rows += [_refinement_row(r, case) for r in fine[:SHOWN_REFINEMENTS]]
        if len(fine) > SHOWN_REFINEMENTS:
            rows.append(f"    ... and {len(fine) - SHOWN_REFINEMENTS} more")
    coarse = [r for r in grid.refinements if not r.refined]
    if coarse:
        rows.append(f"  features thinner than min_feature {_length(grid.min_feature, case)} {u} "
                    f"({len(coarse)}):")
        rows += [_refinement_row(r, case) for r in coarse[:SHOWN_REFINEMENTS]]
        if len(coarse) > SHOWN_REFINEMENTS:
            rows.append(f"    ... and {len(coarse) - SHOWN_REFINEMENTS} more")
    return rows


def summary(model: Model, owners: np.ndarray, estimate: dict, case_path: str) -> str:
    """The text ``ringprint mesh`` prints (without the list of written files)."""
    case = model.case
    lines = [f"case: {case.title} ({case_path})",
             f"spectrum: {format_frequency(case.spectrum.f_min_hz, trim=True)} to "
             f"{format_frequency(case.spectrum.f_max_hz, trim=True)}, q_max {case.analysis.q_max:g}",
             f"parts ({len(model.parts)}):"]
    lines += _part_rows(model, owners)
    lines += _grid_rows(model, estimate)
    lines += [
        f"time step: {format_si(estimate['dt_s'], 's')} (Courant factor {COURANT}, from the smallest "
        f"cell on each axis" + (f", times {estimate['step_factor']:.2f} for the cut cells of "
                                "conformal metal" if estimate["step_factor"] < 1.0 else "") + ")",
        f"memory: {format_bytes(model.memory['total'])} needed ("
        + ", ".join(f"{k} {format_bytes(v)}" for k, v in model.memory.items() if k != "total")
        + f"), {format_bytes(available_memory())} available",
        f"run time: at most about {format_duration(estimate['seconds'])} = "
        + ("2 passes (the second takes the mode fields; --no-fields skips it) x "
           if estimate["passes"] == 2 else "")
        + (f"{estimate['runs']} wall combinations x " if estimate["runs"] > 1 else "")
        + f"{estimate['steps']:,} steps x "
        f"{estimate['cells']:,} {'solved ' if model.grid.mirrors else ''}cells at {estimate['throughput'] / 1e6:g} Mcells/s; steps cover the "
        f"source pulse ({format_si(estimate['source_s'], 's')}) and the 1/e ring-down of a "
        f"Q = {case.analysis.q_max:g} mode at f_min, q_max/(pi f_min) = "
        f"{format_si(estimate['ringdown_s'], 's')} (the run stops sooner once the field energy "
        "has fallen 80 dB)",
    ]
    if model.warnings or case.notes:
        lines.append("warnings:")
        lines += [f"  {w}" for w in list(case.notes) + list(model.warnings)]
    return "\n".join(lines)


def _check_names(out_dir: Path, names=MODEL_FILES + FILES) -> list[Path]:
    """The result paths, refusing a name taken by something that is not a file."""
    finals = [out_dir / name for name in names]
    for final in finals:
        if final.exists() and not final.is_file():
            raise RingprintError(f"'{final}' exists and is not a file; move it away or choose "
                                 "another directory with --out")
    return finals


def probe_loop(model: Model):
    """Corners (4, 3) in metres of the loop a run would use (the case's, or placed by
    the run's rules), or None when no place is found (the run would say why)."""
    try:
        probe = placement.place_probe(model)
    except RingprintError:
        return None
    return probe_corners({"center_m": probe.center, "normal": probe.normal,
                          "size_m": loop_side_m(model.grid, probe)})


def write_outputs(model: Model, owners: np.ndarray, out_dir: Path) -> list[Path]:
    """Write model.vti (or model.vtr), model.png and case.resolved.toml; all appear, or
    none does.

    Each file is written under a temporary name and all are renamed together at the
    end; a name taken by something that is not a file is refused before any writing.
    """
    finals = _check_names(out_dir, (voxel_image.image_name(model.grid),) + FILES)
    image = voxel_image.voxel_image(model, owners)
    with contextlib.ExitStack() as stack:
        vti, png, toml = (stack.enter_context(atomic_path(f)) for f in finals)
        image.save(str(vti), binary=True)
        voxel_image.render_preview(model, image, png, probe=probe_loop(model))
        toml.write_text(model.case.resolved_toml(relative_to=out_dir), encoding="utf-8")
    return finals


def _with_file(message: str, case_path: str, case: Case) -> str:
    """Prefix the case file to a message that names no file (e.g. the memory check)."""
    names = [case_path, str(case.source)] + [p.file.name for p in case.parts]
    return message if any(n in message for n in names) else f"{case_path}: {message}"


def run(args: argparse.Namespace) -> int:
    out_dir = Path(args.out) if args.out is not None else default_out_dir(args.case)
    if out_dir.exists():  # fail fast on a file, a read-only directory or a taken name
        prepare_output_dir(out_dir)
        _check_names(out_dir)
    case = load_case(args.case)
    try:
        model = build_model(case, allow_memory=args.ignore_memory_check)
    except RingprintError as exc:
        raise RingprintError(_with_file(str(exc), args.case, case)) from None
    owners = voxel_image.cell_owners(model)
    estimate = run_time_estimate(model)
    text = summary(model, owners, estimate, args.case)
    prepare_output_dir(out_dir)
    written = write_outputs(model, owners, out_dir)
    print(text)
    print("written: " + ", ".join(str(p) for p in written))
    return 0
