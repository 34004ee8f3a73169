"""Where the loop probe and the extra pickups go.

A mode hides from a pickup that sits on its node, and a symmetric part hides whole
families of modes from a probe on its symmetry plane. So (rules the report cites):

- **Probe** from the case: its loop edges must not touch a conductor or the
  absorbing layer (a dielectric is fine).
- **Probe** (when the case gives none): beside the largest conductor (by bounding-box
  diagonal; the largest part when there is no conductor). Start from the part's
  vertex that lies furthest along the fixed, deliberately irregular direction
  :data:`PROBE_DIRECTION`, which is on no symmetry plane of a box, cylinder or
  sphere aligned with the axes, and step outward along that direction in half cells
  until the loop and one cell around it are air (no dielectric, no conductor).
  "A cell" here is the local one (:func:`local_step`): on a graded grid the
  smallest cell at the starting vertex, the nominal cell on a uniform grid.
  The loop's normal is the axis along which that direction is smallest, so the loop
  lies roughly across the part's surface and its field runs along it, where surface
  currents couple. Side: one cell unless the case says otherwise; a case side
  ``size`` becomes the whole number of cells nearest ``size`` divided by the mean
  of the two in-plane cells at the loop's centre.
- **Pickups**: the loop's own EMF; near-field points beside every part along three
  irregular directions, one or two (local) cells out in air, cycling through all six field
  components; and one point inside each dielectric part (an edge at least 99 %
  inside it), recording the E component along that edge and its two neighbours.
- **Mirror planes** (``[grid] symmetry``): the probe and every pickup are placed on
  the whole model by the rules above, then moved to their mirror image across any
  plane they lie below, into the solved part; the loop must lie at least one cell
  off each plane (:func:`ringprint.analysis.symmetry.into_solved_part`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ringprint.analysis.fieldset import is_uniform
from ringprint.analysis.symmetry import into_solved_part
from ringprint.errors import RingprintError

#: Direction used to find an off-symmetry spot next to a part (not on any axis plane).
PROBE_DIRECTION = np.array([0.53, 0.29, 0.79]) / np.linalg.norm([0.53, 0.29, 0.79])
#: Directions for near-field pickups around each part.
PICKUP_DIRECTIONS = tuple(np.array(d) / np.linalg.norm(d) for d in
                          ([-0.61, 0.37, 0.23], [0.41, -0.67, -0.31], [0.17, 0.71, -0.59]))
FIELD_COMPONENTS = ("Ex", "Ey", "Ez", "Hx", "Hy", "Hz")
AXES = "xyz"


@dataclass(frozen=True)
class ProbePlacement:
    """A loop probe: centre (m), normal axis and side in cells; how it was chosen."""

    center: tuple
    normal: str
    size_cells: int
    chosen: str  # "case" or "automatic"


def _air_box(model, node_lo, node_hi, conductors_only=False) -> bool:
    """True when every E-edge with both ends in the node box is air (or, with
    ``conductors_only``, at least not a conductor)."""
    shape = model.grid.shape
    lo = np.maximum(np.asarray(node_lo, int), 0)
    hi = np.minimum(np.asarray(node_hi, int), np.array(shape) - 1)
    if np.any(hi < lo):
        return False
    for a, (eps, sig, pec) in enumerate(zip(model.eps_r, model.sigma, model.pec)):
        sl = tuple(slice(lo[d], hi[d] + (0 if d == a else 1)) for d in range(3))
        if pec[sl].any():
            return False
        if not conductors_only and (np.any(eps[sl] != 1.0) or np.any(sig[sl] != 0.0)):
            return False
    return True


def _interior(model, index, margin) -> bool:
    """Node index at least ``margin`` nodes inside the region outside the absorber."""
    bc = model.grid.boundary_cells
    shape = np.array(model.grid.shape)
    idx = np.asarray(index)
    return bool(np.all(idx - margin >= bc) and np.all(idx + margin <= shape - 1 - bc))


def _node_index(model, point):
    return np.array([int(np.argmin(np.abs(ax - p))) for ax, p in zip(model.axes, point)])


def _loop_is_free(model, center, normal, size_cells, margin=1, conductors_only=False) -> bool:
    """The loop's edges (and ``margin`` cells around them) are free, outside the absorber."""
    idx = _node_index(model, center)
    half = size_cells // 2 + 1
    a = AXES.index(normal)
    lo, hi = idx - (half + margin), idx + (half + margin)
    lo[a], hi[a] = idx[a] - margin, idx[a] + margin
    return _interior(model, idx, half + margin) and _air_box(model, lo, hi, conductors_only)


