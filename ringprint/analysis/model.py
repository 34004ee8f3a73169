"""From a validated case to the arrays the solver takes: surfaces, grid, per-edge media.

This is where the two lower layers meet: :mod:`ringprint.meshing` reads, checks and
voxelizes the parts onto the grid it plans; this module turns the per-part edge
fractions into per-edge relative permittivity, conductivity and PEC masks in the
layout of :mod:`ringprint.fdtd` (DEVELOPERS.md, array conventions).

Rules (documented here because the report relies on them):

- **Dielectrics** are averaged per E-edge (after Farjadpour et al. 2006): where one
  part meets air, ``eps_aa = w <1/eps>^-1 + (1 - w) <eps>``, ``w = n_a^4``, with the
  part's volume fraction of the edge's dual cell (from the n x n sub-rays) and the
  interface normal ``n`` from the gradient of that fraction (the weight and its
  measured accuracy: :func:`_dielectric_average`); where parts touch each other, each
  sub-ray is combined in series (the field runs along it) and the sub-rays in
  parallel (see :func:`_dielectric_average`). Conductivity rides along as the
  imaginary part ``-sigma / (omega0 eps0)`` at the case's loss frequency ``omega0``,
  so a lossy edge keeps its loss tangent there.
- **Conductors** (perfect conductors in the solver; their skin-effect loss is added to
  each mode afterwards) are **locally conformal** (Dey & Mittra 1997,
  :mod:`ringprint.fdtd.conformal`): an edge is PEC only when its own line lies wholly
  inside the metal; every H face the metal cuts is updated on its free area with the
  free lengths of its edges (exact ray crossings,
  :func:`ringprint.meshing.conformal_fractions`). Several conductors add their inside
  fractions (clipped at the whole). With ``conformal=False`` an edge is PEC when its
  own line lies at least half inside the part, the unbiased staircase.
  Sheets, and conductor solids thinner than ``THIN_CELLS`` cells, are staircased
  through the grid *nodes*: a node lies on the surface when the surface crosses one
  of the three one-cell segments centred on it along x, y and z (the half-open rule
  of :func:`ringprint.meshing.surface_cuts`, applied on the dual grid), and an edge is
  PEC when both its end nodes do. This keeps a thin strip a connected wire without
  dangling one-cell stubs at its sides (such stubs load the strip like a comb and
  pull its half-wave resonance down by a third), and a shield can or foil thinner
  than a cell stays closed. In the dielectric average, the volume a conductor claims
  counts as air.
- **Overlaps** follow :func:`ringprint.meshing.resolve_overlaps`: a higher
  ``overlap_rank`` wins, else the later part in the case file.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from ringprint import fdtd, meshing
from ringprint.analysis import _scale, symmetry
from ringprint.analysis.case import Case, Part
from ringprint.errors import RingprintError
from ringprint.fdtd import EPS0

#: Conductor solids thinner than this many cells also get their surface-cut edges.
THIN_CELLS = 1.5
#: Sub-rays per transverse axis used for interface averaging. Even, so that none lies
#: on the centre of an edge's dual interval: the graded grid puts nodes on the parts'
#: flat faces, and a sub-ray lying in such a face would count wholly inside or outside,
#: giving the edges in the face a volume fraction of 1/3 or 2/3 instead of 1/2 with
#: three sub-rays. (The exact fraction of the edge itself comes from its own line.)
SUBRAYS = 4
#: An edge counts as wholly inside conformal metal within this fraction of its length.
CONFORMAL_TOL = 1e-6
COMPONENTS = ("x", "y", "z")


@dataclass
class PartModel:
    """One case part on the grid: its surfaces (one per body) and their voxelization."""

    part: Part
    surfaces: list
    fills: list = field(default_factory=list)
    thin: bool = False

    @property
    def name(self) -> str:
        return self.part.name

    @property
    def is_conductor(self) -> bool:
        return self.part.material.is_pec


@dataclass
class Model:
    """Everything the solver needs, plus what was learnt on the way (for reports)."""

    case: Case
    grid: meshing.Grid
    parts: list
    eps_r: tuple
    sigma: tuple
    pec: tuple
    memory: dict
    warnings: list
    free_length: tuple | None = None   #: per E edge, fraction outside conformal metal
    free_area: tuple | None = None     #: per H face, fraction outside conformal metal
    half: Model | None = None          #: the solved part under mirror planes (analysis.symmetry)
    walls: dict = field(default_factory=dict)   #: {axis: "pec" | "pmc"} on the planes
    boundaries: object = "cpml"        #: the solver's face kinds (fdtd.Simulation)

    @property
    def axes(self):
        return self.grid.x, self.grid.y, self.grid.z

    def fdtd_grid(self) -> fdtd.Grid:
        return fdtd.Grid(self.grid.x, self.grid.y, self.grid.z)

    def media(self, grid: fdtd.Grid | None = None) -> fdtd.Media:
        return fdtd.Media(grid or self.fdtd_grid(), eps_r=self.eps_r, sigma=self.sigma, pec=self.pec,
                          free_length=self.free_length, free_area=self.free_area)

    @property
    def bounds(self):
        """Union bounding box of all parts (metres)."""
        lo = np.min([s.bounds[0] for p in self.parts for s in p.surfaces], axis=0)
        hi = np.max([s.bounds[1] for p in self.parts for s in p.surfaces], axis=0)
        return lo, hi

    def vertices(self, part: PartModel | None = None) -> np.ndarray:
        """All surface vertices of one part, or of the assembly."""
        parts = self.parts if part is None else [part]
        return np.concatenate([s.vertices[np.unique(s.faces)] for p in parts for s in p.surfaces])


def _unit_name(metres: float) -> str:
    for name, scale in meshing.UNITS.items():
        if math.isclose(scale, metres, rel_tol=1e-12):
            return name
    raise RingprintError(f"mesh unit of {metres} m is not one of {', '.join(meshing.UNITS)}")


def eps_r_max(case: Case) -> float:
    """The largest relative permittivity among the case's dielectrics (1 for air)."""
    return max([1.0] + [case.medium(p)[0] for p in case.parts if not p.material.is_pec])


