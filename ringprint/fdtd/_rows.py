"""Row updates of the fused Yee step (private; inlined into :mod:`ringprint.fdtd._kernels`).

Each helper updates the row [i, j, k0:k1] of a 3-d array (3-d indexing, no views:
making a view per row costs more than a short row's arithmetic). With the
neighbour offsets (di, dj) along i or j:

- H rows: ``h -= c ((p[i+di, j+dj] - p[i, j]) sp - (q[k+1] - q[k]) sq[k])``  (:func:`h_row_k`)
  and ``h -= c ((p[i+1, j] - p[i, j]) sp - (r[i, j+1] - r[i, j]) sr)``  (:func:`h_row_t`);
- E rows: ``f = ca f + cb ((p[i, j] - p[i-di, j-dj]) sp - (q[k] - q[k-1]) sq[k])``
  (:func:`e_row_k`) and ``f = ca f + cb ((p[i, j] - p[i-1, j]) sp - (r[i, j] - r[i, j-1]) sr)``
  (:func:`e_row_t`).

An E row comes in three kinds, told by its entry ``u`` of the per-row table:
``u >= 0`` one medium along the whole row (the coefficients ``ca[u], sg cb[u]`` are
scalars of the loop); ``u == RUNS`` a few runs of one medium each, listed in the
row's slice of the run table ``run = (base, ptr, k0, k1, medium)`` (row
``base[c] + i ny + j`` of component c; one flat table for the three E components,
as numba's parallel loops take a tuple of arrays but not a tuple of tuples), each
run one such scalar loop; ``u == GATHER`` (many short runs) reads ``ca[m], cb[m]``
per cell. The scalar loops have no branch, so LLVM vectorizes them (SIMD over k);
a per-cell gather does not vectorize. The energy versions return
``sum old new w[k]`` (H) / ``sum eps old^2 w[k]`` (E), each product formed in the
field dtype and summed in float64.
"""

from __future__ import annotations

import numpy as np
from numba import njit

FM = {"contract", "reassoc"}  # no nnan/ninf: non-finite values must survive to the guard
#: ``u`` of a row read cell by cell / run by run (see the module docstring).
GATHER = -1
RUNS = -2


@njit(cache=True, inline="always")
def _runs_of(run, c, i, j, ny):
    """The slice ``n0, n1`` of the run table holding row (i, j) of E component c."""
    row = run[0][c] + i * ny + j
    return run[1][row], run[1][row + 1]


@njit(cache=True, inline="always")
def end_media(u, run, c, i, j, ny, klo, khi):
    """The media index of an E row over ``[0, klo)`` and over ``[khi, nz)`` (its z
    layers), ``-1`` where that part of the row holds more than one medium."""
    if u >= 0:
        return np.int64(u), np.int64(u)
    if u == RUNS:
        n0, n1 = _runs_of(run, c, i, j, ny)
        rs, re, rm = run[2], run[3], run[4]
        lo = rm[n0] if re[n0] >= klo else np.int64(-1)
        hi = rm[n1 - 1] if rs[n1 - 1] <= khi else np.int64(-1)
        return lo, hi
    return np.int64(-1), np.int64(-1)


@njit(cache=True, fastmath=FM, inline="always")
def h_row_k(h, p, q, i, j, di, dj, sp, sq, c, w, en):
    s = 0.0
    i1, j1 = i + di, j + dj
    if en:
        for k in range(h.shape[2]):
            old = h[i, j, k]
            new = old - c * ((p[i1, j1, k] - p[i, j, k]) * sp
                             - (q[i, j, k + 1] - q[i, j, k]) * sq[k])
            h[i, j, k] = new
            s += np.float64(old * new * w[k])
    else:
        for k in range(h.shape[2]):
            h[i, j, k] = h[i, j, k] - c * ((p[i1, j1, k] - p[i, j, k]) * sp
                                           - (q[i, j, k + 1] - q[i, j, k]) * sq[k])
    return s


@njit(cache=True, fastmath=FM, inline="always")
def h_row_t(h, p, r, i, j, sp, sr, c, w, en):
    s = 0.0
    if en:
        for k in range(h.shape[2]):
            old = h[i, j, k]
            new = old - c * ((p[i + 1, j, k] - p[i, j, k]) * sp
                             - (r[i, j + 1, k] - r[i, j, k]) * sr)
            h[i, j, k] = new
            s += np.float64(old * new * w[k])
    else:
        for k in range(h.shape[2]):
            h[i, j, k] = h[i, j, k] - c * ((p[i + 1, j, k] - p[i, j, k]) * sp
                                           - (r[i, j + 1, k] - r[i, j, k]) * sr)
    return s


@njit(cache=True, fastmath=FM, inline="always")
def _e_seg_k(f, p, q, i, j, i0, j0, sp, sq, k0, k1, a, b, w, en):
    """One medium on f[i, j, k0:k1] (k-derivative form); returns sum old^2 w."""
    s = 0.0
    if en:
        for kk in range(k0, k1):
            k, kl = np.uint64(kk), np.uint64(kk - 1)  # unsigned: see _e_seg_t
            old = f[i, j, k]
            f[i, j, k] = a * old + b * ((p[i, j, k] - p[i0, j0, k]) * sp
                                        - (q[i, j, k] - q[i, j, kl]) * sq[k])
            s += np.float64(old * old * w[k])
    else:
        for kk in range(k0, k1):
            k, kl = np.uint64(kk), np.uint64(kk - 1)
            f[i, j, k] = a * f[i, j, k] + b * ((p[i, j, k] - p[i0, j0, k]) * sp
                                               - (q[i, j, k] - q[i, j, kl]) * sq[k])
    return s


