"""Grid planning: cell size, padding, absorbing-layer cells, uniform or graded grids, thin parts, memory."""

import math
import os
import warnings
from dataclasses import dataclass, replace

import numpy as np

from ringprint.errors import RingprintError
from ringprint.meshing import _rays
from ringprint.meshing import graded as graded_mod
from ringprint.meshing.checks import MeshingWarning

C0 = 299_792_458.0  # speed of light in vacuum, m/s (exact, SI 2019)


@dataclass(frozen=True)
class Grid:
    """Node coordinate vectors of a Yee grid (metres) and how they were chosen.

    ``x``, ``y``, ``z`` are the whole computational domain, absorbing layer included
    (DEVELOPERS.md array conventions). ``cell`` is the nominal cell size: the uniform
    spacing of a uniform grid, the largest (air) spacing of a graded one. ``padding``
    is the air gap between the parts' bounding box and the absorbing layer,
    ``boundary_cells`` the absorbing layer's thickness in cells; ``refinements``
    (graded grids) lists what forced fine cells
    (:class:`ringprint.meshing.features.Refinement`, most restrictive first) and
    ``min_feature`` the size below which features were left sub-cell.

    ``mirrors`` lists mirror planes ``(axis index, coordinate)``, each a node plane of
    the grid. A *folded* grid (``folded=True``, as :func:`plan_grid` returns it with
    mirrors) starts at each plane: no padding or absorbing cells on that side, the
    grid on the far side is the mirror image; :meth:`unfold` gives the whole grid
    and :meth:`fold` cuts it back.
    """

    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    cell: float
    padding: float
    boundary_cells: int
    refinements: tuple = ()
    min_feature: float | None = None
    mirrors: tuple = ()
    folded: bool = False

    @property
    def spacing(self):
        """Cell sizes per axis: ``(np.diff(x), np.diff(y), np.diff(z))``."""
        return tuple(np.diff(a) for a in self.axes)

    @property
    def min_cell(self):
        """Smallest spacing on any axis (m)."""
        return float(min(d.min() for d in self.spacing))

    @property
    def max_cell(self):
        """Largest spacing on any axis (m)."""
        return float(max(d.max() for d in self.spacing))

    @property
    def uniform(self):
        """True when every spacing equals ``cell`` (to 1e-9 relative)."""
        return all(np.allclose(d, self.cell, rtol=1e-9, atol=0.0) for d in self.spacing)

    def local_cell(self, lo, hi):
        """Cell size a part with bounding box ``lo..hi`` sees: per axis the largest
        spacing among the cells overlapping the box, the smallest over the three axes
        (``cell`` on a uniform grid)."""
        if self.uniform:
            return self.cell
        out = []
        for a, d, l, h in zip(self.axes, self.spacing, lo, hi):
            i0 = max(int(np.searchsorted(a, l, "right")) - 1, 0)
            i1 = min(max(int(np.searchsorted(a, h, "left")), i0 + 1), d.size)
            out.append(float(d[i0:i1].max()))
        return min(out)

    @property
    def shape(self):
        """Number of nodes (Nx, Ny, Nz)."""
        return (self.x.size, self.y.size, self.z.size)

    @property
    def axes(self):
        return self.x, self.y, self.z

    def unfold(self):
        """The whole grid: each folded axis joined to its mirror image about its plane."""
        if not self.folded:
            return self
        axes = list(self.axes)
        for a, c in self.mirrors:
            axes[a] = np.concatenate([2.0 * c - axes[a][:0:-1], axes[a]])
        return replace(self, x=axes[0], y=axes[1], z=axes[2], folded=False)

    def fold(self):
        """The grid from each mirror plane up (the solver's domain)."""
        if self.folded:
            return self
        axes = list(self.axes)
        for a, c in self.mirrors:
            axes[a] = axes[a][plane_index(axes[a], c):]
        return replace(self, x=axes[0], y=axes[1], z=axes[2], folded=True)


def plane_index(nodes, coordinate) -> int:
    """Index of the node at ``coordinate`` (a mirror plane must be a node plane)."""
    k = int(np.argmin(np.abs(np.asarray(nodes) - coordinate)))
    spacing = np.diff(nodes)
    if abs(nodes[k] - coordinate) > 1e-9 * float(spacing.max()):
        raise RingprintError(f"mirror plane at {coordinate:.6g} m is not a grid node plane")  # pragma: no cover
    return k