def load_surfaces(case: Case, cell: float) -> list[PartModel]:
    """Read, place and check every part's file (CAD triangles at most ``cell / 2``).

    Each file is read once, however many parts take bodies from it (an assembly).
    """
    out, read = [], {}
    for part in case.parts:
        if part.file not in read:
            read[part.file] = meshing.read_surfaces(part.file, cell_size=cell)
        surfaces = read[part.file]
        if part.body is not None:
            surfaces = meshing.pick_body(surfaces, part.body, part.file)
        rotate = (part.rotate_axis, part.rotate_degrees) if part.rotate_degrees else None
        surfaces = meshing.place_parts(surfaces, unit=_unit_name(part.file_unit_m),
                                       conductor=part.material.is_pec, scale=part.scale,
                                       mirror=part.mirror, rotate=rotate, translate=part.translate_m)
        if not surfaces:
            raise RingprintError(f"{part.file}: part {part.name!r} holds no surface; check the file")
        out.append(PartModel(part, surfaces))
    return out


def plan(case: Case, parts: list[PartModel]) -> meshing.Grid:
    """The Yee grid for the case: graded to the parts' surfaces and materials (each
    part's own eps_r, its walls, gaps and slots) or, with ``[grid] graded = false``,
    uniform at the cell of the densest material (:func:`ringprint.meshing.plan_grid`)."""
    surfaces = [s for p in parts for s in p.surfaces]
    return meshing.plan_grid(None, case.spectrum.f_max_hz, eps_r_max(case),
                             case.grid.cells_per_wavelength, padding=case.grid.padding_m,
                             boundary_cells=case.grid.absorber_cells, f_min=case.spectrum.f_min_hz,
                             surfaces=surfaces, names=[p.name for p in parts for _ in p.surfaces],
                             eps_r=[case.medium(p.part)[0] for p in parts for _ in p.surfaces],
                             min_feature=case.grid.min_feature_m or None, graded=case.grid.graded,
                             mirrors=symmetry.planes(case, parts))


