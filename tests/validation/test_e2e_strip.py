"""``ringprint run`` on a thin straight conductor (a flat strip) against thin-wire theory.

Reference: a ring-down measures the strip's free oscillation, its lowest natural
frequency: the complex zero of Hallen's equation without source (Hallen 1938; natural
frequencies of thin wires: Tesche, IEEE Trans. Antennas Propag. 21(1):53-62, 1973),
computed by ``_references.thin_wire_pole`` and checked in test_references.py. A flat
strip of width w acts as a wire of radius w / 4 (Balanis, C. A., *Antenna Theory*, 3rd
ed., Wiley, 2005, sec. 9.3.5, equivalent radii; from memory). Strip: L = 62 mm,
w = 4.6 mm: 2.0694 GHz, Q 4.05 (c / 2L = 2.4177 GHz).

This check used to compare with the zero of the induced-EMF reactance of a centre-fed
dipole (Balanis 2005 sec. 8.5), 2.2239 GHz, and marked the 6 % shortfall as a solver
defect. The reactance zero is a driven resonance, not the pole: for L/a = 54 the
free oscillation rings 6.9 % lower (the two agree only as the wire gets thin; see
test_references.py). Against the pole the run agrees to about 1 %.

Setup: spectrum 1.5-3.2 GHz, 2 mm cells (31 along the strip), default padding,
q_max 20, automatic probe. The conductor is a zero-thickness sheet, staircased
through grid nodes (:mod:`ringprint.analysis.model`): the grid holds the nodes
inside the strip, 60 x 4 mm here, so the grid strip is up to one cell shorter and
narrower than the drawn one.

Tolerance: the run must lie between the pole of the drawn strip and that of the grid
strip (nodes inside the drawn one; computed in the test from the planned grid), each
widened by 2 % in frequency for the reference: the reduced-kernel Hallen solution
drifts 0.7 % per halving of its segments and sits 1.7 % below Tesche's recalled
value (test_references.py); the w/4 equivalence is taken as exact. Q is widened by
10 %: the 2 % above plus 8 %, the Q error of the same staircase on the perfectly
conducting sphere at 20 cells across (test_e2e_pec_sphere.py, measured +7.6 %).

Measured: 2.0896 GHz, +0.98 % from the drawn strip's pole, -2.9 % from the grid
strip's (2.1530 GHz); Q 3.8 against 4.05 and 4.17. A bare solver run (no case, no
meshing) of a straight wire of 24 PEC edges (60 mm) tells the same: against the pole
of a wire of the staircase wire's equivalent radius 0.135 h (from memory) it rings
4.3 % low with 2.5 mm cells and 2.6 % low with 1.25 mm cells (earlier runs, against
the pole computed now): an error falling like the cell, the wire behaving as if about
0.6 cells longer at each end.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.constants import c as C0

from ringprint.meshing import primitives

try:  # works both as a rootdir-relative module and inside a tests package
    from . import _e2e
    from . import _references as ref
except ImportError:
    import _e2e
    import _references as ref

pytestmark = pytest.mark.slow

LENGTH_MM, WIDTH_MM = 62.0, 4.6
CELL_MM = 2.0
F_MAX = 3.2e9


def _nodes_inside(origin, step, count, lo, hi):
    """Grid node coordinates of one axis that fall inside [lo, hi] (m)."""
    nodes = origin + step * np.arange(count)
    return nodes[(nodes >= lo - 1e-12) & (nodes <= hi + 1e-12)]


def _grid_strip(run):
    """Length and width (m) of the strip the grid holds: the nodes inside the drawn one."""
    g = run["grid"]
    half = (LENGTH_MM * 5e-4, WIDTH_MM * 5e-4)
    extent = []
    for axis, h in enumerate(half):
        nodes = _nodes_inside(g["origin_m"][axis], g["step_min_m"], g["nodes"][axis], -h, h)
        extent.append(nodes[-1] - nodes[0])
    return tuple(extent)


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("strip")
    sheet = primitives.plate((-LENGTH_MM / 2, -WIDTH_MM / 2), (LENGTH_MM / 2, WIDTH_MM / 2), 0.0)
    _e2e.write_stl(folder / "strip.stl", sheet)
    case = _e2e.write_case(folder, "strip", [("strip", "strip.stl", "pec")],
                           {"f_min": "1.5 GHz", "f_max": f"{F_MAX / 1e9} GHz"},
                           grid={"cells_per_wavelength": C0 / (F_MAX * CELL_MM * 1e-3)},
                           analysis={"q_max": 20})
    return _e2e.run(case)


@pytest.fixture(scope="module")
def poles(run):
    """Natural frequencies (Hallen 1938) of the drawn strip and of the strip the grid holds."""
    length, width = _grid_strip(run)
    return (ref.thin_wire_pole(LENGTH_MM * 1e-3, WIDTH_MM * 1e-3 / 4),
            ref.thin_wire_pole(length, width / 4))


def test_grid_is_as_planned(run):
    """2 mm cells; the grid strip is one cell shorter and narrower than the drawn one (the
    node rule of ringprint.analysis.model), as the docstring states."""
    assert run["grid"]["step_min_m"] == pytest.approx(CELL_MM * 1e-3, rel=1e-9)
    length, width = _grid_strip(run)
    tol = 1e-9   # node coordinates carry rounding of order 1e-16 m
    assert LENGTH_MM * 1e-3 - CELL_MM * 1e-3 - tol <= length < LENGTH_MM * 1e-3
    assert WIDTH_MM * 1e-3 - CELL_MM * 1e-3 - tol <= width < WIDTH_MM * 1e-3


def test_first_resonance_between_the_poles_of_the_drawn_and_the_grid_strip(run, poles):
    """Frequency of the first mode between the Hallen poles (Tesche 1973) of the drawn strip
    and of the grid strip, each widened by 2 % (module docstring)."""
    drawn, held = poles
    mode = _e2e.nearest_mode(run, drawn.real)
    assert 0.98 * drawn.real < mode["frequency_hz"] < 1.02 * held.real, (drawn, held, _e2e.describe(run))


def test_first_resonance_q_between_the_poles_of_the_drawn_and_the_grid_strip(run, poles):
    """Q of the first mode between the Q of the two Hallen poles (Tesche 1973), widened by
    10 % (2 % reference, 8 % staircase; module docstring)."""
    drawn, held = poles
    mode = _e2e.nearest_mode(run, drawn.real)
    lo, hi = sorted((ref.pole_q(drawn), ref.pole_q(held)))
    assert 0.90 * lo < mode["q"] < 1.10 * hi, (lo, hi, _e2e.describe(run))


def test_every_mode_respects_the_chu_bound(run):
    """No mode has a Q below the Chu limit of the enclosing sphere (Chu 1948; McLean 1996)."""
    assert run["modes"], "no mode found"
    assert not _e2e.chu_violations(run), _e2e.describe(run)
