"""numba kernels of the Yee update (private; wrapped by :mod:`ringprint.fdtd.simulation`).

Layout: every field array is C-contiguous. :func:`step` runs one step of the
sweeps in a single pass over the planes i (E lags H by one plane, so each field
is read from memory once per step), ``prange`` over runs of planes, one per
thread. Each ``[i, j, :]`` row goes to a small row function whose loop over k
has no branch, so LLVM vectorizes it (SIMD over k). The row and plane functions
are inlined at the numba level (``inline="always"``): a separate call from the
parallel loop is not inlined by LLVM and costs as much as a short row. A row whose
media index is the same along k (``u >= 0``) uses scalar coefficients, and so does
each run of one medium on a row of a few long runs; a row of many short runs reads
``ca[m], cb[m]`` per cell (:mod:`ringprint.fdtd._rows`). After a row is updated, its CPML correction
runs as its own short row loop over the layer part of the row (z layers), or over
the whole row when the row lies in an x or y layer. The psi arrays exist only
inside the layers. E rows on PMC walls are updated by :func:`update_e_box` and
:func:`cpml_rows` after the step.

When ``en`` is true the sweeps also return the energy sums of the half-step
energy form (Taflove & Hagness 2005): ``eps E^n . E^n w`` over the old E values
and ``H^(n-1/2) . H^(n+1/2) w``, with per-axis weights ``w`` that are zero outside
the region the energy is reported for. Each product is formed in the field dtype
and summed in float64.
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange

from ringprint.fdtd._rows import FM as _FM
from ringprint.fdtd._rows import e_row_k, e_row_t, end_media, h_row_k, h_row_t


# --------------------------------------------------------------- CPML row pieces
# Recursive convolution (Roden & Gedney 2000) on one row f[i, j, k0:k1]:
# psi = b psi + a dG, f += sign coef psi, with coef = coef[u] on a uniform row
# (H: the single entry dt/mu0), else coef[m[i, j, k]] (the E cb table).
# _psi_k: layer axis z, dG = g[k+o] - g[k+o-1], b, a per k, psi row shifted by p0.
# _psi_t: layer axis x or y, dG = g[i+di, j+dj] - g[i+di-ei, j+dj-ej] ((ei, ej)
# the unit step along the layer axis, (di, dj) = o (ei, ej)), b, a scalars, psi
# row [pi, pj].

@njit(cache=True, fastmath=_FM, inline="always")
def _psi_k(f, g, psi, i, j, b, a, p0, o, sign, k0, k1, u, m, coef):
    # unsigned indices: the bounds are run-time values, and numba's wrap-around of a
    # possibly negative signed index keeps LLVM from vectorizing the loop
    if u >= 0:
        c = sign * coef[u]
        for k in range(k0, k1):
            ku, pu = np.uint64(k), np.uint64(k - p0)
            q = b[ku] * psi[i, j, pu] + a[ku] * (g[i, j, np.uint64(k + o)]
                                                 - g[i, j, np.uint64(k + o - 1)])
            psi[i, j, pu] = q
            f[i, j, ku] += c * q
    else:
        for k in range(k0, k1):
            ku, pu = np.uint64(k), np.uint64(k - p0)
            q = b[ku] * psi[i, j, pu] + a[ku] * (g[i, j, np.uint64(k + o)]
                                                 - g[i, j, np.uint64(k + o - 1)])
            psi[i, j, pu] = q
            f[i, j, ku] += sign * coef[m[i, j, ku]] * q


@njit(cache=True, fastmath=_FM, inline="always")
def _psi_t(f, g, psi, i, j, ei, ej, o, pi, pj, b, a, sign, k0, k1, u, m, coef):
    i1, j1 = i + o * ei, j + o * ej
    i0, j0 = i1 - ei, j1 - ej
    if u >= 0:
        c = sign * coef[u]
        for k in range(k0, k1):
            q = b * psi[pi, pj, k] + a * (g[i1, j1, k] - g[i0, j0, k])
            psi[pi, pj, k] = q
            f[i, j, k] += c * q
    else:
        for k in range(k0, k1):
            q = b * psi[pi, pj, k] + a * (g[i1, j1, k] - g[i0, j0, k])
            psi[pi, pj, k] = q
            f[i, j, k] += sign * coef[m[i, j, k]] * q


@njit(cache=True)
def _layer(r, p):
    """Index (0 low, 1 high, -1 none) of the layer range of ``r = (lo0, lo1, hi0, hi1)``
    holding p."""
    if r[0] <= p < r[1]:
        return 0
    if r[2] <= p < r[3]:
        return 1
    return -1


@njit(cache=True, fastmath=_FM, inline="always")
def _z_layers(f, g, psi_lo, psi_hi, b, a, rz, o, sign, i, j, ulo, uhi, m, coef):
    """Both z-layer pieces of row ``f[i, j]`` (nothing when z has no layer); ``ulo,
    uhi`` the media index of each piece when it holds one medium, else -1."""
    if rz[1] > rz[0]:
        _psi_k(f, g, psi_lo, i, j, b, a, rz[0], o, sign, rz[0], rz[1], ulo, m, coef)
    if rz[3] > rz[2]:
        _psi_k(f, g, psi_hi, i, j, b, a, rz[2], o, sign, rz[2], rz[3], uhi, m, coef)


# ------------------------------------------------------------ conformal faces
@njit(cache=True, fastmath=_FM, inline="always")
def _h_conformal(i, f, ch, ih, cf, wn, wc, en):
    """Dey-Mittra update of the cut H faces on plane i (after the plain rows).

    The plain row gave ``H - c curl E``; a cut face wants ``H - c g curl(l E)`` with
    the free edge fractions l and ``g = 1 / free area`` (0: no free area, H = 0), so
    the plain step is undone and the cut one taken. E on planes i and i+1 is still E^n
    here (the fused sweep updates E on plane i after this).

    With ``en`` it returns what turns the plain row's energy term ``H_old H_plain w``
    of each cut face into the conserved form ``a H_old H_new w`` of the scheme
    (module :mod:`ringprint.fdtd.conformal`)."""
    ex, ey, ez, hx, hy, hz = f
    ixh, iyh, izh = ih
    ptr, comp, cj, ck, g, ln = cf
    acc = 0.0
    for n in range(ptr[i], ptr[i + 1]):
        j = cj[n]
        k = ck[n]
        gi = g[n]
        c = comp[n]
        if c == 0:
            p0, p1, q0, q1 = ez[i, j, k], ez[i, j + 1, k], ey[i, j, k], ey[i, j, k + 1]
            sp, sq = iyh[j], izh[k]
            now, sch = hx[i, j, k], ch
            w = wn[0][i] * wc[1][j] * wc[2][k]
        elif c == 1:
            p0, p1, q0, q1 = ez[i, j, k], ez[i + 1, j, k], ex[i, j, k], ex[i, j, k + 1]
            sp, sq = ixh[i], izh[k]
            now, sch = hy[i, j, k], -ch   # Hy's row carries the opposite sign
            w = wc[0][i] * wn[1][j] * wc[2][k]
        else:
            p0, p1, q0, q1 = ey[i, j, k], ey[i + 1, j, k], ex[i, j, k], ex[i, j + 1, k]
            sp, sq = ixh[i], iyh[j]
            now, sch = hz[i, j, k], ch
            w = wc[0][i] * wc[1][j] * wn[2][k]
        plain = (p1 - p0) * sp - (q1 - q0) * sq
        cut = ((ln[n, 1] * p1 - ln[n, 0] * p0) * sp - (ln[n, 3] * q1 - ln[n, 2] * q0) * sq) * gi
        old = now + sch * plain          # undo the plain row
        # no free area: the face is metal and its H is zero (now - now keeps the dtype)
        new = old - sch * cut if gi != 0.0 else now - now
        if c == 0:
            hx[i, j, k] = new
        elif c == 1:
            hy[i, j, k] = new
        else:
            hz[i, j, k] = new
        if en:
            area = 1.0 / gi if gi > 0 else 0.0
            acc += np.float64(w) * (area * np.float64(old) * np.float64(new)
                                    - np.float64(old) * np.float64(now))
    return acc


@njit(cache=True)
def conformal_e_energy(f, epst, m, ce, wn, wc):
    """What turns the plain ``eps E^2 w`` of each partly free E edge into the
    conserved ``l eps E^2 w`` (l its free length fraction); call with E^n, before the
    step. ``ce = (comp, idx (n, 3), lengths)``."""
    comp, idx, ln = ce
    acc = 0.0
    for n in range(comp.size):
        c = comp[n]
        i, j, k = idx[n, 0], idx[n, 1], idx[n, 2]
        if c == 0:
            v = np.float64(f[0][i, j, k])
            w = wc[0][i] * wn[1][j] * wn[2][k]
            mk = m[0][i, j, k]
        elif c == 1:
            v = np.float64(f[1][i, j, k])
            w = wn[0][i] * wc[1][j] * wn[2][k]
            mk = m[1][i, j, k]
        else:
            v = np.float64(f[2][i, j, k])
            w = wn[0][i] * wn[1][j] * wc[2][k]
            mk = m[2][i, j, k]
        acc += (ln[n] - 1.0) * epst[mk] * v * v * np.float64(w)
    return acc


# ------------------------------------------------------------------------ sweeps
@njit(cache=True, fastmath=_FM, inline="always")
def _h_plane(i, f, ch, ih, wn, wc, mdum, chtab, b, a, r, psi, pos, neg, en, cf):
    """H^(n+1/2) on the plane i of all three H components, CPML rows and cut
    (conformal) faces included. Returns ``sum H_old H_new w`` of the plane (the plain
    form: a cut face's energy weight is not reduced to its free area)."""
    ex, ey, ez, hx, hy, hz = f
    ixh, iyh, izh = ih
    nx, ny, nz = hx.shape[0], hy.shape[1], hz.shape[2]
    acc = 0.0
    lx = _layer(r[0], i)
    for j in range(ny - 1):  # Hx (nx, ny-1, nz-1): -dEz/dy, +dEy/dz
        acc += h_row_k(hx, ez, ey, i, j, 0, 1, iyh[j], izh, ch, wc[2], en) * wn[0][i] * wc[1][j]
        ly = _layer(r[1], j)
        if ly >= 0:
            _psi_t(hx, ez, psi[ly], i, j, 0, 1, 1, i, j - r[1][2 * ly], b[1][j], a[1][j], neg,
                   0, nz - 1, 0, mdum, chtab)
        _z_layers(hx, ey, psi[2], psi[3], b[2], a[2], r[2], 1, pos, i, j, 0, 0, mdum, chtab)
    if i < nx - 1:
        for j in range(ny):  # Hy (nx-1, ny, nz-1): -dEx/dz, +dEz/dx
            acc += (h_row_k(hy, ez, ex, i, j, 1, 0, ixh[i], izh, -ch, wc[2], en)
                    * wc[0][i] * wn[1][j])
            if lx >= 0:
                _psi_t(hy, ez, psi[4 + lx], i, j, 1, 0, 1, i - r[0][2 * lx], j, b[0][i],
                       a[0][i], pos, 0, nz - 1, 0, mdum, chtab)
            _z_layers(hy, ex, psi[6], psi[7], b[2], a[2], r[2], 1, neg, i, j, 0, 0, mdum, chtab)
        for j in range(ny - 1):  # Hz (nx-1, ny-1, nz): -dEy/dx, +dEx/dy
            acc += h_row_t(hz, ey, ex, i, j, ixh[i], iyh[j], ch, wn[2], en) * wc[0][i] * wc[1][j]
            if lx >= 0:
                _psi_t(hz, ey, psi[8 + lx], i, j, 1, 0, 1, i - r[0][2 * lx], j, b[0][i],
                       a[0][i], neg, 0, nz, 0, mdum, chtab)
            ly = _layer(r[1], j)
            if ly >= 0:
                _psi_t(hz, ex, psi[10 + ly], i, j, 0, 1, 1, i, j - r[1][2 * ly], b[1][j],
                       a[1][j], pos, 0, nz, 0, mdum, chtab)
    acc += _h_conformal(i, f, ch, ih, cf, wn, wc, en)
    return acc


@njit(cache=True, fastmath=_FM, inline="always")
def _e_plane(i, f, m, u, rn, ca, cb, epst, ie, wn, wc, b, a, r, psi, pos, neg, en):
    """E^(n+1) on the interior edges of plane i, CPML rows included. Returns
    ``sum eps E_old^2 w`` of the plane."""
    ex, ey, ez, hx, hy, hz = f
    mx, my, mz = m
    ux, uy, uz = u
    ixe, iye, ize = ie
    nx, ny, nz = ey.shape[0], ex.shape[1], ex.shape[2]
    acc = 0.0
    lx = _layer(r[0], i)
    if i < nx - 1:
        for j in range(1, ny - 1):  # Ex (nx-1, ny, nz): +dHz/dy, -dHy/dz
            uu = ux[i, j]
            ulo, uhi = end_media(uu, rn, 0, i, j, ny, r[2][1], r[2][2])
            acc += (e_row_k(ex, hz, hy, i, j, 0, 1, iye[j], ize, pos, 1, nz - 1, uu, mx, ca,
                            cb, epst, wn[2], en, rn, 0) * wc[0][i] * wn[1][j])
            ly = _layer(r[1], j)
            if ly >= 0:
                _psi_t(ex, hz, psi[ly], i, j, 0, 1, 0, i, j - r[1][2 * ly], b[1][j], a[1][j],
                       pos, 1, nz - 1, uu, mx, cb)
            _z_layers(ex, hy, psi[2], psi[3], b[2], a[2], r[2], 0, neg, i, j, ulo, uhi, mx, cb)
    if 0 < i < nx - 1:
        for j in range(ny - 1):  # Ey (nx, ny-1, nz): +dHx/dz, -dHz/dx
            uu = uy[i, j]
            ulo, uhi = end_media(uu, rn, 1, i, j, ny - 1, r[2][1], r[2][2])
            acc += (e_row_k(ey, hz, hx, i, j, 1, 0, ixe[i], ize, neg, 1, nz - 1, uu, my, ca,
                            cb, epst, wn[2], en, rn, 1) * wn[0][i] * wc[1][j])
            if lx >= 0:
                _psi_t(ey, hz, psi[4 + lx], i, j, 1, 0, 0, i - r[0][2 * lx], j, b[0][i],
                       a[0][i], neg, 1, nz - 1, uu, my, cb)
            _z_layers(ey, hx, psi[6], psi[7], b[2], a[2], r[2], 0, pos, i, j, ulo, uhi, my, cb)
        for j in range(1, ny - 1):  # Ez (nx, ny, nz-1): +dHy/dx, -dHx/dy
            uu = uz[i, j]
            acc += (e_row_t(ez, hy, hx, i, j, ixe[i], iye[j], 0, nz - 1, uu, mz, ca, cb, epst,
                            wc[2], en, rn, 2) * wn[0][i] * wn[1][j])
            if lx >= 0:
                _psi_t(ez, hy, psi[8 + lx], i, j, 1, 0, 0, i - r[0][2 * lx], j, b[0][i],
                       a[0][i], pos, 0, nz - 1, uu, mz, cb)
            ly = _layer(r[1], j)
            if ly >= 0:
                _psi_t(ez, hx, psi[10 + ly], i, j, 0, 1, 0, i, j - r[1][2 * ly], b[1][j],
                       a[1][j], neg, 0, nz - 1, uu, mz, cb)
    return acc


@njit(parallel=True, cache=True, fastmath=_FM)
def step(nchunk, f, ch, ih, chtab, bh, ah, rh, psih, m, u, rn, ca, cb, epst, ie, be, ae, re, psie,
         wn, wc, sg, cf, en):
    """One Yee step of the sweeps: H^(n+1/2) from E^n, then E^(n+1) on the interior
    edges, both with their CPML rows, in one pass over the planes i.

    ``f = (Ex, Ey, Ez, Hx, Hy, Hz)``. The planes are cut into ``nchunk`` runs, one
    per thread; within a run, E on plane i is updated right after H on plane i (it
    needs H on planes i-1 and i, while H on plane i needs the old E on planes i
    and i+1), so each field is read from memory once per step. E on the first
    plane of each run needs H from the run before; it is updated after all runs, on
    the calling thread (a few planes; a second parallel region would cost one more
    barrier per step, which hurts most when other programs share the cores).

    ``ih, ie``: per-axis inverse spacings (cells for H, dual cells for E, both
    already divided by the CPML kappa); ``bh, ah, be, ae``: per-axis CPML
    coefficients at the cell centres / nodes; ``rh, re``: ``(3, 4)`` cell / node
    ranges ``(lo0, lo1, hi0, hi1)`` of the two layers per axis; ``psih`` the 12 H
    auxiliary arrays ``(Hx y lo, y hi, z lo, z hi, Hy x lo, x hi, z lo, z hi, Hz x
    lo, x hi, y lo, y hi)``, ``psie`` the E ones in the same order; ``m`` the media
    index per edge, ``u`` per (i, j) row the index when the whole row has one, else
    the row kind (``_rows.RUNS`` or ``_rows.GATHER``), ``rn`` the run table of the
    ``RUNS`` rows (:func:`ringprint.fdtd._rows.row_tables`); ``wn, wc`` the energy weights per axis at nodes / cell centres; ``sg = (1,
    -1)`` in the field dtype (a float64 literal would promote the rows to float64);
    ``cf`` the cut faces of conformal metal ``(ptr, comp, j, k, 1/area, lengths)``
    (:func:`_h_conformal`; empty arrays without conformal metal).

    Returns ``(sum H^(n-1/2) H^(n+1/2) w, sum eps E^n E^n w)`` (0 when ``en`` is
    false).
    """
    nx = f[3].shape[0]
    pos, neg = sg[0], sg[1]
    mdum = m[0]
    wh = 0.0
    we = 0.0
    for c in prange(nchunk):
        i0, i1 = c * nx // nchunk, (c + 1) * nx // nchunk
        sh = 0.0
        se = 0.0
        for i in range(i0, i1):
            sh += _h_plane(i, f, ch, ih, wn, wc, mdum, chtab, bh, ah, rh, psih, pos, neg, en, cf)
            if i > i0:
                se += _e_plane(i, f, m, u, rn, ca, cb, epst, ie, wn, wc, be, ae, re, psie, pos, neg, en)
        wh += sh
        we += se
    for c in range(nchunk):
        we += _e_plane(c * nx // nchunk, f, m, u, rn, ca, cb, epst, ie, wn, wc, be, ae, re, psie,
                       pos, neg, en)
    return wh, we


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
    u = -1 if use_table else 0
    for i in range(lo[0], hi[0]):
        for j in range(lo[1], hi[1]):
            if axis == 0:
                _psi_t(f, g, psi, i, j, 1, 0, o, i - p0, j, b[i], a[i], sign, lo[2], hi[2], u, m,
                       coef)
            elif axis == 1:
                _psi_t(f, g, psi, i, j, 0, 1, o, i, j - p0, b[j], a[j], sign, lo[2], hi[2], u, m,
                       coef)
            else:
                _psi_k(f, g, psi, i, j, b, a, p0, o, sign, lo[2], hi[2], u, m, coef)


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
