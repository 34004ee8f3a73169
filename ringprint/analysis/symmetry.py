"""Mirror planes (case key ``[grid] symmetry``): solve a half, quarter or eighth of the model.

Rules (the report and ``ringprint mesh`` cite them):

- **Planes.** Each declared plane is normal to its axis and passes through the centre
  of the assembly's bounding box. The grid is planned with a node plane there and
  only the part above it (:func:`ringprint.meshing.plan_grid`, ``mirrors``): no
  padding and no absorbing layer on that side. The solver runs on that folded
  domain with the plane's face made the wall (``"pec"``: tangential E zero;
  ``"pmc"``: tangential H zero, image theory); each plane halves the cells.
- **The whole model stays whole.** The parts are voxelized on the whole grid (the
  folded grid joined to its mirror image), so the model's media, part masks, fields,
  participation, touch maps and the Chu sphere are those of the whole assembly; the
  solver gets the media cut at the planes (:func:`solver_model`).
- **The geometry must be mirror-symmetric.** Every part's vertices, mirrored, must lie
  on vertices of parts of the same medium; where they do not (facets that are not
  mirror images, or a real asymmetry), at most :data:`MAX_SHARE` of the edges in parts
  may differ from their mirror edges by more than :data:`TOLERANCE` (permittivity,
  conductivity, conductor flag, conformal fractions), else the case is refused naming
  the first part whose mirror image is missing (:func:`check_symmetric`). Two parts
  that are each other's mirror image are fine.
- **The probe and the pickups sit in the solved part** (coordinate at or above each
  plane). One given or placed below a plane is moved to its mirror image, which
  sees the mirror-symmetric and mirror-antisymmetric fields alike (the same mode
  with at most a sign); the loop must then lie at least one cell off the plane
  (:func:`into_solved_part`). Under a PEC wall the probe and its image excite only
  the modes whose tangential E is odd about the plane, under a PMC wall only those
  whose tangential E is even: the other class is absent by construction, and
  ``"both"`` runs each wall in turn (:mod:`ringprint.analysis.symmetry_run`).

References
----------
Harrington, R. F., Time-Harmonic Electromagnetic Fields, McGraw-Hill, 1961, sec. 3-6
(image theory: a perfect electric or magnetic wall on a symmetry plane).
Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005, sec. 3.12
(PEC and PMC symmetry walls in FDTD).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ringprint.analysis._case_symmetry import AXES, wall_classes
from ringprint.errors import RingprintError

#: Largest difference between an edge's media value and its mirror edge's, relative
#: (permittivity, conductivity) or absolute (conformal fractions in 0..1), that still
#: counts as symmetric. A surface moved by a fraction t of a cell changes the fractions
#: of the edges it crosses by about t, so this lets pass the sub-micron differences of
#: a tessellated round part whose facets are not themselves mirror images (the wrist
#: demo's shell: up to 4e-3) while a feature moved or missing on one side changes whole
#: edges.
TOLERANCE = 0.02
#: Largest share of the edges in parts (not air) that may differ from their mirror
#: edges when the meshes are not mirror images: the differences are then listed in the
#: run's notes, and the solver uses the mirror image of the solved part. The wrist
#: demo's uneven tessellations differ on 0.3-0.5 % of its edges about y = 0.
MAX_SHARE = 0.01
#: Largest distance, in smallest cells, between a mirrored vertex and a vertex of the
#: same medium for the meshes to count as mirror images of each other.
VERTEX_TOLERANCE = 1e-3


def planes(case, parts) -> tuple:
    """``((axis index, coordinate m), ...)``: the case's mirror planes through the
    centre of the assembly's bounding box (empty without ``[grid] symmetry``)."""
    if not case.grid.symmetry:
        return ()
    bounds = [s.bounds for p in parts for s in p.surfaces]
    centre = (np.min([b[0] for b in bounds], axis=0) + np.max([b[1] for b in bounds], axis=0)) / 2
    out = []
    for axis, _kind in case.grid.symmetry:
        a = AXES.index(axis)
        lo = min(b[0][a] for b in bounds)
        hi = max(b[1][a] for b in bounds)
        if not hi > lo:
            raise RingprintError(f"{case.source}: [grid] symmetry {axis}: the assembly has no extent "
                                 f"along {axis} (a flat sheet), so the plane {axis} = "
                                 f"{centre[a] / case.unit_m:.6g} {case.units} "
                                 "cuts through nothing; remove that axis from symmetry")
        out.append((a, float(centre[a])))
    return tuple(out)


def _flip(array: np.ndarray, axis: int) -> np.ndarray:
    return array[(slice(None),) * axis + (slice(None, None, -1),)]


