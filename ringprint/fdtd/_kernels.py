"""numba kernels of the Yee update (private; wrapped by :mod:`ringprint.fdtd.simulation`).

Layout: every field array is C-contiguous; loops run ``prange`` over the first
index and innermost over the last. The main sweeps touch only edges/faces whose
neighbours all exist; boundary planes (PMC walls) and CPML slabs have their own
small loops, so the main sweep has no per-cell branch.

The main sweeps also return the energy sums of the half-step energy form
(Taflove & Hagness 2005): the E sweep sums ``eps E^n . E^n w`` over the old values,
the H sweep ``mu0 H^(n-1/2) . H^(n+1/2) w``, with per-axis weights ``w`` that are
zero outside the region the energy is reported for.
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange


@njit(parallel=True, cache=True, fastmath=False)
def update_h(ex, ey, ez, hx, hy, hz, ch, ixh, iyh, izh, mu0,
             wxn, wyn, wzn, wxc, wyc, wzc):
    """H^(n+1/2) from E^n over all faces; returns sum mu0 H_old H_new w."""
    nx, ny, nz = hx.shape[0], hy.shape[1], hz.shape[2]
    total = 0.0
    for i in prange(nx):
        acc = 0.0
        for j in range(ny - 1):
            if nz > 1:
                w = wxn[i] * wyc[j]
                s = 0.0
                for k in range(nz - 1):  # Hx (nx, ny-1, nz-1)
                    old = hx[i, j, k]
                    new = old - ch * ((ez[i, j + 1, k] - ez[i, j, k]) * iyh[j]
                                      - (ey[i, j, k + 1] - ey[i, j, k]) * izh[k])
                    hx[i, j, k] = new
                    s += old * new * wzc[k]
                acc += s * w
        if i < nx - 1:
            for j in range(ny):
                if nz > 1:
                    w = wxc[i] * wyn[j]
                    s = 0.0
                    for k in range(nz - 1):  # Hy (nx-1, ny, nz-1)
                        old = hy[i, j, k]
                        new = old - ch * ((ex[i, j, k + 1] - ex[i, j, k]) * izh[k]
                                          - (ez[i + 1, j, k] - ez[i, j, k]) * ixh[i])
                        hy[i, j, k] = new
                        s += old * new * wzc[k]
                    acc += s * w
            for j in range(ny - 1):
                w = wxc[i] * wyc[j]
                s = 0.0
                for k in range(nz):  # Hz (nx-1, ny-1, nz)
                    old = hz[i, j, k]
                    new = old - ch * ((ey[i + 1, j, k] - ey[i, j, k]) * ixh[i]
                                      - (ex[i, j + 1, k] - ex[i, j, k]) * iyh[j])
                    hz[i, j, k] = new
                    s += old * new * wzn[k]
                acc += s * w
        total += acc
    return mu0 * total


@njit(parallel=True, cache=True, fastmath=False)
def update_e(ex, ey, ez, hx, hy, hz, mx, my, mz, ca, cb, epst, ixe, iye, ize,
             wxn, wyn, wzn, wxc, wyc, wzc):
    """E^(n+1) from H^(n+1/2) on interior edges; returns sum eps E_old^2 w."""
    nx, ny, nz = ey.shape[0], ex.shape[1], ex.shape[2]
    total = 0.0
    for i in prange(nx):
        acc = 0.0
        if i < nx - 1:
            for j in range(1, ny - 1):  # Ex (nx-1, ny, nz)
                w = wxc[i] * wyn[j]
                s = 0.0
                for k in range(1, nz - 1):
                    m = mx[i, j, k]
                    old = ex[i, j, k]
                    ex[i, j, k] = ca[m] * old + cb[m] * (
                        (hz[i, j, k] - hz[i, j - 1, k]) * iye[j]
                        - (hy[i, j, k] - hy[i, j, k - 1]) * ize[k])
                    s += epst[m] * old * old * wzn[k]
                acc += s * w
        if 0 < i < nx - 1:
            for j in range(ny - 1):  # Ey (nx, ny-1, nz)
                w = wxn[i] * wyc[j]
                s = 0.0
                for k in range(1, nz - 1):
                    m = my[i, j, k]
                    old = ey[i, j, k]
                    ey[i, j, k] = ca[m] * old + cb[m] * (
                        (hx[i, j, k] - hx[i, j, k - 1]) * ize[k]
                        - (hz[i, j, k] - hz[i - 1, j, k]) * ixe[i])
                    s += epst[m] * old * old * wzn[k]
                acc += s * w
            for j in range(1, ny - 1):  # Ez (nx, ny, nz-1)
                w = wxn[i] * wyn[j]
                s = 0.0
                for k in range(nz - 1):
                    m = mz[i, j, k]
                    old = ez[i, j, k]
                    ez[i, j, k] = ca[m] * old + cb[m] * (
                        (hy[i, j, k] - hy[i - 1, j, k]) * ixe[i]
                        - (hx[i, j, k] - hx[i, j - 1, k]) * iye[j])
                    s += epst[m] * old * old * wzc[k]
                acc += s * w
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


@njit(parallel=True, cache=True)
def cpml_correct(f, g, m, coef, use_table, psi, bco, aco, inv, axis, o_hi, o_lo, sign,
                 lo0, hi0, lo1, hi1, lo2, hi2):
    """CPML recursive-convolution correction on one slab (Roden & Gedney 2000).

    ``psi = b psi + a (g[p + o_hi] - g[p + o_lo]) inv[p]`` along ``axis`` and
    ``f += sign * c * psi`` where ``c = coef[m[i,j,k]]`` (E: the cb table) or
    ``coef[0]`` (H: dt/mu0) when ``use_table`` is false. ``bco, aco, inv`` are indexed
    by the global position along ``axis``.
    """
    s0 = 1 if axis == 0 else 0
    s1 = 1 if axis == 1 else 0
    s2 = 1 if axis == 2 else 0
    for i in prange(lo0, hi0):
        for j in range(lo1, hi1):
            for k in range(lo2, hi2):
                p = i * s0 + j * s1 + k * s2
                d = (g[i + s0 * o_hi, j + s1 * o_hi, k + s2 * o_hi]
                     - g[i + s0 * o_lo, j + s1 * o_lo, k + s2 * o_lo]) * inv[p]
                q = bco[p] * psi[i - lo0, j - lo1, k - lo2] + aco[p] * d
                psi[i - lo0, j - lo1, k - lo2] = q
                c = coef[m[i, j, k]] if use_table else coef[0]
                f[i, j, k] += sign * c * q


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
