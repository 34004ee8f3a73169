"""Surface checks: welding, degenerate/duplicate triangles, open edges, orientation,
holes, sheets, cavities."""

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.meshing import MeshingWarning, Surface, prepare_surface
from ringprint.meshing.primitives import box, plate, sphere


def _soup(s):
    """Unwelded triangle soup, as an STL stores it."""
    return Surface(s.name, s.vertices[s.faces].reshape(-1, 3), np.arange(3 * len(s.faces)).reshape(-1, 3))


def test_weld_and_volume_of_triangle_soup():
    s = prepare_surface(_soup(sphere(1.0, n=32)))
    assert s.kind == "solid" and s.open_edges == 0
    assert s.volume == pytest.approx(sphere(1.0, n=32).volume, rel=1e-12)


def test_inconsistent_and_inward_orientation_fixed():
    s = sphere(1.0, n=16)
    f = s.faces.copy()
    f[::3] = f[::3, ::-1]  # flip every third triangle
    f = f[:, ::-1]  # and the whole thing inward
    out = prepare_surface(s.with_(faces=np.ascontiguousarray(f)))
    assert out.volume == pytest.approx(s.volume)
    assert any("re-wound" in n for n in out.notes)


def test_degenerate_and_duplicate_triangles_removed():
    s = box((0, 0, 0), (1, 1, 1))
    f = np.concatenate([s.faces, s.faces[:2], [[0, 0, 1]], s.faces[3:4, [1, 2, 0]]])
    out = prepare_surface(s.with_(faces=f))
    assert out.n_triangles == 12 and out.volume == pytest.approx(1.0)
    assert any("degenerate" in n for n in out.notes) and any("duplicate" in n for n in out.notes)


def test_small_hole_is_closed_large_hole_warns():
    s = sphere(1.0, n=32)
    top = np.flatnonzero(np.any(s.faces == len(s.vertices) - 2, axis=1))  # the polar cap fan
    holed = s.with_(faces=np.delete(s.faces, top, axis=0))
    out = prepare_surface(holed, hole_size=0.5)
    assert out.open_edges == 0 and out.kind == "solid"
    assert out.volume == pytest.approx(s.volume, rel=1e-3)  # flat patch instead of the cap
    with pytest.warns(MeshingWarning, match=r"32 open edges.*conductor"):
        bad = prepare_surface(holed, hole_size=0.0)
    assert bad.open_edges == 32


def test_open_conductor_is_a_sheet():
    out = prepare_surface(plate((0, 0), (1, 1), 0.5), conductor=True)
    assert out.kind == "sheet" and out.open_edges == 4 and out.volume == 0.0


def test_hollow_sphere_cavity_is_oriented_inward():
    outer, inner = sphere(2.0, n=24), sphere(1.0, n=24)
    v = np.concatenate([outer.vertices, inner.vertices])
    f = np.concatenate([outer.faces, inner.faces + len(outer.vertices)])  # both outward as given
    out = prepare_surface(Surface("shell", v, f))
    assert out.volume == pytest.approx(outer.volume - inner.volume)


@pytest.mark.parametrize("verts,faces,match", [
    (np.zeros((0, 3)), np.zeros((0, 3), int), "no triangles"),
    (np.array([[0, 0, 0], [1, 0, 0], [np.inf, 1, 0]]), np.array([[0, 1, 2]]), "NaN/inf"),
    (np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0]]), np.array([[0, 1, 5]]), "indices"),
    (np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0]]), np.array([[0, 1, 1]]), "degenerate"),
])
def test_bad_surfaces_refused(verts, faces, match):
    with pytest.raises(RingprintError, match=match):
        prepare_surface(Surface("p", verts, faces, source="f.stl"))
