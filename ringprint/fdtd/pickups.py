"""Pickups: what the simulation records at every step."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd.grid import COMPONENTS, Grid
from ringprint.fdtd.sources import LoopSource, loop_edges


@dataclass(frozen=True)
class FieldPickup:
    """One field component at one point.

    Parameters
    ----------
    component : str
        ``"Ex" ... "Hz"``. E is recorded at integer times ``n dt``, H at half
        steps ``(n - 1/2) dt`` (see :meth:`Simulation.records`).
    position : tuple of float
        Point in metres.
    interpolation : str
        ``"nearest"``: the component sample (edge or face) nearest the point.
        ``"trilinear"``: trilinear interpolation between the 8 surrounding samples
        of that component (clamped at the array ends).
    """

    component: str
    position: tuple
    interpolation: str = "nearest"

    def stencil(self, grid: Grid):
        """``(component, flat indices, weights)`` of the samples combined."""
        if self.component not in COMPONENTS:
            raise RingprintError(f"FieldPickup component {self.component!r} unknown; use one of "
                                 f"{', '.join(COMPONENTS)}")
        if self.interpolation not in ("nearest", "trilinear"):
            raise RingprintError(f"FieldPickup interpolation {self.interpolation!r}: "
                                 "use 'nearest' or 'trilinear'")
        coords = grid.component_coords(self.component)
        shape = grid.component_shape(self.component)
        per_axis = []
        for v, p in zip(coords, self.position):
            if self.interpolation == "nearest" or v.size == 1:
                per_axis.append(([int(np.argmin(np.abs(v - p)))], [1.0]))
            else:
                i = int(np.clip(np.searchsorted(v, p) - 1, 0, v.size - 2))
                t = float(np.clip((p - v[i]) / (v[i + 1] - v[i]), 0.0, 1.0))
                per_axis.append(([i, i + 1], [1.0 - t, t]))
        idx, w = [], []
        for i, wi in zip(*per_axis[0]):
            for j, wj in zip(*per_axis[1]):
                for k, wk in zip(*per_axis[2]):
                    idx.append(np.ravel_multi_index((i, j, k), shape))
                    w.append(wi * wj * wk)
        return [(self.component, np.array(idx, np.int64), np.array(w))]

    def to_dict(self) -> dict:
        return {"type": "FieldPickup", "component": self.component,
                "position": list(map(float, self.position)), "interpolation": self.interpolation}


@dataclass(frozen=True)
class LoopEmfPickup:
    """EMF of a square loop (V): the circulation of E around it, counterclockwise
    seen from the +normal side, ``sum_edges E . dl``; recorded at integer times.

    Use :meth:`of` to get the EMF of a :class:`LoopSource` itself.
    """

    center: tuple
    normal: str
    size_cells: int = 1

    @classmethod
    def of(cls, source: LoopSource) -> "LoopEmfPickup":
        return cls(center=source.center, normal=source.normal, size_cells=source.size_cells)

    def stencil(self, grid: Grid):
        out = []
        for comp, idx, orient, length in loop_edges(grid, self.center, self.normal, self.size_cells):
            flat = np.ravel_multi_index(idx, grid.component_shape(comp))
            out.append((comp, flat.astype(np.int64), orient * length))
        return out

    def to_dict(self) -> dict:
        return {"type": "LoopEmfPickup", "center": list(map(float, self.center)),
                "normal": self.normal, "size_cells": int(self.size_cells)}


def pickup_from_dict(d: dict):
    """Rebuild a pickup from :meth:`to_dict` output."""
    d = dict(d)
    kind = d.pop("type")
    if kind == "FieldPickup":
        return FieldPickup(d["component"], tuple(d["position"]), d["interpolation"])
    if kind == "LoopEmfPickup":
        return LoopEmfPickup(tuple(d["center"]), d["normal"], d["size_cells"])
    raise RingprintError(f"checkpoint: unknown pickup type {kind!r}")
