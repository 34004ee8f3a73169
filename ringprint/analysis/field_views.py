"""The 3-D view of one mode: parts, field isosurfaces, a slice and the probe.

The scene (:func:`build_scene`) holds

- every part as a translucent surface: the 0.5 level of its node mask on the
  lattice (marching cubes), one muted colour per part
  (:data:`~ringprint.analysis.field_plots.PART_COLOURS`), conductors a little less
  transparent than dielectrics; a legend names them;
- the field magnitude (``quantity``: |E| by default, |H| or the stored energy
  density, :func:`~ringprint.analysis.field_plots.field_quantity`) as two
  isosurfaces at 30 % and 60 % of its maximum, and one slice through the node of
  the maximum, normal to the lattice's shortest side (the flat direction of most
  devices, :func:`~ringprint.analysis.field_plots.flat_axis`); viridis, with a labelled colour bar (e.g. "|E| (V/m), 1 J stored");
- the probe loop as a small black square (from ``fs.probe``);
- the title "mode N, f, Q".

On a graded lattice the scene is built on a VTK rectilinear grid (the node
coordinates as they are), on a uniform one on image data. Only the region around the
parts is drawn
(:func:`~ringprint.analysis.field_plots.region_of_interest`), not the air padding
and absorbing layer around them.

:func:`render_png` draws it off screen (no display needed) and returns PNG bytes;
:func:`show` opens an interactive window. VTK's own warnings (e.g. about a missing X
server while probing for a display) are silenced while we draw.
"""

from __future__ import annotations

import contextlib
import io
import os
import sys

import numpy as np

from ringprint.analysis.field_plots import (PART_COLOURS, field_quantity, flat_axis, mode_title,
                                            peak_node, probe_corners, region_of_interest,
                                            resolve_mode)
from ringprint.analysis.fieldset import FieldSet
from ringprint.analysis.fieldset_io import lattice_dataset
from ringprint.analysis.outputs import atomic_write_bytes
from ringprint.errors import RingprintError

__all__ = ["ISO_LEVELS", "build_scene", "render_png", "show", "display_available"]

#: Isosurface levels as fractions of the field's maximum.
ISO_LEVELS = (0.3, 0.6)
#: Opacity of part surfaces: conductors, other parts.
CONDUCTOR_OPACITY, PART_OPACITY = 0.45, 0.2
PROBE_COLOUR = "black"
#: Opacity of the slice against the field value (0 to the maximum): weak field fades
#: out, so the slice does not hide the parts behind it.
SLICE_OPACITY = (0.15, 0.6, 0.9, 0.95)


def display_available() -> bool:
    """False on Linux/BSD when neither DISPLAY nor WAYLAND_DISPLAY is set (no window
    can open); True elsewhere (Windows and macOS always have a desktop)."""
    if sys.platform.startswith(("linux", "freebsd", "openbsd", "netbsd")):
        return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))
    return True


@contextlib.contextmanager
def quiet_vtk():
    """Silence VTK's warning output (restored afterwards)."""
    import pyvista as pv
    import vtk

    was = vtk.vtkObject.GetGlobalWarningDisplay()
    vtk.vtkObject.GlobalWarningDisplayOff()
    try:
        with pv.vtk_verbosity("off"):
            yield
    finally:
        vtk.vtkObject.SetGlobalWarningDisplay(was)


def _font_file() -> str:
    """A TrueType font with the glyphs VTK's built-in font lacks (a bar for |E|, m³)."""
    from matplotlib import font_manager

    return font_manager.findfont("DejaVu Sans")


def _vtk_text(label: str) -> str:
    """``label`` for a VTK text actor: VTK's text renderer drops the ASCII bar, U+2223
    (DIVIDES) draws the same stroke; the part after the comma goes on a second line."""
    return label.replace("|", "\u2223").replace(", ", "\n")