def cell_size(f_max, eps_r_max=1.0, cells_per_wavelength=20):
    """Cell size resolving the shortest wavelength (in the densest material at f_max).

    ``h = c0 / (f_max sqrt(eps_r_max) cells_per_wavelength)``. Twenty cells per
    wavelength keeps the Yee grid's phase error near 0.3 % (Taflove & Hagness 2005,
    ch. 4 dispersion relation); 10-20 is common practice.
    """
    for key, val in (("f_max", f_max), ("eps_r_max", eps_r_max), ("cells_per_wavelength", cells_per_wavelength)):
        if not (np.isfinite(val) and val > 0):
            raise RingprintError(f"{key} = {val!r} must be a positive finite number")
    if eps_r_max < 1:
        raise RingprintError(f"eps_r_max = {eps_r_max} is below 1; give the largest relative permittivity (>= 1)")
    return C0 / (f_max * math.sqrt(eps_r_max) * cells_per_wavelength)


def default_padding(lo, hi, f_min=None):
    """Air gap (metres) kept between the parts and the absorbing layer.

    Rule: the radian distance ``lambda0 / (2 pi)`` at the lowest frequency of
    interest, beyond which the reactive near field of a small radiator has fallen
    below the radiating field (Wheeler 1947). Without ``f_min`` the lowest frequency
    is taken as the half-wave resonance of the largest part dimension D
    (``lambda0 = 2 D``, the lowest resonance a conductor of that size has in common
    practice), giving ``D / pi``.

    References
    ----------
    Wheeler, H. A., "Fundamental limitations of small antennas", Proc. IRE
    35:1479-1484, 1947 (the radian sphere).
    """
    d = float(np.max(np.asarray(hi) - np.asarray(lo)))
    lam = C0 / f_min if f_min else 2.0 * d
    return lam / (2 * math.pi)