@njit(cache=True, fastmath=FM, inline="always")
def _e_seg_t(f, p, r, i, j, sp, sr, k0, k1, a, b, w, en):
    """One medium on f[i, j, k0:k1] (transverse form); returns sum old^2 w.

    The k indices are unsigned: a run's bounds are run-time values, and numba's
    wrap-around of a possibly negative signed index keeps LLVM from vectorizing."""
    s = 0.0
    if en:
        for kk in range(k0, k1):
            k = np.uint64(kk)
            old = f[i, j, k]
            f[i, j, k] = a * old + b * ((p[i, j, k] - p[i - 1, j, k]) * sp
                                        - (r[i, j, k] - r[i, j - 1, k]) * sr)
            s += np.float64(old * old * w[k])
    else:
        for kk in range(k0, k1):
            k = np.uint64(kk)
            f[i, j, k] = a * f[i, j, k] + b * ((p[i, j, k] - p[i - 1, j, k]) * sp
                                               - (r[i, j, k] - r[i, j - 1, k]) * sr)
    return s


@njit(cache=True, fastmath=FM, inline="always")
def e_row_k(f, p, q, i, j, di, dj, sp, sq, sg, k0, k1, u, m, ca, cb, ept, w, en, run, c):
    i0, j0 = i - di, j - dj
    if u >= 0:
        return _e_seg_k(f, p, q, i, j, i0, j0, sp, sq, k0, k1, ca[u], sg * cb[u], w, en) * ept[u]
    s = 0.0
    if u == RUNS:
        n0, n1 = _runs_of(run, c, i, j, f.shape[1])
        for n in range(n0, n1):
            v = run[4][n]
            s += _e_seg_k(f, p, q, i, j, i0, j0, sp, sq, max(k0, run[2][n]), min(k1, run[3][n]),
                          ca[v], sg * cb[v], w, en) * ept[v]
        return s
    for k in range(k0, k1):
        mk = m[i, j, k]
        old = f[i, j, k]
        f[i, j, k] = ca[mk] * old + sg * cb[mk] * ((p[i, j, k] - p[i0, j0, k]) * sp
                                                   - (q[i, j, k] - q[i, j, k - 1]) * sq[k])
        if en:
            s += ept[mk] * np.float64(old * old * w[k])
    return s


@njit(cache=True, fastmath=FM, inline="always")
def e_row_t(f, p, r, i, j, sp, sr, k0, k1, u, m, ca, cb, ept, w, en, run, c):
    if u >= 0:
        return _e_seg_t(f, p, r, i, j, sp, sr, k0, k1, ca[u], cb[u], w, en) * ept[u]
    if u == RUNS:
        s = 0.0
        n0, n1 = _runs_of(run, c, i, j, f.shape[1])
        for n in range(n0, n1):
            v = run[4][n]
            s += _e_seg_t(f, p, r, i, j, sp, sr, max(k0, run[2][n]), min(k1, run[3][n]), ca[v],
                          cb[v], w, en) * ept[v]
        return s
    s = 0.0
    for k in range(k0, k1):
        mk = m[i, j, k]
        old = f[i, j, k]
        f[i, j, k] = ca[mk] * old + cb[mk] * ((p[i, j, k] - p[i - 1, j, k]) * sp
                                              - (r[i, j, k] - r[i, j - 1, k]) * sr)
        if en:
            s += ept[mk] * np.float64(old * old * w[k])
    return s


def row_tables(index, min_run: int = 8):
    """The per-row kinds ``u`` (one array per E component) and the flat run table
    ``(base, ptr, k0, k1, medium)`` of the media index arrays ``index``.

    A row with one medium gets that index; a row whose runs of one medium are on
    average at least ``min_run`` cells long gets :data:`RUNS` and its runs; any
    other row :data:`GATHER`."""
    us, base, ptrs, starts_all, ends_all, meds = [], [0], [], [], [], []
    for m in index:
        nx, ny, nz = m.shape
        flat = m.reshape(nx * ny, nz)
        change = np.ones((nx * ny, nz), bool)
        change[:, 1:] = flat[:, 1:] != flat[:, :-1]
        runs = change.sum(axis=1)
        u = np.where(runs == 1, flat[:, 0].astype(np.int32), np.int32(GATHER))
        use = (runs > 1) & (nz >= min_run * runs)
        u[use] = RUNS
        us.append(u.reshape(nx, ny))
        rows, starts = np.nonzero(change & use[:, None])
        ends = np.full(starts.size, nz, np.int64)
        same = rows[1:] == rows[:-1]
        ends[:-1][same] = starts[1:][same]
        count = np.bincount(rows, minlength=nx * ny)
        ptrs.append(np.cumsum(count) + sum(s.size for s in starts_all))
        starts_all.append(starts)
        ends_all.append(ends)
        meds.append(flat[rows, starts])
        base.append(base[-1] + nx * ny)
    ptr = np.concatenate([[0]] + ptrs).astype(np.int64)
    table = (np.array(base[:3], np.int64), ptr,
             *(np.concatenate(v).astype(np.int64) for v in (starts_all, ends_all, meds)))
    return tuple(us), table
