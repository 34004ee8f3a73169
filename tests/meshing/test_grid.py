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
