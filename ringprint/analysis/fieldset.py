"""Mode fields on one node lattice: the in-memory form of ``fields.h5``.

Every mode's field is a complex phasor pair ``(E, H)`` sampled at the nodes of a
uniform lattice (the solver grid, or every ``decimation``-th node of it), so that
``E(r, t) = Re[E(r) exp(-i w t)]``. Each pair is normalized to one joule of
time-averaged stored energy in the region outside the absorbing layer,

    W = 1/4 sum( eps0 eps_r |E|^2 + mu0 |H|^2 ) dV = 1 J,

with ``dV = spacing**3``, and its global phase is turned so that ``sum(E . E)`` is
real and positive (a standing-wave mode then has a nearly real E).

File layout of ``fields.h5`` (attributes in brackets)::

    /                      [layout = 1, ringprint_version, case_digest, decimation,
                            spacing_m, conductors (names), part_names (case order),
                            probe_center_m, probe_normal, probe_size_m]
    /axes/x, /axes/y, /axes/z      node coordinates (m), float64
    /media/eps_r, /media/sigma     (nx, ny, nz) float32 at the nodes (sigma in S/m)
    /media/pec                     (nx, ny, nz) uint8, 1 on conductor nodes
    /parts/<name>                  (nx, ny, nz) uint8 mask, 1 inside the part
    /modes/mode_NN/E, .../H        (3, nx, ny, nz) complex64 phasors (V/m, A/m)
                                   [index, frequency_hz, q]
    /touch/mode_NN/points          (m, 3) touch points on the outer surface (m)
    /touch/mode_NN/normals         (m, 3) outward unit normals
    /touch/mode_NN/shift_percent   (m,) predicted frequency shift (negative: down)
    /touch/mode_NN/q_after         (m,) predicted Q with the tissue present
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd import EPS0, MU0

#: Version of the fields.h5 layout written by this module.
LAYOUT = 1


def squared_magnitude(v: np.ndarray) -> np.ndarray:
    """``|v|^2`` summed over the leading component axis, in float64."""
    return np.einsum("c...,c...->...", v.real, v.real, dtype=float) \
        + np.einsum("c...,c...->...", v.imag, v.imag, dtype=float)


def stored_energy(eps_r: np.ndarray, e: np.ndarray, h: np.ndarray, cell_volume: float) -> float:
    """Time-averaged stored energy ``1/4 sum(eps0 eps_r |E|^2 + mu0 |H|^2) dV`` (J)."""
    return 0.25 * cell_volume * (EPS0 * float(np.sum(eps_r * squared_magnitude(e)))
                                 + MU0 * float(np.sum(squared_magnitude(h))))


@dataclass
class ModeField:
    """One mode's normalized field phasors, each shaped (3, nx, ny, nz) complex."""

    index: int
    frequency_hz: float
    q: float
    e: np.ndarray
    h: np.ndarray

    @property
    def omega(self) -> float:
        return 2.0 * np.pi * self.frequency_hz


@dataclass
class TouchMap:
    """Predicted detuning by a touching fingertip at points of the outer surface."""

    points: np.ndarray          # (m, 3) metres
    normals: np.ndarray         # (m, 3) outward unit normals
    shift_percent: np.ndarray   # (m,) 100 * delta f / f (negative: the mode moves down)
    q_after: np.ndarray         # (m,) Q with the tissue present


@dataclass
class FieldSet:
    """The lattice, its media and part masks, and the fields of every mode."""

    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    eps_r: np.ndarray
    sigma: np.ndarray
    pec: np.ndarray
    parts: dict
    conductors: tuple = ()
    modes: list = field(default_factory=list)
    touch: dict = field(default_factory=dict)   # mode index -> TouchMap
    decimation: int = 1
    probe: dict | None = None  # {"center_m": [x, y, z], "normal": "x"|"y"|"z", "size_m": float}
    digest: str = ""

    @property
    def shape(self) -> tuple:
        return (self.x.size, self.y.size, self.z.size)

    @property
    def spacing(self) -> float:
        """Node spacing of the lattice (m); the lattice is uniform."""
        return float(self.x[1] - self.x[0]) if self.x.size > 1 else 0.0

    @property
    def cell_volume(self) -> float:
        return self.spacing ** 3

    def dual_lengths(self) -> tuple:
        """Per axis, the length each lattice node stands for (1-D arrays): half the
        distance to each neighbour, half a step beyond the end nodes, so that the
        lengths of a uniform lattice all equal its spacing."""
        out = []
        for a in (self.x, self.y, self.z):
            if a.size < 2:
                out.append(np.ones(a.size))
                continue
            d = np.diff(a)
            w = np.empty(a.size)
            w[1:-1] = 0.5 * (d[:-1] + d[1:])
            w[0], w[-1] = d[0], d[-1]
            out.append(w)
        return tuple(out)

    def node_volumes(self) -> np.ndarray:
        """Volume each lattice node stands for (m^3), shaped (nx, ny, nz); the product
        of :meth:`dual_lengths`, and ``cell_volume`` everywhere on a uniform lattice."""
        wx, wy, wz = self.dual_lengths()
        return wx[:, None, None] * wy[None, :, None] * wz[None, None, :]

    def mode(self, index: int) -> ModeField:
        """The mode numbered ``index`` (1-based, as in modes.json)."""
        for m in self.modes:
            if m.index == index:
                return m
        have = [m.index for m in self.modes]
        span = f"modes {min(have)}-{max(have)}" if have else "no modes at all"
        raise RingprintError(f"there is no mode {index} (this result has {span}); pick one of those")

    def electric_density(self, mode: ModeField) -> np.ndarray:
        """Time-averaged electric energy density ``eps0 eps_r |E|^2 / 4`` (J/m^3)."""
        return 0.25 * EPS0 * self.eps_r * squared_magnitude(mode.e)

    def magnetic_density(self, mode: ModeField) -> np.ndarray:
        """Time-averaged magnetic energy density ``mu0 |H|^2 / 4`` (J/m^3)."""
        return 0.25 * MU0 * squared_magnitude(mode.h)

    def energy_density(self, mode: ModeField) -> np.ndarray:
        """Time-averaged stored energy density (J/m^3); sums to 1 J times 1/dV."""
        return self.electric_density(mode) + self.magnetic_density(mode)

    def solid(self) -> np.ndarray:
        """Nodes inside any part."""
        out = np.zeros(self.shape, bool)
        for mask in self.parts.values():
            out |= mask
        return out
