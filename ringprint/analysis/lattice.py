"""The node lattice the mode fields live on, and the media and part masks sampled there.

Rules:

- The lattice is every ``stride``-th grid node of the region outside the absorbing
  layer. ``stride`` is the smallest integer whose field memory (running sums plus the
  stored phasors, :func:`field_bytes`) fits the budget (case key
  ``output.field_memory``, MiB); beyond ``MAX_STRIDE`` (a lattice step of four
  cells, about a quarter wavelength at f_max in the densest medium at the default
  resolution) the fields would be too coarse to show anything, and the run asks for
  a larger budget instead.
- Media at a node: the mean permittivity and conductivity of the six Yee edges that
  meet there; a node is a conductor node when any of those edges is PEC.
- A node lies inside a part when its six edges are on average at least half inside
  (the edges' own fractions from the voxelization); sheets and thin conductors add
  the nodes their surface passes through (the node rule of the model). On a lattice
  coarser than the grid a lattice node takes a part when any grid node within half a
  stride does, so thin parts are not lost between lattice nodes.

Every rule above counts grid nodes and edges by index, never by metres, so it holds
unchanged on a graded grid (the lattice then has unequal steps, taken from the grid's
own node coordinates; the field consumers weight nodes by
:meth:`~ringprint.analysis.fieldset.FieldSet.node_volumes`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import ndimage

from ringprint import fdtd
from ringprint.analysis.model import sheet_nodes
from ringprint.errors import RingprintError

#: Coarsest lattice offered: every fourth grid node.
MAX_STRIDE = 4
#: Bytes per lattice point and mode: running sums (6 complex128) + stored phasors (6 complex64).
BYTES_PER_POINT_MODE = fdtd.dft.BYTES_PER_POINT_FREQ + 6 * 8


@dataclass(frozen=True)
class Lattice:
    """Grid node indices ``lo[a] + stride * m``, ``m < counts[a]``, along each axis."""

    lo: tuple
    stride: int
    counts: tuple

    @property
    def n_points(self) -> int:
        return int(np.prod(self.counts))

    def indices(self) -> tuple:
        return tuple(l + self.stride * np.arange(n) for l, n in zip(self.lo, self.counts))

    def box(self) -> tuple:
        """Inclusive node box for :class:`ringprint.fdtd.NodeDft`."""
        return self.lo, tuple(l + self.stride * (n - 1) for l, n in zip(self.lo, self.counts))


def field_bytes(n_points: int, n_modes: int) -> int:
    """Memory the fields of ``n_modes`` modes take on a lattice of ``n_points`` points."""
    return int(n_points) * int(n_modes) * BYTES_PER_POINT_MODE


def interior_box(model) -> tuple:
    """First and last grid node (per axis) outside the absorbing layer and off the faces."""
    shape, bc = model.grid.shape, model.grid.boundary_cells
    return tuple(max(bc, 1) for _ in shape), tuple(min(n - 1 - bc, n - 2) for n in shape)


def plan_lattice(model, n_modes: int, budget_bytes: float) -> Lattice:
    """The finest lattice whose fields for ``n_modes`` modes fit ``budget_bytes``."""
    lo, hi = interior_box(model)
    for stride in range(1, MAX_STRIDE + 1):
        counts = tuple((h - l) // stride + 1 for l, h in zip(lo, hi))
        lat = Lattice(lo, stride, counts)
        if field_bytes(lat.n_points, n_modes) <= budget_bytes:
            return lat
    need = field_bytes(lat.n_points, n_modes) / 2.0 ** 20
    raise RingprintError(
        f"output.field_memory = {budget_bytes / 2.0 ** 20:.4g} MiB is too small for the fields of "
        f"{n_modes} mode(s) even on every {MAX_STRIDE}th grid node (need {need:.4g} MiB); raise "
        "output.field_memory in the case file, or skip the fields with --no-fields")


def _node_mean(edges, ii, jj, kk) -> np.ndarray:
    """Mean over the six Yee edges meeting at each lattice node of per-edge arrays."""
    i, j, k = np.ix_(ii, jj, kk)
    ex, ey, ez = edges
    terms = (ex[i - 1, j, k], ex[i, j, k], ey[i, j - 1, k], ey[i, j, k], ez[i, j, k - 1], ez[i, j, k])
    return sum(t.astype(np.float64) for t in terms) / 6.0  # cast after gathering: lattice-sized


def node_media(model, lat: Lattice):
    """``(eps_r, sigma, pec)`` at the lattice nodes (float32, float32, bool)."""
    ii, jj, kk = lat.indices()
    pec = _node_mean(model.pec, ii, jj, kk) > 0
    eps = np.where(pec, 1.0, _node_mean(model.eps_r, ii, jj, kk)).astype(np.float32)
    sigma = np.where(pec, 0.0, _node_mean(model.sigma, ii, jj, kk)).astype(np.float32)
    return eps, sigma, pec


def _solid_nodes(fill, shape) -> np.ndarray:
    """Grid nodes whose six edges lie on average at least half inside ``fill``."""
    total = np.zeros(shape, np.float32)
    for a, comp in enumerate("xyz"):
        box = fill.centre(comp)
        lo = [slice(o, o + n) for o, n in zip(box.offset, box.data.shape)]
        hi = list(lo)
        hi[a] = slice(box.offset[a] + 1, box.offset[a] + 1 + box.data.shape[a])
        total[tuple(lo)] += box.data
        total[tuple(hi)] += box.data
    return total >= 3.0


def part_masks(model, lat: Lattice) -> dict:
    """``{part name: bool mask on the lattice}`` in case order (rules in the module docstring)."""
    shape = model.grid.shape
    ii, jj, kk = lat.indices()
    out = {}
    for p in model.parts:
        full = np.zeros(shape, bool)
        for surface, fill in zip(p.surfaces, p.fills):
            if fill.fractions is not None:
                full |= _solid_nodes(fill, shape)
            if fill.cuts is not None:
                full |= sheet_nodes(surface, model.grid)
        if lat.stride > 1:
            full = ndimage.maximum_filter(full, size=2 * (lat.stride // 2) + 1, mode="constant")
        out[p.name] = np.ascontiguousarray(full[np.ix_(ii, jj, kk)])
    return out