def _use_font(*properties) -> None:
    import vtk

    path = _font_file()
    for prop in properties:
        prop.SetFontFamily(vtk.VTK_FONT_FILE)
        prop.SetFontFile(path)


def _image(fs: FieldSet, roi):
    """An empty pyvista dataset over the lattice nodes ``roi`` (three index ranges): image
    data on a uniform lattice, a rectilinear grid on a graded one."""
    shape = tuple(len(range(*r.indices(n))) for r, n in zip(roi, fs.shape))
    if min(shape) < 2:
        raise RingprintError(f"the field lattice is {fs.shape} nodes; a 3-D view needs at least 2 "
                             "nodes along each axis, run the case with a smaller decimation")
    return lattice_dataset(fs, roi)


def _add_parts(plotter, fs: FieldSet, image, roi) -> list:
    """Part surfaces; returns the legend entries [label, colour]."""
    entries = []
    for n, (name, mask) in enumerate(fs.parts.items()):
        colour = PART_COLOURS[n % len(PART_COLOURS)]
        image.point_data["mask"] = np.asarray(mask[roi], np.float32).ravel(order="F")  # x fastest
        surface = image.contour([0.5], scalars="mask")
        conductor = name in fs.conductors
        if surface.n_points:
            plotter.add_mesh(surface, color=colour, smooth_shading=True, show_scalar_bar=False,
                             opacity=CONDUCTOR_OPACITY if conductor else PART_OPACITY)
        entries.append([f"{name} (conductor)" if conductor else name, colour])
    image.point_data.pop("mask", None)
    return entries


def _add_field(plotter, fs: FieldSet, image, roi, values: np.ndarray, label: str) -> None:
    top = float(values.max())
    if not top > 0:
        return  # a zero field: nothing to draw
    peak = peak_node(values)
    image.point_data["field"] = values[roi].ravel(order="F")
    style = {"scalars": "field", "cmap": "viridis", "clim": (0.0, top)}
    bar = {"title": _vtk_text(label), "color": "black", "vertical": True, "position_x": 0.86,
           "position_y": 0.15, "height": 0.7, "title_font_size": 14, "label_font_size": 12,
           "fmt": "%.3g"}
    iso = image.contour([f * top for f in ISO_LEVELS], scalars="field")
    if iso.n_points:
        plotter.add_mesh(iso, opacity=0.5, smooth_shading=True, scalar_bar_args=bar, **style)
    origin = (fs.x[peak[0]], fs.y[peak[1]], fs.z[peak[2]])
    plane = image.slice(normal="xyz"[flat_axis(fs)], origin=origin)
    plotter.add_mesh(plane, opacity=SLICE_OPACITY, show_scalar_bar=not iso.n_points,
                     scalar_bar_args=bar, **style)


def _add_probe(plotter, fs: FieldSet) -> list:
    import pyvista as pv

    corners = probe_corners(fs.probe)
    if corners is None:
        return []
    loop = pv.lines_from_points(np.vstack([corners, corners[:1]]))
    plotter.add_mesh(loop, color=PROBE_COLOUR, line_width=5, render_lines_as_tubes=True)
    return [["probe loop", PROBE_COLOUR]]


def _add_legend(plotter, entries) -> None:
    """The project's legend (black labels, a colour square each), top left below the title."""
    from ringprint.analysis.voxel_image import _legend

    _legend(plotter, entries)
    height = 0.035 * len(entries) + 0.02
    legend = plotter.legend
    legend.GetPositionCoordinate().SetValue(0.01, 0.91 - height)
    legend.GetPosition2Coordinate().SetValue(0.28, height)
    _use_font(legend.GetEntryTextProperty())


