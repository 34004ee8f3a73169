"""``ringprint mesh``: summary, model.vti/.vtr, model.png and case.resolved.toml.

The small case is a dielectric box (eps_r 4) and a PEC sheet, both written as STL
with meshio in mm, meshed once on a uniform grid (``graded = false``: the checks
below that use one cell size need it) and once on the default graded grid.
References used below:

- box volume: the product of its sides (the triangle mesh is exact, so the
  divergence-theorem volume must agree to round-off, 1e-9 relative);
- voxel count: a cell belongs to the box when its centre lies inside it
  (``ringprint.analysis.voxel_image``), so for an axis-aligned box the count is the
  product of the numbers of cell centres inside each side, counted here from the grid
  vectors alone; the staircase error bound follows: each side is covered by between
  (L/h - 1) and (L/h + 1) cells, so |N h^3 - V| <= (Lx+h)(Ly+h)(Lz+h) - Lx Ly Lz;
- time step: the Yee Courant limit, dt = S / (c sqrt(sum_i 1/d_i^2)) with the
  smallest cell d_i on each axis; on a uniform cubic grid dt = S h / (c sqrt(3))
  (Taflove & Hagness, Computational Electrodynamics, 3rd ed. 2005, eq. 4.95).
"""

from __future__ import annotations

import contextlib
import io
import math
import re
from pathlib import Path

import matplotlib.image as mpimg
import meshio
import numpy as np
from scipy import ndimage
import pytest
import pyvista as pv
from scipy.constants import c as C0

from ringprint.analysis import cli, voxel_image
from ringprint.analysis.case import load_case

REPO = Path(__file__).resolve().parents[2]
BOX_LO = np.array([0.0, 0.0, 0.0])          # mm
# mm; exact in float32 (binary STL). The grid is centred on the box (the plate lies
# within its x-y outline), so each x face sits 0.34 cell past a node: the end cells are
# less than half inside and must not count (the rule is "centre inside", not "touched").
BOX_SIZE = np.array([6.5, 5.125, 3.625])
SHEET_Z = 6.2                               # mm, a plate above the box
F_MIN, F_MAX, EPS_BOX, CPW, PAD = 2e9, 10e9, 4.0, 20, 3.0


def box_mesh(lo, size):
    """Eight corners, twelve outward triangles."""
    x0, y0, z0 = lo
    x1, y1, z1 = np.asarray(lo) + size
    pts = np.array([[x0, y0, z0], [x1, y0, z0], [x1, y1, z0], [x0, y1, z0],
                    [x0, y0, z1], [x1, y0, z1], [x1, y1, z1], [x0, y1, z1]], float)
    tri = np.array([[0, 2, 1], [0, 3, 2], [4, 5, 6], [4, 6, 7], [0, 1, 5], [0, 5, 4],
                    [1, 2, 6], [1, 6, 5], [2, 3, 7], [2, 7, 6], [3, 0, 4], [3, 4, 7]])
    return pts, tri


def write_small_case(folder: Path, extra: str = "", grid: str = "graded = false\n") -> Path:
    pts, tri = box_mesh(BOX_LO, BOX_SIZE)
    meshio.write_points_cells(folder / "box.stl", pts, [("triangle", tri)], binary=True)
    sheet = np.array([[0.5, 0.5, SHEET_Z], [6.0, 0.5, SHEET_Z], [6.0, 4.5, SHEET_Z], [0.5, 4.5, SHEET_Z]])
    meshio.write_points_cells(folder / "sheet.stl", sheet, [("triangle", np.array([[0, 1, 2], [0, 2, 3]]))])
    case = folder / "case.toml"
    case.write_text(f"""\
title = "box and sheet"
units = "mm"
[spectrum]
f_min = "{F_MIN / 1e9} GHz"
f_max = "{F_MAX / 1e9} GHz"
[[part]]
name = "block"
file = "box.stl"
material = {{ eps_r = {EPS_BOX}, loss_tangent = 0.01 }}
[[part]]
name = "plate"
file = "sheet.stl"
material = "pec"
[grid]
cells_per_wavelength = {CPW}
padding = {PAD}
{grid}{extra}""")
    return case


