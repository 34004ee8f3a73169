"""Grid planning, thin-part warning, memory estimate and refusal."""

import math

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.meshing import (MeshingWarning, cell_size, check_memory, memory_estimate, plan_grid,
                               prepare_surface, thickness, warn_thin_parts)
from ringprint.meshing.primitives import box, sphere

C0 = 299_792_458.0


def test_cell_size_from_wavelength_in_densest_material():
    # lambda = c0 / (f sqrt(eps_r)) = 0.025 m at 6 GHz in eps_r 4; 20 cells per wavelength
    assert cell_size(6e9, 4.0, 20) == pytest.approx(C0 / 6e9 / 2 / 20)


def test_plan_grid_covers_parts_padding_and_boundary():
    a, b = box((0, 0, 0), (0.03, 0.01, 0.002)), box((0.01, -0.02, 0), (0.02, 0, 0.005))
    g = plan_grid([a.bounds, b.bounds], f_max=6e9, eps_r_max=4.0, boundary_cells=10)
    h = g.cell
    assert np.allclose(np.diff(g.x), h) and np.allclose(np.diff(g.z), h)
    # default padding: lambda/(2 pi) with lambda = 2 x largest dimension (0.03 m)
    assert g.padding == pytest.approx(0.06 / (2 * math.pi))
    lo, hi = np.array([0, -0.02, 0]), np.array([0.03, 0.01, 0.005])
    for d, ax in enumerate(g.axes):
        assert ax[10] <= lo[d] - g.padding + 1e-12 and ax[-11] >= hi[d] + g.padding - 1e-12
        assert ax[10] > lo[d] - g.padding - h  # not more than one extra cell


def test_plan_grid_explicit_padding_and_fmin():
    s = box((0, 0, 0), (0.01, 0.01, 0.01))
    g = plan_grid(s.bounds, f_max=3e9, padding=0.0, boundary_cells=0)
    assert g.x[0] <= 0 and g.x[-1] >= 0.01 and g.x.size <= 0.01 / g.cell + 3
    g2 = plan_grid(s.bounds, f_max=3e9, f_min=1e9)
    assert g2.padding == pytest.approx(C0 / 1e9 / (2 * math.pi))


@pytest.mark.parametrize("kw,match", [({"f_max": -1}, "f_max"), ({"f_max": 1e9, "eps_r_max": 0.5}, "eps_r_max"),
                                      ({"f_max": 1e9, "boundary_cells": -2}, "boundary_cells"),
                                      ({"f_max": 1e9, "padding": -1.0}, "padding")])
def test_plan_grid_bad_input(kw, match):
    with pytest.raises(RingprintError, match=match):
        plan_grid(box((0, 0, 0), (1, 1, 1)).bounds, **kw)


def test_thickness_of_plate_and_sphere():
    """A 0.2 mm plate reads 0.2 mm (tilted: within sqrt(3), see thickness());
    a sphere's median chord is of the order of its diameter."""
    from ringprint.meshing import transform_surface

    p = prepare_surface(box((0, 0, 0), (0.01, 0.01, 0.0002)))
    assert thickness(p, 0.0005) == pytest.approx(0.0002, rel=1e-6)
    tilted = prepare_surface(transform_surface(p, rotate=[("x", 30), ("y", 20)]))
    assert 0.0002 <= thickness(tilted, 0.0005) <= 0.0002 * math.sqrt(3)
    s = prepare_surface(sphere(0.005))
    assert 0.005 < thickness(s, 0.0005) <= 0.01


def test_thin_part_warning_names_part():
    thin = prepare_surface(box((0, 0, 0), (0.01, 0.01, 0.0002), name="shield lid"))
    thick = prepare_surface(box((0, 0, 0), (0.01, 0.01, 0.01), name="battery"))
    with pytest.warns(MeshingWarning, match="shield lid"):
        out = warn_thin_parts([thin, thick], cell=0.001)
    assert set(out) == {"shield lid"}


def test_memory_estimate_and_refusal():
    x = y = z = np.arange(101) * 1e-3
    est = memory_estimate(x, y, z, boundary_cells=10, subrays=3, part_boxes=[(50, 50, 50)])
    assert est["fields"] == 6 * 4 * 100**3
    assert est["media"] == 3 * 100 * 101 * 101
    assert est["voxelize"] == 3 * 50**3 * (4 * 9 + 1)
    assert est["total"] == sum(v for k, v in est.items() if k != "total")
    with pytest.raises(RingprintError, match=r"needs .* GiB .* available"):
        check_memory(est, available=1000)
    assert check_memory(est, available=1000, allow=True) == est["total"]
    assert check_memory(est) == est["total"]  # this small run fits in any test machine