def _mismatch(arrays, axis: int, scale) -> list:
    """Per array, the bool mask of entries that differ from their mirror entries by more
    than :data:`TOLERANCE` times ``scale`` (None: relative to the larger of the two)."""
    out = []
    for v in arrays:
        v = np.asarray(v)
        w = _flip(v, axis)
        if v.dtype == bool:
            out.append(v != w)
            continue
        ref = np.maximum(np.abs(v), np.abs(w)) if scale is None else scale
        out.append(np.abs(v.astype(np.float64) - w) > TOLERANCE * ref + 1e-30)
    return out


def _edge_point(model, comp: int, index) -> tuple:
    """Coordinates (m) of an E edge of component ``comp`` at ``index``."""
    out = []
    for d, (ax, i) in enumerate(zip(model.grid.axes, index)):
        out.append(0.5 * (ax[i] + ax[i + 1]) if d == comp else ax[i])
    return tuple(float(v) for v in out)


def _mesh_culprit(model, axis: int, coordinate: float) -> str | None:
    """The first part whose mirrored vertices do not all lie on vertices of parts of
    the same medium (within :data:`VERTEX_TOLERANCE` of the smallest cell), or None
    when the meshes are mirror images of each other."""
    from scipy.spatial import cKDTree

    groups: dict = {}
    for p in model.parts:
        groups.setdefault(model.case.medium(p.part), []).append(p)
    tol = VERTEX_TOLERANCE * model.grid.min_cell
    for members in groups.values():
        tree = cKDTree(np.concatenate([model.vertices(p) for p in members]))
        for p in members:
            mirrored = model.vertices(p).copy()
            mirrored[:, axis] = 2 * coordinate - mirrored[:, axis]
            if np.max(tree.query(mirrored)[0]) > tol:
                return p.name
    return None


def check_symmetric(model, mirrors) -> None:
    """Refuse a model that is not mirror-symmetric about every plane.

    The meshes are compared first: every part's vertices, mirrored, must lie on
    vertices of parts of the same medium (to :data:`VERTEX_TOLERANCE` of the smallest
    cell: the float32 rounding of an STL file passes). A mesh whose facets are not
    mirror images of each other (a round part tessellated unevenly) may still pass on
    its voxels: ``model`` is on the whole (unfolded) grid, which is exactly
    mirror-symmetric, and per E edge the permittivity and conductivity (relative) and
    the conformal fractions of the E edges and H faces, or the conductor flags of a
    staircased model (absolute), must equal those of the mirror edge to
    :data:`TOLERANCE` on all but :data:`MAX_SHARE` of the edges in parts (the rest is
    noted in ``model.warnings``).

    Raises
    ------
    RingprintError
        One line naming the case, the plane and the part that breaks the symmetry.
    """
    case = model.case
    free = model.free_length or tuple(np.ones(np.shape(p)) for p in model.pec)
    occupied = sum(int(np.count_nonzero((np.asarray(e) != 1) | p | (f < 1)))
                   for e, p, f in zip(model.eps_r, model.pec, free))
    for a, c in mirrors:
        named = _mesh_culprit(model, a, c)
        if named is None:
            continue
        sigma_max = max(float(np.max(v)) for v in model.sigma) or 1.0
        groups = [(model.eps_r, None), (model.sigma, sigma_max)]
        if model.free_length is not None:   # conformal metal: PEC edges have free length 0
            groups += [(model.free_length, 1.0), (model.free_area, 1.0)]
        else:
            groups.append((model.pec, 1.0))
        differ = 0
        for arrays, scale in groups:
            masks = _mismatch(arrays, a, scale)
            count = sum(int(m.sum()) for m in masks)
            differ = max(differ, count)
            if count <= MAX_SHARE * occupied:
                continue
            for comp, bad in enumerate(masks):
                if not bad.any():
                    continue
                index = np.argwhere(bad)[0]
                where = _edge_point(model, comp, index) if arrays is not model.free_area else \
                    tuple(float(ax[min(i, ax.size - 1)]) for ax, i in zip(model.grid.axes, index))
                at = ", ".join(f"{v / case.unit_m:.4g}" for v in where)
                raise RingprintError(
                    f"{case.source}: [grid] symmetry {AXES[a]}: part {named!r} is not mirror-symmetric "
                    f"about the plane {AXES[a]} = {c / case.unit_m:.6g} {case.units} (the assembly's "
                    f"centre): {count} of the {occupied} edges in parts differ from their mirror "
                    f"image (more than {MAX_SHARE:.0%}), the first near "
                    f"[{at}] {case.units}; make the geometry symmetric or remove {AXES[a]} from symmetry")
        if differ:
            model.warnings.append(
                f"[grid] symmetry {AXES[a]}: up to {differ} of the {occupied} edges in parts "
                f"({differ / occupied:.2%}) differ from their mirror image (facets that are not "
                "mirror images of each other); the solver uses the mirror image of the solved part")


