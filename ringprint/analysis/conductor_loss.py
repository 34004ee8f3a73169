"""Conductor loss: the surface-resistance perturbation of each mode's field.

The solver keeps every conductor perfect (:mod:`ringprint.analysis.materials`). A
conductor of finite conductivity ``sigma`` then dissipates, per unit area of its
surface, ``Rs/2 |H_t|^2`` with ``Rs = sqrt(omega mu0 mu_r / (2 sigma))`` at the mode
frequency and ``H_t`` the mode's tangential magnetic field on the surface (the
surface current). To first order in ``Rs / eta0`` the field is the perfect
conductor's, so for a mode of stored energy ``W``

    P = Rs/2 Int_S |H_t|^2 dS (per lossy part),   Q_c = omega W / sum(P),
    1/Q = 1/Q_solver + 1/Q_c,

where ``Q_solver`` is the ring-down's Q (radiation and dielectric loss). The fields
of :class:`~ringprint.analysis.fieldset.FieldSet` are normalized to ``W = 1 J``; ``W``
is recomputed here from the lattice with :meth:`FieldSet.node_volumes`, so the
ratio stays consistent whatever the normalization. References: Pozar 2012, sec. 6.1
and 6.3 (Q of a cavity from the wall loss of the lossless field, the perturbation
method); Harrington 1961, ch. 2 (surface impedance; chapter from memory).

Rules (measured in tests/validation/test_conductor_q.py):

- **Where.** The part's own triangles (metres), each cut into ``n^2`` equal
  sub-triangles no larger than the local lattice step, one quadrature point at each
  centroid (midpoint rule). A solid is sampled on its outward side (the air side of
  a closed, outward-oriented surface); a sheet on both faces, the two losses added.
- **Sampling H.** Nodes inside metal carry no field, and the nodes next to a
  staircased wall mix it with the metal's zero, so H is read only at *air nodes*
  (no PEC edge and inside no conductor). At ``SAMPLES`` points along the normal, at
  1, 2, ... lattice steps from the surface, H is interpolated trilinearly from the
  air nodes of the surrounding cell, the weights renormalized over them (at least
  ``MIN_WEIGHT`` of the cell must be air). Each sample then stands for the field at
  the weighted centre of the nodes it used, whose distance ``s`` from the surface is
  its abscissa, and ``H`` on the surface is the Lagrange polynomial through the
  samples extrapolated to ``s = 0``. On a flat wall ``dH_t/dn = 0``; on a curved wall
  ``H_t`` changes at first order (``r H_phi`` is constant at the wall of a circular
  cavity), which the extrapolation takes out: one sample alone would be off by the
  step over the radius of curvature.
- **Not sampled.** A face pressed against another conductor (every sample inside
  metal) carries no current and adds nothing; ``covered`` reports the sampled share
  of each part's area.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ringprint.analysis.fieldset import FieldSet
from ringprint.analysis.materials import surface_resistance
from ringprint.errors import RingprintError

__all__ = ["SAMPLES", "MIN_WEIGHT", "ConductorSurface", "ModeLoss", "conductor_surfaces",
           "quadrature", "surface_values", "surface_h", "mode_losses", "combined_q", "attach_losses",
           "mark_without_losses", "coverage_notes", "no_fields_note"]

#: Samples along the normal (1, 2, ... lattice steps out) fitted by a polynomial.
SAMPLES = 3
#: Least share of a sample's trilinear cell that must be air nodes.
MIN_WEIGHT = 1e-3
#: Largest number of sub-triangles along a triangle edge.
MAX_SUBDIVISION = 64
#: Quadrature points handled at once (bounds the memory of the stencils).
CHUNK = 1 << 17


@dataclass(frozen=True)
class ConductorSurface:
    """The surface of one lossy conductor part: its triangles and material."""

    name: str
    sigma: float                    #: bulk conductivity (S/m), > 0
    triangles: np.ndarray           #: (m, 3, 3) vertex coordinates (m)
    two_sided: np.ndarray           #: (m,) bool, True for sheet triangles (both faces)
    mu_r: float = 1.0               #: effective permeability of the surface layer

    def __post_init__(self):
        tri = np.asarray(self.triangles, dtype=float)
        if tri.ndim != 3 or tri.shape[1:] != (3, 3) or not np.all(np.isfinite(tri)):
            raise RingprintError(f"conductor {self.name!r}: triangles must be a finite (m, 3, 3) array")
        two = np.broadcast_to(np.asarray(self.two_sided, dtype=bool), tri.shape[:1])
        if not (self.sigma > 0 and math.isfinite(self.sigma)):
            raise RingprintError(f"conductor {self.name!r}: sigma must be finite and > 0, got "
                                 f"{self.sigma!r}; use a perfect conductor for no loss")
        object.__setattr__(self, "triangles", tri)
        object.__setattr__(self, "two_sided", np.ascontiguousarray(two))

    def surface_resistance(self, frequency_hz: float) -> float:
        return float(surface_resistance(frequency_hz, self.sigma, self.mu_r))


@dataclass
class ModeLoss:
    """One mode's conductor loss: Q_c and each lossy part's power and share."""

    index: int
    q_conductor: float                                 #: inf when nothing dissipates
    power_w: dict = field(default_factory=dict)        #: part -> dissipated power (W)
    share: dict = field(default_factory=dict)          #: part -> fraction of the total
    covered: dict = field(default_factory=dict)        #: part -> sampled share of its area


def conductor_surfaces(model) -> list[ConductorSurface]:
    """The lossy conductor parts of a :class:`~ringprint.analysis.model.Model` (case order)."""
    out = []
    for p in model.parts:
        m = p.part.material
        if not m.is_lossy_conductor:
            continue
        tris = [s.vertices[s.faces] for s in p.surfaces]
        sheet = [np.full(len(s.faces), s.kind == "sheet") for s in p.surfaces]
        out.append(ConductorSurface(p.name, m.sigma, np.concatenate(tris), np.concatenate(sheet),
                                    m.mu_r))
    return out


def _cell_of(axes, points):
    """Per point and axis: the lattice cell index and the step of that cell (-1 outside)."""
    idx, step = [], []
    for a, ax in enumerate(axes):
        i = np.searchsorted(ax, points[:, a], side="right") - 1
        inside = (i >= 0) & (i <= ax.size - 2) | (points[:, a] == ax[-1])
        i = np.clip(i, 0, ax.size - 2)
        idx.append(np.where(inside, i, -1))
        step.append(np.diff(ax)[i])
    return np.stack(idx, axis=1), np.stack(step, axis=1)


def quadrature(triangles: np.ndarray, two_sided: np.ndarray, axes) -> tuple:
    """Quadrature points, unit normals and areas of a surface on a lattice.

    Each triangle is cut into ``n^2`` sub-triangles (``n`` = its longest edge over the
    smallest lattice step at its centroid, at most ``MAX_SUBDIVISION``); a two-sided
    triangle gives each point twice, once per face. Returns ``(points (p, 3),
    normals (p, 3), areas (p,), triangle (p,))``, ``triangle`` the source triangle.
    """
    a, b, c = triangles[:, 0], triangles[:, 1], triangles[:, 2]
    cross = np.cross(b - a, c - a)
    twice = np.linalg.norm(cross, axis=1)
    keep = twice > 0
    normal = np.zeros_like(cross)
    normal[keep] = cross[keep] / twice[keep, None]
    longest = np.max(np.linalg.norm(np.stack([b - a, c - b, a - c]), axis=2), axis=0)
    _, step = _cell_of(axes, (a + b + c) / 3)
    n = np.clip(np.ceil(longest / step.min(axis=1)), 1, MAX_SUBDIVISION).astype(int)
    pts, nrm, area, owner = [], [], [], []
    for level in np.unique(n[keep]):
        sel = np.flatnonzero(keep & (n == level))
        i, j = np.meshgrid(np.arange(level), np.arange(level), indexing="ij")
        up = i + j <= level - 1
        down = i + j <= level - 2
        u = np.concatenate([i[up] + 1 / 3, i[down] + 2 / 3]) / level
        v = np.concatenate([j[up] + 1 / 3, j[down] + 2 / 3]) / level
        p = a[sel, None] + u[None, :, None] * (b - a)[sel, None] + v[None, :, None] * (c - a)[sel, None]
        pts.append(p.reshape(-1, 3))
        nrm.append(np.repeat(normal[sel], u.size, axis=0))
        area.append(np.repeat(0.5 * twice[sel] / level ** 2, u.size))
        owner.append(np.repeat(sel, u.size))
    if not pts:
        empty = np.zeros((0, 3))
        return empty, empty, np.zeros(0), np.zeros(0, int)
    pts, nrm, area, owner = (np.concatenate(v) for v in (pts, nrm, area, owner))
    back = two_sided[owner]
    return (np.concatenate([pts, pts[back]]), np.concatenate([nrm, -nrm[back]]),
            np.concatenate([area, area[back]]), np.concatenate([owner, owner[back]]))


def _stencil(axes, air_flat, shape, q):
    """Trilinear weights over the air nodes of the cell around each point ``q``.

    Returns ``(flat node indices (c, 8), weights (c, 8), centre (c, 3), ok (c,))``;
    the weights of an ``ok`` point sum to 1, ``centre`` is their weighted node position.
    """
    cell, step = _cell_of(axes, q)
    ok = np.all(cell >= 0, axis=1)
    cell = np.where(cell < 0, 0, cell)
    t = np.clip((q - np.stack([ax[cell[:, a]] for a, ax in enumerate(axes)], axis=1)) / step, 0, 1)
    corners = np.array([[(k >> 2) & 1, (k >> 1) & 1, k & 1] for k in range(8)])
    node = cell[:, None, :] + corners[None]                     # (c, 8, 3)
    w = np.prod(np.where(corners[None] == 1, t[:, None, :], 1 - t[:, None, :]), axis=2)
    flat = np.ravel_multi_index((node[..., 0], node[..., 1], node[..., 2]), shape)
    w = w * air_flat[flat]
    total = w.sum(axis=1)
    ok &= total >= MIN_WEIGHT
    w = np.divide(w, total[:, None], out=np.zeros_like(w), where=ok[:, None])
    pos = np.stack([ax[node[..., a]] for a, ax in enumerate(axes)], axis=2)
    return flat, w, np.einsum("ck,cka->ca", w, pos), ok


def _extrapolation_weights(s: np.ndarray, ok: np.ndarray, step: np.ndarray) -> np.ndarray:
    """Lagrange weights ``L_k(0)`` through the usable samples (abscissas ``s``, (c, K))."""
    use = ok & (s > 0.1 * step[:, None])
    for k in range(1, s.shape[1]):   # a sample that did not move outward adds nothing
        prev = np.max(np.where(use[:, :k], s[:, :k], -np.inf), axis=1)
        use[:, k] &= s[:, k] > prev + 0.25 * step
    lag = np.where(use, 1.0, 0.0)
    for k in range(s.shape[1]):
        for j in range(s.shape[1]):
            if j != k:
                factor = np.divide(s[:, j], s[:, j] - s[:, k], out=np.ones_like(s[:, j]),
                                   where=use[:, j] & use[:, k])
                lag[:, k] *= np.where(use[:, j], factor, 1.0)
    return lag


def _air_nodes(fs: FieldSet) -> np.ndarray:
    air = ~np.asarray(fs.pec, bool)
    for name in fs.conductors:
        if name in fs.parts:
            air &= ~fs.parts[name]
    return np.ascontiguousarray(air).ravel()


def surface_values(fs: FieldSet, points, normals, fields, samples: int = SAMPLES, nodes=None):
    """Fields at up to :data:`CHUNK` surface points, extrapolated along ``normals`` from the
    ``nodes`` (bool over the lattice; default the air nodes) by the module's sampling rule.

    ``fields``: arrays ``(c, nx, ny, nz)``, any ``c`` (a phasor, or ``eps_r[None]``).
    Returns ``(values, ok (p,))``, a ``(p, c)`` array per field, 0 where nothing was usable.
    """
    axes = (fs.x, fs.y, fs.z)
    usable = _air_nodes(fs) if nodes is None else np.ascontiguousarray(nodes, bool).ravel()
    p, n = np.asarray(points, float), np.asarray(normals, float)
    step = _cell_of(axes, p)[1].max(axis=1)
    stencils = [_stencil(axes, usable, fs.shape, p + n * (k * step)[:, None])
                for k in range(1, samples + 1)]
    s = np.stack([np.einsum("ca,ca->c", c - p, n) for _, _, c, _ in stencils], axis=1)
    lag = _extrapolation_weights(s, np.stack([o for *_, o in stencils], axis=1), step)

    def extrapolated(f):
        flat_f = np.asarray(f).reshape(len(f), -1)
        return sum(lag[:, k, None] * np.stack([np.einsum("ck,ck->c", w, flat_f[a][flat])
                                               for a in range(len(f))], axis=1)
                   for k, (flat, w, _, _) in enumerate(stencils))
    return [extrapolated(f) for f in fields], lag.any(axis=1)


def surface_h(fs: FieldSet, points, normals, h_fields, samples: int = SAMPLES):
    """Tangential H on a conductor surface, extrapolated from the air nodes.

    Parameters
    ----------
    fs : FieldSet
        The lattice (axes, PEC nodes, part masks; see the module docstring).
    points, normals : array, (p, 3)
        Surface points and unit normals pointing into the air.
    h_fields : sequence of array (3, nx, ny, nz)
        H phasors of one or more modes.
    samples : int
        Samples along the normal (1 for the nearest only).

    Returns
    -------
    ht2 : array (n_modes, p)
        ``|H_t|^2`` at each point (0 where it could not be sampled).
    ok : array (p,) bool
        Points with at least one usable sample.
    """
    air, points, normals = _air_nodes(fs), np.asarray(points, float), np.asarray(normals, float)
    out, sampled = np.zeros((len(h_fields), len(points))), np.zeros(len(points), bool)
    for lo in range(0, len(points), CHUNK):
        n = normals[lo:lo + CHUNK]
        h0, sampled[lo:lo + CHUNK] = surface_values(fs, points[lo:lo + CHUNK], n, h_fields, samples, air)
        h0 = np.stack(h0)
        ht = h0 - n[None] * np.einsum("mca,ca->mc", h0, n)[..., None]
        out[:, lo:lo + CHUNK] = np.sum(ht.real ** 2 + ht.imag ** 2, axis=2)
    return out, sampled


def _stored_energy(fs: FieldSet, mode) -> float:
    """``1/4 sum(eps0 eps_r |E|^2 + mu0 |H|^2) dV`` with the per-node volumes (J)."""
    return float(np.sum(fs.energy_density(mode) * fs.node_volumes()))


def mode_losses(fs: FieldSet, conductors, stored_energy=None, samples: int = SAMPLES) -> list[ModeLoss]:
    """Conductor Q and per-part dissipated power of every mode of ``fs``.

    Parameters
    ----------
    fs : FieldSet
        Mode fields on the node lattice.
    conductors : sequence of ConductorSurface
        The lossy conductors (:func:`conductor_surfaces`).
    stored_energy : sequence of float or None
        Each mode's stored energy (J); default: the lattice sum with
        :meth:`FieldSet.node_volumes` (1 J for normalized fields).
    samples : int
        Samples along the normal for the extrapolation to the surface.

    Returns
    -------
    list of ModeLoss
        One per ``fs.modes``; ``q_conductor`` is ``inf`` when nothing dissipates.

    References
    ----------
    Pozar, D. M., Microwave Engineering, 4th ed., Wiley, 2012, sec. 6.1, 6.3 (Q from the
    wall loss of the lossless field); Harrington, R. F., Time-Harmonic Electromagnetic
    Fields, McGraw-Hill, 1961, ch. 2 (surface impedance; chapter from memory).
    """
    if not (isinstance(samples, int) and samples >= 1):
        raise RingprintError(f"samples must be an integer >= 1, got {samples!r}")
    if not fs.modes:
        return []
    if stored_energy is None:
        stored_energy = [_stored_energy(fs, m) for m in fs.modes]
    if len(stored_energy) != len(fs.modes):
        raise RingprintError("give one stored energy per mode")
    power = np.zeros((len(fs.modes), len(conductors)))
    covered = {}
    axes = (fs.x, fs.y, fs.z)
    for j, c in enumerate(conductors):
        pts, nrm, area, _ = quadrature(c.triangles, c.two_sided, axes)
        ht2, ok = surface_h(fs, pts, nrm, [m.h for m in fs.modes], samples)
        covered[c.name] = float(area[ok].sum() / area.sum()) if area.sum() > 0 else 0.0
        for k, m in enumerate(fs.modes):
            power[k, j] = 0.5 * c.surface_resistance(m.frequency_hz) * float(ht2[k] @ area)
    out = []
    for k, m in enumerate(fs.modes):
        total = float(power[k].sum())
        q = m.omega * stored_energy[k] / total if total > 0 else math.inf
        names = [c.name for c in conductors]
        out.append(ModeLoss(m.index, q, dict(zip(names, power[k].tolist())),
                            {n: (p / total if total > 0 else 0.0) for n, p in zip(names, power[k])},
                            dict(covered)))
    return out


def combined_q(q_solver, q_conductor):
    """``1 / (1/Q_solver + 1/Q_c)``: independent losses add as ``1/Q`` (Pozar 2012, sec. 6.1).

    ``q_conductor`` None or ``inf`` leaves ``q_solver`` as it is.
    """
    if q_conductor is None or math.isinf(q_conductor):
        return float(q_solver)
    if not (q_solver > 0 and q_conductor > 0):
        raise RingprintError(f"Q values must be > 0, got {q_solver!r} and {q_conductor!r}")
    return 1.0 / (1.0 / q_solver + 1.0 / q_conductor)


def mark_without_losses(modes) -> None:
    """Give every mode entry ``q_solver`` (its ring-down Q) and no conductor Q yet."""
    for m in modes:
        m.setdefault("q_solver", m["q"])
        m.setdefault("q_conductor", None)
        m.setdefault("conductor_loss", {})


def attach_losses(modes, losses, fs: FieldSet | None = None) -> None:
    """Put each mode's conductor Q into its modes.json entry: ``q`` becomes the combined Q.

    Entries gain ``q_solver``, ``q_conductor`` (None when nothing dissipates) and
    ``conductor_loss`` ({part: share of the conductor loss}); the matching field of
    ``fs`` takes the combined Q too (fields.h5, pictures). An absolute ``q_uncertainty``
    of the ring-down's Q, when the entry has one, is carried to the combined Q
    (``dQ = (Q / Q_solver)^2 dQ_solver``, from ``1/Q = 1/Q_solver + 1/Q_c``; the
    conductor Q's own error is not in it), and a ``q_extrapolated`` is combined too.
    """
    mark_without_losses(modes)
    by_index = {loss.index: loss for loss in losses}
    fields = {mf.index: mf for mf in fs.modes} if fs is not None else {}
    for m in modes:
        loss = by_index.get(m["index"])
        if loss is None or math.isinf(loss.q_conductor):
            continue
        m["q_conductor"] = float(loss.q_conductor)
        m["conductor_loss"] = {n: float(v) for n, v in loss.share.items()}
        m["q"] = combined_q(m["q_solver"], loss.q_conductor)
        if m.get("q_uncertainty") is not None:
            m["q_uncertainty"] = float(m["q_uncertainty"]) * (m["q"] / m["q_solver"]) ** 2
        if m.get("q_extrapolated") is not None:
            m["q_extrapolated"] = combined_q(m["q_extrapolated"], loss.q_conductor)
        if m["index"] in fields:
            fields[m["index"]].q = m["q"]


#: Sampled share of a lossy part's area below which the run notes it.
COVERAGE_NOTE = 0.9


def coverage_notes(losses) -> list[str]:
    """Notes for lossy parts whose surface could be sampled only in part (once per part)."""
    if not losses:
        return []
    return [f"conductor loss of part {name!r}: only {100 * share:.0f} % of its surface has air "
            "beside it on the field lattice (the rest touches other metal or lies closer than a "
            "lattice step to it) and carries no loss; its conductor Q may be too high"
            for name, share in losses[0].covered.items() if share < COVERAGE_NOTE]


def no_fields_note(model, fs) -> list[str]:
    """The run's note when lossy conductors are present but no mode fields were computed."""
    lossy = [p.name for p in model.parts if p.part.material.is_lossy_conductor]
    if fs is not None or not lossy:
        return []
    return [f"conductor Q not computed (it needs the mode fields): the Q of each mode is the "
            f"ring-down's, without the loss of {', '.join(lossy)}; run with the mode fields on "
            "for the combined Q"]