def _mesh(folder: Path, case: Path) -> dict:
    out = folder / "out"
    stdout, stderr = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
        code = cli.main(["mesh", str(case), "--out", str(out)])
    return {"code": code, "out": out, "case": case, "stdout": stdout.getvalue(),
            "stderr": stderr.getvalue()}


@pytest.fixture(scope="module")
def meshed(tmp_path_factory):
    """Run ``ringprint mesh`` once on the small case, uniform grid; share the result
    (capsys is function-scoped, so the streams are captured by hand)."""
    folder = tmp_path_factory.mktemp("small")
    return _mesh(folder, write_small_case(folder))


@pytest.fixture(scope="module")
def meshed_graded(tmp_path_factory):
    """The same case on the default graded grid."""
    folder = tmp_path_factory.mktemp("small_graded")
    return _mesh(folder, write_small_case(folder, grid=""))


def test_exit_code_and_files(meshed):
    assert meshed["code"] == 0, meshed["stderr"]
    assert meshed["stderr"] == ""
    names = sorted(p.name for p in meshed["out"].iterdir())
    assert names == ["case.resolved.toml", "model.png", "model.vti"]


def test_summary_names_parts_with_triangles_kind_volume(meshed):
    text = meshed["stdout"]
    block = re.search(r"1\. block: (\d+) triangles, closed solid, volume ([0-9.e+-]+) mm\^3", text)
    assert block, text
    assert int(block.group(1)) == 12
    exact = float(np.prod(BOX_SIZE))  # a box's volume is the product of its sides
    assert float(block.group(2)) == pytest.approx(exact, rel=5e-4)   # 4 digits (issue 13)
    plate = re.search(r"2\. plate: (\d+) triangles, open sheet", text)
    assert plate and int(plate.group(1)) == 2, text
    assert "open surface" in text  # the sheet's note from the surface checks
    assert re.search(r"^grid: \d+ x \d+ x \d+ cells = [\d,]+, cell [0-9.]+ mm", text, re.M), text
    for label in ("time step:", "memory:", "run time: at most about", "written:"):
        assert label in text


def _grid_from_image(image):
    nx, ny, nz = image.dimensions
    ox, oy, oz = image.origin
    hx, hy, hz = image.spacing
    return (ox + hx * np.arange(nx), oy + hy * np.arange(ny), oz + hz * np.arange(nz))


def test_voxel_image_round_trips_and_counts_the_box(meshed):
    image = pv.read(meshed["out"] / "model.vti")
    assert list(image.field_data["part_names"]) == ["air", "block", "plate"]
    ids = np.asarray(image.cell_data["part_id"])
    x, y, z = _grid_from_image(image)
    h = x[1] - x[0]
    cell_mm = C0 / (F_MAX * math.sqrt(EPS_BOX) * CPW) * 1e3  # cell size rule of meshing.cell_size
    assert h * 1e3 == pytest.approx(cell_mm, rel=1e-12)
    # part coordinates in metres; the grid is centred on the union of the parts' boxes
    lo = BOX_LO * 1e-3
    hi = (BOX_LO + BOX_SIZE) * 1e-3
    counts = []
    for a, l, u in zip((x, y, z), lo, hi):
        centres = (a[:-1] + a[1:]) / 2
        assert np.min(np.abs(np.concatenate([centres - l, centres - u]))) > 1e-3 * h, "tie"
        counts.append(int(np.count_nonzero((centres > l) & (centres < u))))
    n_box = int(np.count_nonzero(ids == 1))
    assert n_box == counts[0] * counts[1] * counts[2]
    side = BOX_SIZE * 1e-3
    volume = float(np.prod(side))
    bound = float(np.prod(side + h) - volume)
    assert abs(n_box * h ** 3 - volume) <= bound
    # cells inside the box see eps_r 4 on all 12 edges; air cells see 1
    eps = np.asarray(image.cell_data["eps_r"])
    assert eps.max() == pytest.approx(EPS_BOX, rel=1e-6)
    assert np.all(eps[ids == 0] >= 1.0 - 1e-6)
    cond = np.asarray(image.cell_data["conductor"])
    assert np.array_equal(cond == 1, ids == 2)
    # the plate is one layer of cells whose count matches its outline, and its cells
    # away from the rim carry PEC edges (at the rim a cell the sheet only clips may
    # have fewer than two of its nodes on the sheet, so no PEC edge: model.py's rule)
    shape = tuple(len(a) - 1 for a in (x, y, z))
    plate = ids.reshape(shape, order="F") == 2
    layers = np.flatnonzero(plate.any(axis=(0, 1)))
    assert layers.size == 1
    inner = ndimage.binary_erosion(plate[:, :, layers[0]])
    assert inner.sum() > 0
    pec_cells = np.asarray(image.cell_data["pec_edges"]).reshape(shape, order="F")[:, :, layers[0]]
    assert np.all(pec_cells[inner] > 0)