def build_model(case: Case, allow_memory: bool = False, progress=None,
                conformal: bool = True) -> Model:
    """Mesh the case: read parts, plan the grid, check memory, voxelize, assemble media.

    Parameters
    ----------
    case : Case
    allow_memory : bool
        Run even when the estimate exceeds the available memory.
    progress : callable or None
        Called as ``progress(done, total, what)`` after each part is voxelized.
    conformal : bool
        Conductor solids conformal (default) or staircased (module docstring).

    Returns
    -------
    Model

    References
    ----------
    Farjadpour, A. et al., Opt. Lett. 31(20):2972-2974, 2006 (interface averaging).
    """
    cell = meshing.cell_size(case.spectrum.f_max_hz, eps_r_max(case), case.grid.cells_per_wavelength)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", meshing.MeshingWarning)
        parts = load_surfaces(case, cell)
        _scale.check_scale(case, parts, cell)
        solved = plan(case, parts)      # folded at the mirror planes (if any): what the solver runs
        grid = solved.unfold()          # the whole model is voxelized (and checked for symmetry)
        boxes = [tuple(np.searchsorted(ax, hi) - np.searchsorted(ax, lo) + 2
                       for ax, lo, hi in zip(grid.axes, *s.bounds)) for p in parts for s in p.surfaces]
        memory = meshing.memory_estimate(*solved.axes, boundary_cells=grid.boundary_cells,
                                         subrays=SUBRAYS, part_boxes=boxes)
        with _scale.unit_hint(case, parts):
            meshing.check_memory(memory, allow=allow_memory, graded=not grid.uniform)
        local = {id(s): grid.local_cell(*s.bounds) for p in parts for s in p.surfaces}
        thin = meshing.warn_thin_parts([s for p in parts for s in p.surfaces],
                                       [local[id(s)] for p in parts for s in p.surfaces])
        total = sum(len(p.surfaces) for p in parts)
        done = 0
        for p in parts:
            p.thin = any(s.name in thin for s in p.surfaces)
            for s in p.surfaces:
                cell = local[id(s)]
                cuts = p.is_conductor and (p.thin or meshing.thickness(s, cell / 2) < THIN_CELLS * cell)
                p.fills.append(meshing.voxelize(s, *grid.axes, subrays=SUBRAYS, cuts=cuts,
                                                faces=conformal and p.is_conductor and not cuts
                                                and s.kind == "solid"))
                done += 1
                if progress is not None:
                    progress(done, total, p.name)
    notes = [_scale.in_case_units(str(w.message), case) for w in caught]
    eps, sig, pec = assemble(case, grid, parts)
    free = conformal_metal(grid, parts, pec)
    return symmetry.attach(Model(case, grid, parts, eps, sig, pec, memory, notes, *free))


def _shapes(grid: meshing.Grid) -> dict:
    nx, ny, nz = grid.shape
    return {"x": (nx - 1, ny, nz), "y": (nx, ny - 1, nz), "z": (nx, ny, nz - 1)}


def sheet_nodes(surface, grid: meshing.Grid) -> np.ndarray:
    """Boolean mask over the grid nodes (Nx, Ny, Nz): the nodes the surface passes through.

    A node is on the surface when the surface crosses one of the three one-cell
    segments centred on it along x, y, z. ``surface_cuts`` on the grid whose x (then y)
    nodes are the dual nodes has its Ex (Ey) edge midpoints exactly on our nodes and
    tests the segments along y, z (z, x) through them.
    """
    x, y, z = grid.axes
    on = np.zeros(grid.shape, bool)
    for comp, axes in (("x", (meshing.dual_nodes(x), y, z)), ("y", (x, meshing.dual_nodes(y), z))):
        box = meshing.surface_cuts(surface, *axes)[comp]
        on[box.slices] |= box.data
    return on


