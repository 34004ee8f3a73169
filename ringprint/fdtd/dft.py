"""Running discrete Fourier transforms of the fields on a node lattice.

A :class:`NodeDft` added to a :class:`~ringprint.fdtd.Simulation` accumulates, every
``every`` steps from ``start_step`` on, the sums ``sum_n F(t_n) exp(i w_q t_n)`` of
all six field components at the frequencies ``w_q``, on the grid nodes
``lo + stride * m`` of a box (by default the region outside the CPML).

A field component at a node is interpolated from the Yee samples around it, by
distance along each axis: E_x from the two x-edges meeting at node i (centres
``x[i] - d[i-1]/2`` and ``x[i] + d[i]/2``) with weights ``d[i] / (d[i-1] + d[i])``
and ``d[i-1] / (d[i-1] + d[i])`` (linear interpolation), H_x from its four faces
with the products of those weights along y and z (bilinear). On a uniform grid every
weight is 1/2 and the node value is the plain mean of the two edges or four faces.

The E components are taken at ``t_n = n dt`` and the H components at ``(n - 1/2) dt``
(the Yee half step), so both sums carry the same phase reference; the exact sample
times are kept (:attr:`NodeDft.times_e`, :attr:`NodeDft.times_h`) for callers that
model the leakage between frequencies. Sums are accumulated in complex128
(numerics: accumulate DFTs in float64).
"""

from __future__ import annotations

import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd import _dft_kernels as K

#: Bytes per lattice point and frequency of the accumulators (6 complex128).
BYTES_PER_POINT_FREQ = 6 * 16


def node_weights(steps: np.ndarray, nodes: np.ndarray) -> np.ndarray:
    """Linear-interpolation weights (2, n) at the inner ``nodes`` of an axis whose cell
    sizes are ``steps``: row 0 for the sample centred below each node (index i - 1),
    row 1 for the one above (index i); 1/2 each on a uniform axis.

    References
    ----------
    Yee, K. S., IEEE Trans. Antennas Propag. 14(3):302-307, 1966 (sample positions).
    """
    below, above = steps[nodes - 1], steps[nodes]
    return np.ascontiguousarray(np.stack([above, below]) / (below + above))


class NodeDft:
    """Running DFT of E and H at given frequencies on a strided node lattice.

    Parameters
    ----------
    frequencies_hz : array_like
        The frequencies (Hz), each > 0.
    stride : int
        Keep every ``stride``-th node along each axis (1: every node).
    every : int
        Take a sample every this many steps.
    start_step : int
        First step whose fields are summed (e.g. the end of the source).
    box : ((int, int, int), (int, int, int)) or None
        Inclusive node index box; default: the nodes outside the CPML. Nodes on
        the outer faces of the grid are left out (their Yee neighbours are missing).

    References
    ----------
    Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005
    (running DFT of FDTD fields).
    """

    def __init__(self, frequencies_hz, stride: int = 1, every: int = 1, start_step: int = 0, box=None):
        f = np.atleast_1d(np.asarray(frequencies_hz, float))
        if f.ndim != 1 or f.size == 0 or not np.all(np.isfinite(f) & (f > 0)):
            raise RingprintError(f"frequencies_hz = {frequencies_hz!r}: give one or more finite "
                                 "frequencies > 0")
        for name, v, least in (("stride", stride, 1), ("every", every, 1), ("start_step", start_step, 0)):
            if int(v) != v or v < least:
                raise RingprintError(f"{name} = {v!r} must be an integer >= {least}")
        self.frequencies_hz = f
        self.stride, self.every, self.start_step = int(stride), int(every), int(start_step)
        self.box = box
        self.lo = self.counts = None
        self.acc = None
        self._te, self._th = [], []

    @staticmethod
    def nbytes(n_points: int, n_frequencies: int) -> int:
        """Memory of the accumulators for that many lattice points and frequencies."""
        return int(n_points) * int(n_frequencies) * BYTES_PER_POINT_FREQ

    def attach(self, sim) -> None:
        """Fix the lattice on ``sim``'s grid and allocate the sums (called by add_dft)."""
        shape = sim.grid.shape
        if self.box is None:
            lo, hi = list(sim.layout.lo), list(sim.layout.hi)
        else:
            lo, hi = [int(v) for v in self.box[0]], [int(v) for v in self.box[1]]
        lo = [max(v, 1) for v in lo]
        hi = [min(v, n - 2) for v, n in zip(hi, shape)]
        if any(h < l for l, h in zip(lo, hi)):
            raise RingprintError(f"DFT box {self.box!r} holds no inner node of a grid of {shape} nodes; "
                                 "give a box inside the grid")
        self.lo = tuple(lo)
        self.counts = tuple((h - l) // self.stride + 1 for l, h in zip(lo, hi))
        self.acc = np.zeros(self.counts + (self.frequencies_hz.size, 6), np.complex128)
        self.weights = tuple(node_weights(d, idx) for d, idx in zip(sim.grid.spacing, self.node_indices()))
        self._dt = sim.dt
        self._omega = 2.0 * np.pi * self.frequencies_hz

    def node_indices(self) -> tuple:
        """Grid node indices of the lattice along x, y, z."""
        return tuple(l + self.stride * np.arange(n) for l, n in zip(self.lo, self.counts))

    def sample(self, sim) -> None:
        """Add the current fields if this step is due (called after every step)."""
        n = sim.step_index
        if n < self.start_step or (n - self.start_step) % self.every:
            return
        te, th = n * self._dt, (n - 0.5) * self._dt
        f = sim.fields
        K.accumulate(f["Ex"], f["Ey"], f["Ez"], f["Hx"], f["Hy"], f["Hz"], self.lo[0], self.lo[1],
                     self.lo[2], self.stride, *self.weights, np.exp(1j * self._omega * te),
                     np.exp(1j * self._omega * th), self.acc)
        self._te.append(te)
        self._th.append(th)

    @property
    def times_e(self) -> np.ndarray:
        return np.asarray(self._te)

    @property
    def times_h(self) -> np.ndarray:
        return np.asarray(self._th)

    def sums(self) -> tuple[np.ndarray, np.ndarray]:
        """``(E, H)`` sums, each shaped (n_freq, 3, nx, ny, nz) complex128."""
        a = np.moveaxis(self.acc, (3, 4), (0, 1))
        return np.ascontiguousarray(a[:, :3]), np.ascontiguousarray(a[:, 3:])