def _cut(arrays, mirrors):
    """Every array from each plane's node (or cell) index up, along that plane's axis."""
    if arrays is None:
        return None
    out = []
    for v in arrays:
        for a, p in mirrors:
            v = v[(slice(None),) * a + (slice(p, None),)]
        out.append(np.ascontiguousarray(v))
    return tuple(out)


def attach(model):
    """The model with its mirror planes checked and the solved part cut out (``model.half``);
    the model itself unchanged without ``[grid] symmetry``."""
    mirrors = model.grid.mirrors
    if not mirrors:
        return model
    check_symmetric(model, mirrors)
    from ringprint.meshing.grid import plane_index
    at = [(a, plane_index(model.grid.axes[a], c)) for a, c in mirrors]
    half = dataclasses.replace(model, grid=model.grid.fold(), parts=[], eps_r=_cut(model.eps_r, at),
                               sigma=_cut(model.sigma, at), pec=_cut(model.pec, at),
                               free_length=_cut(model.free_length, at), free_area=_cut(model.free_area, at))
    model.half = half
    model.walls = wall_classes(model.case.grid.symmetry)[0]
    return model


def with_walls(model, walls: dict):
    """The model with the wall combination ``walls`` (``{axis: "pec" | "pmc"}``) for its runs."""
    return dataclasses.replace(model, walls=dict(walls))


def solver_model(model):
    """What the solver runs on: the model itself, or its solved part with the walls of
    ``model.walls`` on the planes' faces (the low face of each mirrored axis)."""
    half = getattr(model, "half", None)
    if half is None:
        return model
    return dataclasses.replace(half, boundaries={f"{axis}-": kind for axis, kind in model.walls.items()})


def into_solved_part(model, point, size_cells: int = 0, normal: str | None = None, what: str = "probe"):
    """``point`` moved to its mirror image across every plane it lies below.

    With ``size_cells`` (a loop of that many cells, axis ``normal``), refuses a loop
    that would touch a plane: its edges must lie at least one cell above it.
    """
    mirrors = getattr(model.grid, "mirrors", ())   # () also for a bare grid without mirror planes
    if not mirrors:
        return tuple(float(v) for v in point)
    p = np.array(point, float)
    for a, c in mirrors:
        if p[a] < c:
            p[a] = 2 * c - p[a]
        if size_cells:
            ax = model.grid.axes[a]
            i = int(np.argmin(np.abs(ax - p[a])))
            k = int(np.argmin(np.abs(ax - c)))
            reach = 0 if normal == AXES[a] else size_cells // 2 + 1
            if i - reach < k + 1:
                raise RingprintError(
                    f"{model.case.source}: the {what} at {AXES[a]} = {p[a] / model.case.unit_m:.6g} "
                    f"{model.case.units} touches the mirror plane {AXES[a]} = "
                    f"{c / model.case.unit_m:.6g} {model.case.units}; move it at least one cell "
                    "(plus half the loop) off the plane")
    return tuple(float(v) for v in p)


def mesh_rows(model, estimate: dict) -> list[str]:
    """The ``ringprint mesh`` lines on the mirror planes and the cells they save."""
    case = model.case
    asked = dict(case.grid.symmetry)
    planes_text = ", ".join(f"{AXES[a]} = {c / case.unit_m:.6g} {case.units} ({asked[AXES[a]]})"
                            for a, c in model.grid.mirrors)
    solved, whole = estimate["cells"], estimate["cells_whole"]
    shape = " x ".join(str(n - 1) for n in model.half.grid.shape)
    runs = estimate["runs"]
    return [f"mirror planes: {planes_text}; the solver runs {shape} cells = {solved:,} of the whole "
            f"model's {whole:,} ({solved / whole:.3g} of them), "
            + (f"{runs} runs (one per wall combination)" if runs > 1 else "one run")]


def wall_column(header: list, rows: list, numeric: list, modes) -> None:
    """The report's "mirror walls" column (each mode's wall combination), added in place
    when the run had mirror planes."""
    if not any(m.get("symmetry_class") for m in modes):
        return
    header.append("mirror walls")
    numeric.append(False)
    for row, m in zip(rows, modes):
        row.append(m.get("symmetry_class", "-"))
