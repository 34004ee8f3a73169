"""Boxes of per-edge data and the index ranges a part's bounds cover (private)."""

from dataclasses import dataclass

import numpy as np

from ringprint.errors import RingprintError

COMPONENTS = ("x", "y", "z")


@dataclass(frozen=True)
class EdgeBox:
    """Data of one E component restricted to a part's box.

    ``data[..., i, j, k]`` belongs to the full edge array index
    ``(offset[0] + i, offset[1] + j, offset[2] + k)`` of that component
    (Ex: (Nx-1, Ny, Nz), Ey: (Nx, Ny-1, Nz), Ez: (Nx, Ny, Nz-1)).
    """

    offset: tuple
    data: np.ndarray

    @property
    def slices(self):
        """Index into the full component array: ``full[box.slices]``."""
        shape = self.data.shape[-3:]
        return tuple(slice(o, o + n) for o, n in zip(self.offset, shape))


def dual_nodes(a):
    """Boundaries of the dual intervals of the nodes of axis ``a`` (len(a) + 1):
    midpoints between nodes, and half a cell beyond the end nodes."""
    a = np.asarray(a, np.float64)
    return np.concatenate([[a[0] - (a[1] - a[0]) / 2], (a[:-1] + a[1:]) / 2, [a[-1] + (a[-1] - a[-2]) / 2]])


def check_axes(x, y, z):
    axes = []
    for name, a in zip("xyz", (x, y, z)):
        a = np.asarray(a, np.float64)
        if a.ndim != 1 or a.size < 2 or not np.all(np.isfinite(a)) or np.any(np.diff(a) <= 0):
            raise RingprintError(f"grid axis {name} must be a strictly increasing vector of at least "
                                 "2 finite node coordinates (metres); use plan_grid")
        axes.append(a)
    return axes


def part_ranges(lo, hi, axes, name):
    """Per axis: (cell range overlapping [lo, hi], node range whose dual overlaps)."""
    cells, nodes = [], []
    for d, a in enumerate(axes):
        i0 = max(np.searchsorted(a, lo[d], "right") - 1, 0)
        i1 = min(max(np.searchsorted(a, hi[d], "left"), i0 + 1), a.size - 1)
        du = dual_nodes(a)
        j0 = max(np.searchsorted(du, lo[d], "right") - 1, 0)
        j1 = min(np.searchsorted(du, hi[d], "right"), a.size)
        if hi[d] < a[0] or lo[d] > a[-1] or i1 <= i0 or j1 <= j0:
            raise RingprintError(f"part {name!r} lies outside the grid along {'xyz'[d]} "
                                 f"({lo[d]:.4g}..{hi[d]:.4g} m vs {a[0]:.4g}..{a[-1]:.4g} m): "
                                 "plan the grid from all parts' bounds")
        cells.append((int(i0), int(i1)))
        nodes.append((int(j0), int(j1)))
    return cells, nodes
