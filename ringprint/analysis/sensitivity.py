"""Sensitivities of every mode to each part, from the mode fields (first-order perturbation).

Every mode's field on the lattice (:class:`~ringprint.analysis.fieldset.FieldSet`, 1 J of
stored energy ``W``) gives, without another run, how its frequency ``f`` moves when a
part changes a little. Signs: a positive surface offset moves the part's surface along
its outward normal (the part grows); a positive move shifts the whole part along +x,
+y or +z.

- **eps_r of a dielectric part** (Harrington 1961, sec. 7-2, cavity perturbation):
  ``df/f = -1/(4W) Int_part d_eps |E|^2 dV``, so
  ``df/d(eps_r) = -f eps0 Int_part |E|^2 dV / (4W)`` over the part's lattice nodes.
- **Surface offset of a conductor** (Slater's theorem; Pozar 2012, sec. 6.8): a wall
  moved into the field by ``h`` removes the volume ``h dA`` and
  ``df/f = Int (mu0 |H_t|^2 - eps |E_n|^2) h dA / (4W)``, ``eps`` the medium beside it.
- **Surface offset of a dielectric** (Johnson et al. 2002, eq. 19): with ``eps_1`` the
  part and ``eps_2`` the medium outside,
  ``df/f = -Int h [(eps_1 - eps_2) |E_t|^2 - (1/eps_1 - 1/eps_2) |D_n|^2] dA / (4W)``,
  using the components that are continuous across the boundary (``E_t``, ``D_n``).
  The volume form of Harrington's formula would need ``E`` inside and out, which jumps
  at the boundary; this one does not.
- **Rigid move along x, y, z**: the surface moves by ``d`` everywhere, its normal
  offset is ``d . n``, so ``df/dx = Int s n_x dA`` with ``s`` the local density of the
  offset term (Hz per m of offset per m^2).
- **Scale of the part about its centre**: the offset at ``r`` is ``(r - c) . n`` per
  unit relative scale; ``scale_hz = Int s (r - c) . n dA``. Maxwell's equations are
  scale invariant, so scaling every part (and the space around them) by ``1 + a``
  scales every frequency by ``1/(1 + a)``: the sum over all parts of
  ``scale_hz + c . move`` is ``-f`` (a check on the whole set of terms).

Surface values use the sampling rule of :mod:`ringprint.analysis.conductor_loss`
(:func:`~ringprint.analysis.conductor_loss.surface_values`): on the part's own triangles
(midpoint quadrature), from the nodes outside the part (no metal), extrapolated to the
surface from 1, 2, 3 lattice steps out, ``eps`` outside interpolated the same way from
the media the part masks give (:func:`media_eps`). A
point where no outside node is usable (a face pressed against metal) adds nothing;
``surface_covered`` is the sampled share of the area. A two-sided sheet gets both faces,
so its offset is a thickening on both sides.

**Sheets.** A zero-thickness sheet's offset is a thickening; moving it within its own
plane or growing its outline moves its *edges*, a line these surface terms do not see
(the field is singular there), so for a sheet those parts of ``move`` and ``scale`` are
missing. ``scale_check`` (``scale_all_hz / -f``, 1 for a complete set of terms) shows
it, and the run notes any mode whose check is off by more than :data:`SCALE_CHECK_LIMIT`.

First order holds while the shift is a small part of the distance to the nearest other
mode; the report's units (MHz per 0.1 mm, MHz per 1 % of eps_r) stay well inside that
for the usual part sizes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ringprint.analysis.conductor_loss import CHUNK, SAMPLES, quadrature, surface_values
from ringprint.analysis.fieldset import FieldSet, squared_magnitude
from ringprint.analysis.tolerance import attach_spreads
from ringprint.errors import RingprintError
from ringprint.fdtd import EPS0, MU0

__all__ = ["Boundary", "boundaries", "eps_sensitivity", "surface_terms", "part_sensitivities",
           "mode_sensitivities", "attach_sensitivities", "media_eps", "REPORT_LENGTH_M", "REPORT_EPS_FRACTION"]

#: Report units: MHz per 0.1 mm of offset or move, MHz per 1 % of eps_r.
REPORT_LENGTH_M = 1e-4
REPORT_EPS_FRACTION = 0.01
#: What the signs mean (written into modes.json).
CONVENTION = ("first order; offset > 0: the part's surface moves outward (the part grows); "
              "move > 0: the part shifts along +x, +y, +z; scale_hz: per unit relative scale "
              "of the part about centre_m; scale_all_hz: of every part about the origin "
              "(-f for an isolated assembly in free space)")
#: Largest departure of ``scale_check`` from 1 before the run notes the mode.
SCALE_CHECK_LIMIT = 0.2
#: Surface points times fields sampled at once (bounds the memory: 16 bytes x 3 each).
POINTS_BUDGET = 1 << 20


@dataclass(frozen=True)
class Boundary:
    """The surface of one part: triangles (m), sheet flags, and whether it is metal."""

    name: str
    triangles: np.ndarray      #: (m, 3, 3) vertex coordinates (m), outward-oriented
    two_sided: np.ndarray      #: (m,) bool, True for sheet triangles (both faces)
    conductor: bool
    eps_r: float | None = None   #: a dielectric's own eps_r (default: its lattice nodes')

    def __post_init__(self):
        tri = np.asarray(self.triangles, dtype=float)
        if tri.ndim != 3 or tri.shape[1:] != (3, 3) or not np.all(np.isfinite(tri)):
            raise RingprintError(f"part {self.name!r}: triangles must be a finite (m, 3, 3) array")
        object.__setattr__(self, "triangles", tri)
        object.__setattr__(self, "two_sided", np.broadcast_to(np.asarray(self.two_sided, bool),
                                                              tri.shape[:1]).copy())

    @property
    def centre(self) -> np.ndarray:
        """Centre of the part's bounding box (m): the fixed point of its scale term."""
        v = self.triangles.reshape(-1, 3)
        return 0.5 * (v.min(axis=0) + v.max(axis=0))


