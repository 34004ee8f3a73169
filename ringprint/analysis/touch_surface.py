"""Where a hand can touch, and the pad sums of the touch map (:mod:`ringprint.analysis.touch`).

The map's geometry (:func:`ringprint.analysis.touch.touch_map`). Touch points are the
exterior air nodes next to the solid (exterior: air connected to the lattice boundary,
so air sealed inside a part is never touched). The solid is every node inside a part
or on a conductor. A wall thinner than a node spacing may hold no node at all (the part
mask takes nodes at least half inside), yet it sits on the Yee edges between two nodes,
and both of them then carry material (their mean permittivity is above air's, or a
conductivity): such a link is a wall, not a way through. So the outside is the air
reached from the lattice boundary along links that are not walls; without that rule the
air inside a thin housing counted as outside, and the "touch" spots sat on the parts
inside it (the tag demo: its 1.5 mm housing wall on 1.8 mm cells). Each point's outward normal is minus the gradient of the solid indicator
smoothed by a Gaussian of one node. The pad at a touch point is every exterior node
within ``pad_radius_m`` of it: a ball of tissue cut by the surface, about a fingertip
pressed flat (default radius 5 mm, a contact about 10 mm across, common practice). On a
coarse lattice (radius below one spacing) the pad is the touch node alone. Every node
of the pad counts with the volume it stands for
(:meth:`~ringprint.analysis.fieldset.FieldSet.node_volumes`). Every point is computed
at once from the products ``Re(E_a E_b*)`` over exterior nodes, combined with each
point's normal: on a uniform lattice the products are convolved with the ball (FFT,
every node the same volume); on a graded one each point sums its own ball's nodes,
found with a k-d tree (Bentley, J. L., Commun. ACM 18(9):509-517, 1975), each times its
node volume, gathered in a sparse matrix built once for all modes. Both give the same
sums on a uniform lattice (to rounding).
"""

from __future__ import annotations

import numbers
import os

import numpy as np
import scipy.fft
from scipy import ndimage, signal
from scipy.spatial import cKDTree

from ringprint.analysis.fieldset import FieldSet, ModeField
from ringprint.errors import RingprintError

__all__ = ["PAD_METHODS", "TouchSurface", "exterior_air", "material_nodes", "pad_sums", "solid_nodes",
           "touch_points"]

#: How the pad sums are taken: "auto" (FFT on a uniform lattice, else direct), "fft", "direct".
PAD_METHODS = ("auto", "fft", "direct")
#: Touch points per block of the direct pad sums (bounds the pair lists in memory).
_DIRECT_BLOCK = 2048
#: The six products Re(E_a E_b*) a pad sums: xx, yy, zz, xy, xz, yz.
PAIRS = ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2))


#: A node's permittivity above this (the mean over its six edges) means material there.
MATERIAL_EPS = 1.0 + 1e-4


def solid_nodes(fs: FieldSet) -> np.ndarray:
    """Nodes inside a part or on a conductor (what a hand cannot enter)."""
    return fs.solid() | np.asarray(fs.pec, dtype=bool)


def material_nodes(fs: FieldSet) -> np.ndarray:
    """Nodes inside a part or with any material on their edges (permittivity, conductivity)."""
    material = (np.asarray(fs.eps_r) > MATERIAL_EPS) | (np.asarray(fs.sigma) > 0)
    return solid_nodes(fs) | material


