"""numba kernel of the running node DFT (private; wrapped by :mod:`ringprint.fdtd.dft`).

One call adds one time sample of all six field components, interpolated linearly
(E, from its two edges) and bilinearly (H, from its four faces) to the nodes of a
strided lattice, times ``exp(i w t)`` for every frequency, to complex128
accumulators laid out ``acc[a, b, c, q, comp]`` (lattice point, frequency,
component 0-5 = Ex..Hz), so each point's sums sit together in memory.
"""

from __future__ import annotations

from numba import njit, prange


@njit(parallel=True, cache=True)
def accumulate(ex, ey, ez, hx, hy, hz, i0, j0, k0, s, wx, wy, wz, pe, ph, acc):
    """Add ``node_field * pe[q]`` (E) and ``* ph[q]`` (H) into ``acc`` for every point.

    ``wx`` is shaped (2, na): ``wx[0, a]`` weighs the sample just below lattice point
    a along x (edge or face index i - 1), ``wx[1, a]`` the one just above (index i);
    likewise ``wy``, ``wz``. E at node (i, j, k) is the weighted sum of the two edges
    of its component that meet there; H the product-weighted (bilinear) sum of the
    four faces of its component that share the node. Lattice point (a, b, c) is node
    (i0 + s a, j0 + s b, k0 + s c); every such node must have all those neighbours
    (1 <= i <= Nx-2, likewise j, k).
    """
    na, nb, nc, nq = acc.shape[0], acc.shape[1], acc.shape[2], acc.shape[3]
    for a in prange(na):
        i = i0 + s * a
        xl, xh = wx[0, a], wx[1, a]
        for b in range(nb):
            j = j0 + s * b
            yl, yh = wy[0, b], wy[1, b]
            for c in range(nc):
                k = k0 + s * c
                zl, zh = wz[0, c], wz[1, c]
                v0 = xl * ex[i - 1, j, k] + xh * ex[i, j, k]
                v1 = yl * ey[i, j - 1, k] + yh * ey[i, j, k]
                v2 = zl * ez[i, j, k - 1] + zh * ez[i, j, k]
                w0 = (yl * zl * hx[i, j - 1, k - 1] + yh * zl * hx[i, j, k - 1]
                      + yl * zh * hx[i, j - 1, k] + yh * zh * hx[i, j, k])
                w1 = (xl * zl * hy[i - 1, j, k - 1] + xh * zl * hy[i, j, k - 1]
                      + xl * zh * hy[i - 1, j, k] + xh * zh * hy[i, j, k])
                w2 = (xl * yl * hz[i - 1, j - 1, k] + xh * yl * hz[i, j - 1, k]
                      + xl * yh * hz[i - 1, j, k] + xh * yh * hz[i, j, k])
                for q in range(nq):
                    p = pe[q]
                    r = ph[q]
                    acc[a, b, c, q, 0] += v0 * p
                    acc[a, b, c, q, 1] += v1 * p
                    acc[a, b, c, q, 2] += v2 * p
                    acc[a, b, c, q, 3] += w0 * r
                    acc[a, b, c, q, 4] += w1 * r
                    acc[a, b, c, q, 5] += w2 * r
