"""Pickup stencils: nearest sample and trilinear interpolation."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.fdtd import FieldPickup, Grid


def _value(grid, comp, stencil_entry, field):
    _c, idx, w = stencil_entry
    return float(np.sum(field.reshape(-1)[idx] * w))


def test_trilinear_is_exact_for_a_linear_field():
    g = Grid(np.array([0, 1, 3, 4.0]) * 1e-3, np.linspace(0, 4e-3, 5), np.linspace(0, 3e-3, 4))
    comp = "Hy"
    xs, ys, zs = g.component_coords(comp)
    X, Y, Z = np.meshgrid(xs, ys, zs, indexing="ij")
    field = 2.0 + 3e3 * X - 1e3 * Y + 5e3 * Z
    p = (1.7e-3, 2.2e-3, 1.1e-3)
    st = FieldPickup(comp, p, "trilinear").stencil(g)[0]
    assert _value(g, comp, st, field) == pytest.approx(2.0 + 3e3 * p[0] - 1e3 * p[1] + 5e3 * p[2])
    assert np.sum(st[2]) == pytest.approx(1.0)


def test_nearest_takes_the_closest_sample():
    g = Grid.uniform((4, 4, 4), 1e-3)
    st = FieldPickup("Ez", (1.1e-3, 2.9e-3, 0.4e-3)).stencil(g)[0]
    assert np.unravel_index(st[1][0], g.component_shape("Ez")) == (1, 3, 0)


def test_unknown_component_refused():
    g = Grid.uniform((4, 4, 4), 1e-3)
    with pytest.raises(RingprintError, match="Ew"):
        FieldPickup("Ew", (0, 0, 0)).stencil(g)
