"""Thin features of an assembly found by axis-parallel rays: walls, gaps and slots.

Rays along each axis (a lattice over the assembly's box: half a nominal cell apart,
at most ``MAX_RAYS`` per side, plus the midpoints between neighbouring part lines,
so every box-shaped region is hit) give, exactly (:func:`ringprint.meshing._rays.crossings`):

- **walls**: the intervals inside one part (its winding number positive);
- **gaps** and **slots**: the empty intervals between two surfaces inside the
  assembly (no solid around them), a *slot* when both surfaces are the same part,
  a *gap* between two different parts.

A wall needs ``WALL_CELLS`` (2) cells across it, a gap or slot ``GAP_CELLS`` (3)
(common practice: one cell inside a wall puts no E-edge fully within it; a gap needs
a field node with an edge on each side). Only intervals that would need a cell below
the nominal one are kept. An interval counts only when a neighbouring ray on each
transverse axis sees the same kind of interval of the same part(s) within 10 % of its
length: grazing chords near a curved silhouette change length quickly from ray to
ray and are dropped, real walls and gaps are not. Features thinner than
``min_feature`` are reported but not refined for (they stay sub-cell).
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass

import numpy as np

from ringprint.meshing import _rays

WALL_CELLS = 2
GAP_CELLS = 3
MAX_RAYS = 256
#: Neighbouring rays agree on a feature when their lengths differ by at most this fraction.
AGREE = 0.10
AXES = "xyz"


@dataclass(frozen=True)
class Refinement:
    """What forced fine cells on one axis.

    ``kind`` is "wall", "gap", "slot" or "dielectric" (the wavelength in a part);
    ``size_m`` the feature's size along ``axis``, ``cell_m`` the largest spacing it
    allows there, ``position`` a point of it (m), ``span`` its extent along the axis
    and ``refined`` False for a feature thinner than the minimum feature size.
    """

    parts: tuple
    kind: str
    axis: str
    size_m: float
    cell_m: float
    position: tuple
    span: tuple
    refined: bool = True


def ray_lattice(lo, hi, spacing, lines=()):
    """Ray positions over ``[lo, hi]``: a regular lattice plus midpoints between lines."""
    n = int(min(MAX_RAYS, max(1, np.ceil((hi - lo) / spacing))))
    regular = lo + (hi - lo) * (np.arange(n) + 0.5) / n
    ln = np.unique(np.asarray(lines, np.float64))
    ln = ln[(ln >= lo) & (ln <= hi)]
    return np.unique(np.concatenate([regular, (ln[:-1] + ln[1:]) / 2]))


def _intervals(surfaces, names, axis, bq, cq, tiny):
    """Per-ray intervals ``(ray, lo, hi, kind, parts)`` of walls, gaps and slots longer
    than ``tiny`` (shorter ones are round-off where two parts touch)."""
    rays, at, dw, who = [], [], [], []
    out = []
    for i, s in enumerate(surfaces):
        rs, a, d = _rays.crossings(s.vertices, s.faces, axis, bq, cq)
        ray = np.repeat(np.arange(len(rs) - 1), np.diff(rs))
        solid = s.kind != "sheet"
        if solid and a.size:
            cs = np.cumsum(d)
            wind = cs - np.r_[0, cs][rs[:-1]][ray]
            j = np.nonzero((ray[:-1] == ray[1:]) & (wind[:-1] > 0) & (np.diff(a) > tiny))[0]
            out += [(ray[k], a[k], a[k + 1], "wall", (names[i],)) for k in j]
        rays.append(ray)
        at.append(a)
        dw.append(d if solid else np.zeros_like(d))
        who.append(np.full(a.size, i))
    ray, a, d, w = (np.concatenate(v) for v in (rays, at, dw, who))
    order = np.lexsort((a, ray))
    ray, a, d, w = ray[order], a[order], d[order], w[order]
    if a.size:
        cs = np.cumsum(d)
        first = np.r_[0, np.nonzero(np.diff(ray))[0] + 1]
        start = np.repeat(np.r_[0, cs][first], np.diff(np.r_[first, a.size]))
        wind = cs - start
        j = np.nonzero((ray[:-1] == ray[1:]) & (wind[:-1] <= 0) & (np.diff(a) > tiny))[0]
        for k in j:
            pair = tuple(sorted({names[w[k]], names[w[k + 1]]}))
            out.append((ray[k], a[k], a[k + 1], "slot" if len(pair) == 1 else "gap", pair))
    return out


def find_features(surfaces, names, axis, lo, hi, cell, min_feature, lines=((), (), ())):
    """Walls, gaps and slots along ``axis`` that need cells finer than ``cell``.

    Parameters
    ----------
    surfaces : list of Surface
        Checked surfaces in metres.
    names : list of str
        The part each surface belongs to (for the records).
    axis : int
        0, 1, 2 for x, y, z.
    lo, hi : array_like
        The assembly's box (m).
    cell : float
        Nominal spacing (m): intervals needing no finer cell are ignored.
    min_feature : float
        Intervals thinner than this are reported with ``refined=False``.
    lines : three sequences
        Part lines per axis; midpoints between them join the ray lattice.

    Returns
    -------
    list of Refinement
        One record per feature (neighbouring rays of equal intervals merged).

    References
    ----------
    Edelsbrunner, H. & Muecke, E. P., ACM Trans. Graph. 9(1):66-104, 1990 (exact
    ray crossings behind the winding numbers).
    """
    b, c = _rays.frame(axis)
    bq = ray_lattice(lo[b], hi[b], cell / 2, lines[b])
    cq = ray_lattice(lo[c], hi[c], cell / 2, lines[c])
    need = {"wall": WALL_CELLS, "gap": GAP_CELLS, "slot": GAP_CELLS}
    tiny = 1e-9 * float(np.max(np.asarray(hi) - np.asarray(lo)))
    cand = [iv for iv in _intervals(surfaces, names, axis, bq, cq, tiny)
            if (iv[2] - iv[1]) / need[iv[3]] < cell]
    by_ray = defaultdict(list)
    for r, a0, a1, kind, parts in cand:
        by_ray[(r % len(bq), r // len(bq))].append((a1 - a0, kind, parts))

    def agrees(ib, ic, size, kind, parts):
        return any(k == kind and p == parts and abs(s - size) <= AGREE * max(s, size)
                   for s, k, p in by_ray.get((ib, ic), ()))

    kept = defaultdict(list)
    for r, a0, a1, kind, parts in cand:
        ib, ic = r % len(bq), r // len(bq)
        size = a1 - a0
        if ((agrees(ib - 1, ic, size, kind, parts) or agrees(ib + 1, ic, size, kind, parts)) and
                (agrees(ib, ic - 1, size, kind, parts) or agrees(ib, ic + 1, size, kind, parts))):
            kept[(kind, parts)].append((a0, a1, bq[ib], cq[ic]))
    records = []
    for (kind, parts), ivs in kept.items():
        ivs.sort()
        groups = []  # [lo, hi, smallest size, its interval]
        for iv in ivs:
            size = iv[1] - iv[0]
            g = groups[-1] if groups else None
            if g is not None and iv[0] <= g[1] and abs(size - g[2]) <= AGREE * max(size, g[2]):
                g[1] = max(g[1], iv[1])
                if size < g[2]:
                    g[2], g[3] = size, iv
            else:
                groups.append([iv[0], iv[1], size, iv])
        for g_lo, g_hi, size, small in groups:
            point = [0.0, 0.0, 0.0]
            point[axis], point[b], point[c] = (small[0] + small[1]) / 2, small[2], small[3]
            records.append(Refinement(parts, kind, AXES[axis], float(size), float(size / need[kind]),
                                      tuple(float(v) for v in point), (float(g_lo), float(g_hi)),
                                      bool(size >= min_feature)))
    return records
