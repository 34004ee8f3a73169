"""Per-edge media: compact index, coefficient table, refusals."""

from __future__ import annotations

import numpy as np
import pytest

from ringprint.errors import RingprintError
from ringprint.fdtd import EPS0, Grid, Media
from ringprint.fdtd.media import QUANTIZE_RESOLUTION


@pytest.fixture
def grid():
    return Grid.uniform((6, 5, 4), 1e-3)


def test_scalars_give_one_entry_and_uint8(grid):
    m = Media(grid, eps_r=2.5, sigma=0.1)
    assert all(v.dtype == np.uint8 and v.shape == grid.component_shape(c)
               for v, c in zip(m.index, ("Ex", "Ey", "Ez")))
    assert all(np.all(v == 1) for v in m.index)
    assert m.eps_r_table[1] == 2.5 and m.sigma_table[1] == 0.1


def test_semi_implicit_coefficients_and_pec_entry(grid):
    """Taflove & Hagness (2005) sec. 3.7: ca = (1 - s dt/2e)/(1 + s dt/2e), cb = (dt/e)/(1 + s dt/2e)."""
    ex = np.full(grid.component_shape("Ex"), 4.0)
    pec = np.zeros(grid.component_shape("Ex"), bool)
    pec[0, 0, 0] = True
    m = Media(grid, eps_r=(ex, 1.0, 1.0), sigma=(0.5, 0.0, 0.0), pec=(pec, False, False))
    assert m.index[0][0, 0, 0] == 0
    dt = 1e-12
    ca, cb = m.coefficients(dt)
    assert ca[0] == 0 and cb[0] == 0
    i = m.index[0][1, 1, 1]
    eps, s = 4.0 * EPS0, 0.5
    assert ca[i] == pytest.approx((1 - s * dt / (2 * eps)) / (1 + s * dt / (2 * eps)), rel=1e-14)
    assert cb[i] == pytest.approx((dt / eps) / (1 + s * dt / (2 * eps)), rel=1e-14)
    assert m.eps_r_max == 4.0 and m.eps_r_min == 1.0


def test_many_values_switch_to_uint16():
    grid = Grid.uniform((10, 8, 6), 1e-3)  # 630 Ex edges: more entries than uint8 holds
    ex = 1.0 + np.arange(np.prod(grid.component_shape("Ex"))).reshape(grid.component_shape("Ex"))
    m = Media(grid, eps_r=(ex, 1.0, 1.0))
    assert m.index[0].dtype == np.uint16 and not m.quantized
    assert np.allclose(m.eps_r_table[m.index[0]], ex)


def test_continuous_values_are_quantized_beyond_uint16():
    g = Grid.uniform((50, 40, 40), 1e-3)
    rng = np.random.default_rng(1)
    ex = 1.0 + 3.0 * rng.random(g.component_shape("Ex"))
    m = Media(g, eps_r=(ex, 1.0, 1.0))
    assert m.quantized and m.index[0].dtype == np.uint16
    err = np.abs(m.eps_r_table[m.index[0]] / ex - 1)
    assert err.max() <= QUANTIZE_RESOLUTION / 2 * 1.001


@pytest.mark.parametrize("eps", [0.0, -2.0, np.inf])
def test_non_positive_permittivity_refused(grid, eps):
    with pytest.raises(RingprintError, match="eps_r for Ex") as info:
        Media(grid, eps_r=eps)
    assert f"{float(eps):g}" in str(info.value)


def test_negative_conductivity_and_bad_shape_refused(grid):
    with pytest.raises(RingprintError, match="sigma"):
        Media(grid, sigma=-1.0)
    with pytest.raises(RingprintError, match="shape"):
        Media(grid, eps_r=(np.ones((2, 2, 2)), 1.0, 1.0))
