"""Which part rings: each mode's stored energy split among the parts.

Rules (the report cites them):

- A lattice node belongs to a part when it lies inside it
  (:func:`ringprint.analysis.lattice.part_masks`), or when it is an air node within
  the **shell** of that part: no farther than ``SHELL_CELLS`` grid cells (at least
  one lattice step) and closer to it than to any other part. Distances are counted
  in grid cells, not metres (index space: a lattice step is ``decimation`` grid
  cells), so on a graded grid the shell is two of the local cells thick, thin where
  the grid is refined around a thin part and thicker in coarse air; on a uniform
  grid this is the same as two cell sizes in metres. Conductors claim their
  shells first: the field in the air next to a conductor is held there by the
  charges and currents on it (none is inside it), while a plastic part nearby only
  loads it; a dielectric's shell is the air near it that no conductor claims, where
  its fringing field leaves it.
- For each part: the shares of the mode's time-averaged electric and magnetic
  energy inside and in the shell, each a fraction of the mode's whole stored energy
  in the computed region (every node weighted by the volume it stands for,
  :meth:`~ringprint.analysis.fieldset.FieldSet.node_volumes`); ``share`` is their
  sum, the number the report quotes ("mode 4, 2.41 GHz: 71 % bezel ring"). The
  energy in the air away from every part is the rest.
- For conductors, ``surface_current``: the part's share of ``sum |H|^2`` over the
  air nodes next to a conductor (within ``SURFACE_CELLS`` cells), where
  ``|H_tan| = |J_s|``; it says which conductor carries the current, and so the
  conductor loss, of the mode. Each node is weighted by the surface area it stands
  for, its volume divided by its own size (the cube root of the volume): the layer
  is ``SURFACE_CELLS`` local cells thick, so dividing by the local cell turns the
  layer's volume sum into a surface sum (the same weight everywhere on a uniform
  grid, where it cancels).
- ``rings_in``: the part that carries the mode. A conductor is scored by its share
  (its field is around it), a dielectric by the energy inside it alone (the air near
  a plastic cover mostly holds the field of the conductors under it, while a
  dielectric resonator holds most of its energy inside). The highest score wins
  when it is at least ``RINGS_IN_MIN`` of the mode's energy; else none (the mode
  lives in the air between the parts, as a strongly radiating one does).
"""

from __future__ import annotations

import numpy as np
from scipy import ndimage

from ringprint.analysis.fieldset import FieldSet, ModeField

SHELL_CELLS = 2.0
SURFACE_CELLS = 1.5
RINGS_IN_MIN = 0.1


class Regions:
    """Per-part inside, shell and surface masks of a FieldSet (computed once for all modes)."""

    def __init__(self, fs: FieldSet):
        names = list(fs.parts)
        self.names = names
        cell = 1.0 / max(fs.decimation, 1)        # one grid cell, in lattice steps
        label = np.full(fs.shape, -1, np.int32)
        for k, name in enumerate(names):
            label[fs.parts[name] & (label < 0)] = k
        self.inside = {n: label == k for k, n in enumerate(names)}
        self.shell, self.surface = {}, {}
        if not names or not np.any(label >= 0):
            return
        air = label < 0
        shell = max(SHELL_CELLS * cell, 1.01)     # at least the next lattice node
        surf = max(SURFACE_CELLS * cell, 1.01)
        claimed = np.zeros(fs.shape, bool)
        for group in (set(fs.conductors), set(names) - set(fs.conductors)):
            ks = [k for k, n in enumerate(names) if n in group and self.inside[n].any()]
            if not ks:
                continue
            own = np.where(np.isin(label, ks), label, -1)
            dist, idx = ndimage.distance_transform_edt(own < 0, return_indices=True)
            nearest = own[tuple(idx)]
            for k in ks:
                n = names[k]
                mine = air & (nearest == k) & ~claimed
                self.shell[n] = mine & (dist <= shell)
                self.surface[n] = mine & (dist <= surf)
            claimed |= np.any([self.shell[names[k]] for k in ks], axis=0)

def participation(fs: FieldSet, mode: ModeField, regions: Regions | None = None) -> dict:
    """``{"share": {part: f}, "detail": {part: {...}}, "rings_in": name or None}`` for one mode."""
    regions = regions or Regions(fs)
    volumes = fs.node_volumes()
    we, wm = fs.electric_density(mode) * volumes, fs.magnetic_density(mode) * volumes
    total = float(we.sum() + wm.sum())
    h2 = np.sum(np.abs(mode.h) ** 2, axis=0) * volumes ** (2.0 / 3.0)   # |H|^2 dA (docstring)
    cond_total = sum(float(h2[regions.surface[n]].sum()) for n in fs.conductors if n in regions.surface)
    share, detail = {}, {}
    for n in regions.names:
        ins, sh = regions.inside[n], regions.shell.get(n)
        d = {"electric_inside": float(we[ins].sum()) / total if total > 0 else 0.0,
             "magnetic_inside": float(wm[ins].sum()) / total if total > 0 else 0.0,
             "electric_near": float(we[sh].sum()) / total if total > 0 and sh is not None else 0.0,
             "magnetic_near": float(wm[sh].sum()) / total if total > 0 and sh is not None else 0.0,
             "surface_current": None}
        if n in fs.conductors and cond_total > 0:
            d["surface_current"] = float(h2[regions.surface[n]].sum()) / cond_total
        detail[n] = d
        share[n] = min(1.0, d["electric_inside"] + d["magnetic_inside"] + d["electric_near"]
                       + d["magnetic_near"])
    score = {n: share[n] if n in fs.conductors else
             detail[n]["electric_inside"] + detail[n]["magnetic_inside"] for n in share}
    top = max(score, key=score.get) if score else None
    return {"share": share, "detail": detail,
            "rings_in": top if top is not None and score[top] >= RINGS_IN_MIN else None}