def _edge_coords(grid: meshing.Grid, comp: str) -> tuple:
    """Coordinates of the ``comp`` edges along x, y, z: cell centres along the edge,
    nodes across it."""
    a = COMPONENTS.index(comp)
    return tuple(0.5 * (v[:-1] + v[1:]) if d == a else v for d, v in enumerate(grid.axes))


def _edges_between(nodes: np.ndarray, comp: str) -> np.ndarray:
    """Edges of component ``comp`` whose two end nodes are both set."""
    a = COMPONENTS.index(comp)
    lo = [slice(None)] * 3
    hi = [slice(None)] * 3
    lo[a], hi[a] = slice(None, -1), slice(1, None)
    return nodes[tuple(lo)] & nodes[tuple(hi)]


def _dielectric_average(comp: str, dielectric, coords):
    """Effective complex permittivity of the edges of ``comp`` near dielectric parts.

    ``dielectric`` lists ``(PartFill, complex eps_r)``; ``coords`` the edge coordinates
    along x, y, z (:func:`_edge_coords`). Returns ``(region, eps)``:
    the slice of the full edge array covering every part's box, and its values.

    Where one part alone meets air on an edge: ``eps_aa = w <1/eps>^-1 + (1 - w) <eps>``
    with the part's volume fraction ``f`` of the edge's dual cell (the mean over the
    sub-rays) in both means, the interface normal ``n`` from the gradient of ``f``
    (central differences on the edge lattice, in metres so a graded grid's aspect does
    not tilt it), and ``w = n_a^4``.

    Why ``n_a^4`` and not the ``n_a^2`` of the tensor of Farjadpour et al. (2006): the
    Yee update keeps only the diagonal of that tensor, and without its off-diagonal
    terms a field tangential to an oblique surface sees too little permittivity. On
    a sphere of eps_r 36 at 12 cells across, against the exact Mie poles (Bohren &
    Huffman 1983), the weights gave these frequency errors (measured here):
    ``n_a^2``: magnetic dipole +1.82 %, electric dipole +0.38 %; ``0`` (plain volume
    average): -0.08 %, -1.09 %; ``n_a^4``: +0.61 %, -0.49 % (+0.46 %, -0.26 % at 15.6
    cells across). ``n_a^4`` keeps both limits exact (interface along or across the
    edge) and balances the two polarizations; full second-order accuracy would need
    the off-diagonal terms in the solver.

    Elsewhere (parts touching each other, or no defined normal) each sub-ray is
    combined in series and the sub-rays in parallel, which is exact for interfaces
    along the grid axes.
    """
    a = COMPONENTS.index(comp)
    lo = np.min([f.fractions[comp].offset for f, _ in dielectric], axis=0)
    hi = np.max([np.add(f.fractions[comp].offset, f.fractions[comp].data.shape[1:])
                 for f, _ in dielectric], axis=0)
    n_sub = dielectric[0][0].fractions[comp].data.shape[0]
    claimed = np.zeros((n_sub,) + tuple(hi - lo), np.float64)
    inverse = np.zeros_like(claimed, np.complex128)
    volume = []
    for f, eps_c in dielectric:
        box = f.fractions[comp]
        sl = tuple(slice(o - l, o - l + n) for o, l, n in zip(box.offset, lo, box.data.shape[1:]))
        claimed[(slice(None),) + sl] += box.data
        inverse[(slice(None),) + sl] += box.data / eps_c
        frac = np.zeros(tuple(hi - lo))
        frac[sl] = box.data.mean(axis=0, dtype=np.float64)
        volume.append(frac)
    inverse += np.clip(1.0 - claimed, 0.0, 1.0)  # the rest of each sub-ray is air
    eps = np.mean(1.0 / inverse, axis=0)
    total = np.sum(volume, axis=0)
    for frac, (_f, eps_c) in zip(volume, dielectric):
        grad = np.gradient(frac, *(c[l:h] for c, l, h in zip(coords, lo, hi)))  # in metres
        g2 = grad[0] ** 2 + grad[1] ** 2 + grad[2] ** 2
        alone = (frac > 0) & (frac < 1) & (np.abs(total - frac) < 1e-6) & (g2 > 0)
        fa = frac[alone]
        w = (grad[a][alone] ** 2 / g2[alone]) ** 2
        harmonic = 1.0 / (fa / eps_c + (1.0 - fa))
        arithmetic = fa * eps_c + (1.0 - fa)
        eps[alone] = w * harmonic + (1.0 - w) * arithmetic
    return tuple(slice(l, h) for l, h in zip(lo, hi)), eps