def local_steps(model, point) -> np.ndarray:
    """The cell size near ``point`` along x, y, z (m): at the nearest node, the mean of
    the two cells meeting there (the one cell at an end node). On a uniform grid this
    is ``grid.cell`` on every axis."""
    out = []
    for ax, i in zip(model.grid.axes, _node_index(model, point)):
        d = np.diff(ax)
        if is_uniform(np.append(d, model.grid.cell)):   # every cell the nominal one
            out.append(float(model.grid.cell))
            continue
        out.append(float(np.mean(d[max(i - 1, 0):min(i + 1, d.size)])))
    return np.array(out)


def local_step(model, point) -> float:
    """The smallest of :func:`local_steps` at ``point`` (m): the walking unit."""
    return float(local_steps(model, point).min())


def _walk_out(model, start, direction, fits, max_steps, h):
    """First point ``start + t direction`` (t in half cells of size h) where ``fits(point)``."""
    for k in range(max_steps):
        point = start + (0.5 * h * k) * direction
        if fits(point):
            return point
    return None


def _anchor(model):
    def diag(p):
        lo = np.min([s.bounds[0] for s in p.surfaces], axis=0)
        hi = np.max([s.bounds[1] for s in p.surfaces], axis=0)
        return float(np.linalg.norm(hi - lo))
    conductors = [p for p in model.parts if p.is_conductor]
    return max(conductors or model.parts, key=diag)


def place_probe(model) -> ProbePlacement:
    """The loop probe of the case, checked, or one placed by the rules above.

    Raises
    ------
    RingprintError
        A case probe inside a conductor, a dielectric or the absorbing layer; or no
        free spot found automatically.
    """
    case = model.case
    if case.probe is not None:
        p = case.probe
        a = AXES.index(p.normal)
        in_plane = np.delete(local_steps(model, np.asarray(p.at_m)), a)
        size = max(1, int(round(p.size_m / float(np.mean(in_plane)))))
        if not _loop_is_free(model, np.asarray(p.at_m), p.normal, size, margin=0, conductors_only=True):
            at = ", ".join(f"{v / case.unit_m:g}" for v in p.at_m)
            raise RingprintError(
                f"{case.source}: [probe] at = [{at}] ({case.units}): the loop touches a conductor or lies "
                "in the absorbing layer; move it into air or a dielectric, or remove [probe] to let "
                "ringprint place it")
        return ProbePlacement(into_solved_part(model, p.at_m, size, p.normal), p.normal, size, "case")
    part = _anchor(model)
    verts = model.vertices(part)
    start = verts[np.argmax(verts @ PROBE_DIRECTION)]
    normal = AXES[int(np.argmin(np.abs(PROBE_DIRECTION)))]
    h = local_step(model, start)
    steps = int(2 * (model.grid.padding / h)) + 4
    point = _walk_out(model, start, PROBE_DIRECTION, lambda q: _loop_is_free(model, q, normal, 1), steps, h)
    if point is None:
        raise RingprintError(
            f"{case.source}: no free spot for the loop probe next to part {part.name!r}; give "
            "[probe] at/normal/size in the case, or raise [grid] padding")
    return ProbePlacement(into_solved_part(model, point, 1, normal), normal, 1, "automatic")


def pickup_points(model) -> list[tuple[str, tuple]]:
    """``[(component, point), ...]`` for the extra pickups (see module docstring)."""
    out = []
    k = 0
    for part in model.parts:
        verts = model.vertices(part)
        for d in PICKUP_DIRECTIONS:
            vertex = verts[np.argmax(verts @ d)]
            h = local_step(model, vertex)
            steps = int(2 * (model.grid.padding / h)) + 4
            start = vertex + 1.5 * h * d
            ok = lambda q: _interior(model, _node_index(model, q), 1) and _air_box(  # noqa: E731
                model, _node_index(model, q) - 1, _node_index(model, q) + 1)
            point = _walk_out(model, start, d, ok, steps, h)
            if point is not None:
                out.append((FIELD_COMPONENTS[k % 6], into_solved_part(model, point)))
                k += 1
        if not part.is_conductor:
            out.extend(_inside_points(model, part))
    return out


def _inside_points(model, part):
    """One spot deep inside a dielectric part: the E component there and two more."""
    for fill in part.fills:
        if fill.fractions is None:
            continue
        box = fill.centre("x")
        idx = np.argwhere(box.data >= 0.99)
        if idx.size == 0:
            continue
        i, j, k = idx[len(idx) // 3] + np.asarray(box.offset)
        x, y, z = model.axes
        point = (0.5 * (x[i] + x[i + 1]), y[j], z[k])
        return [(c, into_solved_part(model, point)) for c in ("Ex", "Ey", "Ez")]
    return []