def plan_grid(bounds, f_max, eps_r_max=1.0, cells_per_wavelength=20, padding=None,
              boundary_cells=10, f_min=None, min_padding_cells=5, *, surfaces=None, eps_r=None,
              names=None, min_feature=None, graded=True, mirrors=()):
    """Plan the Yee grid around the parts: uniform, or graded to the parts' features.

    Parameters
    ----------
    bounds : (lo, hi) or list of (lo, hi) or None
        Bounding boxes of the parts (metres); their union is gridded.
        ``[s.bounds for s in surfaces]`` works; None takes the surfaces' bounds.
    f_max : float
        Highest frequency of interest (Hz).
    eps_r_max : float
        Largest relative permittivity present (uniform grids; the default for
        surfaces without ``eps_r``).
    cells_per_wavelength : float
        Cells per wavelength at ``f_max``: in the densest material for a uniform grid,
        in each material for a graded one.
    padding : float or None
        Air gap (m) on every side; default :func:`default_padding`, at least
        ``min_padding_cells`` nominal cells.
    boundary_cells : int
        Cells added outside the padding for the solver's absorbing layer.
    f_min : float or None
        Lowest frequency of interest (Hz), used by the default padding.
    surfaces : list of Surface or None
        Checked part surfaces (metres). Without them the grid is uniform.
    eps_r : sequence of float or None
        Relative permittivity of each surface (1 for conductors and air); default
        ``eps_r_max`` for every surface.
    names : sequence of str or None
        The part each surface belongs to (for the refinement records); default the
        surfaces' names.
    min_feature : float or None
        Walls, gaps and slots thinner than this (m) are not refined for; default a
        tenth of the nominal air cell.
    graded : bool
        Grade the grid to the parts (:mod:`ringprint.meshing.graded`); False gives
        the uniform grid.
    mirrors : sequence of (int, float)
        Mirror planes ``(axis index, coordinate in m)``, each inside the parts' box:
        the plane becomes a node plane and only the grid above it is kept (a folded
        :class:`Grid`; no padding or absorbing cells below the plane).

    Returns
    -------
    Grid
        Uniform: cell ``c0 / (f_max sqrt(eps_r_max) n)``, the parts' box centred in the
        domain (with a mirror on that axis, the grid starts at the plane).
        Graded: nominal cell ``c0 / (f_max n)`` (air), nodes on the parts' flat faces,
        box faces and mirror planes, neighbouring spacings within a factor 1.3 (with a
        mirror, what either side of the plane asks for, mirrored onto the kept side).

    References
    ----------
    Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005,
    ch. 4 (cells per wavelength) and ch. 7 (absorbing layer).
    """
    if bounds is None and surfaces:
        bounds = [s.bounds for s in surfaces]
    if isinstance(bounds, tuple) and len(bounds) == 2 and np.ndim(bounds[0]) == 1:
        bounds = [bounds]
    if bounds is None or len(bounds) == 0:
        raise RingprintError("plan_grid got no parts: give at least one bounding box")
    lo = np.min([np.asarray(b[0], float) for b in bounds], axis=0)
    hi = np.max([np.asarray(b[1], float) for b in bounds], axis=0)
    if not (np.all(np.isfinite(lo)) and np.all(np.isfinite(hi)) and np.all(hi >= lo)):
        raise RingprintError(f"part bounds {lo}..{hi} are not finite/ordered; check the part transforms")
    if int(boundary_cells) != boundary_cells or boundary_cells < 0:
        raise RingprintError(f"boundary_cells = {boundary_cells!r} must be a non-negative integer")
    mirrors = tuple((int(a), float(c)) for a, c in mirrors)
    planes = dict(mirrors)
    for a, c in mirrors:
        if a not in (0, 1, 2) or len(planes) != len(mirrors) or not (lo[a] < c < hi[a]):
            raise RingprintError(f"mirror plane {'xyz'[a] if a in (0, 1, 2) else a} = {c!r} m: give each "
                                 f"axis once, with the plane inside the parts' box {lo}..{hi}")
    graded = bool(graded) and bool(surfaces)
    h = cell_size(f_max, 1.0 if graded else eps_r_max, cells_per_wavelength)
    pad = default_padding(lo, hi, f_min) if padding is None else float(padding)
    if not (np.isfinite(pad) and pad >= 0):
        raise RingprintError(f"padding = {padding!r} must be a non-negative length in metres")
    pad = max(pad, min_padding_cells * h) if padding is None else pad
    if graded:
        eps = [float(eps_r_max)] * len(surfaces) if eps_r is None else [float(e) for e in eps_r]
        labels = [s.name for s in surfaces] if names is None else list(names)
        if len(eps) != len(surfaces) or len(labels) != len(surfaces):
            raise RingprintError(f"plan_grid got {len(surfaces)} surfaces but {len(eps)} eps_r values "
                                 f"and {len(labels)} names: give one of each per surface")
        if any(not (np.isfinite(e) and e >= 1) for e in eps):
            raise RingprintError(f"eps_r {eps} must all be finite and >= 1 (1 for conductors)")
        mf = graded_mod.check_min_feature(h / 10 if min_feature is None else min_feature, h)
        axes, records = graded_mod.graded_axes(surfaces, labels, eps, f_max, cells_per_wavelength, pad,
                                               int(boundary_cells), mf, lo, hi, mirrors=planes)
        whole = Grid(axes[0], axes[1], axes[2], h, pad, int(boundary_cells), records, mf, mirrors)
        return whole.fold()
    centre = (lo + hi) / 2
    axes = []
    for d in range(3):
        if d in planes:  # from the plane up; the far side of a centred plane is its mirror
            top = int(math.ceil((hi[d] - planes[d] + pad) / h - 1e-9)) + int(boundary_cells)
            axes.append(planes[d] + h * np.arange(0, top + 1, dtype=np.float64))
            continue
        half = (hi[d] - lo[d]) / 2 + pad
        n_half = int(math.ceil(half / h - 1e-9)) + int(boundary_cells)
        axes.append(centre[d] + h * np.arange(-n_half, n_half + 1, dtype=np.float64))
    return Grid(axes[0], axes[1], axes[2], h, pad, int(boundary_cells), mirrors=mirrors,
                folded=bool(mirrors))


