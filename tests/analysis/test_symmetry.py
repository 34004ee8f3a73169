"""Mirror planes ([grid] symmetry): the case key, the half-domain grid, the symmetry check,
the probe's image and the unfolding of mode fields.

The physics check against the outside world (a dielectric sphere's Mie poles with and
without mirrors, each mode in the class its field symmetry predicts) is
``tests/validation/test_e2e_symmetry_sphere.py``.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

from ringprint.analysis import placement
from ringprint.analysis._case_symmetry import class_label, wall_classes
from ringprint.analysis.case import load_case
from ringprint.analysis.model import build_model
from ringprint.analysis.symmetry_fields import _signs, unfold
from ringprint.errors import RingprintError
from ringprint.meshing import primitives

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "validation"))
import _e2e  # noqa: E402

SPECTRUM = {"f_min": "2 GHz", "f_max": "6 GHz"}


def _case(tmp_path, parts, symmetry=None, probe=None, name="c"):
    """Boxes (lo, hi in mm) of a dielectric, a uniform grid, the given symmetry table."""
    rows = []
    for label, lo, hi in parts:
        _e2e.write_stl(tmp_path / f"{label}.stl", primitives.box(lo, hi))
        rows.append((label, f"{label}.stl", "{ eps_r = 4.0 }"))
    grid = {"cells_per_wavelength": 10, "padding": 6.0}
    if symmetry:
        grid["symmetry"] = symmetry
    return _e2e.write_case(tmp_path, name, rows, SPECTRUM, grid=grid, probe=probe)


BLOCK = [("block", (-8, -5, -3), (8, 5, 3))]


def test_symmetric_case_solves_half_the_cells_of_the_same_whole_grid(tmp_path):
    """One plane halves the solved cells exactly; the whole grid it stands for is the
    grid of the same case without mirrors (uniform grids: the same nodes)."""
    plain = build_model(load_case(_case(tmp_path, BLOCK, name="plain")))
    mirrored = build_model(load_case(_case(tmp_path, BLOCK, '{ x = "pec" }', name="half")))
    quarter = build_model(load_case(_case(tmp_path, BLOCK, '{ x = "pmc", z = "both" }', name="quarter")))
    for a in range(3):
        np.testing.assert_allclose(mirrored.grid.axes[a], plain.grid.axes[a], atol=1e-12)
    cells = lambda g: int(np.prod(np.subtract(g.shape, 1)))  # noqa: E731
    assert plain.half is None and cells(mirrored.grid) == cells(plain.grid)
    assert 2 * cells(mirrored.half.grid) == cells(plain.grid)
    assert 4 * cells(quarter.half.grid) == cells(plain.grid)
    assert mirrored.half.grid.x[0] == 0.0           # the plane is the first node plane
    assert mirrored.half.eps_r[0].shape == (mirrored.half.grid.x.size - 1,) + plain.eps_r[0].shape[1:]
    assert quarter.walls == {"x": "pmc", "z": "pec"}


def test_graded_grid_puts_a_node_plane_on_the_mirror(tmp_path):
    """On a graded grid too the plane is a node plane and the solved part starts there."""
    path = _case(tmp_path, [("block", (-7, -5, -3), (9, 5, 3))], '{ y = "pmc" }')
    text = path.read_text().replace("graded = false", "graded = true")
    path.write_text(text)
    model = build_model(load_case(path))
    assert model.half.grid.y[0] == pytest.approx(0.0, abs=1e-15)
    np.testing.assert_allclose(model.grid.y, -model.grid.y[::-1], atol=1e-12)   # whole = mirror image
    assert model.grid.y.size == 2 * model.half.grid.y.size - 1


def test_wall_classes_are_every_combination():
    assert wall_classes((("x", "pec"),)) == [{"x": "pec"}]
    assert wall_classes((("x", "both"), ("y", "pmc"))) == [{"x": "pec", "y": "pmc"}, {"x": "pmc", "y": "pmc"}]
    assert wall_classes(()) == [{}]
    assert class_label({"y": "pmc", "x": "pec"}) == "x:pec, y:pmc"


@pytest.mark.parametrize("value, words", [
    ('x:pec', "expected a table"),
    ('{ x = "mirror" }', "'mirror' is not one of 'pec', 'pmc', 'both'"),
    ('{ w = "pec" }', "unknown key"),
    ("{}", "the table is empty"),
])
def test_bad_symmetry_values_give_one_line_errors(tmp_path, value, words):
    with pytest.raises(RingprintError) as err:
        load_case(_case(tmp_path, BLOCK, value))
    msg = str(err.value)
    assert words in msg and "symmetry" in msg and "\n" not in msg, msg


def test_asymmetric_part_is_refused_naming_it(tmp_path):
    """Two tabs either side of a block; the left one is taller, so the assembly's box is
    symmetric about x = 0 but the tabs are not each other's mirror image."""
    parts = BLOCK + [("tab_right", (8, -2, -1), (12, 2, 1)), ("tab_left", (-12, -4, -2), (-8, 4, 2))]
    with pytest.raises(RingprintError) as err:
        build_model(load_case(_case(tmp_path, parts, '{ x = "pec" }')))
    msg = str(err.value)
    assert "'tab_right' is not mirror-symmetric about the plane x = 0 mm" in msg and "\n" not in msg, msg
    # the same tabs mirror each other about y = 0 (both centred there): accepted
    assert build_model(load_case(_case(tmp_path, parts, '{ y = "pec" }', name="ok"))).half is not None


