"""Exact edge-line and face-area fractions of a solid, for conformal metal.

A locally conformal conductor (Dey & Mittra 1997) needs, for every Yee cell face the
conductor cuts, the part of the face's area that lies outside the metal, and for
every edge of such a face the part of its length outside. This module measures the
inside fractions on any rectilinear grid (uniform or graded):

- an **edge line** fraction is the length of the E-edge itself inside the solid over
  its length, from the exact crossings of the ray along the edge's own line;
- a **face** fraction is the area of an H face (normal to axis h, spanning one cell
  along each of the two other axes) inside the solid over its area: rays along the
  first in-plane axis at ``samples`` midpoints of the cell along the second, each
  cut exactly into its cells, averaged (the midpoint rule; its error falls as
  ``samples**-2`` for a smooth boundary).

Layouts follow DEVELOPERS.md: E-edge boxes index the Ex/Ey/Ez arrays, face boxes the
Hx (Nx, Ny-1, Nz-1), Hy (Nx-1, Ny, Nz-1) and Hz (Nx-1, Ny-1, Nz) arrays.

References
----------
Dey, S. & Mittra, R., "A locally conformal finite-difference time-domain (FDTD)
algorithm for modeling three-dimensional perfectly conducting objects", IEEE Microw.
Guided Wave Lett. 7(9):273-275, 1997.
"""

import numpy as np

from ringprint.errors import RingprintError
from ringprint.meshing import _kernels, _rays
from ringprint.meshing._boxes import COMPONENTS, EdgeBox, check_axes, part_ranges

#: Sample lines per cell across each face (midpoint rule).
FACE_SAMPLES = 4


def _ranges(surface, axes):
    """Per axis: the cells overlapping the part's box and the nodes bounding them."""
    cells, _ = part_ranges(*surface.bounds, axes, surface.name)
    nodes = [(c0, c1 + 1) for c0, c1 in cells]
    return cells, nodes


def _cut(surface, axes, a, bq, cq, cells_a):
    """Inside fraction of each cell of ``cells_a`` along axis ``a`` on every ray of the
    lattice ``bq x cq``, shaped (cells along a, len(bq), len(cq)) in the (a, b, c) frame."""
    rs, at, dw = _rays.crossings(surface.vertices, surface.faces, a, bq, cq)
    anodes = np.ascontiguousarray(axes[a][cells_a[0]:cells_a[1] + 1])
    out = np.zeros((1, cells_a[1] - cells_a[0], len(bq), len(cq)), np.float64)
    _kernels.edge_fractions(rs, at, dw, anodes, 1, out)
    return np.clip(out[0], 0.0, 1.0)


def _midpoints(v, lo, hi, n):
    """``n`` midpoint samples in each cell ``lo..hi-1`` of node vector ``v``."""
    d = np.diff(v[lo:hi + 1])
    return (v[lo:hi, None] + d[:, None] * (np.arange(n) + 0.5) / n).reshape(-1)


def edge_lines(surface, x, y, z):
    """Fraction of each E-edge's own line inside a closed solid (the ``lines`` of
    :func:`conformal_fractions` alone)."""
    return conformal_fractions(surface, x, y, z, faces=False)[0]


def conformal_fractions(surface, x, y, z, samples=FACE_SAMPLES, faces=True):
    """Inside fractions of the E-edge lines and the H faces near a closed solid.

    Parameters
    ----------
    surface : Surface
        A checked solid (``kind == "solid"``), coordinates in metres.
    x, y, z : ndarray
        Grid node vectors (metres); any strictly increasing spacing.
    samples : int
        Sample lines per cell across each face (1..16).
    faces : bool
        Compute the face fractions too (default); without, ``faces`` is None.

    Returns
    -------
    lines, faces : dict
        ``{"x"|"y"|"z": EdgeBox}`` with float32 data: ``lines[c]`` the fraction of each
        E_c edge's length inside the solid (indexing the E_c array), ``faces[c]`` the
        fraction of each H_c face's area inside (indexing the H_c array).

    References
    ----------
    Dey, S. & Mittra, R., IEEE Microw. Guided Wave Lett. 7(9):273-275, 1997.
    """
    if surface.kind != "solid":
        raise RingprintError(f"part {surface.name!r}: conformal fractions need a closed solid, "
                             f"not a {surface.kind}")
    if int(samples) != samples or not 1 <= samples <= 16:
        raise RingprintError(f"samples = {samples!r} must be an integer from 1 to 16")
    axes = check_axes(x, y, z)
    cells, nodes = _ranges(surface, axes)
    lines = {}
    for a, comp in enumerate(COMPONENTS):
        b, c = _rays.frame(a)
        bq = axes[b][nodes[b][0]:nodes[b][1]]
        cq = axes[c][nodes[c][0]:nodes[c][1]]
        frac = _cut(surface, axes, a, bq, cq, cells[a])          # (a, b, c) frame
        order = np.argsort((a, b, c))
        offset = [nodes[d][0] for d in range(3)]
        offset[a] = cells[a][0]
        lines[comp] = EdgeBox(tuple(offset), np.ascontiguousarray(frac.transpose(order), np.float32))
    if not faces:
        return lines, None
    faces = {}
    n = int(samples)
    for h, comp in enumerate(COMPONENTS):
        a = (h + 1) % 3            # rays along the first in-plane axis
        b, c = _rays.frame(a)      # b = (h + 2) % 3 sampled inside cells, c = h at nodes
        bq = _midpoints(axes[b], *cells[b], n)
        cq = axes[c][nodes[c][0]:nodes[c][1]]
        frac = _cut(surface, axes, a, bq, cq, cells[a])
        frac = frac.reshape(frac.shape[0], -1, n, frac.shape[2]).mean(axis=2)
        order = np.argsort((a, b, c))
        offset = [cells[d][0] for d in range(3)]
        offset[h] = nodes[h][0]
        faces[comp] = EdgeBox(tuple(offset), np.ascontiguousarray(frac.transpose(order), np.float32))
    return lines, faces
