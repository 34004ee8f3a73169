"""Checks and repairs that every surface goes through before it is voxelized."""

import warnings

import numpy as np

from ringprint.errors import RingprintError
from ringprint.meshing import _kernels
from ringprint.meshing._rays import point_inside
from ringprint.meshing.surface import signed_volume

#: Default size below which holes in a would-be solid are closed automatically, as a
#: fraction of the part's bounding-box diagonal. Such holes are export defects
#: (a dropped triangle, an unstitched seam), not design features.
HOLE_FRACTION = 0.01


class MeshingWarning(UserWarning):
    """A surface was accepted but needs the user's attention (one line, names the part)."""


def _edge_table(faces, nv):
    """Directed half-edges (3M, 2), their undirected keys and per-key counts."""
    he = np.stack([faces[:, [0, 1]], faces[:, [1, 2]], faces[:, [2, 0]]], axis=1).reshape(-1, 2)
    key = np.minimum(he[:, 0], he[:, 1]) * np.int64(nv) + np.maximum(he[:, 0], he[:, 1])
    order = np.argsort(key, kind="stable")
    skey = key[order]
    first = np.r_[True, skey[1:] != skey[:-1]]
    gid = np.cumsum(first) - 1
    counts = np.bincount(gid)
    count_of_he = np.empty_like(gid)
    count_of_he[order] = counts[gid]
    return he, order, gid, counts, count_of_he


def _boundary_loops(he, count_of_he):
    """Closed loops of boundary half-edges (vertex index lists)."""
    bnd = he[count_of_he == 1]
    nxt = {}
    for u, v in bnd:
        nxt.setdefault(int(u), []).append(int(v))
    loops = []
    for u0 in list(nxt):
        while nxt.get(u0):
            loop, u = [u0], nxt[u0].pop()
            while u != u0 and nxt.get(u) and len(loop) <= len(bnd):
                loop.append(u)
                u = nxt[u].pop()
            if u == u0 and len(loop) >= 3:
                loops.append(loop)
    return loops


def _fill_small_holes(vertices, faces, he, count_of_he, hole_size):
    """Fan-triangulate boundary loops whose extent is at most ``hole_size``."""
    new_v, new_f, closed = [vertices], [faces], 0
    nv = len(vertices)
    for loop in _boundary_loops(he, count_of_he):
        pts = vertices[loop]
        if np.max(np.ptp(pts, axis=0)) > hole_size:
            continue
        centre = nv
        nv += 1
        new_v.append(pts.mean(axis=0)[None])
        ring = np.array(loop + loop[:1])
        # boundary half-edge u->v belongs to an existing face; the patch runs v->u
        new_f.append(np.stack([ring[1:], ring[:-1], np.full(len(loop), centre)], axis=1))
        closed += 1
    return np.concatenate(new_v), np.concatenate(new_f), closed


def _nesting_depth(vertices, faces, comp, closed_ids):
    """For each closed component, how many other closed components contain it."""
    boxes = {k: (vertices[faces[comp == k]].reshape(-1, 3).min(0),
                 vertices[faces[comp == k]].reshape(-1, 3).max(0)) for k in closed_ids}
    depth = {}
    for k in closed_ids:
        p = vertices[faces[comp == k][0, 0]]
        d = 0
        for j in closed_ids:
            lo, hi = boxes[j]
            if j != k and np.all(p >= lo) and np.all(p <= hi):
                d += point_inside(vertices, faces[comp == j], p)
        depth[k] = d
    return depth