def test_conductors_have_distinct_colours():
    """Touching metal parts (a can on its ground) must not merge in model.png."""
    class _P:
        def __init__(self, conductor):
            self.is_conductor = conductor
            self.part = type("part", (), {"material_name": "abs", "material": None})()

    class _M:
        parts = [_P(True) for _ in range(5)] + [_P(False)]

    colours = [c for c, _ in voxel_image.material_colours(_M())]
    assert len(set(colours[:5])) == 5 and colours[5] in voxel_image.DIELECTRIC_COLOURS
    assert voxel_image.PROBE_COLOUR not in colours


def test_preview_is_not_blank(meshed):
    rgba = mpimg.imread(meshed["out"] / "model.png")
    rgb = np.round(rgba[..., :3] * 255).astype(np.int64).reshape(-1, 3)
    background = np.all(rgb == 255, axis=1)
    assert 0.02 < 1 - background.mean() < 0.98
    bins = rgb // 16  # coarse bins so anti-aliasing shades do not count
    colours = np.unique(bins[:, 0] * 256 + bins[:, 1] * 16 + bins[:, 2])
    assert len(colours) >= 6


def test_resolved_case_loads_back_to_the_same_case(meshed):
    original = load_case(meshed["case"])
    again = load_case(meshed["out"] / "case.resolved.toml")
    assert again.digest() == original.digest()


def test_run_time_estimate_follows_its_basis(meshed):
    from ringprint.analysis.cmd_mesh import COURANT, run_time_estimate
    from ringprint.analysis.model import build_model
    from ringprint.fdtd import GaussianPulse

    model = build_model(load_case(meshed["case"]))
    est = run_time_estimate(model, throughput=1e7)
    h = model.grid.cell
    assert est["dt_s"] == pytest.approx(COURANT * h / (C0 * math.sqrt(3)), rel=1e-12)
    ringdown = 200.0 / (math.pi * F_MIN)  # default q_max 200: 1/e time Q / (pi f)
    assert est["ringdown_s"] == pytest.approx(ringdown, rel=1e-12)
    expected = math.ceil((GaussianPulse(F_MIN, F_MAX).t_end + ringdown) / est["dt_s"])
    assert est["steps"] == expected
    cells = np.prod([n - 1 for n in model.grid.shape])
    # fields are on by default: a second pass of the same length takes them
    assert est["passes"] == 2
    assert est["seconds"] == pytest.approx(2 * cells * expected / 1e7, rel=1e-12)
    assert f"{est['steps']:,} steps" in meshed["stdout"]


