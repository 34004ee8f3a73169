"""Source waveforms and soft current sources (small loop, point dipole)."""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd.grid import AXES, Grid

#: Envelope level, relative to the peak, below which a pulse counts as ended.
END_LEVEL = 1e-8


@dataclass(frozen=True)
class GaussianPulse:
    """Gaussian-modulated sine covering ``[f_min, f_max]``.

    ``s(t) = amplitude * exp(-((t - t0)/tau)^2) * sin(2 pi f0 (t - t0))`` with
    ``f0 = (f_min + f_max)/2``. Its spectrum is a Gaussian around f0 whose level at
    the band edges is ``edge_db`` (default -10 dB, so the whole band is above
    -20 dB): ``tau = 2 sqrt(-edge_db ln10 / 20) / (pi (f_max - f_min))``. The
    waveform is odd about t0, so its time integral (the DC content) is zero and a
    dipole driven by it leaves no static charge. It starts ``delay_widths`` widths
    late (``t0 = delay_widths * tau``, default 5: the envelope at t = 0 is
    exp(-25) ~ 1e-11 of the peak), so it turns on smoothly.

    Because the pulse has no DC, its +f0 and -f0 lobes cancel towards 0 Hz: the
    -20 dB coverage holds for bands with ``f_max / f_min`` up to about 20; split a
    wider search into two runs.

    Parameters
    ----------
    f_min, f_max : float
        Band edges in Hz, ``0 < f_min < f_max``.
    amplitude : float
        Peak current in A.
    edge_db : float
        Spectral level at the band edges relative to the centre, in dB (< 0, >= -20).
    delay_widths : float
        Delay in units of tau.
    """

    f_min: float
    f_max: float
    amplitude: float = 1.0
    edge_db: float = -10.0
    delay_widths: float = 5.0

    def __post_init__(self):
        if not (np.isfinite(self.f_min) and np.isfinite(self.f_max) and 0 < self.f_min < self.f_max):
            raise RingprintError(f"GaussianPulse band [{self.f_min!r}, {self.f_max!r}] Hz is invalid; "
                                 "need 0 < f_min < f_max (the pulse carries no DC, so the band "
                                 "starts above 0 Hz)")
        if not (-20.0 <= self.edge_db < 0.0):
            raise RingprintError(f"GaussianPulse edge_db = {self.edge_db!r} must be in [-20, 0)")
        if not (self.delay_widths >= 3.0):
            raise RingprintError(f"GaussianPulse delay_widths = {self.delay_widths!r} must be >= 3")

    @property
    def f0(self) -> float:
        return 0.5 * (self.f_min + self.f_max)

    @property
    def tau(self) -> float:
        return 2.0 * np.sqrt(-self.edge_db * np.log(10.0) / 20.0) / (np.pi * (self.f_max - self.f_min))

    @property
    def t0(self) -> float:
        return self.delay_widths * self.tau

    @property
    def t_end(self) -> float:
        """Time (s) after which the envelope stays below END_LEVEL (1e-8) of the peak."""
        return self.t0 + self.tau * np.sqrt(-np.log(END_LEVEL))

    def __call__(self, t):
        u = (np.asarray(t, dtype=np.float64) - self.t0) / self.tau
        return self.amplitude * np.exp(-u * u) * np.sin(2.0 * np.pi * self.f0 * (t - self.t0))

    def to_dict(self) -> dict:
        return {"type": "GaussianPulse", **asdict(self)}


def _axis(name: str, what: str) -> int:
    if name not in AXES:
        raise RingprintError(f"{what} {name!r} unknown; use 'x', 'y' or 'z'")
    return AXES.index(name)


def _nearest(v: np.ndarray, value: float) -> int:
    return int(np.argmin(np.abs(v - value)))


