"""numba kernels of the Yee update (private; wrapped by :mod:`ringprint.fdtd.simulation`).

Layout: every field array is C-contiguous; loops run ``prange`` over the first
index and innermost over the last. The main sweeps touch only edges/faces whose
neighbours all exist and have no per-cell branch: after a row ``[i, j, :]`` is
updated, the CPML correction of that row runs as its own short loop over the
layer part of the row (z layers), or over the whole row when the row lies in an
x or y layer (a per-row test). The psi arrays exist only inside the layers.
E rows on PMC walls are updated by :func:`update_e_box` and :func:`cpml_rows`.
Rows whose media index is the same along k use hoisted coefficients (no table
gathers); mixed rows read ``ca[m], cb[m]`` per cell.

When ``en`` is true the main sweeps also return the energy sums of the half-step
energy form
(Taflove & Hagness 2005): the E sweep sums ``eps E^n . E^n w`` over the old values,
the H sweep ``mu0 H^(n-1/2) . H^(n+1/2) w``, with per-axis weights ``w`` that are
zero outside the region the energy is reported for.
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange


_FM = {"contract", "reassoc"}  # no nnan/ninf: non-finite values must survive to the guard


# Row helpers of the CPML recursive convolution (Roden & Gedney 2000): for one row
# f[i, j, k0:k1], psi = b psi + a (g[p+o] - g[p+o-1]) along the layer axis p (``a``
# already holds the inverse spacing; o = 0 for E terms, 1 for H terms), then
# f += sign * c * psi with c = coef[m[i, j, k]] (E: the cb table) or coef[0] (H).
# psi is indexed like f with the layer axis shifted by its first index p0.

@njit(cache=True, fastmath=_FM)
def _xrow(f, g, m, coef, use_table, psi, b, a, p0, o, sign, i, j, k0, k1):
    bi, ai = b[i], a[i]
    for k in range(k0, k1):
        q = bi * psi[i - p0, j, k] + ai * (g[i + o, j, k] - g[i + o - 1, j, k])
        psi[i - p0, j, k] = q
        c = coef[m[i, j, k]] if use_table else coef[0]
        f[i, j, k] += sign * c * q


@njit(cache=True, fastmath=_FM)
def _yrow(f, g, m, coef, use_table, psi, b, a, p0, o, sign, i, j, k0, k1):
    bj, aj = b[j], a[j]
    for k in range(k0, k1):
        q = bj * psi[i, j - p0, k] + aj * (g[i, j + o, k] - g[i, j + o - 1, k])
        psi[i, j - p0, k] = q
        c = coef[m[i, j, k]] if use_table else coef[0]
        f[i, j, k] += sign * c * q


@njit(cache=True, fastmath=_FM)
def _zrow(f, g, m, coef, use_table, psi, b, a, p0, o, sign, i, j, k0, k1):
    for k in range(k0, k1):
        q = b[k] * psi[i, j, k - p0] + a[k] * (g[i, j, k + o] - g[i, j, k + o - 1])
        psi[i, j, k - p0] = q
        c = coef[m[i, j, k]] if use_table else coef[0]
        f[i, j, k] += sign * c * q


@njit(cache=True)
def _layer(r, p):
    """Index (0 low, 1 high, -1 none) of the layer range of ``r = (lo0, lo1, hi0, hi1)``
    holding p."""
    if r[0] <= p < r[1]:
        return 0
    if r[2] <= p < r[3]:
        return 1
    return -1


@njit(parallel=True, cache=True, fastmath=_FM)
def update_h(ex, ey, ez, hx, hy, hz, ch, ixh, iyh, izh, mu0,
             wxn, wyn, wzn, wxc, wyc, wzc, mdum, chtab, b, a, r, psi, en):
    """H^(n+1/2) from E^n over all faces, CPML rows included.

    ``b, a``: per-axis CPML coefficients at the cell centres; ``r[axis]`` the cell
    ranges ``(lo0, lo1, hi0, hi1)`` of the two layers; ``psi`` the 12 auxiliary
    arrays ``(Hx y lo, y hi, z lo, z hi, Hy x lo, x hi, z lo, z hi, Hz x lo, x hi,
    y lo, y hi)``. Returns ``sum mu0 H_old H_new w``.
    """
    nx, ny, nz = hx.shape[0], hy.shape[1], hz.shape[2]
    total = 0.0
    for i in prange(nx):
        acc = 0.0
        lx = _layer(r[0], i)
        for j in range(ny - 1):  # Hx (nx, ny-1, nz-1): -dEz/dy, +dEy/dz
            s = 0.0
            for k in range(nz - 1):
                old = hx[i, j, k]
                new = old - ch * ((ez[i, j + 1, k] - ez[i, j, k]) * iyh[j]
                                  - (ey[i, j, k + 1] - ey[i, j, k]) * izh[k])
                hx[i, j, k] = new
                if en:
                    s += np.float64(old) * new * wzc[k]
            acc += s * wxn[i] * wyc[j]
            ly = _layer(r[1], j)
            if ly >= 0:
                _yrow(hx, ez, mdum, chtab, False, psi[ly], b[1], a[1], r[1][2 * ly], 1, -1.0,
                      i, j, 0, nz - 1)
            _zrow(hx, ey, mdum, chtab, False, psi[2], b[2], a[2], r[2][0], 1, 1.0, i, j,
                  r[2][0], r[2][1])
            _zrow(hx, ey, mdum, chtab, False, psi[3], b[2], a[2], r[2][2], 1, 1.0, i, j,
                  r[2][2], r[2][3])
        if i < nx - 1:
            for j in range(ny):  # Hy (nx-1, ny, nz-1): -dEx/dz, +dEz/dx
                s = 0.0
                for k in range(nz - 1):
                    old = hy[i, j, k]
                    new = old - ch * ((ex[i, j, k + 1] - ex[i, j, k]) * izh[k]
                                      - (ez[i + 1, j, k] - ez[i, j, k]) * ixh[i])
                    hy[i, j, k] = new
                    if en:
                        s += np.float64(old) * new * wzc[k]
                acc += s * wxc[i] * wyn[j]
                if lx >= 0:
                    _xrow(hy, ez, mdum, chtab, False, psi[4 + lx], b[0], a[0], r[0][2 * lx], 1, 1.0,
                          i, j, 0, nz - 1)
                _zrow(hy, ex, mdum, chtab, False, psi[6], b[2], a[2], r[2][0], 1, -1.0, i, j,
                      r[2][0], r[2][1])
                _zrow(hy, ex, mdum, chtab, False, psi[7], b[2], a[2], r[2][2], 1, -1.0, i, j,
                      r[2][2], r[2][3])
            for j in range(ny - 1):  # Hz (nx-1, ny-1, nz): -dEy/dx, +dEx/dy
                s = 0.0
                for k in range(nz):
                    old = hz[i, j, k]
                    new = old - ch * ((ey[i + 1, j, k] - ey[i, j, k]) * ixh[i]
                                      - (ex[i, j + 1, k] - ex[i, j, k]) * iyh[j])
                    hz[i, j, k] = new
                    if en:
                        s += np.float64(old) * new * wzn[k]
                acc += s * wxc[i] * wyc[j]
                if lx >= 0:
                    _xrow(hz, ey, mdum, chtab, False, psi[8 + lx], b[0], a[0], r[0][2 * lx], 1, -1.0,
                          i, j, 0, nz)
                ly = _layer(r[1], j)
                if ly >= 0:
                    _yrow(hz, ex, mdum, chtab, False, psi[10 + ly], b[1], a[1], r[1][2 * ly], 1, 1.0,
                          i, j, 0, nz)
        total += acc
    return mu0 * total


@njit(cache=True, fastmath=_FM)
def _curl_x(hy, hz, i, j, k, iye, ize):
    return (hz[i, j, k] - hz[i, j - 1, k]) * iye[j] - (hy[i, j, k] - hy[i, j, k - 1]) * ize[k]


@njit(cache=True, fastmath=_FM)
def _curl_y(hx, hz, i, j, k, ixe, ize):
    return (hx[i, j, k] - hx[i, j, k - 1]) * ize[k] - (hz[i, j, k] - hz[i - 1, j, k]) * ixe[i]


@njit(cache=True, fastmath=_FM)
def _curl_z(hx, hy, i, j, k, ixe, iye):
    return (hy[i, j, k] - hy[i - 1, j, k]) * ixe[i] - (hx[i, j, k] - hx[i, j - 1, k]) * iye[j]


@njit(parallel=True, cache=True, fastmath=_FM)
def update_e(ex, ey, ez, hx, hy, hz, mx, my, mz, ux, uy, uz, ca, cb, epst, ixe, iye, ize,
             wxn, wyn, wzn, wxc, wyc, wzc, b, a, r, psi, en):
    """E^(n+1) from H^(n+1/2) on interior edges, CPML rows included.

    ``b, a``: per-axis CPML coefficients at the nodes; ``r[axis]`` the node ranges
    ``(lo0, lo1, hi0, hi1)`` of the two layers; ``psi`` the 12 auxiliary arrays
    ``(Ex y lo, y hi, z lo, z hi, Ey x lo, x hi, z lo, z hi, Ez x lo, x hi, y lo,
    y hi)``; ``ux, uy, uz`` the media index of each (i, j) row when the whole row has
    one index, else -1. Returns ``sum eps E_old^2 w``.
    """
    nx, ny, nz = ey.shape[0], ex.shape[1], ex.shape[2]
    total = 0.0
    for i in prange(nx):
        acc = 0.0
        lx = _layer(r[0], i)
        if i < nx - 1:
            for j in range(1, ny - 1):  # Ex (nx-1, ny, nz): +dHz/dy, -dHy/dz
                s = 0.0
                u = ux[i, j]
                if u >= 0:  # uniform row: coefficients hoisted, no table gathers
                    cau, cbu = ca[u], cb[u]
                    for k in range(1, nz - 1):
                        old = ex[i, j, k]
                        ex[i, j, k] = cau * old + cbu * _curl_x(hy, hz, i, j, k, iye, ize)
                        if en:
                            s += np.float64(old) * old * wzn[k]
                    s *= epst[u]
                else:
                    for k in range(1, nz - 1):
                        m = mx[i, j, k]
                        old = ex[i, j, k]
                        ex[i, j, k] = ca[m] * old + cb[m] * _curl_x(hy, hz, i, j, k, iye, ize)
                        if en:
                            s += epst[m] * np.float64(old) * old * wzn[k]
                acc += s * wxc[i] * wyn[j]
                ly = _layer(r[1], j)
                if ly >= 0:
                    _yrow(ex, hz, mx, cb, True, psi[ly], b[1], a[1], r[1][2 * ly], 0, 1.0,
                          i, j, 1, nz - 1)
                _zrow(ex, hy, mx, cb, True, psi[2], b[2], a[2], r[2][0], 0, -1.0, i, j,
                      r[2][0], r[2][1])
                _zrow(ex, hy, mx, cb, True, psi[3], b[2], a[2], r[2][2], 0, -1.0, i, j,
                      r[2][2], r[2][3])
        if 0 < i < nx - 1:
            for j in range(ny - 1):  # Ey (nx, ny-1, nz): +dHx/dz, -dHz/dx
                s = 0.0
                u = uy[i, j]
                if u >= 0:
                    cau, cbu = ca[u], cb[u]
                    for k in range(1, nz - 1):
                        old = ey[i, j, k]
                        ey[i, j, k] = cau * old + cbu * _curl_y(hx, hz, i, j, k, ixe, ize)
                        if en:
                            s += np.float64(old) * old * wzn[k]
                    s *= epst[u]
                else:
                    for k in range(1, nz - 1):
                        m = my[i, j, k]
                        old = ey[i, j, k]
                        ey[i, j, k] = ca[m] * old + cb[m] * _curl_y(hx, hz, i, j, k, ixe, ize)
                        if en:
                            s += epst[m] * np.float64(old) * old * wzn[k]
                acc += s * wxn[i] * wyc[j]
                if lx >= 0:
                    _xrow(ey, hz, my, cb, True, psi[4 + lx], b[0], a[0], r[0][2 * lx], 0, -1.0,
                          i, j, 1, nz - 1)
                _zrow(ey, hx, my, cb, True, psi[6], b[2], a[2], r[2][0], 0, 1.0, i, j,
                      r[2][0], r[2][1])
                _zrow(ey, hx, my, cb, True, psi[7], b[2], a[2], r[2][2], 0, 1.0, i, j,
                      r[2][2], r[2][3])
            for j in range(1, ny - 1):  # Ez (nx, ny, nz-1): +dHy/dx, -dHx/dy
                s = 0.0
                u = uz[i, j]
                if u >= 0:
                    cau, cbu = ca[u], cb[u]
                    for k in range(nz - 1):
                        old = ez[i, j, k]
                        ez[i, j, k] = cau * old + cbu * _curl_z(hx, hy, i, j, k, ixe, iye)
                        if en:
                            s += np.float64(old) * old * wzc[k]
                    s *= epst[u]
                else:
                    for k in range(nz - 1):
                        m = mz[i, j, k]
                        old = ez[i, j, k]
                        ez[i, j, k] = ca[m] * old + cb[m] * _curl_z(hx, hy, i, j, k, ixe, iye)
                        if en:
                            s += epst[m] * np.float64(old) * old * wzc[k]
                acc += s * wxn[i] * wyn[j]
                if lx >= 0:
                    _xrow(ez, hy, mz, cb, True, psi[8 + lx], b[0], a[0], r[0][2 * lx], 0, 1.0,
                          i, j, 0, nz - 1)
                ly = _layer(r[1], j)
                if ly >= 0:
                    _yrow(ez, hx, mz, cb, True, psi[10 + ly], b[1], a[1], r[1][2 * ly], 0, -1.0,
                          i, j, 0, nz - 1)
        total += acc
    return total


@njit(cache=True)
def _get(a, i, j, k):
    if i < 0 or j < 0 or k < 0 or i >= a.shape[0] or j >= a.shape[1] or k >= a.shape[2]:
        return 0.0
    return a[i, j, k]


@njit(cache=True)
def update_e_box(comp, lo, hi, ex, ey, ez, hx, hy, hz, mx, my, mz, ca, cb, epst,
                 ixe, iye, ize, wx, wy, wz):
    """Update one E component on the box lo..hi (exclusive), reading H outside the
    arrays as zero (the tangential H of a PMC wall). Returns sum eps E_old^2 w
    with ``wx, wy, wz`` the weights along each axis for this component."""
    total = 0.0
    for i in range(lo[0], hi[0]):
        for j in range(lo[1], hi[1]):
            for k in range(lo[2], hi[2]):
                if comp == 0:
                    m = mx[i, j, k]
                    old = ex[i, j, k]
                    curl = ((_get(hz, i, j, k) - _get(hz, i, j - 1, k)) * iye[j]
                            - (_get(hy, i, j, k) - _get(hy, i, j, k - 1)) * ize[k])
                    ex[i, j, k] = ca[m] * old + cb[m] * curl
                elif comp == 1:
                    m = my[i, j, k]
                    old = ey[i, j, k]
                    curl = ((_get(hx, i, j, k) - _get(hx, i, j, k - 1)) * ize[k]
                            - (_get(hz, i, j, k) - _get(hz, i - 1, j, k)) * ixe[i])
                    ey[i, j, k] = ca[m] * old + cb[m] * curl
                else:
                    m = mz[i, j, k]
                    old = ez[i, j, k]
                    curl = ((_get(hy, i, j, k) - _get(hy, i - 1, j, k)) * ixe[i]
                            - (_get(hx, i, j, k) - _get(hx, i, j - 1, k)) * iye[j])
                    ez[i, j, k] = ca[m] * old + cb[m] * curl
                total += epst[m] * old * old * wx[i] * wy[j] * wz[k]
    return total


@njit(cache=True)
def cpml_rows(axis, f, g, m, coef, use_table, psi, b, a, p0, o, sign, lo, hi):
    """CPML correction on the rows ``lo..hi`` (exclusive) that the main sweeps do not
    visit (E on PMC walls), sharing the psi array of the fused rows."""
    for i in range(lo[0], hi[0]):
        for j in range(lo[1], hi[1]):
            if axis == 0:
                _xrow(f, g, m, coef, use_table, psi, b, a, p0, o, sign, i, j, lo[2], hi[2])
            elif axis == 1:
                _yrow(f, g, m, coef, use_table, psi, b, a, p0, o, sign, i, j, lo[2], hi[2])
            else:
                _zrow(f, g, m, coef, use_table, psi, b, a, p0, o, sign, i, j, lo[2], hi[2])


@njit(cache=True)
def add_at(flat, idx, coef, value):
    """Soft source: ``flat[idx] += coef * value``."""
    for n in range(idx.size):
        flat[idx[n]] += coef[n] * value


@njit(cache=True)
def gather(flat, idx, weight, row, out):
    """Pickup sampling: ``out[row[n]] += weight[n] * flat[idx[n]]`` in float64."""
    for n in range(idx.size):
        out[row[n]] += weight[n] * np.float64(flat[idx[n]])


@njit(parallel=True, cache=True)
def all_finite(a):
    """True when every value of the array is finite."""
    flat = a.ravel()
    bad = 0
    for n in prange(flat.size):
        v = flat[n]
        if not (v == v and abs(v) < np.inf):
            bad += 1
    return bad == 0