def test_asymmetric_shape_inside_a_symmetric_box_is_refused(tmp_path):
    """A wedge-like pair (thick on one side) whose boxes mirror each other is caught by
    the voxel comparison, not by the boxes."""
    parts = [("left", (-10, -5, -3), (0, 5, 3)), ("right", (0, -5, -3), (10, 5, 1))]
    with pytest.raises(RingprintError) as err:
        build_model(load_case(_case(tmp_path, parts, '{ x = "pmc" }')))
    assert "is not mirror-symmetric about the plane x = 0 mm" in str(err.value)


def test_plane_through_nothing_is_refused(tmp_path):
    """A flat sheet has no extent along z: a z plane would cut through nothing."""
    _e2e.write_stl(tmp_path / "sheet.stl", primitives.plate((-10, -5), (10, 5), 0.0))
    path = _e2e.write_case(tmp_path, "sheet", [("sheet", "sheet.stl", "pec")], SPECTRUM,
                           grid={"cells_per_wavelength": 10, "padding": 6.0, "symmetry": '{ z = "pec" }'})
    with pytest.raises(RingprintError) as err:
        build_model(load_case(path))
    assert "cuts through nothing" in str(err.value) and "z" in str(err.value)


def test_probe_below_the_plane_moves_to_its_image_and_must_clear_the_plane(tmp_path):
    model = build_model(load_case(_case(tmp_path, BLOCK, '{ x = "pec" }',
                                        probe={"at": [-11.0, 1.0, 0.5], "normal": "z", "size": 2.5})))
    probe = placement.place_probe(model)
    assert probe.center[0] == pytest.approx(0.011) and probe.center[1] == pytest.approx(0.001)
    for comp, point in placement.pickup_points(model):
        assert point[0] >= 0.0, (comp, point)
    touching = build_model(load_case(_case(tmp_path, BLOCK, '{ y = "pec" }', name="touch",
                                           probe={"at": [11.0, 0.0, 0.5], "normal": "z", "size": 2.5})))
    with pytest.raises(RingprintError, match="touches the mirror plane y = 0 mm"):
        placement.place_probe(touching)


@pytest.mark.parametrize("wall", ["pec", "pmc"])
def test_unfold_follows_image_theory(wall):
    """Image theory (Harrington 1961, sec. 3-6): across a PEC wall tangential E and
    normal H are odd, normal E and tangential H even; across a PMC wall the reverse.
    A field built with that parity on a symmetric lattice is rebuilt from its upper
    half, its odd components zero on the plane."""
    x = np.arange(-3, 4) * 0.1
    base = np.cos(x)[None, :, None, None] * np.ones((3, 7, 2, 2))
    se, sh = _signs(0, wall)
    tangential_e_odd = wall == "pec"
    assert (se[1] < 0) == tangential_e_odd and (se[0] > 0) == tangential_e_odd
    assert np.all(sh == -se)
    full = base * np.where(se[:, None] > 0, 1.0, np.sign(x)[None, :])[:, :, None, None]
    rebuilt = unfold(full[:, 4:], 0, se)
    expect = full.copy()
    expect[se > 0, 3] = full[se > 0, 4]          # even components: the neighbouring plane
    np.testing.assert_allclose(rebuilt, expect)
    assert np.all(rebuilt[se < 0, 3] == 0)


def test_symmetry_round_trips_through_the_resolved_case_and_changes_the_digest(tmp_path):
    plain = load_case(_case(tmp_path, BLOCK, name="plain"))
    case = load_case(_case(tmp_path, BLOCK, '{ z = "both", x = "pec" }', name="sym"))
    assert case.grid.symmetry == (("x", "pec"), ("z", "both"))
    again = tmp_path / "again.toml"
    again.write_text(case.resolved_toml())
    assert load_case(again).grid.symmetry == case.grid.symmetry
    assert "symmetry" not in plain.resolved()["grid"]
    assert case.digest() != load_case(_case(tmp_path, BLOCK, '{ x = "pec" }', name="x")).digest()


def test_mesh_summary_shows_the_planes_and_the_cells_solved(tmp_path):
    """``ringprint mesh``: the planes, the solved cells against the whole model's, one run
    per wall combination, and a run-time estimate on the solved cells times the runs."""
    from ringprint.analysis.cmd_mesh import run_time_estimate
    from ringprint.analysis.symmetry import mesh_rows

    plain = build_model(load_case(_case(tmp_path, BLOCK, name="plain")))
    model = build_model(load_case(_case(tmp_path, BLOCK, '{ x = "both", y = "pec" }')))
    est, whole = run_time_estimate(model), run_time_estimate(plain)
    assert est["cells_whole"] == whole["cells"] == 4 * est["cells"] and est["runs"] == 2
    assert est["dt_s"] == pytest.approx(whole["dt_s"]) and est["seconds"] == pytest.approx(whole["seconds"] / 2)
    (row,) = mesh_rows(model, est)
    assert row.startswith("mirror planes: x = 0 mm (both), y = 0 mm (pec); the solver runs ") and \
        f"= {est['cells']:,} of the whole model's {whole['cells']:,} (0.25 of them), 2 runs" in row, row


def test_report_column_names_each_modes_walls():
    from ringprint.analysis.symmetry import wall_column

    header, rows, numeric = ["mode"], [[1], [2]], [True]
    wall_column(header, rows, numeric, [{"symmetry_class": "x:pec"}, {"symmetry_class": "x:pmc"}])
    assert header == ["mode", "mirror walls"] and rows == [[1, "x:pec"], [2, "x:pmc"]] and numeric == [True, False]
    header, rows = ["mode"], [[1]]
    wall_column(header, rows, [True], [{"index": 1}])      # no mirrors: no column
    assert header == ["mode"] and rows == [[1]]
