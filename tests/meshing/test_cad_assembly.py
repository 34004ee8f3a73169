"""Multi-body STEP assemblies: body names from the file's product names, generated
names where the file gives none, one surface per solid with the solid's own volume.

The files are built here with gmsh's OpenCASCADE kernel. gmsh's STEP writer does not
write entity or physical names (every product is called ``Open CASCADE STEP
translator <version> <n>``, checked below), so :func:`write_named_step` sets the
product names in the written file's text (ISO 10303-21 clear text).

Volumes against the exact solids: a box is a polyhedron, tessellated exactly, so its
volume is checked to 1e-9 (floating-point sums only). A cylinder's triangles have
their vertices on the exact surface, so the tessellated volume lies between the
inscribed N-gon prism and the cylinder, ``pi r^2 h N sin(2 pi / N) / (2 pi)`` (the
area of a regular N-gon inscribed in a circle of radius r, Euclid) with N at least
the 24 segments per turn the reader asks for.
"""

import math
import re

import gmsh
import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.meshing import body_labels, body_names, load_parts, read_surfaces
from ringprint.meshing._cad import SEGMENTS_PER_TURN, quiet_stdio, write_named_step

R, H = 4.0, 8.0  # cylinder radius and height, mm (gmsh model numbers are millimetres)
BOXES = {"Frame Left": (0, 0, 0, 40, 2, 3), "Frame Right": (0, 20, 0, 40, 2, 3),
         "Shield Can": (10, 5, 0, 10, 10, 2)}
NAMES = list(BOXES) + ["Battery"]


def _model():
    occ = gmsh.model.occ
    for spec in BOXES.values():
        occ.addBox(*spec)
    occ.addCylinder(30, 10, 0, 0, 0, H, R)
    occ.synchronize()


def _build(path, names=None, assembly=None):
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.model.add("assembly")
        _model()
        if names is None:
            with quiet_stdio():
                gmsh.write(str(path))
        else:
            write_named_step(path, names, assembly=assembly)
    finally:
        gmsh.finalize()
    return path


@pytest.fixture(scope="module")
def handset(tmp_path_factory):
    return _build(tmp_path_factory.mktemp("asm") / "handset.step", NAMES, assembly="Handset")


def _exact(name):
    """Closed-form volume in m^3: box a b c, cylinder pi r^2 h."""
    if name in BOXES:
        return float(np.prod(BOXES[name][3:])) * 1e-9
    return math.pi * R**2 * H * 1e-9


def _inscribed(n):
    """Volume (m^3) of the prism on the regular n-gon inscribed in the cylinder."""
    return R**2 * H * n * math.sin(2 * math.pi / n) / 2 * 1e-9


def test_product_names_are_written_and_read_back(handset):
    text = handset.read_text()
    for name in NAMES + ["Handset"]:
        assert re.search(rf"PRODUCT\('{name}',\s*'{name}'", text)  # in the file itself
    assert body_names(handset) == NAMES


def test_gmsh_writer_gives_no_names_so_bodies_get_stem_and_position(tmp_path):
    path = _build(tmp_path / "plain.step")
    assert "Open CASCADE STEP translator" in path.read_text()
    assert body_names(path) == ["plain:1", "plain:2", "plain:3", "plain:4"]


def test_unnamed_and_repeated_products(tmp_path):
    path = _build(tmp_path / "mix.step", ["screw", "", "Bob's can", "screw"])
    assert body_names(path) == ["screw:1", "mix:2", "Bob's can", "screw:2"]


def test_single_solid_takes_its_product_name(tmp_path):
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.model.occ.addBox(0, 0, 0, 1, 2, 3)
        gmsh.model.occ.synchronize()
        write_named_step(tmp_path / "one.step", ["bracket"])
    finally:
        gmsh.finalize()
    (s,) = load_parts(str(tmp_path / "one.step"))
    assert s.name == "bracket" and s.volume == pytest.approx(6e-9, rel=1e-9)


