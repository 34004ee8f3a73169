"""numba kernels of the meshing layer (private; the public wrappers validate inputs).

Everything here works in a "ray frame" (a, b, c): rays run along axis ``a``; ``b`` and
``c`` are the two transverse axes in cyclic order ((y, z) for rays along x, (z, x)
along y, (x, y) along z), so that the a-component of a triangle normal is
``(b1 - b0)(c2 - c0) - (c1 - c0)(b2 - b0)``.

Rays sit on a tensor lattice of transverse positions ``bq`` (sorted) x ``cq``
(sorted); ray ``r = ic * len(bq) + ib``. Triangles are binned per lattice row (one
``cq`` value) so that each row is processed independently in parallel.

Robustness: a ray that passes exactly through a triangle edge or vertex is treated as
if displaced by (+eps, +eps^2) in (b, c) (symbolic perturbation, Edelsbrunner & Muecke
1990). Each edge predicate is evaluated with the edge's endpoints in a canonical order
so the two triangles sharing an edge always agree: a closed surface is crossed an even
number of times by every ray, whatever it hits exactly.
"""

import numpy as np
from numba import njit, prange


@njit(cache=True, inline="always")
def _edge_side(b0, c0, b1, c1, pb, pc):
    """Sign (+1/-1, 0 for a degenerate edge) of point p left of the line v0->v1,
    with the symbolic perturbation and canonical evaluation order."""
    swap = (b1 < b0) or (b1 == b0 and c1 < c0)
    if swap:
        b0, c0, b1, c1 = b1, c1, b0, c0
    e = (b1 - b0) * (pc - c0) - (c1 - c0) * (pb - b0)
    g = e
    if g == 0.0:
        # perturbed point (pb + eps, pc + eps^2): e' = -(c1-c0) eps + (b1-b0) eps^2
        if c1 != c0:
            g = -(c1 - c0)
        else:
            g = b1 - b0
    s = 0.0
    if g > 0.0:
        s = 1.0
    elif g < 0.0:
        s = -1.0
    if swap:
        s = -s
        e = -e
    return s, e


@njit(cache=True)
def _hit(tb, tc, ta, t, pb, pc):
    """Return (winding delta, a-coordinate) of the ray (pb, pc) against triangle t;
    delta 0 when it misses. delta = +1 entering (normal against +a), -1 leaving."""
    b0 = tb[t, 0]
    b1 = tb[t, 1]
    b2 = tb[t, 2]
    c0 = tc[t, 0]
    c1 = tc[t, 1]
    c2 = tc[t, 2]
    s2, e2 = _edge_side(b0, c0, b1, c1, pb, pc)  # opposite vertex 2
    s0, e0 = _edge_side(b1, c1, b2, c2, pb, pc)  # opposite vertex 0
    s1, e1 = _edge_side(b2, c2, b0, c0, pb, pc)  # opposite vertex 1
    if s0 == 0.0 or s0 != s1 or s0 != s2:
        return 0, 0.0
    # barycentric weights from the exact edge functions (perturbation only decides
    # the side; the crossing point uses the unperturbed values, clipped to >= 0)
    w0 = abs(e0) if (e0 > 0) == (s0 > 0) else 0.0
    w1 = abs(e1) if (e1 > 0) == (s0 > 0) else 0.0
    w2 = abs(e2) if (e2 > 0) == (s0 > 0) else 0.0
    den = w0 + w1 + w2
    if den > 0.0:
        a = (w0 * ta[t, 0] + w1 * ta[t, 1] + w2 * ta[t, 2]) / den
    else:
        a = (ta[t, 0] + ta[t, 1] + ta[t, 2]) / 3.0
    return (-1 if s0 > 0 else 1), a


@njit(cache=True)
def bin_rows(tb, tc, bq, cq):
    """Triangles per lattice row: CSR (row_start, row_tris) plus per-triangle b-index
    range [blo, bhi) of lattice columns its projection can reach."""
    m = tb.shape[0]
    nc = cq.shape[0]
    clo = np.empty(m, np.int64)
    chi = np.empty(m, np.int64)
    blo = np.empty(m, np.int64)
    bhi = np.empty(m, np.int64)
    count = np.zeros(nc + 1, np.int64)
    for t in range(m):
        cmin = min(tc[t, 0], min(tc[t, 1], tc[t, 2]))
        cmax = max(tc[t, 0], max(tc[t, 1], tc[t, 2]))
        bmin = min(tb[t, 0], min(tb[t, 1], tb[t, 2]))
        bmax = max(tb[t, 0], max(tb[t, 1], tb[t, 2]))
        clo[t] = np.searchsorted(cq, cmin, side="left")
        chi[t] = np.searchsorted(cq, cmax, side="right")
        blo[t] = np.searchsorted(bq, bmin, side="left")
        bhi[t] = np.searchsorted(bq, bmax, side="right")
        if bhi[t] <= blo[t]:
            chi[t] = clo[t]
        for r in range(clo[t], chi[t]):
            count[r + 1] += 1
    for r in range(nc):
        count[r + 1] += count[r]
    fill = count[:-1].copy()
    tris = np.empty(count[nc], np.int64)
    for t in range(m):
        for r in range(clo[t], chi[t]):
            tris[fill[r]] = t
            fill[r] += 1
    return count, tris, blo, bhi


