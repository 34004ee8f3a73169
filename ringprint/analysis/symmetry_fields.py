"""Mode fields under mirror planes: computed on the solved part, unfolded to the whole model.

Rules:

- The field lattice is planned on the whole model (under the memory budget, as
  without mirrors) and made symmetric about every plane, the plane itself a lattice
  plane (:func:`symmetric_lattice`). The field pass of each wall combination runs on
  the solved part (:func:`ringprint.analysis.mode_fields.compute_fields`) over the
  lattice nodes above the planes, for the modes found with those walls.
- Unfolding (image theory, Harrington 1961 sec. 3-6): across a PEC wall the
  tangential E and the normal H are odd, the normal E and the tangential H even;
  across a PMC wall the other way round. On the plane the odd components are zero
  (what the wall imposes); the even ones take the value of the lattice plane next to
  it (their slope is zero on the plane, so the error is second order in the lattice
  step).
- The unfolded field is normalized again, to 1 J of stored energy in the whole model,
  with the phase of ``sum(E . E)`` real (:func:`ringprint.analysis.mode_fields.normalize`);
  media, part masks, participation, touch maps and conductor loss then see the
  whole assembly.

References
----------
Harrington, R. F., Time-Harmonic Electromagnetic Fields, McGraw-Hill, 1961, sec. 3-6.
"""

from __future__ import annotations

import numpy as np

from ringprint.analysis import lattice as lt
from ringprint.analysis.fieldset import FieldSet, ModeField
from ringprint.analysis.mode_fields import compute_fields, loop_side_m, normalize
from ringprint.analysis.symmetry import solver_model, with_walls
from ringprint.errors import RingprintError
from ringprint.meshing.grid import plane_index


def _planes(model) -> list:
    return [(a, plane_index(model.grid.axes[a], c)) for a, c in model.grid.mirrors]


def symmetric_lattice(model, lat: lt.Lattice) -> lt.Lattice:
    """``lat`` (on the whole grid) trimmed to be symmetric about each plane, which
    becomes one of its lattice planes."""
    lo, counts = list(lat.lo), list(lat.counts)
    for a, p in _planes(model):
        m = (p - lo[a]) // lat.stride
        if m < 1:
            raise RingprintError("mirror planes: the field lattice has no node beside the plane; "
                                 "lower output.field_memory's stride by raising output.field_memory")
        lo[a], counts[a] = p - m * lat.stride, 2 * m + 1
    return lt.Lattice(tuple(lo), lat.stride, tuple(counts))


def _solved_lattice(model, lat: lt.Lattice) -> lt.Lattice:
    """The nodes of a symmetric lattice above every plane, in the solved part's indices."""
    lo, counts = list(lat.lo), list(lat.counts)
    for a, _p in _planes(model):
        lo[a], counts[a] = lat.stride, lat.counts[a] // 2
    return lt.Lattice(tuple(lo), lat.stride, tuple(counts))


def _signs(axis: int, wall: str) -> tuple[np.ndarray, np.ndarray]:
    """Mirror signs of (Ex, Ey, Ez) and (Hx, Hy, Hz) across a wall normal to ``axis``."""
    e = np.array([1.0 if c == axis else -1.0 for c in range(3)]) * (1.0 if wall == "pec" else -1.0)
    return e, -e


def unfold(v: np.ndarray, axis: int, signs: np.ndarray) -> np.ndarray:
    """A field ``(3, nx, ny, nz)`` on the lattice above a plane, joined to its mirror
    image (component c times ``signs[c]``) and the plane between them."""
    d = axis + 1
    first = np.take(v, [0], axis=d)
    plane = first * (signs > 0)[:, None, None, None]
    image = np.flip(v, axis=d) * signs[:, None, None, None].astype(v.real.dtype)
    return np.concatenate([image, plane, v], axis=d)


def compute(model, probe, runs, modes, lat: lt.Lattice, progress=None, notes=None,
            record=None) -> FieldSet:
    """Every mode's field on the whole model (rules in the module docstring).

    ``runs`` lists ``(walls, Ringdown)`` per wall combination (a single Ringdown is
    taken as the model's own run); without mirror planes this is
    :func:`ringprint.analysis.mode_fields.compute_fields`. ``record`` receives what the
    field pass of the first wall combination did (steps, stop reason, time).
    """
    if not isinstance(runs, list):
        runs = [(model.walls, runs)]
    if model.half is None:
        return compute_fields(model, probe, runs[0][1], modes, lat, progress=progress, notes=notes,
                              record=record)
    whole = symmetric_lattice(model, lat)
    eps_r, sigma, pec = lt.node_media(model, whole)
    axes = [ax[i] for ax, i in zip(model.grid.axes, whole.indices())]
    fs = FieldSet(*axes, eps_r=eps_r, sigma=sigma, pec=pec, parts=lt.part_masks(model, whole),
                  conductors=tuple(p.name for p in model.parts if p.is_conductor),
                  decimation=whole.stride, digest=model.case.digest(),
                  probe={"center_m": [float(v) for v in probe.center], "normal": probe.normal,
                         "size_m": loop_side_m(model.grid, probe)})
    volumes = fs.node_volumes()
    solved_lat = _solved_lattice(model, whole)
    for walls, ring in runs:
        own = [m for m in modes if m.get("symmetry") == walls]
        if not own:
            continue
        part = compute_fields(solver_model(with_walls(model, walls)), probe, ring, own, solved_lat,
                              progress=progress, notes=notes, record=record)
        record = None                       # the first wall combination's pass is the one recorded
        for mf in part.modes:
            e, h = mf.e, mf.h
            for a, _c in model.grid.mirrors:
                se, sh = _signs(a, walls["xyz"[a]])
                e, h = unfold(e, a, se), unfold(h, a, sh)
            e, h = normalize(e, h, eps_r, volumes)
            fs.modes.append(ModeField(mf.index, mf.frequency_hz, mf.q, e.astype(np.complex64),
                                      h.astype(np.complex64)))
    fs.modes.sort(key=lambda mf: mf.index)
    return fs
