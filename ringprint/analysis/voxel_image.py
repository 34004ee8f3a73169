"""The voxel model as a picture a person can check: a VTK image and a PNG preview.

The solver sees the parts as per-edge media (:mod:`ringprint.analysis.model`). For
looking at a model, one value per *cell* is easier to read, so this module makes:

- **part id per cell** (0 = air, parts numbered from 1 in case order). A cell
  belongs to a solid part when its centre line along x lies at least half inside the
  part -- :func:`ringprint.meshing.edge_fractions` on the grid ``(x, yc, zc)``,
  whose x-edges are exactly the cells, with one sub-ray (the unbiased staircase the
  solver uses for conductors). A sheet, and a part thinner than a cell (flagged
  ``PartModel.thin``, or a conductor given a cut mask, see ``THIN_CELLS`` in
  :mod:`ringprint.analysis.model`), also owns every cell
  one of whose three centre lines it crosses (:func:`ringprint.meshing.surface_cuts`
  on the grids ``(x, yc, zc)``, ``(xc, y, zc)``, ``(xc, yc, z)``): a plate then
  shows as one layer of cells however it is tilted, where the centre rule alone
  would lose it. Where parts overlap, the higher ``overlap_rank`` wins, else the later
  part in the case (the rule of :func:`ringprint.meshing.resolve_overlaps`).
- **eps_r**: the mean relative permittivity of the cell's 12 edges (what the solver
  uses, averaged for display; PEC edges count as 1).
- **conductor**: 1 where the owner part is a conductor; **pec_edges**: how many of
  the cell's 12 edges the solver treats as perfect conductor (0-12).

The image covers the whole domain, absorbing layer included, in metres: a VTK image
(``.vti``) on a uniform grid, a rectilinear grid (``.vtr``, the node vectors) on a
graded one. Its field data holds ``part_names`` and ``part_materials`` (index = part id, entry 0 "air").
"""

from __future__ import annotations

import contextlib

import numpy as np

from ringprint import meshing
from ringprint.analysis.model import Model

__all__ = ["cell_centres", "cell_owners", "shows_crossed_cells", "cell_eps_r", "cell_pec_edges",
           "cell_volumes", "image_name", "voxel_image", "material_label", "material_colours",
           "render_preview"]

#: Okabe & Ito's palette for colour-blind readers (orange, sky blue, bluish green,
#: yellow, blue, vermillion, reddish purple), used for dielectric materials in turn.
DIELECTRIC_COLOURS = ("#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7")
#: Conductors are drawn opaque, each its own colour: metallic greys and dark tones that
#: no dielectric uses, so that touching metal parts (a can on its ground) stay apart.
CONDUCTOR_COLOURS = ("#8C8C8C", "#4D4D4D", "#1B5E7A", "#7A3B69", "#5C6B2E", "#8E1B1B", "#B8B8B8")
#: The probe loop: drawn as a thick line in this colour (used by nothing else).
PROBE_COLOUR = "#E7298A"
DIELECTRIC_OPACITY = 0.3


def cell_centres(grid: meshing.Grid):
    """Cell-centre vectors ``(xc, yc, zc)`` of a grid (DEVELOPERS.md conventions)."""
    return tuple((a[:-1] + a[1:]) / 2 for a in grid.axes)


def _paint(ids: np.ndarray, box: meshing.EdgeBox, mask: np.ndarray, pid: int) -> None:
    view = ids[box.slices]  # basic slicing: a view, so the assignment writes through
    view[mask] = pid


def _centre_cells(ids, surface, grid, pid):
    x, _, _ = grid.axes
    _, yc, zc = cell_centres(grid)
    box = meshing.edge_fractions(surface, x, yc, zc, subrays=1)["x"]
    _paint(ids, box, box.data[0] >= 0.5, pid)


def _crossed_cells(ids, surface, grid, pid):
    x, y, z = grid.axes
    xc, yc, zc = cell_centres(grid)
    for comp, axes in (("x", (x, yc, zc)), ("y", (xc, y, zc)), ("z", (xc, yc, z))):
        box = meshing.surface_cuts(surface, *axes)[comp]
        _paint(ids, box, box.data, pid)


def shows_crossed_cells(part_model) -> bool:
    """True when the part owns every cell it crosses (a sheet, a thin part, or a
    conductor the model gave a surface-cut mask), not only the cells it contains."""
    return (part_model.thin or any(s.kind == "sheet" for s in part_model.surfaces)
            or any(f.cuts is not None for f in part_model.fills))