def thickness(surface, spacing, max_rays=128):
    """Estimate the thinnest wall of a solid by ray sampling.

    Axis-parallel rays on a lattice (``spacing`` apart, at most ``max_rays`` per
    side of the bounding box) record the length of every inside interval; the
    estimate is the smallest, over the three axes, of the median interval length.
    A wall tilted by theta reads 1/cos(theta) too thick along one axis, but one of
    the three axes is within 54.7 degrees of its normal, so the estimate is at most
    sqrt(3) times the true thickness; grazing chords at silhouettes are too few to
    move the median.
    """
    lo, hi = surface.bounds
    best = math.inf
    for a in range(3):
        b, c = _rays.frame(a)
        qs = []
        for d in (b, c):
            n = int(min(max_rays, max(1, math.ceil((hi[d] - lo[d]) / spacing))))
            qs.append(lo[d] + (hi[d] - lo[d]) * (np.arange(n) + 0.5) / n)
        rs, at, dw = _rays.crossings(surface.vertices, surface.faces, a, qs[0], qs[1])
        lengths = []
        for r in np.flatnonzero(np.diff(rs) >= 2):  # plain loop: only a few thousand rays
            wind = np.cumsum(dw[rs[r]:rs[r + 1]])
            seg = np.diff(at[rs[r]:rs[r + 1]])
            lengths.append(seg[wind[:-1] > 0])
        if lengths:
            allv = np.concatenate(lengths)
            if allv.size:
                best = min(best, float(np.median(allv)))
    return best


def warn_thin_parts(surfaces, cell):
    """Warn (MeshingWarning naming the part) for solids thinner than one cell.

    ``cell`` is one size for all, or one per surface (on a graded grid,
    :meth:`Grid.local_cell` of each part's box). Returns ``{name: estimated
    thickness}`` of the parts warned about.
    """
    thin = {}
    cells = np.broadcast_to(np.asarray(cell, np.float64), (len(surfaces),))
    for s, cell in zip(surfaces, cells):
        if s.kind == "sheet":
            continue
        t = thickness(s, cell / 2)
        if t < cell:
            thin[s.name] = t
            warnings.warn(f"part {s.name!r} is about {t:.3g} m thick, thinner than one cell "
                          f"({cell:.3g} m): it is staircased to whole edges; refine the grid "
                          "(cells_per_wavelength) or, for a conductor, rely on its surface-cut mask",
                          MeshingWarning, stacklevel=2)
    return thin


def memory_estimate(x, y, z, boundary_cells=10, subrays=3, part_boxes=(), media_bytes=1):
    """Bytes a run needs for a grid (breakdown dict; ``"total"`` is the sum).

    - ``fields``: six float32 field components on the Yee grid;
    - ``media``: ``media_bytes`` per E-edge (the solver's per-edge table index);
    - ``cpml``: two float32 auxiliary components per field component in the six
      absorbing slabs, ``boundary_cells`` thick (Roden & Gedney 2000 CPML);
    - ``voxelize``: per part, three components of ``subrays**2`` float32 fractions
      over the part's box (``part_boxes``: node counts (nx, ny, nz) per part; only the
      largest part is held at once) plus its boolean cut masks.
    """
    nx, ny, nz = len(x), len(y), len(z)
    cells = (nx - 1) * (ny - 1) * (nz - 1)
    edges = (nx - 1) * ny * nz + nx * (ny - 1) * nz + nx * ny * (nz - 1)
    bc = int(boundary_cells)
    slab = 2 * bc * ((ny * nz) + (nx * nz) + (nx * ny))
    out = {"fields": 6 * 4 * cells, "media": media_bytes * edges, "cpml": 4 * 4 * slab}
    vox = 0
    for box in part_boxes:
        n = int(np.prod(box))
        vox = max(vox, 3 * n * (4 * subrays**2 + 1))
    out["voxelize"] = vox
    out["total"] = sum(out.values())
    return out


def available_memory():
    """Bytes of memory available now (Linux /proc/meminfo MemAvailable, else sysconf)."""
    try:
        with open("/proc/meminfo") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")


def check_memory(estimate, available=None, allow=False, graded=False):
    """Refuse (RingprintError with the numbers) a run that needs more than is free.

    ``allow=True`` overrides the refusal (the user knows better, e.g. swap);
    ``graded=True`` adds the graded grid's own remedy (a larger min_feature).
    """
    need = estimate["total"] if isinstance(estimate, dict) else int(estimate)
    have = available_memory() if available is None else int(available)
    if need > have and not allow:
        parts = ", ".join(f"{k} {v / 2**30:.2f}" for k, v in estimate.items() if k != "total") \
            if isinstance(estimate, dict) else ""
        raise RingprintError(f"the run needs {need / 2**30:.2f} GiB ({parts}) but only "
                             f"{have / 2**30:.2f} GiB is available: "
                             + ("raise [grid] min_feature (thinner walls and gaps stay sub-cell), " if graded else "")
                             + "lower cells_per_wavelength or "
                             "f_max, shrink the padding, or override the memory check (--ignore-memory-check)")
    return need
