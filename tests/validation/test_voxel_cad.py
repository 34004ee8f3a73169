"""CAD bodies: STEP and IGES files written by gmsh's OpenCASCADE kernel in the test,
read back through ringprint's reader; volumes against the closed forms
(box abc, cylinder pi r^2 h, sphere 4/3 pi r^3) within 0.5 %.

Tolerance: tessellated with triangles <= cell/2 = r/20, the chord sag is about
(r/20)^2 / (8 r) = r/3200, a volume deficit near 3 x sag / r ~ 0.1 %.
"""

import math

import gmsh
import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.meshing import load_parts, voxelize
from ringprint.meshing._cad import quiet_stdio

R = 0.004  # 4 mm
MM = 1e3  # gmsh writes STEP/IGES in millimetres: model numbers are mm


SHAPES = {  # gmsh OCC constructor (mm numbers) and the closed-form volume (m^3)
    "box": (lambda occ: occ.addBox(0, 0, 0, 10, 6, 3), 0.01 * 0.006 * 0.003),
    "cylinder": (lambda occ: occ.addCylinder(20, 0, 0, 0, 0, 8, R * MM), math.pi * R**2 * 0.008),
    "sphere": (lambda occ: occ.addSphere(40, 0, 0, R * MM), 4 / 3 * math.pi * R**3),
}


def _write(path, shapes=tuple(SHAPES)):
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.model.add("parts")
        for name in shapes:
            SHAPES[name][0](gmsh.model.occ)
        gmsh.model.occ.synchronize()
        with quiet_stdio():
            gmsh.write(str(path))
    finally:
        gmsh.finalize()


# IGES carries trimmed faces, not solids; gmsh's own IGES export of curved faces does
# not sew back into closed shells, so IGES is checked on the planar box only.
@pytest.mark.parametrize("shape,ext", [(s, ".step") for s in sorted(SHAPES)] + [("box", ".iges")])
def test_cad_volume(tmp_path, ext, shape, capfd):
    path = tmp_path / f"{shape}{ext}"
    _write(path, [shape])
    (part,) = load_parts(str(path), unit="mm", cell_size=R / 5)  # the file's unit wins over "mm"
    out, err = capfd.readouterr()
    assert out == "" and err == ""  # no terminal spam from the CAD kernel
    assert part.kind == "solid"
    assert part.volume == pytest.approx(SHAPES[shape][1], rel=5e-3)


def test_step_with_several_solids(tmp_path):
    """One surface per solid, in file order, named from the stem (gmsh writes no product
    names), each with its own closed-form volume: 3 % at the coarse cell R/2 (24
    segments per turn: the inscribed 24-gon misses 1.1 % of a circle's area)."""
    path = tmp_path / "parts.step"
    _write(path)
    parts = load_parts(str(path), cell_size=R / 2)
    assert [p.name for p in parts] == ["parts:1", "parts:2", "parts:3"]
    for p, (_, exact) in zip(parts, SHAPES.values()):
        assert p.volume == pytest.approx(exact, rel=0.03), p.name


def test_cad_sphere_voxelizes(tmp_path):
    path = tmp_path / "ball.step"
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.model.occ.addSphere(0, 0, 0, R * MM)
        gmsh.model.occ.synchronize()
        with quiet_stdio():
            gmsh.write(str(path))
    finally:
        gmsh.finalize()
    (s,) = load_parts(str(path), cell_size=R / 5)
    g_axes = [np.arange(-R * 1.3, R * 1.3, R / 10) + 1.7e-5 for _ in range(3)]
    vol = voxelize(s, *g_axes).volume(*g_axes)
    assert all(abs(v / (4 / 3 * math.pi * R**3) - 1) < 5e-3 for v in vol.values()), vol


def test_gmsh_left_initialized_by_caller_is_kept(tmp_path):
    path = tmp_path / "b.step"
    _write(path)
    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.model.add("mine")
        assert len(load_parts(str(path), cell_size=R / 4)) == 3
        assert gmsh.isInitialized()
    finally:
        gmsh.finalize()
    with pytest.raises(RingprintError, match="no such file"):
        load_parts(str(tmp_path / "missing.step"))
