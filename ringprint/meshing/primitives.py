"""Closed, outward-oriented triangle surfaces of simple shapes (tests and demo parts)."""

import numpy as np

from ringprint.meshing.surface import Surface, signed_volume


def _grid_surface(name, pts, nu, nv, wrap_v):
    """Quad grid (nu rows, nv columns, periodic in u; in v if wrap_v) -> triangles."""
    i, j = np.meshgrid(np.arange(nu), np.arange(nv if wrap_v else nv - 1), indexing="ij")
    a = i * nv + j
    b = ((i + 1) % nu) * nv + j
    c = ((i + 1) % nu) * nv + (j + 1) % nv
    d = i * nv + (j + 1) % nv
    faces = np.concatenate([np.stack([a, b, c], -1).reshape(-1, 3), np.stack([a, c, d], -1).reshape(-1, 3)])
    return name, pts, faces


def _outward(name, pts, faces):
    if signed_volume(pts, faces) < 0:
        faces = faces[:, [0, 2, 1]]
    s = Surface(name, np.asarray(pts, np.float64), np.ascontiguousarray(faces, dtype=np.int64))
    return s.with_(volume=abs(signed_volume(s.vertices, s.faces)))


def box(lo, hi, name="box"):
    """Axis-aligned box with corners ``lo`` and ``hi`` (12 triangles)."""
    lo, hi = np.asarray(lo, float), np.asarray(hi, float)
    corner = np.array([[i, j, k] for i in (0, 1) for j in (0, 1) for k in (0, 1)], float)
    pts = lo + corner * (hi - lo)
    quads = [(0, 1, 3, 2), (4, 6, 7, 5), (0, 4, 5, 1), (2, 3, 7, 6), (0, 2, 6, 4), (1, 5, 7, 3)]
    faces = np.array([t for q in quads for t in ((q[0], q[1], q[2]), (q[0], q[2], q[3]))])
    return _outward(name, pts, faces)


def sphere(radius, centre=(0, 0, 0), n=48, name="sphere"):
    """UV sphere: ``n`` segments around, ``n // 2`` rings, two pole vertices."""
    nr = max(n // 2, 2)
    th = np.pi * np.arange(1, nr) / nr
    ph = 2 * np.pi * np.arange(n) / n
    T, P = np.meshgrid(th, ph, indexing="ij")
    ring = np.stack([np.sin(T) * np.cos(P), np.sin(T) * np.sin(P), np.cos(T)], -1).reshape(-1, 3)
    pts = np.concatenate([ring, [[0, 0, 1], [0, 0, -1]]]) * radius + np.asarray(centre, float)
    rows = nr - 1
    i, j = np.meshgrid(np.arange(rows - 1), np.arange(n), indexing="ij")
    a, b = i * n + j, (i + 1) * n + j
    c, d = (i + 1) * n + (j + 1) % n, i * n + (j + 1) % n
    body = np.concatenate([np.stack([a, b, c], -1).reshape(-1, 3), np.stack([a, c, d], -1).reshape(-1, 3)])
    k = np.arange(n)
    top = np.stack([np.full(n, rows * n), k, (k + 1) % n], -1)
    bot = np.stack([np.full(n, rows * n + 1), (rows - 1) * n + (k + 1) % n, (rows - 1) * n + k], -1)
    return _outward(name, pts, np.concatenate([body, top, bot]))


def torus(major, minor, centre=(0, 0, 0), n_major=64, n_minor=32, name="torus"):
    """Torus about the z axis."""
    u = 2 * np.pi * np.arange(n_major) / n_major
    v = 2 * np.pi * np.arange(n_minor) / n_minor
    U, V = np.meshgrid(u, v, indexing="ij")
    r = major + minor * np.cos(V)
    pts = np.stack([r * np.cos(U), r * np.sin(U), minor * np.sin(V)], -1).reshape(-1, 3)
    _, _, faces = _grid_surface(name, pts, n_major, n_minor, True)
    return _outward(name, pts + np.asarray(centre, float), faces)


def cylinder(radius, height, centre=(0, 0, 0), n=48, name="cylinder"):
    """Closed cylinder along z (two caps fanned from their centres)."""
    ph = 2 * np.pi * np.arange(n) / n
    ring = np.stack([radius * np.cos(ph), radius * np.sin(ph)], -1)
    zb, zt = -height / 2, height / 2
    pts = np.concatenate([np.c_[ring, np.full(n, zb)], np.c_[ring, np.full(n, zt)], [[0, 0, zb], [0, 0, zt]]])
    k = np.arange(n)
    k1 = (k + 1) % n
    side = np.concatenate([np.stack([k, k1, n + k1], -1), np.stack([k, n + k1, n + k], -1)])
    caps = np.concatenate([np.stack([np.full(n, 2 * n), k1, k], -1), np.stack([np.full(n, 2 * n + 1), n + k, n + k1], -1)])
    return _outward(name, pts + np.asarray(centre, float), np.concatenate([side, caps]))


def plate(lo, hi, z, name="plate"):
    """Zero-thickness rectangle normal to z (an open sheet) with corners lo, hi (x, y)."""
    pts = np.array([[lo[0], lo[1], z], [hi[0], lo[1], z], [hi[0], hi[1], z], [lo[0], hi[1], z]], float)
    return Surface(name, pts, np.array([[0, 1, 2], [0, 2, 3]], np.int64))