def test_graded_files_and_summary(meshed_graded):
    """On the default graded grid: model.vtr holds the grid's own node vectors; the
    summary gives the smallest and largest cell per axis and what forced the fine ones."""
    from ringprint.analysis.model import build_model

    assert meshed_graded["code"] == 0, meshed_graded["stderr"]
    out = meshed_graded["out"]
    assert sorted(p.name for p in out.iterdir()) == ["case.resolved.toml", "model.png", "model.vtr"]
    model = build_model(load_case(meshed_graded["case"]))
    grid = model.grid
    assert not grid.uniform
    image = pv.read(out / "model.vtr")
    assert isinstance(image, pv.RectilinearGrid)
    for got, want in zip((image.x, image.y, image.z), grid.axes):
        np.testing.assert_allclose(got, want, rtol=0, atol=1e-15)
    assert list(image.field_data["part_names"]) == ["air", "block", "plate"]
    text = meshed_graded["stdout"]
    line = re.search(r"^grid: .*graded, cells ([0-9.]+) to ([0-9.]+) mm \(x ([0-9.]+)\.\.([0-9.]+), ", text, re.M)
    assert line, text
    assert float(line.group(1)) == pytest.approx(grid.min_cell * 1e3, rel=1e-3)  # 4 digits printed
    assert float(line.group(2)) == pytest.approx(grid.max_cell * 1e3, rel=1e-3)
    assert float(line.group(3)) == pytest.approx(grid.spacing[0].min() * 1e3, rel=1e-3)
    # the block (eps_r 4) forces cells of c0 / (f_max sqrt(4) n) across it
    assert "fine cells forced by" in text and "wavelength in block along x" in text
    # the box's volume from the owned cells, cell by cell, stays within the staircase bound
    block = re.search(r"voxels ([0-9.e+-]+) mm\^3", text)
    h = grid.max_cell * 1e3
    assert abs(float(block.group(1)) - np.prod(BOX_SIZE)) <= np.prod(BOX_SIZE + h) - np.prod(BOX_SIZE)


def test_graded_run_time_uses_the_real_time_step_and_cells(meshed_graded):
    """dt from the smallest cell on each axis (Taflove & Hagness 2005, eq. 4.95) and the
    graded grid's own cell count."""
    from ringprint.analysis.cmd_mesh import COURANT, run_time_estimate
    from ringprint.analysis.model import build_model

    model = build_model(load_case(meshed_graded["case"]))
    est = run_time_estimate(model, throughput=1e7)
    d_min = [d.min() for d in model.grid.spacing]
    assert est["dt_s"] == pytest.approx(COURANT / (C0 * math.sqrt(sum(1 / d ** 2 for d in d_min))), rel=1e-12)
    assert est["dt_s"] < COURANT * model.grid.cell / (C0 * math.sqrt(3))  # finer than the air cell's
    assert est["cells"] == math.prod(len(a) - 1 for a in model.grid.axes)
    assert f"{est['steps']:,} steps" in meshed_graded["stdout"]


def test_run_time_estimate_uses_the_solver_s_own_time_step_with_conformal_metal(tmp_path):
    """A conducting box thick enough to be conformal: the estimate's step is the one the
    solver takes, Courant times the factor its cut faces need (ringprint.fdtd.conformal)."""
    from ringprint import fdtd
    from ringprint.analysis.cmd_mesh import run_time_estimate
    from ringprint.analysis.model import build_model
    from ringprint.meshing import primitives

    s = primitives.box((-7.3, -5.1, -3.7), (6.9, 5.3, 4.1))
    meshio.write(tmp_path / "can.stl", meshio.Mesh(s.vertices, [("triangle", s.faces)]))
    (tmp_path / "can.toml").write_text('units = "mm"\n[spectrum]\nf_min = "2 GHz"\n'
                                      'f_max = "6 GHz"\n[[part]]\nname = "can"\nfile = "can.stl"\n'
                                      'material = "pec"\n[grid]\ngraded = false\n')
    model = build_model(load_case(tmp_path / "can.toml"))
    est = run_time_estimate(model, throughput=1e7)
    media = model.media()
    assert media.conformal is not None and media.conformal.size > 0
    sim = fdtd.Simulation(model.fdtd_grid(), media, cpml_cells=model.grid.boundary_cells)
    assert est["step_factor"] == media.step_factor < 1.0
    assert est["dt_s"] == pytest.approx(sim.dt, rel=1e-12)