def cell_owners(model: Model) -> np.ndarray:
    """Part id of every cell, int32 of shape (Nx-1, Ny-1, Nz-1); rules in the module doc.

    Parameters
    ----------
    model : Model
        A built model (:func:`ringprint.analysis.model.build_model`).

    Returns
    -------
    ndarray of int32
        0 for air, ``i + 1`` for ``model.parts[i]``.

    References
    ----------
    Yee, K. S., IEEE Trans. Antennas Propag. 14(3):302-307, 1966 (cell and edge
    positions); Edelsbrunner, H. & Muecke, E. P., ACM Trans. Graph. 9(1):66-104,
    1990 (the exact ray crossings behind the inside test).
    """
    grid = model.grid
    ids = np.zeros(tuple(n - 1 for n in grid.shape), np.int32)
    order = sorted(range(len(model.parts)), key=lambda i: (model.parts[i].part.overlap_rank, i))
    for i in order:
        p = model.parts[i]
        crossed = shows_crossed_cells(p)
        for surface in p.surfaces:
            if surface.kind == "solid":
                _centre_cells(ids, surface, grid, i + 1)
            if surface.kind == "sheet" or crossed:
                _crossed_cells(ids, surface, grid, i + 1)
    return ids


def _edges_to_cells(ex, ey, ez, dtype):
    """Sum over the 12 edges of every cell of per-edge arrays (Ex, Ey, Ez layout)."""
    out = (ex[:, :-1, :-1].astype(dtype) + ex[:, 1:, :-1] + ex[:, :-1, 1:] + ex[:, 1:, 1:])
    out += ey[:-1, :, :-1] + ey[1:, :, :-1] + ey[:-1, :, 1:] + ey[1:, :, 1:]
    out += ez[:-1, :-1, :] + ez[1:, :-1, :] + ez[:-1, 1:, :] + ez[1:, 1:, :]
    return out


def cell_eps_r(model: Model) -> np.ndarray:
    """Mean relative permittivity of each cell's 12 edges, float32 (Nx-1, Ny-1, Nz-1)."""
    return (_edges_to_cells(*model.eps_r, np.float64) / 12.0).astype(np.float32)


def cell_volumes(grid: meshing.Grid, owners: np.ndarray, n_parts: int) -> np.ndarray:
    """Volume (m^3) of the cells each part id owns (index 0 = air), summed one x
    slab at a time so no volume array of the whole grid is made."""
    dx, dy, dz = grid.spacing
    face = np.outer(dy, dz).ravel()
    out = np.zeros(n_parts + 1)
    for i in range(owners.shape[0]):
        out += np.bincount(owners[i].ravel(), weights=dx[i] * face, minlength=n_parts + 1)
    return out


def cell_pec_edges(model: Model) -> np.ndarray:
    """Number (0-12) of each cell's edges that are perfect conductor, uint8."""
    return _edges_to_cells(*model.pec, np.uint8)


def material_label(part_model) -> str:
    """Short material name of a part: its library name, else the table's name/values."""
    part = part_model.part
    if part.material_name:
        return part.material_name
    m = part.material
    if m.is_pec:
        return "conductor"
    return f"eps_r {m.eps_r:g}" if m.name in ("", "custom") else m.name


def material_colours(model: Model) -> list:
    """``(colour, opacity)`` per part: each conductor part its own opaque colour from
    :data:`CONDUCTOR_COLOURS`, each dielectric material (by label) its own colour from
    :data:`DIELECTRIC_COLOURS`, translucent."""
    by_material: dict = {}
    out = []
    metals = 0
    for p in model.parts:
        if p.is_conductor:
            out.append((CONDUCTOR_COLOURS[metals % len(CONDUCTOR_COLOURS)], 1.0))
            metals += 1
            continue
        label = material_label(p)
        if label not in by_material:
            by_material[label] = DIELECTRIC_COLOURS[len(by_material) % len(DIELECTRIC_COLOURS)]
        out.append((by_material[label], DIELECTRIC_OPACITY))
    return out


def image_name(grid: meshing.Grid) -> str:
    """File name of the voxel model: ``model.vti`` (uniform grid) or ``model.vtr``."""
    return "model.vti" if grid.uniform else "model.vtr"


