"""Reading parts: every mesh format round-trips, bodies keep their names, bad files
are refused with a one-line message naming the file."""

import json
import os

import meshio
import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.meshing import load_parts, read_surfaces
from ringprint.meshing.primitives import box, sphere

CORPUS = os.path.join(os.path.dirname(__file__), os.pardir, "corpus", "meshes")


@pytest.mark.parametrize("ext,fmt", [(".stl", None), (".obj", None), (".ply", None), (".off", None),
                                     (".vtk", None), (".vtu", None), (".msh", "gmsh22")])
def test_formats_round_trip_volume(tmp_path, ext, fmt):
    """A sphere written by meshio in each format reads back with the same volume
    (divergence theorem on the mesh itself is the reference)."""
    s = sphere(2.0, n=24)
    path = str(tmp_path / f"part{ext}")
    mesh = meshio.Mesh(s.vertices, [("triangle", s.faces)])
    meshio.write(path, mesh, file_format=fmt) if fmt else meshio.write(path, mesh)
    (part,) = load_parts(path, unit="mm")
    assert part.kind == "solid" and part.open_edges == 0
    assert part.volume == pytest.approx(s.volume * 1e-9, rel=1e-6)  # float32 STL storage


def test_binary_and_ascii_stl(tmp_path):
    s = box((0, 0, 0), (1, 2, 3))
    for binary in (True, False):
        path = str(tmp_path / f"b{binary}.stl")
        meshio.write(path, meshio.Mesh(s.vertices, [("triangle", s.faces)]), binary=binary)
        (part,) = load_parts(path, unit="m")
        assert part.volume == pytest.approx(6.0, rel=1e-9)


def test_ascii_stl_several_named_solids(tmp_path):
    text = ""
    for name, lo in (("frame", 0.0), ("screw", 5.0)):
        b = box((lo, 0, 0), (lo + 1, 1, 1))
        text += f"solid {name}\n"
        for f in b.faces:
            text += "facet normal 0 0 0\nouter loop\n"
            text += "".join(f"vertex {p[0]} {p[1]} {p[2]}\n" for p in b.vertices[f])
            text += "endloop\nendfacet\n"
        text += f"endsolid {name}\n"
    path = tmp_path / "two.stl"
    path.write_text(text)
    parts = load_parts(str(path))
    assert [p.name for p in parts] == ["frame", "screw"]
    assert all(p.volume == pytest.approx(1.0) for p in parts)


def test_msh_physical_groups_are_bodies(tmp_path):
    a, b = box((0, 0, 0), (1, 1, 1)), box((2, 0, 0), (4, 1, 1))
    pts = np.concatenate([a.vertices, b.vertices])
    tri = np.concatenate([a.faces, b.faces + len(a.vertices)])
    tags = np.r_[np.full(len(a.faces), 1), np.full(len(b.faces), 2)]
    mesh = meshio.Mesh(pts, [("triangle", tri)],
                       cell_data={"gmsh:physical": [tags], "gmsh:geometrical": [tags]},
                       field_data={"shield": np.array([1, 2]), "battery": np.array([2, 2])})
    path = str(tmp_path / "two.msh")
    meshio.write(path, mesh, file_format="gmsh22")
    parts = {p.name: p for p in load_parts(path)}
    assert set(parts) == {"shield", "battery"}
    assert parts["battery"].volume == pytest.approx(2.0)


def test_tetra_mesh_gives_its_outer_surface(tmp_path):
    pts = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1], [1, 1, 1.0]])
    tets = np.array([[0, 1, 2, 3], [1, 2, 3, 4]])
    path = str(tmp_path / "t.vtu")
    meshio.write(path, meshio.Mesh(pts, [("tetra", tets)]))
    (part,) = load_parts(path)
    vol = sum(abs(np.linalg.det(pts[t[1:]] - pts[t[0]])) / 6 for t in tets)  # tetra volume |det|/6
    assert part.volume == pytest.approx(vol) and part.n_triangles == 6


def test_corpus_of_bad_files_is_refused_with_useful_messages():
    """Every file of tests/corpus/meshes (made by make_corpus.py) is refused with one
    line that names the file (or the bad value) and contains the expected words."""
    expected = json.load(open(os.path.join(CORPUS, "expected.json")))
    assert len(expected) >= 12
    for name, spec in sorted(expected.items()):
        with pytest.raises(RingprintError) as err:
            load_parts(os.path.join(CORPUS, name), **spec["kwargs"])
        msg = str(err.value)
        assert "\n" not in msg
        assert spec["message_contains"] in msg, (name, msg)
        assert name in msg or "unit" in spec["kwargs"], (name, msg)


def test_missing_file():
    with pytest.raises(RingprintError, match="no such file"):
        read_surfaces("/nonexistent/part.stl")