def exterior_air(fs: FieldSet) -> np.ndarray:
    """Air nodes reached from the lattice boundary through air: the air a hand can reach.

    Links join 6-neighbour air nodes, except where both ends carry material (a wall lies
    between them; module docstring)."""
    solid = solid_nodes(fs)
    if not solid.any():
        raise RingprintError("the lattice has no solid part to touch; a touch map needs at least one part")
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    touched = material_nodes(fs)
    ids = np.arange(solid.size).reshape(solid.shape)
    rows, cols = [], []
    for a in range(3):
        lo = [slice(None)] * 3
        hi = [slice(None)] * 3
        lo[a], hi[a] = slice(0, -1), slice(1, None)
        lo, hi = tuple(lo), tuple(hi)
        link = ~solid[lo] & ~solid[hi] & ~(touched[lo] & touched[hi])
        rows.append(ids[lo][link])
        cols.append(ids[hi][link])
    rows, cols = np.concatenate(rows), np.concatenate(cols)
    graph = coo_matrix((np.ones(rows.size, np.int8), (rows, cols)), shape=(solid.size, solid.size))
    _, labels = connected_components(graph, directed=False)
    labels = labels.reshape(solid.shape)
    faces = np.concatenate([labels[[0, -1]].ravel(), labels[:, [0, -1]].ravel(),
                            labels[:, :, [0, -1]].ravel()])
    boundary_air = np.concatenate([(~solid)[[0, -1]].ravel(), (~solid)[:, [0, -1]].ravel(),
                                   (~solid)[:, :, [0, -1]].ravel()])
    outside = np.unique(faces[boundary_air])
    if outside.size == 0:
        raise RingprintError("no air reaches the lattice boundary, so nothing can be touched; "
                             "leave air around the parts")
    return np.isin(labels, outside) & ~solid


def touch_points(fs: FieldSet, exterior: np.ndarray | None = None):
    """Touch nodes and their outward unit normals.

    Returns ``(index (m, 3) int, normals (m, 3))``: exterior air nodes beside the
    inside (a 6-neighbour that is solid, or is not exterior, or material on the node
    itself: a thin wall beside it), and minus the gradient (central differences) of the
    inside indicator (every node that is not exterior air) smoothed by a Gaussian of one
    node. Where that gradient vanishes (a node midway in
    a one-node slot) the normal is the axis with most solid neighbours; its sign is
    then arbitrary, which the local-field correction does not see.
    """
    ext = exterior_air(fs) if exterior is None else exterior
    solid = ~ext
    idx = np.argwhere(ext & (ndimage.binary_dilation(solid) | material_nodes(fs)))
    if idx.shape[0] == 0:
        raise RingprintError("no outside air node touches a part, so nothing can be touched; "
                             "leave air around the parts")
    smooth = ndimage.gaussian_filter(solid.astype(np.float32), sigma=1.0, mode="nearest")
    grad = np.empty((idx.shape[0], 3))
    counts = np.zeros((idx.shape[0], 3))
    for a in range(3):
        up, down = idx.copy(), idx.copy()
        up[:, a] = np.minimum(idx[:, a] + 1, fs.shape[a] - 1)
        down[:, a] = np.maximum(idx[:, a] - 1, 0)
        grad[:, a] = smooth[tuple(up.T)] - smooth[tuple(down.T)]
        counts[:, a] = (solid[tuple(up.T)] & (up[:, a] != idx[:, a])).astype(float) \
            + (solid[tuple(down.T)] & (down[:, a] != idx[:, a]))
    normals = -grad
    size = np.linalg.norm(normals, axis=1)
    flat = size <= 1e-6
    normals[flat] = np.eye(3)[np.argmax(counts[flat], axis=1)]
    size[flat] = 1.0
    return idx, normals / size[:, None]


def _ball(radius_nodes: float) -> np.ndarray:
    r = int(np.floor(radius_nodes + 1e-9))
    o = np.arange(-r, r + 1)
    d2 = o[:, None, None] ** 2 + o[None, :, None] ** 2 + o[None, None, :] ** 2
    return (d2 <= radius_nodes ** 2 + 1e-9).astype(float)