def test_each_body_has_its_own_volume(handset):
    """Cell 0.8 mm: triangles <= 0.4 mm, so the cylinder (r = 4 mm) gets N >= 2 pi r /
    0.4 ~ 63 segments; the bracket uses the guaranteed 24 (and a 1.01 margin on the
    63-gon bound, since gmsh's size is a target, not a hard cap)."""
    surfaces = load_parts(str(handset), cell_size=0.8e-3)
    assert [s.name for s in surfaces] == NAMES
    for s in surfaces:
        assert s.kind == "solid" and s.open_edges == 0
        if s.name in BOXES:
            assert s.volume == pytest.approx(_exact(s.name), rel=1e-9)
        else:
            assert _inscribed(SEGMENTS_PER_TURN) <= s.volume < _exact(s.name)
            assert 1 - s.volume / _exact(s.name) < 1.01 * (1 - _inscribed(63) / _exact(s.name))
        # only this body's own vertices, all on or inside its bounding box
        lo, hi = s.bounds
        assert len(s.vertices) == len(np.unique(s.faces))
        assert np.all(s.vertices >= lo) and np.all(s.vertices <= hi)


def test_without_cell_size_each_body_is_sized_from_itself(handset):
    """No cell size: triangles at most 1/40 of each body's own diagonal (a small body
    in a large assembly is not left coarse); 1.5 x allows gmsh's size tolerance."""
    for s in read_surfaces(handset):
        diag = float(np.linalg.norm(np.ptp(s.vertices, axis=0)))
        edges = s.vertices[s.faces] - s.vertices[np.roll(s.faces, 1, axis=1)]
        assert np.linalg.norm(edges, axis=2).max() <= 1.5 * diag / 40, s.name


def test_pick_one_body(handset):
    (s,) = load_parts(str(handset), body="Shield Can", cell_size=1e-3)
    assert s.name == "Shield Can" and s.volume == pytest.approx(_exact("Shield Can"), rel=1e-9)
    with pytest.raises(RingprintError, match=r"holds no body named 'Shield'.*'Frame Left'") as err:
        load_parts(str(handset), body="Shield", cell_size=1e-3)
    assert "\n" not in str(err.value)


def test_iges_bodies_get_generated_names(tmp_path):
    """IGES has no product structure: sewn shells are named from the stem. Boxes only
    (gmsh's IGES export of curved faces does not sew back, see test_voxel_cad)."""
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        for spec in BOXES.values():
            gmsh.model.occ.addBox(*spec)
        gmsh.model.occ.synchronize()
        with quiet_stdio():
            gmsh.write(str(tmp_path / "boxes.iges"))
    finally:
        gmsh.finalize()
    names = body_names(tmp_path / "boxes.iges")
    assert names == ["boxes:1", "boxes:2", "boxes:3"]
    surfaces = load_parts(str(tmp_path / "boxes.iges"), cell_size=1e-3)
    assert [s.name for s in surfaces] == names
    assert sorted(s.volume for s in surfaces) == pytest.approx(sorted(map(_exact, BOXES)), rel=1e-9)


@pytest.mark.parametrize("names,stem,expected", [
    ([""], "part", ["part"]),
    (["", ""], "part", ["part:1", "part:2"]),
    (["a", " a ", "b"], "f", ["a:1", "a:2", "b"]),
    (["a", "a", "a:1"], "f", ["a:2", "a:3", "a:1"]),  # a numbered name never collides
    (["", "f:1"], "f", ["f:1:1", "f:1:2"]),
])
def test_body_labels(names, stem, expected):
    out = body_labels(names, stem)
    assert out == expected and len(set(out)) == len(out)


def test_names_need_no_tessellation(handset, monkeypatch):
    """Reading names never meshes (the case file reads them at load time)."""
    def no_mesh(*_a, **_k):
        raise AssertionError("body_names meshed the file")
    monkeypatch.setattr(gmsh.model.mesh, "generate", no_mesh)
    assert body_names(handset) == NAMES