def boundaries(model) -> list[Boundary]:
    """Every part of a :class:`~ringprint.analysis.model.Model` as a :class:`Boundary` (case order)."""
    out = []
    for p in model.parts:
        tris = [s.vertices[s.faces] for s in p.surfaces]
        sheet = [np.full(len(s.faces), s.kind == "sheet") for s in p.surfaces]
        eps_r = None if p.is_conductor else float(model.case.medium(p.part)[0])
        out.append(Boundary(p.name, np.concatenate(tris), np.concatenate(sheet), p.is_conductor, eps_r))
    return out


def _inside(fs: FieldSet, name: str) -> np.ndarray:
    """The part's lattice nodes that are not metal (none when the lattice has no mask)."""
    own = fs.parts.get(name)
    return np.zeros(fs.shape, bool) if own is None else own & ~np.asarray(fs.pec, bool)


def _part_eps(fs: FieldSet, boundary: Boundary) -> float:
    if boundary.eps_r is not None:
        return float(boundary.eps_r)
    inside = _inside(fs, boundary.name)
    if not inside.any():
        raise RingprintError(f"part {boundary.name!r} has no lattice node inside it and no eps_r "
                             "given; give Boundary.eps_r")
    return float(np.median(fs.eps_r[inside]))


def _energies(fs: FieldSet) -> list[float]:
    return [fs.integrate(fs.energy_density(m)) for m in fs.modes]


def eps_sensitivity(fs: FieldSet, mask: np.ndarray, energies=None) -> np.ndarray:
    """``df/d(eps_r)`` (Hz per unit eps_r) of every mode for the lattice nodes ``mask``.

    References
    ----------
    Harrington, R. F., *Time-Harmonic Electromagnetic Fields*, McGraw-Hill, 1961,
    sec. 7-2 (cavity perturbation by a change of material).
    """
    mask = np.asarray(mask, bool) & ~np.asarray(fs.pec, bool)
    energies = _energies(fs) if energies is None else energies
    return np.array([-m.frequency_hz * EPS0 * fs.integrate(np.where(mask, squared_magnitude(m.e), 0.0))
                     / (4.0 * w) for m, w in zip(fs.modes, energies)])


def media_eps(fs: FieldSet, parts) -> np.ndarray:
    """Each lattice node's medium by the part masks: a dielectric part's own eps_r inside
    it, 1 (air) elsewhere. The lattice's ``eps_r`` is not used for the medium beside a
    surface: its nodes next to an interface hold averaged values (neither medium)."""
    out = np.ones(fs.shape)
    for b in parts:
        if not b.conductor and b.name in fs.parts:
            out[fs.parts[b.name]] = _part_eps(fs, b)
    return out