def build_scene(fs: FieldSet, mode_index: int, quantity: str = "e", off_screen: bool = False,
                window_size=(1024, 768), title: str | None = None):
    """The pyvista scene of one mode (contents in the module docstring).

    Parameters
    ----------
    fs : FieldSet
    mode_index : int
        1-based mode number, as in modes.json.
    quantity : {"e", "h", "energy"}
        |E|, |H| or the stored energy density, each for 1 J stored.
    off_screen : bool
        Render off screen (for pictures; no display needed).
    title : str, optional
        The title (default :func:`~ringprint.analysis.field_plots.mode_title`; ``ringprint
        show`` gives f and Q as modes.json's tables write them).
    window_size : (int, int)
        Width and height in pixels.

    Returns
    -------
    pyvista.Plotter
        Not yet shown; call ``.show()`` or ``.screenshot()``, then ``.close()``.

    References
    ----------
    Lorensen, W. E. & Cline, H. E., "Marching cubes: a high resolution 3D surface
    construction algorithm", Computer Graphics 21(4):163-169, 1987 (the part
    surfaces and isosurfaces, via VTK's contour filter).
    """
    import pyvista as pv

    mode = resolve_mode(fs, mode_index)
    values, label = field_quantity(fs, mode, quantity)
    roi = region_of_interest(fs, keep=[peak_node(values)])
    image = _image(fs, roi)
    plotter = pv.Plotter(off_screen=off_screen, window_size=[int(v) for v in window_size])
    plotter.set_background("white")
    entries = _add_parts(plotter, fs, image, roi)
    _add_field(plotter, fs, image, roi, values, label)
    entries += _add_probe(plotter, fs)
    if entries:
        _add_legend(plotter, entries)
    title = plotter.add_title(title or mode_title(mode), font_size=12, color="black")
    _use_font(title.GetTextProperty())
    for bar in plotter.scalar_bars.values():
        _use_font(bar.GetTitleTextProperty(), bar.GetLabelTextProperty())
    plotter.add_axes(color="black")
    plotter.camera_position = "iso"
    plotter.reset_camera()
    plotter.camera.zoom(1.1)
    return plotter


def _check_size(size) -> tuple[int, int]:
    try:
        w, h = (int(v) for v in size)
    except (TypeError, ValueError):
        w = h = 0
    if not (16 <= w <= 8192 and 16 <= h <= 8192):
        raise RingprintError(f"picture size {size!r} is not understood; give (width, height) in "
                             "pixels, each 16-8192")
    return w, h


def render_png(fs: FieldSet, mode_index: int, path=None, quantity: str = "e",
               size=(1024, 768), title: str | None = None) -> bytes:
    """Draw the scene of one mode off screen and return it as PNG bytes.

    Parameters
    ----------
    fs, mode_index, quantity
        As for :func:`build_scene`.
    path : path-like or None
        When given, the PNG is also written there (atomically).
    size : (int, int)
        Width and height in pixels.

    Returns
    -------
    bytes
        The PNG image.
    """
    import matplotlib.image as mpimg

    size = _check_size(size)
    with quiet_vtk():
        plotter = build_scene(fs, mode_index, quantity, off_screen=True, window_size=size, title=title)
        try:
            pixels = plotter.screenshot(None, return_img=True)
        finally:
            plotter.close()
    buf = io.BytesIO()
    mpimg.imsave(buf, np.ascontiguousarray(pixels), format="png")
    png = buf.getvalue()
    if path is not None:
        atomic_write_bytes(path, png)
    return png


def show(fs: FieldSet, mode_index: int, quantity: str = "e", title: str | None = None) -> None:
    """Open an interactive window with the scene of one mode; returns when it closes."""
    if not display_available():
        raise RingprintError("no display to open a window on (DISPLAY and WAYLAND_DISPLAY are "
                             "unset); draw a picture with render_png instead")
    with quiet_vtk():
        plotter = build_scene(fs, mode_index, quantity, off_screen=False, title=title)
        try:
            plotter.show(title=f"ringprint - {title or mode_title(resolve_mode(fs, mode_index))}")
        finally:
            plotter.close()