@njit(parallel=True, cache=True)
def count_crossings(tb, tc, ta, bq, cq, row_start, row_tris, blo, bhi):
    """Number of crossings of each lattice ray."""
    nb = bq.shape[0]
    nc = cq.shape[0]
    counts = np.zeros(nb * nc, np.int64)
    for ic in prange(nc):
        pc = cq[ic]
        for q in range(row_start[ic], row_start[ic + 1]):
            t = row_tris[q]
            for ib in range(blo[t], bhi[t]):
                d, a = _hit(tb, tc, ta, t, bq[ib], pc)
                if d != 0:
                    counts[ic * nb + ib] += 1
    return counts


@njit(parallel=True, cache=True)
def fill_crossings(tb, tc, ta, bq, cq, row_start, row_tris, blo, bhi, ray_start):
    """Crossing a-coordinates and winding deltas per ray, sorted along each ray."""
    nb = bq.shape[0]
    nc = cq.shape[0]
    total = ray_start[nb * nc]
    at = np.empty(total, np.float64)
    dw = np.empty(total, np.int8)
    for ic in prange(nc):
        pc = cq[ic]
        pos = ray_start[ic * nb:(ic + 1) * nb].copy()
        for q in range(row_start[ic], row_start[ic + 1]):
            t = row_tris[q]
            for ib in range(blo[t], bhi[t]):
                d, a = _hit(tb, tc, ta, t, bq[ib], pc)
                if d != 0:
                    at[pos[ib]] = a
                    dw[pos[ib]] = d
                    pos[ib] += 1
        for ib in range(nb):  # insertion sort: a ray has few crossings
            r = ic * nb + ib
            for u in range(ray_start[r] + 1, ray_start[r + 1]):
                av = at[u]
                dv = dw[u]
                v = u - 1
                while v >= ray_start[r] and at[v] > av:
                    at[v + 1] = at[v]
                    dw[v + 1] = dw[v]
                    v -= 1
                at[v + 1] = av
                dw[v + 1] = dv
    return at, dw


@njit(parallel=True, cache=True)
def edge_fractions(ray_start, at, dw, anodes, nsub, out):
    """Fraction of each edge [anodes[i], anodes[i+1]] inside (winding > 0) along
    every ray. Ray r = ic * nbq + ib with ib = jb * nsub + mb, ic = jc * nsub + mc
    writes out[mb * nsub + mc, :, jb, jc] (out viewed in the (a, b, c) frame)."""
    nbq = out.shape[2] * nsub
    ncq = out.shape[3] * nsub
    na = anodes.shape[0] - 1
    for ic in prange(ncq):
        jc = ic // nsub
        mc = ic - jc * nsub
        for ib in range(nbq):
            jb = ib // nsub
            mb = ib - jb * nsub
            s = mb * nsub + mc
            r = ic * nbq + ib
            w = 0
            start = 0.0
            for u in range(ray_start[r], ray_start[r + 1]):
                wnew = w + dw[u]
                if w <= 0 and wnew > 0:
                    start = at[u]
                elif w > 0 and wnew <= 0:
                    stop = at[u]
                    lo = max(start, anodes[0])
                    hi = min(stop, anodes[na])
                    if hi > lo:
                        i = max(np.searchsorted(anodes, lo, side="right") - 1, 0)
                        while i < na and anodes[i] < hi:
                            seg = min(hi, anodes[i + 1]) - max(lo, anodes[i])
                            if seg > 0.0:
                                out[s, i, jb, jc] += seg / (anodes[i + 1] - anodes[i])
                            i += 1
                w = wnew


@njit(parallel=True, cache=True)
def mark_cuts(ray_start, at, dual, out):
    """Mark out[k, ib, ic] when ray (ib, ic) is crossed at a in [dual[k], dual[k+1])."""
    nb = out.shape[1]
    nc = out.shape[2]
    nk = dual.shape[0] - 1
    for ic in prange(nc):
        for ib in range(nb):
            r = ic * nb + ib
            for u in range(ray_start[r], ray_start[r + 1]):
                k = np.searchsorted(dual, at[u], side="right") - 1
                if 0 <= k < nk:
                    out[k, ib, ic] = True


@njit(cache=True)
def orient_faces(faces, nbr, nbr_same):
    """Propagate a consistent orientation across manifold edges (breadth first).

    nbr[f, e] is the face sharing edge e of face f through a manifold edge (-1 none);
    nbr_same[f, e] is True when both faces run that edge in the same direction.
    Returns (flip flags, component label per face, number of faces that could not be
    made consistent: non-zero means a non-orientable surface)."""
    m = faces.shape[0]
    flip = np.zeros(m, np.bool_)
    comp = -np.ones(m, np.int64)
    stack = np.empty(m, np.int64)
    clash = 0
    ncomp = 0
    for seed in range(m):
        if comp[seed] >= 0:
            continue
        comp[seed] = ncomp
        top = 0
        stack[top] = seed
        top += 1
        while top > 0:
            top -= 1
            f = stack[top]
            for e in range(3):
                g = nbr[f, e]
                if g < 0:
                    continue
                want = flip[f] ^ nbr_same[f, e]
                if comp[g] < 0:
                    comp[g] = ncomp
                    flip[g] = want
                    stack[top] = g
                    top += 1
                elif flip[g] != want:
                    clash += 1
        ncomp += 1
    return flip, comp, clash