def prepare_surface(surface, conductor=False, hole_size=None):
    """Check, clean and orient a surface; decide whether it is a solid or a sheet.

    Steps: refuse empty surfaces, non-finite coordinates and bad indices; weld
    coincident vertices; drop degenerate (repeated-corner) and duplicate triangles;
    find open edges (not shared by exactly two triangles); make the winding consistent
    across each connected piece; close holes no larger than ``hole_size``; orient each
    closed piece outward (inward for cavities: pieces nested an odd number of times);
    compute the volume by the divergence theorem.

    Parameters
    ----------
    surface : Surface
    conductor : bool
        Whether the part's material is a conductor. Only conductors may be open
        surfaces (zero-thickness sheets).
    hole_size : float or None
        Holes whose boundary loop spans at most this length (in the surface's units)
        are closed by a fan of triangles around their centroid. Default:
        :data:`HOLE_FRACTION` of the bounding-box diagonal. Not applied to conductors,
        which stay sheets when open.

    Returns
    -------
    Surface
        ``kind`` is ``"solid"`` (closed) or ``"sheet"`` (open conductor). An open
        non-conductor is returned as ``"solid"`` with ``open_edges > 0`` after a
        :class:`MeshingWarning` that counts the open edges and says how to fix it.

    Raises
    ------
    RingprintError
        Empty surface, non-finite coordinates, bad face indices.

    References
    ----------
    Nooruddin, F. S. & Turk, G., "Simplification and repair of polygonal models using
    volumetric techniques", IEEE TVCG 9(2):191-205, 2003 (ray parity on imperfect
    meshes); divergence theorem volume as in :func:`signed_volume`.
    """
    label = f"part {surface.name!r} ({surface.source or 'no file'})"
    v = np.asarray(surface.vertices, np.float64)
    f = np.asarray(surface.faces)
    if v.ndim != 2 or v.shape[1] != 3 or f.ndim != 2 or f.shape[1] != 3 or len(f) == 0 or len(v) == 0:
        raise RingprintError(f"{label} has no triangles: export the part as a triangle surface "
                             "(STL/OBJ/PLY) or a solid (STEP/IGES)")
    if not np.all(np.isfinite(v)):
        bad = int(np.count_nonzero(~np.all(np.isfinite(v), axis=1)))
        raise RingprintError(f"{label} has {bad} vertices with NaN/inf coordinates: "
                             "re-export the mesh from the CAD tool")
    f = f.astype(np.int64)
    if f.min() < 0 or f.max() >= len(v):
        raise RingprintError(f"{label} refers to vertex indices outside 0..{len(v) - 1}: "
                             "the file is corrupt, re-export it")
    notes = []
    # weld: identical coordinates become one vertex (STL stores each corner apart)
    uv, inv = np.unique(v, axis=0, return_inverse=True)
    f = inv.reshape(-1)[f]
    v = uv
    degenerate = (f[:, 0] == f[:, 1]) | (f[:, 1] == f[:, 2]) | (f[:, 2] == f[:, 0])
    if degenerate.any():
        notes.append(f"removed {int(degenerate.sum())} degenerate triangles")
        f = f[~degenerate]
    _, keep = np.unique(np.sort(f, axis=1), axis=0, return_index=True)
    if len(keep) < len(f):
        notes.append(f"removed {len(f) - len(keep)} duplicate triangles")
        f = f[np.sort(keep)]
    if len(f) == 0:
        raise RingprintError(f"{label} has only degenerate triangles: re-export the mesh")
    diag = float(np.linalg.norm(np.ptp(v, axis=0)))
    if hole_size is None:
        hole_size = HOLE_FRACTION * diag

    he, order, gid, counts, count_of_he = _edge_table(f, len(v))
    if np.any(counts != 2) and not conductor and hole_size > 0:
        flip, _, _ = _orient(f, he, order, gid, counts)  # patches follow the winding
        f = np.where(flip[:, None], f[:, [0, 2, 1]], f)
        he, order, gid, counts, count_of_he = _edge_table(f, len(v))
        v, f, closed = _fill_small_holes(v, f, he, count_of_he, hole_size)
        if closed:
            notes.append(f"closed {closed} holes smaller than {hole_size:.3g}")
            he, order, gid, counts, count_of_he = _edge_table(f, len(v))
    flip, comp, clash = _orient(f, he, order, gid, counts)
    if flip.any():
        notes.append(f"re-wound {int(flip.sum())} triangles to a consistent orientation")
    if clash:
        notes.append("the surface is not orientable (Moebius-like): inside/outside is ill-defined")
    f = np.where(flip[:, None], f[:, [0, 2, 1]], f)
    n_open = int(np.count_nonzero(counts != 2))
    open_faces = np.zeros(len(f), bool)
    open_faces[order[np.isin(gid, np.flatnonzero(counts != 2))] // 3] = True
    ncomp = int(comp.max()) + 1
    comp_open = np.bincount(comp[open_faces], minlength=ncomp) > 0
    closed_ids = [k for k in range(ncomp) if not comp_open[k]]
    depth = _nesting_depth(v, f, comp, closed_ids) if len(closed_ids) > 1 else {k: 0 for k in closed_ids}
    volume = 0.0
    for k in closed_ids:
        sel = comp == k
        vol = signed_volume(v, f[sel])
        if (vol < 0) != (depth[k] % 2 == 1):
            f[sel] = f[sel][:, [0, 2, 1]]
            vol = -vol
        volume += vol
    if n_open == 0:
        kind = "solid"
    elif conductor:
        kind, volume = "sheet", 0.0
        notes.append(f"open surface ({n_open} open edges): treated as a zero-thickness conductor sheet")
    else:
        kind = "solid"
        msg = (f"{label}: solid has {n_open} open edges (holes larger than {hole_size:.3g}); "
               "its fill may streak: close the holes in the CAD tool, pass a larger hole_size, "
               "or make the material a conductor to treat it as a sheet")
        warnings.warn(msg, MeshingWarning, stacklevel=2)
        notes.append(msg)
    used = np.unique(f)
    remap = np.zeros(len(v), np.int64)
    remap[used] = np.arange(len(used))
    return surface.with_(vertices=v[used], faces=np.ascontiguousarray(remap[f]), kind=kind,
                         volume=float(volume), open_edges=n_open, notes=tuple(notes))


def _orient(f, he, order, gid, counts):
    nbr = -np.ones((len(f), 3), np.int64)
    same = np.zeros((len(f), 3), np.bool_)
    starts = np.flatnonzero(np.r_[True, gid[1:] != gid[:-1]])
    two = starts[counts[gid[starts]] == 2]
    h1, h2 = order[two], order[two + 1]
    f1, e1, f2, e2 = h1 // 3, h1 % 3, h2 // 3, h2 % 3
    nbr[f1, e1], nbr[f2, e2] = f2, f1
    s = he[h1, 0] == he[h2, 0]
    same[f1, e1], same[f2, e2] = s, s
    return _kernels.orient_faces(f, nbr, same)
