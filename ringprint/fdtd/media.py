"""Media per E edge: permittivity, conductivity, PEC, stored as a small index per edge."""

from __future__ import annotations

import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd.conformal import MIN_STEP_FACTOR, ConformalFaces, conformal_faces, short_edges
from ringprint.fdtd.grid import E_COMPONENTS, EPS0, H_COMPONENTS, Grid

#: Relative resolution used to quantize eps_r and sigma when the unique pairs
#: do not fit a uint16 index (see :class:`Media`).
QUANTIZE_RESOLUTION = 1e-4
_MAX_ENTRIES = 65536


class Media:
    """Relative permittivity, conductivity and PEC mask of every E edge.

    Each edge holds a small integer (``uint8`` when the table has at most 256
    entries, else ``uint16``) indexing a table of unique ``(eps_r, sigma)``
    pairs. Entry 0 is reserved for PEC; the update coefficients derived from the
    table give PEC ``ca = cb = 0``, so the update needs no branch.

    Parameters
    ----------
    grid : Grid
    eps_r : float or tuple of 3 array_like
        Relative permittivity, a scalar for all edges or ``(ex, ey, ez)`` shaped
        like ``Ex, Ey, Ez`` (each may also be a scalar). Must be finite and > 0.
    sigma : float or tuple of 3 array_like
        Conductivity in S/m, same layout, finite and >= 0.
    pec : None or tuple of 3 array_like of bool
        Edges that are perfect electric conductors.
    free_length, free_area : None or tuple of 3 array_like
        Locally conformal metal (:mod:`ringprint.fdtd.conformal`, Dey & Mittra 1997):
        the fraction of every E edge (shaped like Ex, Ey, Ez) and of every H face
        (shaped like Hx, Hy, Hz) that lies outside the metal. Give both or neither.
        PEC edges count as wholly inside whatever ``free_length`` says, and so do edges
        that graze the metal (:func:`ringprint.fdtd.conformal.short_edges`; they become
        PEC).
    min_step_factor : float
        Smallest time-step factor the cut faces may force (see
        :mod:`ringprint.fdtd.conformal`); faces needing less get a larger area.

    Notes
    -----
    Interface-averaged permittivities are continuous values. When there are more
    unique ``(eps_r, sigma)`` pairs than a uint16 index can hold, both are
    quantized on a logarithmic scale with relative resolution
    ``QUANTIZE_RESOLUTION = 1e-4`` (every value moves by at most 0.005 %), which is
    far below the staircase error of the grid; if that still does not fit,
    a RingprintError is raised.
    """

    def __init__(self, grid: Grid, eps_r=1.0, sigma=0.0, pec=None, free_length=None,
                 free_area=None, min_step_factor: float = MIN_STEP_FACTOR):
        self.grid = grid
        shapes = [grid.component_shape(c) for c in E_COMPONENTS]
        eps = _per_component(eps_r, shapes, "eps_r")
        sig = _per_component(sigma, shapes, "sigma")
        if pec is None:
            masks = [None, None, None]
        else:
            masks = _per_component(pec, shapes, "pec", dtype=bool)
        self.conformal, masks = _conformal(grid, free_length, free_area, masks, min_step_factor)
        for c, e, s in zip(E_COMPONENTS, eps, sig):
            _check_values(c, e, s)
        self.quantized = False
        keys = [np.broadcast_to(e + 1j * s, sh) for e, s, sh in zip(eps, sig, shapes)]
        table, inverse = _unique(keys, masks)
        if table.size + 1 > _MAX_ENTRIES:
            self.quantized = True
            qk = [_quantize(k) for k in keys]
            table, inverse = _unique(qk, masks)
            if table.size + 1 > _MAX_ENTRIES:
                raise RingprintError(
                    f"media: {table.size} distinct (eps_r, sigma) pairs even after quantizing to "
                    f"{QUANTIZE_RESOLUTION:g} relative; reduce the number of distinct materials")
        n = table.size + 1
        idtype = np.uint8 if n <= 256 else np.uint16
        self.index = tuple(np.ascontiguousarray(v.astype(idtype)) for v in inverse)
        #: eps_r per table entry (entry 0 is PEC, stored as inf).
        self.eps_r_table = np.concatenate([[np.inf], table.real])
        #: sigma per table entry in S/m (entry 0 is PEC, stored as 0).
        self.sigma_table = np.concatenate([[0.0], table.imag])

    @property
    def eps_r_max(self) -> float:
        """Largest relative permittivity of any non-PEC edge (1 if all are PEC)."""
        used = self._used()[1:]
        return float(self.eps_r_table[1:][used].max()) if used.any() else 1.0

    @property
    def eps_r_min(self) -> float:
        """Smallest relative permittivity of any non-PEC edge (1 if all are PEC)."""
        used = self._used()[1:]
        return float(self.eps_r_table[1:][used].min()) if used.any() else 1.0

    def _used(self) -> np.ndarray:
        used = np.zeros(self.eps_r_table.size, bool)
        for v in self.index:
            used[np.unique(v)] = True
        return used

    def coefficients(self, dt: float) -> tuple[np.ndarray, np.ndarray]:
        """Semi-implicit lossy update coefficients ``(ca, cb)`` per table entry.

        ``ca = (1 - s dt/2eps)/(1 + s dt/2eps)``, ``cb = (dt/eps)/(1 + s dt/2eps)``
        with ``eps = eps0 eps_r``; the PEC entry is ``ca = cb = 0``.

        References
        ----------
        Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005,
        sec. 3.7 (lossy media, semi-implicit update).
        """
        eps = EPS0 * self.eps_r_table[1:]
        half = self.sigma_table[1:] * dt / (2.0 * eps)
        ca = np.concatenate([[0.0], (1.0 - half) / (1.0 + half)])
        cb = np.concatenate([[0.0], (dt / eps) / (1.0 + half)])
        return ca, cb

    def permittivity_table(self) -> np.ndarray:
        """Absolute permittivity per entry (F/m) for energy sums; 0 for PEC."""
        return np.concatenate([[0.0], EPS0 * self.eps_r_table[1:]])

    @property
    def step_factor(self) -> float:
        """Factor on the Courant time step that the conformal faces need (1 without)."""
        return 1.0 if self.conformal is None else self.conformal.step_factor

    @classmethod
    def from_tables(cls, grid: Grid, index, eps_r_table, sigma_table,
                    conformal: ConformalFaces | None = None) -> "Media":
        """Rebuild from stored index arrays and tables (used by checkpoints)."""
        self = cls.__new__(cls)
        self.grid = grid
        self.quantized = False
        self.conformal = conformal
        shapes = [grid.component_shape(c) for c in E_COMPONENTS]
        self.index = tuple(np.ascontiguousarray(v) for v in index)
        for v, sh in zip(self.index, shapes):
            if v.shape != sh:
                raise RingprintError(f"media index shaped {v.shape}, expected {sh}")
        self.eps_r_table = np.asarray(eps_r_table, float)
        self.sigma_table = np.asarray(sigma_table, float)
        return self


