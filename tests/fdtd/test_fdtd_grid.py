"""Grid conventions (DEVELOPERS.md) and the Courant time step."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.fdtd import C0, Grid, courant_time_step


def test_component_shapes_follow_the_contract():
    g = Grid(np.arange(5.0), np.arange(4.0), np.arange(3.0))
    assert g.shape == (5, 4, 3) and g.cells == 4 * 3 * 2
    assert g.component_shape("Ex") == (4, 4, 3)
    assert g.component_shape("Ey") == (5, 3, 3)
    assert g.component_shape("Ez") == (5, 4, 2)
    assert g.component_shape("Hx") == (5, 3, 2)
    assert g.component_shape("Hy") == (4, 4, 2)
    assert g.component_shape("Hz") == (4, 3, 3)
    xs, ys, zs = g.component_coords("Hz")
    assert np.allclose(xs, g.centres[0]) and np.allclose(ys, g.centres[1]) and np.allclose(zs, g.z)


def test_dual_spacing_of_a_graded_axis():
    x = np.array([0.0, 1.0, 3.0, 6.0])
    g = Grid(x, [0, 1], [0, 1])
    assert np.allclose(g.spacing[0], [1, 2, 3])
    assert np.allclose(g.dual_spacing[0], [0.5, 1.5, 2.5, 1.5])
    assert g.dual_spacing[0].sum() == pytest.approx(6.0)


@pytest.mark.parametrize("x, word", [([0, 1, 1, 2], "spacing 0"), ([0, 2, 1], "spacing -1"),
                                     ([0, np.nan, 1], "non-finite"), ([0], "at least 2")])
def test_bad_axes_are_refused(x, word):
    with pytest.raises(RingprintError, match=word) as info:
        Grid(x, [0, 1], [0, 1])
    assert "\n" not in str(info.value) and "axis x" in str(info.value)


def test_courant_step_is_the_yee_limit_times_s():
    """Taflove & Hagness (2005): dt <= 1 / (c sqrt(sum 1/d_i^2))."""
    g = Grid(np.linspace(0, 1e-2, 11), np.linspace(0, 2e-2, 11), [0, 0.5e-3, 1.5e-3])
    limit = 1 / (C0 * np.sqrt(1 / 1e-3 ** 2 + 1 / 2e-3 ** 2 + 1 / 0.5e-3 ** 2))
    assert courant_time_step(g) == pytest.approx(0.99 * limit, rel=1e-12)
    assert courant_time_step(g, 0.5) == pytest.approx(0.5 * limit, rel=1e-12)
    # a medium faster than light in vacuum shortens it
    assert courant_time_step(g, 0.5, eps_r_min=0.25) == pytest.approx(0.25 * limit, rel=1e-12)


@pytest.mark.parametrize("s", [1.0, 1.2, 0.0, -0.5, float("nan")])
def test_courant_factor_out_of_range(s):
    g = Grid.uniform((4, 4, 4), 1e-3)
    with pytest.raises(RingprintError, match="courant factor"):
        courant_time_step(g, s)