def voxel_image(model: Model, owners: np.ndarray | None = None):
    """The voxel model as a :class:`pyvista.ImageData` on a uniform grid, a
    :class:`pyvista.RectilinearGrid` (the node vectors themselves) on a graded one
    (cell data and field data in the module doc); ``owners`` reuses a
    :func:`cell_owners` result."""
    import pyvista as pv

    grid = model.grid
    owners = cell_owners(model) if owners is None else owners
    if grid.uniform:
        image = pv.ImageData(dimensions=grid.shape, spacing=(grid.cell,) * 3,
                             origin=(float(grid.x[0]), float(grid.y[0]), float(grid.z[0])))
    else:
        image = pv.RectilinearGrid(grid.x, grid.y, grid.z)
    image.cell_data["part_id"] = owners.ravel(order="F")  # VTK: x varies fastest
    image.cell_data["eps_r"] = cell_eps_r(model).ravel(order="F")
    conductor_ids = np.array([False] + [p.is_conductor for p in model.parts])
    image.cell_data["conductor"] = conductor_ids[owners].astype(np.uint8).ravel(order="F")
    image.cell_data["pec_edges"] = cell_pec_edges(model).ravel(order="F")
    image.field_data["part_names"] = np.array(["air"] + [p.name for p in model.parts])
    image.field_data["part_materials"] = np.array(["air"] + [material_label(p) for p in model.parts])
    return image


def _box(lo, hi):
    import pyvista as pv

    return pv.Box(bounds=(lo[0], hi[0], lo[1], hi[1], lo[2], hi[2]))


def _legend(plotter, entries) -> None:
    """A legend with black labels and a coloured square per entry (pyvista's own
    legend writes each label in its entry's colour, unreadable for light colours)."""
    import pyvista as pv
    from matplotlib.colors import to_rgb

    box = plotter.add_legend([list(e) for e in entries], bcolor="white", loc="upper left",
                             size=(0.42, 0.04 * len(entries) + 0.02), face="rectangle")
    square = np.array([[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0]], float)
    for i, (label, colour) in enumerate(entries):
        symbol = pv.PolyData(square, faces=[4, 0, 1, 2, 3])
        symbol.cell_data["rgb"] = (np.array(to_rgb(colour)) * 255).astype(np.uint8)[None, :]
        symbol.cell_data.active_scalars_name = "rgb"
        box.SetEntry(i, symbol, label, (0.0, 0.0, 0.0))
    box.ScalarVisibilityOn()


def render_preview(model: Model, image, path, window_size=(1200, 900), probe=None) -> None:
    """Draw the voxel model off screen into the PNG file ``path``.

    Parts are coloured by :func:`material_colours`; the domain's outer edge and the
    inner face of the absorbing layer are drawn as wire boxes; ``probe`` (corners (4, 3)
    in metres, e.g. :func:`ringprint.analysis.field_plots.probe_corners`) as a thick
    closed line; a legend names every part. Needs no display (``Plotter(off_screen=True)``).
    """
    import pyvista as pv

    grid = model.grid
    owners = np.asarray(image.cell_data["part_id"])
    colours = material_colours(model)
    quiet = getattr(pv, "vtk_verbosity", None)  # silences VTK's display probing (pyvista >= 0.45)
    with quiet("off") if quiet is not None else contextlib.nullcontext():
        plotter = pv.Plotter(off_screen=True, window_size=list(window_size))
        try:
            plotter.set_background("white")
            legend = [[f"{p.name} ({material_label(p)})", colours[i][0]] for i, p in enumerate(model.parts)]
            # opaque conductors first, then the translucent dielectrics over them
            for i in sorted(range(len(model.parts)), key=lambda i: colours[i][1] < 1.0):
                cells = np.flatnonzero(owners == i + 1)
                colour, opacity = colours[i]
                if cells.size == 0:
                    continue
                plotter.add_mesh(image.extract_cells(cells), color=colour, opacity=opacity,
                                 specular=0.5 if opacity == 1 else 0.0,
                                 smooth_shading=False)
            lo = np.array([a[0] for a in grid.axes])
            hi = np.array([a[-1] for a in grid.axes])
            bc = grid.boundary_cells
            plotter.add_mesh(_box(lo, hi), style="wireframe", color="#999999", line_width=1)
            plotter.add_mesh(_box([a[bc] for a in grid.axes], [a[-1 - bc] for a in grid.axes]),
                             style="wireframe", color="black", line_width=2)
            if probe is not None:
                loop = np.vstack([probe, probe[:1]])
                plotter.add_mesh(pv.lines_from_points(loop), color=PROBE_COLOUR, line_width=5,
                                 render_lines_as_tubes=True)
                legend.append(["probe loop", PROBE_COLOUR])
            legend.append(["domain edge", "#999999"])
            legend.append([f"absorbing layer inner face ({grid.boundary_cells} cells)", "black"])
            _legend(plotter, legend)
            plotter.add_axes(color="black")
            plotter.camera_position = "iso"
            plotter.reset_camera()
            plotter.camera.zoom(1.25)
            plotter.screenshot(str(path))
        finally:
            plotter.close()