def _conformal(grid, free_length, free_area, masks, min_step_factor):
    """The cut faces, and the PEC masks with the edges that graze the metal added
    (:func:`ringprint.fdtd.conformal.short_edges`)."""
    if free_length is None and free_area is None:
        return None, masks
    if free_length is None or free_area is None:
        raise RingprintError("media: conformal metal needs both free_length (per E edge) and "
                             "free_area (per H face); give both or neither")
    e_shapes = [grid.component_shape(c) for c in E_COMPONENTS]
    h_shapes = [grid.component_shape(c) for c in H_COMPONENTS]
    lengths = _per_component(free_length, e_shapes, "free_length")
    areas = _per_component(free_area, h_shapes, "free_area")
    for name, group in (("free_length", lengths), ("free_area", areas)):
        for v in group:
            if np.any(~np.isfinite(v)) or np.any(v < 0) or np.any(v > 1):
                raise RingprintError(f"media {name}: fractions must lie in [0, 1]")
    lengths = [np.broadcast_to(v, sh).astype(np.float32) for v, sh in zip(lengths, e_shapes)]
    areas = [np.broadcast_to(v, sh) for v, sh in zip(areas, h_shapes)]
    for v, m in zip(lengths, masks):
        if m is not None:
            v[np.broadcast_to(m, v.shape)] = 0.0
    out = []
    for v, short, m in zip(lengths, short_edges(grid, lengths, areas), masks):
        if m is not None:
            short |= np.broadcast_to(m, v.shape)
        v[short] = 0.0
        out.append(short)
    return conformal_faces(grid, lengths, areas, min_step_factor), out