class TouchSurface:
    """What every mode's map shares: touch nodes, normals, and how each pad is summed.

    ``method`` "fft": the ball kernel in nodes and the crop box (uniform lattice only);
    "direct": the sparse pad matrix and the exterior nodes it reaches (:func:`_pad_matrix`).
    """

    def __init__(self, fs: FieldSet, pad_radius_m: float, method: str = "auto"):
        if not (isinstance(pad_radius_m, numbers.Real) and np.isfinite(pad_radius_m) and pad_radius_m >= 0):
            raise RingprintError(f"pad_radius_m must be a length >= 0 in metres, got {pad_radius_m!r}")
        if method not in PAD_METHODS:
            raise RingprintError(f"pad method {method!r} is not known; use one of {', '.join(PAD_METHODS)}")
        if min(fs.shape) < 2:
            raise RingprintError(f"the lattice is {fs.shape} nodes; a touch map needs at least two "
                                 "nodes along each axis")
        uniform = fs.uniform
        if method == "fft" and not uniform:
            raise RingprintError("the FFT pad sum needs a uniform lattice; this one is graded, use "
                                 "method 'direct' or 'auto'")
        self.method = "fft" if method == "fft" or (method == "auto" and uniform) else "direct"
        self.exterior = exterior_air(fs)
        self.index, self.normals = touch_points(fs, self.exterior)
        self.points = np.stack([fs.x[self.index[:, 0]], fs.y[self.index[:, 1]],
                                fs.z[self.index[:, 2]]], axis=1)
        if self.method == "fft":
            self.cell_volume = fs.cell_volume
            self.kernel = _ball(pad_radius_m / fs.spacing)
            r = self.kernel.shape[0] // 2
            lo = np.maximum(self.index.min(axis=0) - r, 0)
            hi = np.minimum(self.index.max(axis=0) + r + 1, fs.shape)
            self.box = tuple(slice(a, b) for a, b in zip(lo, hi))
            self.local = tuple((self.index - lo).T)
        else:
            self.pads, self.nodes = _pad_matrix(fs, self.exterior, self.points, pad_radius_m)


def _pad_matrix(fs: FieldSet, exterior: np.ndarray, points: np.ndarray, radius: float):
    """The pads as a sparse matrix: row p holds, at the exterior nodes within ``radius``
    of point p (its own node included), their node volumes; columns index ``nodes``,
    the flat lattice indices of the exterior nodes any pad reaches. Returns
    ``(matrix, nodes)``."""
    from scipy import sparse

    # a node on the sphere counts, as in _ball: reach a hair beyond the radius
    reach = radius * (1.0 + 1e-9) + 1e-9 * fs.min_step
    lo, hi = points.min(axis=0) - reach, points.max(axis=0) + reach
    near = [(a >= l) & (a <= h) for a, l, h in zip((fs.x, fs.y, fs.z), lo, hi)]
    nodes = np.flatnonzero(exterior & near[0][:, None, None] & near[1][None, :, None]
                           & near[2][None, None, :])
    i, j, k = np.unravel_index(nodes, fs.shape)
    tree = cKDTree(np.stack([fs.x[i], fs.y[j], fs.z[k]], axis=1))
    dv = fs.node_volumes().reshape(-1)[nodes]
    blocks = []
    for b in range(0, points.shape[0], _DIRECT_BLOCK):
        block = points[b:b + _DIRECT_BLOCK]
        pairs = cKDTree(block).sparse_distance_matrix(tree, reach, output_type="ndarray")
        blocks.append(sparse.csr_matrix((dv[pairs["j"]], (pairs["i"], pairs["j"])),
                                        shape=(block.shape[0], nodes.size)))
    return sparse.vstack(blocks, format="csr"), nodes


def pad_sums(fs: FieldSet, m: ModeField, surf: TouchSurface) -> np.ndarray:
    """``sum over the pad of Re(E_a E_b*) dV`` for the six pairs at every touch point (6, m)."""
    if surf.method == "fft":
        e = m.e[(slice(None), *surf.box)].astype(complex)
        ext = surf.exterior[surf.box]
        products = np.stack([np.where(ext, (e[a] * np.conj(e[b])).real, 0.0) for a, b in PAIRS])
        with scipy.fft.set_workers(os.cpu_count() or 1):
            pads = signal.fftconvolve(products, surf.kernel[None], mode="same", axes=(1, 2, 3))
        return pads[(slice(None), *surf.local)] * surf.cell_volume
    e = m.e.reshape(3, -1)[:, surf.nodes].astype(complex)
    products = np.stack([(e[a] * np.conj(e[b])).real for a, b in PAIRS], axis=1)   # (n, 6)
    return np.asarray(surf.pads @ products).T