def test_grid_properties_uniform_and_graded():
    """spacing/min_cell/max_cell/uniform/local_cell from the node vectors themselves."""
    s = prepare_surface(box((0, 0, 0), (0.01, 0.01, 0.001)))
    g = plan_grid(s.bounds, f_max=6e9, boundary_cells=4)
    assert g.uniform and g.refinements == ()
    assert g.min_cell == pytest.approx(g.cell, rel=1e-9) and g.max_cell == pytest.approx(g.cell, rel=1e-9)
    assert all(np.array_equal(d, np.diff(a)) for d, a in zip(g.spacing, g.axes))
    assert g.local_cell(*s.bounds) == g.cell
    # the same part planned graded: a 1 mm plate at 6 GHz (air cell 2.5 mm) needs two
    # cells of 0.5 mm across it along z (WALL_CELLS), so the cell it sees is 0.5 mm
    gg = plan_grid(None, f_max=6e9, boundary_cells=4, surfaces=[s], eps_r=[1.0])
    assert not gg.uniform
    assert gg.cell == pytest.approx(C0 / 6e9 / 20, rel=1e-12)
    assert gg.max_cell == pytest.approx(gg.cell, rel=1e-9)
    assert gg.min_cell == pytest.approx(0.0005, rel=1e-9)
    assert gg.local_cell(*s.bounds) == pytest.approx(0.0005, rel=1e-9)
    assert [r.kind for r in gg.refinements if r.axis == "z"] == ["wall"]


def test_graded_false_and_no_surfaces_are_the_uniform_grid():
    s = prepare_surface(box((0, 0, 0), (0.01, 0.01, 0.001)))
    ref = plan_grid(s.bounds, f_max=6e9, eps_r_max=4.0)
    for g in (plan_grid(s.bounds, f_max=6e9, eps_r_max=4.0, surfaces=[s], graded=False),
              plan_grid(s.bounds, f_max=6e9, eps_r_max=4.0, surfaces=None)):
        assert all(np.array_equal(a, b) for a, b in zip(g.axes, ref.axes)) and g.uniform


def test_graded_dielectric_uses_its_own_permittivity():
    """Across a dielectric block (eps_r 4) the spacing is at most c0/(f sqrt(4) n);
    the air beside it keeps the air cell c0/(f n) (Taflove & Hagness 2005, sec. 4.6)."""
    s = prepare_surface(box((0, 0, 0), (0.03, 0.03, 0.03)))
    g = plan_grid(None, f_max=6e9, surfaces=[s], eps_r=[4.0], boundary_cells=4)
    inside = C0 / (6e9 * 2 * 20)
    for a, d in zip(g.axes, g.spacing):
        centre = (a[:-1] + a[1:]) / 2
        within = (centre > 0) & (centre < 0.03)
        assert d[within].max() <= inside * (1 + 1e-9)
        assert d.max() == pytest.approx(2 * inside, rel=1e-9)
    # the block's faces are nodes
    for a in g.axes:
        assert np.min(np.abs(a - 0.0)) < 1e-15 and np.min(np.abs(a - 0.03)) < 1e-15


@pytest.mark.parametrize("kw,match", [({"eps_r": [0.5]}, "eps_r"), ({"eps_r": [1, 2]}, "one of each"),
                                      ({"min_feature": 0.0}, "min_feature"),
                                      ({"min_feature": float("nan")}, "min_feature")])
def test_plan_grid_graded_bad_input(kw, match):
    s = prepare_surface(box((0, 0, 0), (0.01, 0.01, 0.001)))
    with pytest.raises(RingprintError, match=match):
        plan_grid(None, f_max=6e9, surfaces=[s], **kw)


def test_memory_refusal_names_min_feature_on_graded_grids():
    est = memory_estimate(*(np.arange(11) * 1e-3,) * 3)
    with pytest.raises(RingprintError, match=r"raise \[grid\] min_feature"):
        check_memory(est, available=10, graded=True)
    with pytest.raises(RingprintError) as info:
        check_memory(est, available=10)
    assert "min_feature" not in str(info.value)
