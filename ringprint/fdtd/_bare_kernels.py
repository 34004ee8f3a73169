"""The bare two-sweep Yee kernel: the yardstick of ``ringprint bench`` (private).

One step is two parallel sweeps over the planes i: H^(n+1/2) from E^n on every
face, then E^(n+1) from H^(n+1/2) on every interior edge, with one coefficient
per field (``ch = dt/mu0``, ``ce = dt/eps0``: vacuum, no media table), no CPML,
no energy sums, no conformal faces. The inverse spacings are per axis, as in the
full step, so it runs on the same (possibly graded) grid. The tangential E on the
outer walls stays zero (a PEC box). Same numba options, same float32 arrays as
:func:`ringprint.fdtd._kernels.step`: it measures what the full step could reach
if the absorbing layer, the media and the bookkeeping cost nothing.

References
----------
Yee, K. S., IEEE Trans. Antennas Propag. 14(3):302-307, 1966.
"""

from __future__ import annotations

from numba import njit, prange

_FM = {"contract", "reassoc"}


@njit(parallel=True, cache=True, fastmath=_FM)
def bare_h_sweep(ex, ey, ez, hx, hy, hz, ch, ixh, iyh, izh):
    """H^(n+1/2) = H^(n-1/2) - ch curl E^n on every face, parallel over planes i."""
    nx, ny, nz = hx.shape[0], hy.shape[1], hz.shape[2]
    for i in prange(nx):
        for j in range(ny - 1):
            a = iyh[j]
            for k in range(nz - 1):
                hx[i, j, k] -= ch * ((ez[i, j + 1, k] - ez[i, j, k]) * a
                                     - (ey[i, j, k + 1] - ey[i, j, k]) * izh[k])
        if i < nx - 1:
            b = ixh[i]
            for j in range(ny):
                for k in range(nz - 1):
                    hy[i, j, k] -= ch * ((ex[i, j, k + 1] - ex[i, j, k]) * izh[k]
                                         - (ez[i + 1, j, k] - ez[i, j, k]) * b)
            for j in range(ny - 1):
                a = iyh[j]
                for k in range(nz):
                    hz[i, j, k] -= ch * ((ey[i + 1, j, k] - ey[i, j, k]) * b
                                         - (ex[i, j + 1, k] - ex[i, j, k]) * a)


@njit(parallel=True, cache=True, fastmath=_FM)
def bare_e_sweep(ex, ey, ez, hx, hy, hz, ce, ixe, iye, ize):
    """E^(n+1) = E^n + ce curl H^(n+1/2) on every interior edge, parallel over planes i."""
    nx, ny, nz = ey.shape[0], ex.shape[1], ex.shape[2]
    for i in prange(nx):
        if i < nx - 1:
            for j in range(1, ny - 1):
                a = iye[j]
                for k in range(1, nz - 1):
                    ex[i, j, k] += ce * ((hz[i, j, k] - hz[i, j - 1, k]) * a
                                         - (hy[i, j, k] - hy[i, j, k - 1]) * ize[k])
        if 0 < i < nx - 1:
            b = ixe[i]
            for j in range(ny - 1):
                for k in range(1, nz - 1):
                    ey[i, j, k] += ce * ((hx[i, j, k] - hx[i, j, k - 1]) * ize[k]
                                         - (hz[i, j, k] - hz[i - 1, j, k]) * b)
            for j in range(1, ny - 1):
                a = iye[j]
                for k in range(nz - 1):
                    ez[i, j, k] += ce * ((hy[i, j, k] - hy[i - 1, j, k]) * b
                                         - (hx[i, j, k] - hx[i, j - 1, k]) * a)


@njit(cache=True)
def bare_steps(n, ex, ey, ez, hx, hy, hz, ch, ce, ih, ie):
    """``n`` bare steps (H sweep, then E sweep) in one call: no Python between steps."""
    for _ in range(n):
        bare_h_sweep(ex, ey, ez, hx, hy, hz, ch, ih[0], ih[1], ih[2])
        bare_e_sweep(ex, ey, ez, hx, hy, hz, ce, ie[0], ie[1], ie[2])