def assemble(case: Case, grid: meshing.Grid, parts: list[PartModel]):
    """Per-edge ``(eps_r, sigma, pec)``, each a tuple of three arrays (x, y, z).

    See the module docstring for the averaging and conductor rules.
    """
    shapes = _shapes(grid)
    fills, prio, media = [], [], []
    for p in parts:
        for f in p.fills:
            fills.append(f)
            prio.append(p.part.overlap_rank)
            media.append(case.medium(p.part))
    fills = meshing.resolve_overlaps(fills, shapes, rank=prio)
    omega0 = 2 * math.pi * case.spectrum.loss_at_hz
    sheets = [sheet_nodes(s, grid) for p in parts if p.is_conductor for s, f in zip(p.surfaces, p.fills)
              if f.cuts is not None]
    eps_out, sig_out, pec_out = [], [], []
    for comp in COMPONENTS:
        shape = shapes[comp]
        pec = np.zeros(shape, bool)
        dielectric = [(f, e - 1j * s / (omega0 * EPS0)) for f, (e, s, is_pec) in zip(fills, media)
                      if not is_pec and f.fractions is not None]
        for f, (_e, _s, is_pec) in zip(fills, media):
            if not is_pec:
                continue
            if f.fractions is not None:
                box = f.centre(comp)
                # conformal metal: PEC only where the edge lies wholly inside
                pec[box.slices] |= box.data >= (1.0 - CONFORMAL_TOL if f.faces is not None else 0.5)
        for nodes in sheets:
            pec |= _edges_between(nodes, comp)
        eps = np.ones(shape, np.complex128)
        if dielectric:
            region, eps_box = _dielectric_average(comp, dielectric, _edge_coords(grid, comp))
            eps[region] = eps_box
        eps_out.append(np.ascontiguousarray(eps.real))
        sig_out.append(np.ascontiguousarray(np.maximum(-eps.imag * omega0 * EPS0, 0.0)))
        pec_out.append(pec)
    return tuple(eps_out), tuple(sig_out), tuple(pec_out)


def _h_shapes(grid: meshing.Grid) -> dict:
    nx, ny, nz = grid.shape
    return {"x": (nx, ny - 1, nz - 1), "y": (nx - 1, ny, nz - 1), "z": (nx - 1, ny - 1, nz)}


def conformal_metal(grid: meshing.Grid, parts: list[PartModel], pec: tuple):
    """``(free_length, free_area)`` of the conformal conductors, or ``(None, None)``.

    The free fraction of an edge (face) is one minus the inside fractions of every
    conformal conductor, clipped at 0; PEC edges (staircased sheets and thin parts
    included) are wholly inside. The face data come from
    :func:`ringprint.meshing.conformal_fractions` (Dey & Mittra 1997).
    """
    fills = [f for p in parts if p.is_conductor for f in p.fills if f.faces is not None]
    if not fills:
        return None, None
    shapes, h_shapes = _shapes(grid), _h_shapes(grid)
    lengths, areas = [], []
    for comp in COMPONENTS:
        inside = np.zeros(shapes[comp], np.float32)
        face = np.zeros(h_shapes[comp], np.float32)
        for f in fills:
            inside[f.lines[comp].slices] += f.lines[comp].data
            face[f.faces[comp].slices] += f.faces[comp].data
        free = np.clip(1.0 - inside, 0.0, 1.0)
        free[pec[COMPONENTS.index(comp)]] = 0.0
        lengths.append(free)
        areas.append(np.clip(1.0 - face, 0.0, 1.0))
    return tuple(lengths), tuple(areas)
