"""Probe size and local cell on graded grids (ringprint.analysis.placement) and the probe
side the field files record (ringprint.analysis.mode_fields.loop_side_m), on hand-made
air-only models whose answers follow from the node coordinates."""

from types import SimpleNamespace

import numpy as np
import pytest

from _graded import graded_nodes, mirrored
from ringprint.analysis import placement
from ringprint.analysis.mode_fields import loop_side_m

CELL = 1e-3


def _model(x, y, z, probe=None):
    """An all-air model on the node vectors, 10 absorber cells, nominal cell CELL."""
    grid = SimpleNamespace(x=x, y=y, z=z, axes=(x, y, z), shape=(x.size, y.size, z.size),
                           cell=CELL, padding=5e-3, boundary_cells=10)
    shapes = [(x.size - 1, y.size, z.size), (x.size, y.size - 1, z.size), (x.size, y.size, z.size - 1)]
    case = SimpleNamespace(probe=probe, unit_m=1e-3, units="mm", source="case.toml")
    return SimpleNamespace(grid=grid, axes=(x, y, z), case=case,
                           eps_r=[np.ones(s) for s in shapes], sigma=[np.zeros(s) for s in shapes],
                           pec=[np.zeros(s, bool) for s in shapes])


def _graded_axis():
    """0.25 mm cells within 2 mm of the centre, graded by 1.25 to the nominal 1 mm."""
    return mirrored(graded_nodes(0.25e-3, CELL, 1.25, 8, until=30e-3))


def test_local_cell_is_the_nominal_one_on_a_uniform_grid():
    u = CELL * np.arange(-30, 31)
    model = _model(u, u.copy(), u.copy())
    assert list(placement.local_steps(model, (0.3e-3, -7e-3, 12e-3))) == [CELL] * 3
    assert placement.local_step(model, (0.0, 0.0, 0.0)) == CELL


def test_local_cell_on_a_graded_grid_is_the_mean_of_the_two_cells_at_the_node():
    g = _graded_axis()
    u = CELL * np.arange(-30, 31)
    model = _model(g, u, g.copy())
    steps = placement.local_steps(model, (0.1e-3, 3.2e-3, 26e-3))
    i = int(np.argmin(abs(g - 0.1e-3)))
    k = int(np.argmin(abs(g - 26e-3)))
    assert steps[0] == pytest.approx(0.5 * (g[i + 1] - g[i - 1]), rel=1e-12) == pytest.approx(0.25e-3)
    assert steps[1] == CELL                                    # a uniform axis of nominal cells
    assert steps[2] == pytest.approx(0.5 * (g[k + 1] - g[k - 1]), rel=1e-12) == pytest.approx(CELL)
    assert placement.local_step(model, (0.1e-3, 3.2e-3, 26e-3)) == pytest.approx(0.25e-3)


def test_case_probe_size_counts_the_local_cells():
    """A 1 mm loop (normal z) where the in-plane cells are 0.25 mm is four cells wide; the
    side recorded for the field files is the loop's real side, the sum of its edge
    lengths over four (here 4 x 0.25 mm)."""
    g = _graded_axis()
    probe = SimpleNamespace(at_m=(0.0, 0.0, 0.0), normal="z", size_m=1e-3)
    model = _model(g, g.copy(), g.copy(), probe)
    placed = placement.place_probe(model)
    assert placed.size_cells == 4 and placed.chosen == "case"
    assert loop_side_m(model.grid, placed) == pytest.approx(1e-3, rel=1e-12)
    # the same loop on the uniform nominal grid: one cell
    u = CELL * np.arange(-30, 31)
    placed = placement.place_probe(_model(u, u.copy(), u.copy(), probe))
    assert placed.size_cells == 1


def test_loop_side_follows_unequal_cells():
    """Where the loop's cells differ (it straddles the grading), its recorded side is the
    mean of its two sides, measured on the node coordinates."""
    g = _graded_axis()
    model = _model(g, g.copy(), g.copy())
    at = (2.6e-3, 2.6e-3, 0.0)
    loop = placement.ProbePlacement(at, "z", 3, "case")
    side = loop_side_m(model.grid, loop)
    i = int(np.argmin(abs(0.5 * (g[:-3] + g[3:]) - at[0])))   # the loop's first cell along x
    assert side == pytest.approx(g[i + 3] - g[i], rel=1e-12)
    assert side > 3 * 0.25e-3 * 1.2                            # not 3 fine cells
