"""The dielectric sphere on a graded grid: as accurate as on the uniform fine grid.

Reference: the magnetic-dipole pole of a sphere of relative permittivity 36, radius
25 mm (the complex zero of the Mie b_1 denominator; Bohren & Huffman 1983, eqs.
4.56-4.57, computed by ``_references.dielectric_sphere_pole``): f = 977.2 MHz,
Q = 43.17. Setup as tests/validation/test_e2e_dielectric_sphere.py (spectrum
0.8-1.2 GHz, padding one radius, q_max 25, 13 cells per wavelength in the sphere at
f_max: 15.6 cells across it).

The uniform grid puts the sphere's cell everywhere; the graded grid (the default
planner, ringprint.meshing.plan_grid) keeps it inside the sphere's extent and grows it
by at most 1.3 per cell to the air cell (six times larger: c0/(f_max n) instead of
c0/(f_max sqrt(36) n)) outside. The mode's field lives mostly in the sphere, so the
graded grid should lose nothing.

Measured (load about 4 on 2 cores): uniform 140,608 cells, f +0.46 %, Q +0.75 %,
31.6 s; graded 97,336 cells, f +0.53 %, Q -0.18 %, 14.5 s (the same accuracy in
about half the time; the air here is only one radius of padding, so the saving is
modest). Asserted: the graded errors may exceed the uniform ones by at most 0.15 % in
f and 1 % in Q (a tenth and about an eighth of the tolerances of the uniform test).
"""

from __future__ import annotations

import time

import pytest

try:
    from . import _e2e
    from . import _references as ref
except ImportError:
    import _e2e
    import _references as ref

from ringprint.meshing import primitives

pytestmark = pytest.mark.slow

EPS_R, RADIUS_MM, CELLS = 36.0, 25.0, 13


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    folder = tmp_path_factory.mktemp("graded_sphere")
    _e2e.write_stl(folder / "ball.stl", primitives.sphere(RADIUS_MM, n=128))
    out = {}
    for graded in (False, True):
        case = _e2e.write_case(folder, f"sphere_{graded}", [("ball", "ball.stl", f"{{ eps_r = {EPS_R} }}")],
                               {"f_min": "0.8 GHz", "f_max": "1.2 GHz"},
                               grid={"cells_per_wavelength": CELLS, "padding": RADIUS_MM,
                                     "graded": graded},
                               analysis={"q_max": 25})
        start = time.perf_counter()
        summary = _e2e.run(case, out_name=f"out_{graded}")
        out[graded] = (summary, time.perf_counter() - start)
    return out


def _errors(summary):
    pole = ref.dielectric_sphere_pole(EPS_R, RADIUS_MM * 1e-3, n=1, kind="TE")
    f_ref, q_ref = ref.pole_frequency(pole), ref.pole_q(pole)
    return _e2e.relative_errors(_e2e.nearest_mode(summary, f_ref), f_ref, q_ref)


def test_graded_grid_is_as_accurate_as_the_uniform_fine_grid(runs):
    """Mie b_1 pole (Bohren & Huffman 1983): graded errors within 0.15 % (f) and 1 % (Q)
    of the uniform grid's, and within the uniform test's own tolerances (1 %, 5 %)."""
    fu, qu = _errors(runs[False][0])
    fg, qg = _errors(runs[True][0])
    assert abs(fg) <= abs(fu) + 0.0015, (fu, fg)
    assert abs(qg) <= abs(qu) + 0.01, (qu, qg)
    assert abs(fg) < 0.01 and abs(qg) < 0.05, (fg, qg)


def test_graded_grid_is_smaller(runs):
    """The graded grid holds fewer cells (measured 0.69 of the uniform count): the air
    around the sphere is coarse."""
    cells = {g: s["grid"]["cells"] for g, (s, _t) in runs.items()}
    assert cells[True] < 0.8 * cells[False], cells