def test_tiny_min_feature_refused_for_memory(tmp_path, capsys, monkeypatch):
    """A 0.02 mm slit between two plates: the default min_feature (0.15 mm here) leaves
    it sub-cell; min_feature = 0.005 mm refines it, the estimate grows, and with the
    available memory set between the two estimates the run is refused in one line
    naming the key and the fix, and nothing is written."""
    from ringprint.analysis.model import build_model
    from ringprint.meshing import grid as grid_module

    pts, tri = box_mesh((0, 0, 0), (20, 20, 1))
    meshio.write_points_cells(tmp_path / "lower.stl", pts, [("triangle", tri)])
    pts, tri = box_mesh((0, 0, 1.02), (20, 20, 1))
    meshio.write_points_cells(tmp_path / "upper.stl", pts, [("triangle", tri)])
    needs = {}
    for name, extra in (("coarse", ""), ("fine", "min_feature = 0.005\n")):
        case = tmp_path / f"{name}.toml"
        case.write_text(f"""units = "mm"\n[spectrum]\nf_min = "2 GHz"\nf_max = "10 GHz"\n
[[part]]\nname = "lower"\nfile = "lower.stl"\nmaterial = "pec"\n
[[part]]\nname = "upper"\nfile = "upper.stl"\nmaterial = "pec"\n[grid]\n{extra}""")
        assert cli.main(["mesh", str(case), "--out", str(tmp_path / name)]) == 0
        text = capsys.readouterr().out
        needs[name] = build_model(load_case(case)).memory["total"]
        if name == "coarse":
            assert "thinner than min_feature" in text
    assert needs["fine"] > 1.1 * needs["coarse"]
    monkeypatch.setattr(grid_module, "available_memory", lambda: int((needs["fine"] + needs["coarse"]) / 2))
    out = tmp_path / "refused"
    assert cli.main(["mesh", str(tmp_path / "fine.toml"), "--out", str(out)]) == 1
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and "Traceback" not in err[0], err
    assert "min_feature" in err[0] and "GiB" in err[0] and str(tmp_path / "fine.toml") in err[0]
    assert not out.exists() or list(out.iterdir()) == []


def test_old_key_names_are_noted_among_the_warnings(tmp_path, capsys):
    """An old key name (absorber_cells, now cpml_cells; issue 13) still meshes, and the
    note says so once among the warnings."""
    case = write_small_case(tmp_path, grid="graded = false\nabsorber_cells = 8\n")
    assert cli.main(["mesh", str(case), "--out", str(tmp_path / "out")]) == 0
    text = capsys.readouterr().out
    assert text.count("case key 'absorber_cells' is now called 'cpml_cells'") == 1, text
    assert "absorbing layer 8 cells" in text


def test_default_out_dir_is_beside_the_case(tmp_path, capsys):
    case = write_small_case(tmp_path, extra="[analysis]\nq_max = 50\n")
    assert cli.main(["mesh", str(case)]) == 0
    out = tmp_path / "case_mesh"
    assert sorted(p.name for p in out.iterdir()) == ["case.resolved.toml", "model.png", "model.vti"]
    assert str(out / "model.vti") in capsys.readouterr().out


def test_demo_case_meshes(tmp_path, capsys):
    """The asset-tag demo meshes in a few seconds on this machine (~5 s measured)."""
    case = REPO / "cases" / "tag" / "case.toml"
    assert cli.main(["mesh", str(case), "--out", str(tmp_path / "tag")]) == 0
    text = capsys.readouterr().out
    for name in ("ground plane", "shield can", "coin-cell holder", "flex strip", "housing"):
        assert name in text
    (name,) = [p.name for p in (tmp_path / "tag").glob("model.vt?")]
    image = pv.read(tmp_path / "tag" / name)
    ids = np.asarray(image.cell_data["part_id"])
    assert set(np.unique(ids)) == {0, 1, 2, 3, 4, 5}  # every part owns cells
    # issue 13: 4-digit volumes, the large voxel/mesh difference explained, one unit (mm)
    # in every line, the loss tangent beside the conductivity it became
    assert "coin-cell holder: 408 triangles, closed solid, volume 1101 mm^3, voxels 1263 mm^3" in text
    assert "the voxel model holds 15 % more than the mesh volume" in text
    assert not re.search(r"\d m\b", text.split("written:")[0]), text
    assert "about 1.5 mm thick, thinner than one cell (1.82 mm)" in text
    assert "loss tangent 0.006 -> sigma 0.00169 S/m at 1.871 GHz" in text
    # model.png: every conductor its own colour, and the probe loop drawn (issue 13)
    rgb = np.round(mpimg.imread(tmp_path / "tag" / "model.png")[..., :3] * 255).astype(int)
    probe = np.array([int(voxel_image.PROBE_COLOUR[i:i + 2], 16) for i in (1, 3, 5)])
    assert (np.abs(rgb - probe).max(axis=-1) <= 24).sum() > 20
