"""Exact ray-surface crossings on a lattice of axis-parallel rays (private helper)."""

import numpy as np

from ringprint.meshing import _kernels


def frame(axis):
    """Transverse axes (b, c) in cyclic order for rays along ``axis``."""
    return (axis + 1) % 3, (axis + 2) % 3


def crossings(vertices, faces, axis, bq, cq):
    """Crossings of every ray of the lattice ``bq x cq`` running along ``axis``.

    Returns ``(ray_start, at, dw)``: CSR offsets per ray ``r = ic * len(bq) + ib``,
    crossing coordinates along the axis (sorted per ray) and winding deltas (+1 when
    the ray enters an outward-oriented surface, -1 when it leaves).
    """
    b, c = frame(axis)
    tri = np.asarray(vertices, np.float64)[np.asarray(faces, np.int64)]  # (M, 3, 3)
    ta = np.ascontiguousarray(tri[:, :, axis])
    tb = np.ascontiguousarray(tri[:, :, b])
    tc = np.ascontiguousarray(tri[:, :, c])
    bq = np.ascontiguousarray(bq, np.float64)
    cq = np.ascontiguousarray(cq, np.float64)
    row_start, row_tris, blo, bhi = _kernels.bin_rows(tb, tc, bq, cq)
    counts = _kernels.count_crossings(tb, tc, ta, bq, cq, row_start, row_tris, blo, bhi)
    ray_start = np.zeros(counts.size + 1, np.int64)
    np.cumsum(counts, out=ray_start[1:])
    at, dw = _kernels.fill_crossings(tb, tc, ta, bq, cq, row_start, row_tris, blo, bhi, ray_start)
    return ray_start, at, dw


def point_inside(vertices, faces, point):
    """Whether ``point`` is inside the closed surface (parity of crossings beyond it)."""
    p = np.asarray(point, np.float64)
    ray_start, at, _ = crossings(vertices, faces, 0, p[1:2], p[2:3])
    return bool(np.count_nonzero(at > p[0]) % 2)
