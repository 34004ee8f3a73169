"""The 3-D view of a mode (``ringprint.analysis.field_views``), drawn off screen on the
synthetic TE10l cavity of test_field_plots (Pozar, Microwave Engineering, 4th ed.,
2012, eqs. 6.42; the field formulas are written out there)."""

from __future__ import annotations

import numpy as np
import pytest
import vtk

from ringprint.analysis import field_plots, field_views
from ringprint.errors import RingprintError
from test_field_plots import PNG_SIGNATURE, cavity_fieldset, decode, not_blank


@pytest.fixture(scope="module")
def fs():
    return cavity_fieldset()


@pytest.fixture
def scene(fs):
    plotter = field_views.build_scene(fs, 1, "e", off_screen=True, window_size=(400, 300))
    yield plotter
    plotter.close()


def test_scene_has_parts_field_probe_legend_and_title(scene, fs):
    legend = scene.legend
    labels = [legend.GetEntryString(i) for i in range(legend.GetNumberOfEntries())]
    assert labels == ["bezel ring (conductor)", "battery", "shield can (conductor)", "probe loop"]
    title = scene.actors["title"].GetText(vtk.vtkCornerAnnotation.UpperEdge).strip()
    assert title == "mode 1, 9.008 GHz, Q 800"   # TE101 of 30 x 20 mm (Pozar eq. 6.46)
    (bar_title,) = scene.scalar_bars.keys()
    assert bar_title == "\u2223E\u2223 (V/m)\n1 J stored"
    # 3 part surfaces + isosurfaces + slice + probe loop
    meshes = [a for a in scene.renderer.actors.values() if isinstance(a, vtk.vtkActor)]
    assert len(meshes) == 6


def _slice_at_peak(plotter):
    """The scene's one slice normal to y, checked to pass through the TE101 |E| peak at
    x = a/2, z = d/2 (Pozar eq. 6.42a)."""
    slices = [a.mapper.dataset for a in plotter.renderer.actors.values()
              if isinstance(a, vtk.vtkActor) and a.mapper.dataset.n_cells
              and np.ptp(a.mapper.dataset.points[:, 1]) == 0 and a.mapper.dataset.n_points > 400]
    assert len(slices) == 1
    plane = slices[0]
    peak = plane.points[np.argmax(plane["field"])]
    assert peak[[0, 2]] == pytest.approx([15e-3, 10e-3], abs=1e-9)
    return plane


def test_slice_goes_through_the_field_peak(fs):
    """The slice is normal to the shortest side (b, along y) and passes through the
    |E| peak of TE101, x = a/2, z = d/2 (Pozar eq. 6.42a: Ey ~ sin(pi x/a) sin(pi z/d))."""
    assert field_plots.flat_axis(fs) == 1
    plotter = field_views.build_scene(fs, 1, "e", off_screen=True, window_size=(200, 150))
    try:
        plane = _slice_at_peak(plotter)
        assert plane["field"].max() == pytest.approx(np.sqrt(np.sum(np.abs(fs.mode(1).e) ** 2, axis=0)).max())
    finally:
        plotter.close()


@pytest.mark.parametrize("quantity", ["e", "h", "energy"])
def test_render_is_not_blank_and_is_written(fs, tmp_path, quantity):
    path = tmp_path / f"view_{quantity}.png"
    png = field_views.render_png(fs, 2, path, quantity, size=(480, 360))
    assert path.read_bytes() == png and png.startswith(PNG_SIGNATURE)
    img = decode(png)
    assert img.shape[:2] == (360, 480)
    not_blank(img, min_std=0.08, min_colours=200)
    # the field's colour map (viridis) shows: a fair share of pixels is neither
    # background white nor grey
    rgb = img[..., :3]
    coloured = (rgb.max(axis=2) - rgb.min(axis=2)) > 0.15
    assert coloured.mean() > 0.04


def test_render_without_path_writes_nothing(fs, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    png = field_views.render_png(fs, 1, None, size=(160, 120))
    assert png.startswith(PNG_SIGNATURE) and not list(tmp_path.iterdir())


def test_bad_inputs_are_one_line_errors(fs):
    with pytest.raises(RingprintError, match="there is no mode 9"):
        field_views.render_png(fs, 9, None)
    with pytest.raises(RingprintError, match="quantity 'b' is not known"):
        field_views.build_scene(fs, 1, "b", off_screen=True)
    with pytest.raises(RingprintError, match="picture size"):
        field_views.render_png(fs, 1, None, size=(0, 10))


def test_show_refuses_without_a_display(fs, monkeypatch):
    monkeypatch.setattr(field_views.sys, "platform", "linux")
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    assert not field_views.display_available()
    with pytest.raises(RingprintError, match="no display"):
        field_views.show(fs, 1)
    monkeypatch.setenv("WAYLAND_DISPLAY", "wayland-0")
    assert field_views.display_available()


def test_graded_scene_uses_the_node_coordinates():
    """On a graded lattice the scene is a rectilinear grid over the nodes; the slice
    still passes through the |E| peak of TE101 at x = a/2, z = d/2 (Pozar eq. 6.42a),
    and its points are the lattice's own x and z."""
    g = cavity_fieldset(1, graded=True)
    plotter = field_views.build_scene(g, 1, "e", off_screen=True, window_size=(200, 150))
    try:
        plane = _slice_at_peak(plotter)
        xs = np.unique(np.round(plane.points[:, 0], 12))
        assert np.all(np.min(np.abs(xs[:, None] - g.x[None, :]), axis=1) < 1e-9)
    finally:
        plotter.close()
    png = field_views.render_png(g, 1, None, "energy", size=(320, 240))
    not_blank(decode(png), min_std=0.05, min_colours=100)
