"""numba kernel of the running node DFT (private; wrapped by :mod:`ringprint.fdtd.dft`).

One call adds one time sample of all six field components, interpolated to the
nodes of a strided lattice, times ``exp(i w t)`` for every frequency, to complex128
accumulators laid out ``acc[a, b, c, q, comp]`` (lattice point, frequency,
component 0-5 = Ex..Hz), so each point's sums sit together in memory.
"""

from __future__ import annotations

from numba import njit, prange


@njit(parallel=True, cache=True)
def accumulate(ex, ey, ez, hx, hy, hz, i0, j0, k0, s, pe, ph, acc):
    """Add ``node_field * pe[q]`` (E) and ``* ph[q]`` (H) into ``acc`` for every point.

    E at node (i, j, k) is the mean of the two edges of its component that meet
    there; H is the mean of the four faces of its component that share the node.
    Lattice point (a, b, c) is node (i0 + s a, j0 + s b, k0 + s c); every such node
    must have all those neighbours (1 <= i <= Nx-2, likewise j, k).
    """
    na, nb, nc, nq = acc.shape[0], acc.shape[1], acc.shape[2], acc.shape[3]
    for a in prange(na):
        i = i0 + s * a
        for b in range(nb):
            j = j0 + s * b
            for c in range(nc):
                k = k0 + s * c
                v0 = 0.5 * (ex[i - 1, j, k] + ex[i, j, k])
                v1 = 0.5 * (ey[i, j - 1, k] + ey[i, j, k])
                v2 = 0.5 * (ez[i, j, k - 1] + ez[i, j, k])
                w0 = 0.25 * (hx[i, j - 1, k - 1] + hx[i, j, k - 1] + hx[i, j - 1, k] + hx[i, j, k])
                w1 = 0.25 * (hy[i - 1, j, k - 1] + hy[i, j, k - 1] + hy[i - 1, j, k] + hy[i, j, k])
                w2 = 0.25 * (hz[i - 1, j - 1, k] + hz[i, j - 1, k] + hz[i - 1, j, k] + hz[i, j, k])
                for q in range(nq):
                    p = pe[q]
                    r = ph[q]
                    acc[a, b, c, q, 0] += v0 * p
                    acc[a, b, c, q, 1] += v1 * p
                    acc[a, b, c, q, 2] += v2 * p
                    acc[a, b, c, q, 3] += w0 * r
                    acc[a, b, c, q, 4] += w1 * r
                    acc[a, b, c, q, 5] += w2 * r