def surface_terms(fs: FieldSet, boundary: Boundary, energies=None, samples: int = SAMPLES,
                  media=None):
    """Quadrature of one part's surface and the offset density of every mode on it.

    Returns ``(points (p, 3), normals (p, 3), areas (p,), density (n_modes, p), ok (p,))``:
    ``density`` is ``df/dh`` per unit area (Hz per m of outward offset per m^2), by
    Slater's theorem on a conductor and by Johnson et al. (2002) on a dielectric (see
    the module docstring); 0 where ``ok`` is False. ``media``: the eps_r of the medium
    at each node (:func:`media_eps`; default from this part alone, air around it).

    References
    ----------
    Pozar, D. M., *Microwave Engineering*, 4th ed., Wiley, 2012, sec. 6.8 (Slater's
    perturbation of a cavity wall). Johnson, S. G. et al., "Perturbation theory for
    Maxwell's equations with shifting material boundaries", Phys. Rev. E 65, 066611, 2002.
    """
    energies = _energies(fs) if energies is None else energies
    pts, nrm, area, _ = quadrature(boundary.triangles, boundary.two_sided, (fs.x, fs.y, fs.z))
    metal = np.asarray(fs.pec, bool).copy()
    for name in fs.conductors:
        if name in fs.parts:
            metal |= fs.parts[name]
    own = fs.parts.get(boundary.name)
    outside = ~metal if own is None else ~metal & ~own
    eps_in = 1.0 if boundary.conductor else _part_eps(fs, boundary)
    density = np.zeros((len(fs.modes), len(pts)))
    ok = np.zeros(len(pts), bool)
    media = media_eps(fs, [boundary]) if media is None else media
    fields = [media[None]] + [m.e for m in fs.modes] + [m.h for m in fs.modes]
    k = len(fs.modes)
    chunk = max(1024, min(CHUNK, POINTS_BUDGET // len(fields)))
    for lo in range(0, len(pts), chunk):
        sl = slice(lo, lo + chunk)
        n = nrm[sl]
        v, ok[sl] = surface_values(fs, pts[sl], n, fields, samples, outside)
        eps_out = v[0][:, 0].real
        e, h = np.stack(v[1:1 + k]), v[1 + k:]
        e_n = np.einsum("mpa,pa->mp", e, n)
        e_t2 = np.sum(np.abs(e) ** 2, axis=2) - np.abs(e_n) ** 2
        for j, (m, w) in enumerate(zip(fs.modes, energies)):
            if boundary.conductor:
                h_n = np.einsum("pa,pa->p", h[j], n)
                h_t2 = np.sum(np.abs(h[j]) ** 2, axis=1) - np.abs(h_n) ** 2
                term = MU0 * h_t2 - EPS0 * eps_out * np.abs(e_n[j]) ** 2
                density[j, sl] = m.frequency_hz * term / (4.0 * w)
            else:
                d_n2 = (EPS0 * eps_out) ** 2 * np.abs(e_n[j]) ** 2
                term = EPS0 * (eps_in - eps_out) * e_t2[j] \
                    - (1.0 / eps_in - 1.0 / np.maximum(eps_out, 1e-30)) / EPS0 * d_n2
                density[j, sl] = -m.frequency_hz * term / (4.0 * w)
    density[:, ~ok] = 0.0
    return pts, nrm, area, density, ok


def part_sensitivities(fs: FieldSet, boundary: Boundary, energies=None, samples: int = SAMPLES,
                       media=None) -> list[dict]:
    """One part's sensitivities for every mode of ``fs`` (SI units and report units).

    Each entry: ``kind`` ("conductor" or "dielectric"), ``eps_r_hz_per_unit`` (df/d eps_r,
    None for a conductor), ``offset_hz_per_m``, ``move_hz_per_m`` ([x, y, z]),
    ``scale_hz`` (per unit relative scale about ``centre_m``), ``surface_covered``,
    ``nodes_inside`` (lattice nodes in the part; a dielectric without any has no eps_r
    term: None), and
    the same in report units: ``eps_r_mhz_per_percent`` (per 1 % of the part's eps_r),
    ``offset_mhz_per_0_1_mm``, ``move_mhz_per_0_1_mm``.
    """
    energies = _energies(fs) if energies is None else energies
    pts, nrm, area, dens, ok = surface_terms(fs, boundary, energies, samples, media)
    centre = boundary.centre
    weighted = dens * area[None]
    offset = weighted.sum(axis=1)
    move = weighted @ nrm
    scale = weighted @ np.einsum("pa,pa->p", pts - centre, nrm)
    covered = float(area[ok].sum() / area.sum()) if area.sum() > 0 else 0.0
    eps, inside = None, _inside(fs, boundary.name)
    if not boundary.conductor and inside.any():     # a part thinner than a lattice step has none
        eps = eps_sensitivity(fs, inside, energies)
        eps_r = _part_eps(fs, boundary)
    out = []
    for j in range(len(fs.modes)):
        to_report = REPORT_LENGTH_M / 1e6
        entry = {"kind": "conductor" if boundary.conductor else "dielectric",
                 "eps_r_hz_per_unit": None if eps is None else float(eps[j]),
                 "offset_hz_per_m": float(offset[j]),
                 "move_hz_per_m": [float(v) for v in move[j]],
                 "scale_hz": float(scale[j]),
                 "centre_m": [float(v) for v in centre],
                 "surface_covered": covered,
                 "nodes_inside": int(inside.sum()),
                 "sheet": bool(boundary.two_sided.any()),
                 "eps_r_mhz_per_percent": None if eps is None
                 else float(eps[j]) * REPORT_EPS_FRACTION * eps_r / 1e6,
                 "offset_mhz_per_0_1_mm": float(offset[j]) * to_report,
                 "move_mhz_per_0_1_mm": [float(v) * to_report for v in move[j]]}
        out.append(entry)
    return out


def mode_sensitivities(fs: FieldSet, parts, samples: int = SAMPLES) -> dict:
    """``{mode index: {"parts": {part name: entry}}}`` for every mode and every part.

    ``parts`` is a sequence of :class:`Boundary` (e.g. :func:`boundaries`); each entry is
    as :func:`part_sensitivities` gives it. Parts the lattice has no mask for (none of
    their nodes) have no eps_r term.
    """
    energies, media = _energies(fs), media_eps(fs, parts)
    per_mode = {m.index: {"convention": CONVENTION, "parts": {}, "scale_all_hz": 0.0} for m in fs.modes}
    for b in parts:
        for m, entry in zip(fs.modes, part_sensitivities(fs, b, energies, samples, media)):
            per_mode[m.index]["parts"][b.name] = entry
            per_mode[m.index]["scale_all_hz"] += entry["scale_hz"] + float(
                np.dot(entry["centre_m"], entry["move_hz_per_m"]))
    for m in fs.modes:
        per_mode[m.index]["scale_check"] = per_mode[m.index]["scale_all_hz"] / -m.frequency_hz
    return per_mode


def attach_sensitivities(modes, fs: FieldSet, model, notes: list) -> None:
    """Put each mode's ``sensitivity`` (and, with tolerances in the case, ``tolerance``,
    :mod:`ringprint.analysis.tolerance`) into its modes.json entry; a note if impossible."""
    try:
        per_mode = mode_sensitivities(fs, boundaries(model))
    except RingprintError as exc:
        notes.append(f"sensitivities skipped: {exc}")
        return
    for m in modes:
        if m["index"] in per_mode:
            m["sensitivity"] = per_mode[m["index"]]
    first = next(iter(per_mode.values()), {"parts": {}})["parts"]
    notes += [f"part {name!r} holds no node of the field lattice (thinner than a lattice step): "
              "its eps_r sensitivity is not given; its surface terms are" for name, e in first.items()
              if e["kind"] == "dielectric" and e["nodes_inside"] == 0]
    off = [i for i, p in per_mode.items() if abs(p["scale_check"] - 1.0) > SCALE_CHECK_LIMIT]
    if off:
        notes.append(f"sensitivities of mode {', '.join(map(str, off))}: the scale terms add up to "
                     + ", ".join(f"{per_mode[i]['scale_check']:.2f}" for i in off) + " of -f (1 expected)"
                     "; read them as rough (a sheet's edges, a strongly radiating mode or a coarse "
                     "field lattice)")
    attach_spreads(modes, model.case.tolerances, model.case.bands)