def loop_edges(grid: Grid, center, normal: str, size_cells: int):
    """The edges of a square loop of ``size_cells`` x ``size_cells`` faces.

    The loop lies in the node plane nearest ``center`` normal to ``normal``, centred
    as closely as the grid allows, and runs counterclockwise seen from the +normal
    side (moment along +normal).

    Returns
    -------
    list of (component, (i, j, k) index arrays, orientation array, length array)
    """
    a = _axis(normal, "loop normal")
    b, c = (a + 1) % 3, (a + 2) % 3
    s = int(size_cells)
    if s < 1:
        raise RingprintError(f"loop size_cells = {size_cells!r} must be >= 1")
    ka = _nearest(grid.nodes[a], center[a])
    start = []
    for ax in (b, c):
        v = grid.nodes[ax]
        if v.size - 1 < s:
            raise RingprintError(f"loop size_cells = {s} exceeds the {v.size - 1} cells along {AXES[ax]}")
        mids = 0.5 * (v[:v.size - s] + v[s:])
        start.append(_nearest(mids, center[ax]))
    i0, j0 = start
    out = []
    cells_b = np.arange(i0, i0 + s)
    cells_c = np.arange(j0, j0 + s)
    for along, cells, fixed_node, orient in ((b, cells_b, j0, 1.0), (c, cells_c, i0 + s, 1.0),
                                             (b, cells_b, j0 + s, -1.0), (c, cells_c, i0, -1.0)):
        other = c if along == b else b
        idx = [None, None, None]
        idx[a] = np.full(s, ka)
        idx[along] = cells
        idx[other] = np.full(s, fixed_node)
        comp = "E" + AXES[along]
        out.append((comp, tuple(idx), np.full(s, orient), grid.spacing[along][cells]))
    return out


@dataclass(frozen=True)
class LoopSource:
    """Small square loop of electric current: a magnetic dipole along ``normal``.

    The current ``I(t) = waveform(t)`` (A) flows counterclockwise seen from the
    +normal side around ``size_cells`` x ``size_cells`` faces; on each loop edge it
    is a soft source ``E += -cb J`` with ``J = I / (dual face area)``.

    References
    ----------
    Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005,
    sec. 5.x (soft current sources in the Yee update).
    """

    center: tuple
    normal: str
    waveform: GaussianPulse
    size_cells: int = 1

    def edges(self, grid: Grid):
        return loop_edges(grid, self.center, self.normal, self.size_cells)

    def to_dict(self) -> dict:
        return {"type": "LoopSource", "center": list(map(float, self.center)), "normal": self.normal,
                "size_cells": int(self.size_cells), "waveform": self.waveform.to_dict()}


@dataclass(frozen=True)
class DipoleSource:
    """Point electric dipole: current ``waveform(t)`` (A) on the ``component`` edge
    nearest ``position`` (soft source ``E += -cb I / (dual face area)``)."""

    position: tuple
    component: str
    waveform: GaussianPulse

    def edges(self, grid: Grid):
        if self.component not in ("Ex", "Ey", "Ez"):
            raise RingprintError(f"DipoleSource component {self.component!r}: use 'Ex', 'Ey' or 'Ez'")
        coords = grid.component_coords(self.component)
        idx = tuple(np.array([_nearest(v, p)]) for v, p in zip(coords, self.position))
        ax = AXES.index(self.component[1])
        return [(self.component, idx, np.ones(1), grid.spacing[ax][idx[ax]])]

    def to_dict(self) -> dict:
        return {"type": "DipoleSource", "position": list(map(float, self.position)),
                "component": self.component, "waveform": self.waveform.to_dict()}


def source_from_dict(d: dict):
    """Rebuild a source (with its waveform) from :meth:`to_dict` output."""
    d = dict(d)
    kind = d.pop("type")
    wave = d.pop("waveform")
    wave = dict(wave)
    wave.pop("type")
    pulse = GaussianPulse(**wave)
    if kind == "LoopSource":
        return LoopSource(center=tuple(d["center"]), normal=d["normal"], waveform=pulse,
                          size_cells=d["size_cells"])
    if kind == "DipoleSource":
        return DipoleSource(position=tuple(d["position"]), component=d["component"], waveform=pulse)
    raise RingprintError(f"checkpoint: unknown source type {kind!r}")