def _per_component(value, shapes, name, dtype=float):
    if isinstance(value, (tuple, list)):
        if len(value) != 3:
            raise RingprintError(f"media {name}: give a scalar or a tuple of 3 arrays (x, y, z edges), "
                                 f"got {len(value)} items")
        parts = value
    else:
        parts = (value, value, value)
    out = []
    for c, v, sh in zip(E_COMPONENTS, parts, shapes):
        a = np.asarray(v, dtype=dtype)
        if a.ndim != 0 and a.shape != sh:
            raise RingprintError(f"media {name} for {c}: shape {a.shape} does not match the "
                                 f"{c} edge array {sh}; pass a scalar or an array shaped {sh}")
        out.append(a)
    return out


def _check_values(comp, eps, sig):
    bad = ~(np.isfinite(eps) & (eps > 0))
    if np.any(bad):
        v = eps.flat[int(np.flatnonzero(bad.ravel())[0])] if eps.ndim else eps
        raise RingprintError(f"media eps_r for {comp}: value {float(v):g} is not a finite "
                             "positive number; relative permittivity must be > 0 (use pec for metals)")
    bad = ~(np.isfinite(sig) & (sig >= 0))
    if np.any(bad):
        v = sig.flat[int(np.flatnonzero(bad.ravel())[0])] if sig.ndim else sig
        raise RingprintError(f"media sigma for {comp}: value {float(v):g} S/m is not finite and >= 0; "
                             "conductivity must be >= 0")


def _unique(keys, masks):
    """Unique keys of the non-PEC edges over the three components.

    Returns ``(table, [index_x, index_y, index_z])``; index 0 is PEC and table
    entry t maps to index t + 1.
    """
    sizes = [int(np.prod(k.shape)) for k in keys]
    if masks[0] is None and all(k.strides == (0, 0, 0) for k in keys):
        # scalar inputs broadcast: no need to expand the arrays
        vals = np.array([k.flat[0] for k in keys])
        table, inv = np.unique(vals, return_inverse=True)
        return table, [np.full(k.shape, i + 1, dtype=np.int64) for k, i in zip(keys, inv.ravel())]
    allk = np.concatenate([np.asarray(k).ravel() for k in keys])
    if masks[0] is None:
        allm = np.zeros(allk.size, bool)
    else:
        allm = np.concatenate([np.broadcast_to(m, k.shape).ravel() for k, m in zip(keys, masks)])
    table, inv = np.unique(allk[~allm], return_inverse=True)
    full = np.zeros(allk.size, dtype=np.int64)
    full[~allm] = inv.ravel() + 1
    out, start = [], 0
    for k, n in zip(keys, sizes):
        out.append(full[start:start + n].reshape(k.shape))
        start += n
    return table, out


def _quantize(key):
    step = np.log1p(QUANTIZE_RESOLUTION)
    e = np.exp(np.round(np.log(key.real) / step) * step)
    s = key.imag
    pos = s > 0
    sq = np.zeros_like(s)
    sq[pos] = np.exp(np.round(np.log(s[pos]) / step) * step)
    return e + 1j * sq
