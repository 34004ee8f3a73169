"""Mode fields on one node lattice: the in-memory form of ``fields.h5``.

Every mode's field is a complex phasor pair ``(E, H)`` sampled at the nodes of a
rectilinear lattice (the solver grid, or every ``decimation``-th node of it; the
steps may differ from node to node on a graded grid), so that
``E(r, t) = Re[E(r) exp(-i w t)]``. Each pair is normalized to one joule of
time-averaged stored energy in the region outside the absorbing layer,

    W = 1/4 sum( eps0 eps_r |E|^2 + mu0 |H|^2 ) dV = 1 J,

where ``dV`` is the volume each node stands for (:meth:`FieldSet.node_volumes`: the
box reaching halfway to the neighbouring node along each axis, half a step beyond
the end nodes; ``step**3`` everywhere on a uniform lattice),
and its global phase is turned so that ``sum(E . E)`` is real and positive (a
standing-wave mode then has a nearly real E).

File layout of ``fields.h5`` (attributes in brackets)::

    /                      [layout = 2, ringprint_version, case_digest, decimation,
                            uniform (1 when every step is the same), step_min_m,
                            step_max_m, conductors (names), part_names (case order),
                            probe_center_m, probe_normal, probe_size_m]
    /axes/x, /axes/y, /axes/z      node coordinates (m), float64: the lattice itself
    /media/eps_r, /media/sigma     (nx, ny, nz) float32 at the nodes (sigma in S/m)
    /media/pec                     (nx, ny, nz) uint8, 1 on conductor nodes
    /parts/<name>                  (nx, ny, nz) uint8 mask, 1 inside the part
    /modes/mode_NN/E, .../H        (3, nx, ny, nz) complex64 phasors (V/m, A/m)
                                   [index, frequency_hz, q]
    /touch/mode_NN/points          (m, 3) touch points on the outer surface (m)
    /touch/mode_NN/normals         (m, 3) outward unit normals
    /touch/mode_NN/shift_percent   (m,) predicted frequency shift (negative: down)
    /touch/mode_NN/q_after         (m,) predicted Q with the tissue present

Layout 1 (before graded grids) had a scalar ``spacing_m`` instead of ``uniform``,
``step_min_m`` and ``step_max_m``; everything else is the same, and it is read too
(its lattice was always uniform).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd import EPS0, MU0

#: Version of the fields.h5 layout written by this module.
LAYOUT = 2
#: Layouts :func:`ringprint.analysis.fieldset_io.read_fieldset` reads.
READABLE_LAYOUTS = (1, 2)
#: Relative difference of steps below which an axis counts as uniform (coordinates
#: built as ``origin + h * arange(n)`` differ by rounding only).
UNIFORM_RTOL = 1e-9


def squared_magnitude(v: np.ndarray) -> np.ndarray:
    """``|v|^2`` summed over the leading component axis, in float64."""
    return np.einsum("c...,c...->...", v.real, v.real, dtype=float) \
        + np.einsum("c...,c...->...", v.imag, v.imag, dtype=float)


def stored_energy(eps_r: np.ndarray, e: np.ndarray, h: np.ndarray, volumes) -> float:
    """Time-averaged stored energy ``1/4 sum(eps0 eps_r |E|^2 + mu0 |H|^2) dV`` (J).

    ``volumes`` is the volume of each node (an array shaped like ``eps_r``, e.g.
    :meth:`FieldSet.node_volumes`), or one number for a uniform lattice.
    """
    volumes = np.asarray(volumes, dtype=float)
    if volumes.ndim == 0:
        return 0.25 * float(volumes) * (EPS0 * float(np.sum(eps_r * squared_magnitude(e)))
                                        + MU0 * float(np.sum(squared_magnitude(h))))
    return 0.25 * (EPS0 * float(np.sum(volumes * eps_r * squared_magnitude(e)))
                   + MU0 * float(np.sum(volumes * squared_magnitude(h))))


def is_uniform(steps) -> bool:
    """True when every step in the 1-D array ``steps`` equals the first (to
    :data:`UNIFORM_RTOL`); an axis of one node (no step) counts as uniform."""
    steps = np.asarray(steps, dtype=float)
    return steps.size == 0 or bool(np.all(np.abs(steps - steps[0]) <= UNIFORM_RTOL * abs(steps[0])))


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
    def steps(self) -> tuple:
        """Per axis, the distances between neighbouring lattice nodes (1-D arrays, m)."""
        return tuple(np.diff(a) for a in (self.x, self.y, self.z))

    @property
    def uniform(self) -> bool:
        """True when every step along every axis is the same (:func:`is_uniform`)."""
        steps = [d for d in self.steps if d.size]
        return all(is_uniform(d) for d in steps) and (not steps or is_uniform([d[0] for d in steps]))

    @property
    def min_step(self) -> float:
        """Smallest lattice step (m); 0 for a lattice of one node."""
        steps = [float(d.min()) for d in self.steps if d.size]
        return min(steps) if steps else 0.0

    @property
    def max_step(self) -> float:
        """Largest lattice step (m); 0 for a lattice of one node."""
        steps = [float(d.max()) for d in self.steps if d.size]
        return max(steps) if steps else 0.0

    @property
    def spacing(self) -> float:
        """The one node spacing of a uniform lattice (m).

        Raises
        ------
        RingprintError
            On a non-uniform lattice, which has no single spacing: use
            :attr:`steps`, :meth:`node_volumes` or :meth:`dual_lengths` instead.
        """
        if not self.uniform:
            raise RingprintError("this field lattice is graded (its steps differ), so it has no single "
                                 "spacing; use FieldSet.steps or FieldSet.node_volumes()")
        return float(self.x[1] - self.x[0]) if self.x.size > 1 else 0.0

    @property
    def cell_volume(self) -> float:
        """``spacing**3`` of a uniform lattice (refused on a graded one, like :attr:`spacing`)."""
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
        # float64 first: 0.25 * EPS0 * eps_r would be rounded to eps_r's float32
        return squared_magnitude(mode.e) * self.eps_r * (0.25 * EPS0)

    def magnetic_density(self, mode: ModeField) -> np.ndarray:
        """Time-averaged magnetic energy density ``mu0 |H|^2 / 4`` (J/m^3)."""
        return 0.25 * MU0 * squared_magnitude(mode.h)

    def energy_density(self, mode: ModeField) -> np.ndarray:
        """Time-averaged stored energy density (J/m^3); weighted by :meth:`node_volumes`
        it sums to the mode's stored energy (1 J)."""
        return self.electric_density(mode) + self.magnetic_density(mode)

    def integrate(self, values: np.ndarray) -> float:
        """``sum(values * dV)`` over the lattice for a node array ``values`` shaped like
        the lattice, with ``dV`` the node volumes (without building them)."""
        wx, wy, wz = self.dual_lengths()
        return float(np.einsum("ijk,i,j,k->", np.asarray(values, dtype=float), wx, wy, wz,
                               optimize=True))

    def solid(self) -> np.ndarray:
        """Nodes inside any part."""
        out = np.zeros(self.shape, bool)
        for mask in self.parts.values():
            out |= mask
        return out
