"""``ringprint run`` on a dielectric sphere against the exact Mie pole of its magnetic dipole.

Reference: the natural resonance of a sphere of relative permittivity 36 and radius
25 mm is the complex zero of the denominator of the Mie coefficient b_1 (Bohren, C. F.
& Huffman, D. R., *Absorption and Scattering of Light by Small Particles*, Wiley,
1983, eqs. 4.56-4.57), computed by ``_references.dielectric_sphere_pole``:
k0 a = 0.51204 - 0.00593j, f = 977.2 MHz, Q = 43.17.

Setup (what the test can afford, about 20 s of CPU on one thread for three grids):

- mesh: UV sphere with 128 segments and 64 rings; its volume is 0.10 % below the
  sphere's (radius 0.033 % small, so the pole moves up by about 0.03 %), far inside
  the 1 % tolerance;
- spectrum 0.8-1.2 GHz: the b_1 pole and nothing else (the a_1 and b_2 poles sit
  near k0 a = 0.72, 1.37 GHz); the solver needs at least 10 cells per wavelength
  in the sphere at f_max, so the coarsest usable grid puts 12 cells across the
  sphere (cells_per_wavelength 10), the others 15.6 (13) and 19.2 (16);
- padding 25 mm (one radius) instead of the default lambda/(2 pi) = 49 mm: measured
  on the 12-cell grid, the pole moved by less than 0.05 % in f and Q between the two;
- q_max 25: the record runs one e-folding of a Q-25 mode at f_min (about 10 ns,
  ten periods, after the source), plenty for filter diagonalization on noise-free
  data (q_max 40 gave the same frequencies to 0.01 % and Q within 0.3 %).

Measured (ringprint at the time of writing; frequency and Q errors vs the Mie pole):

====================  ===========  =========  ======
cells_per_wavelength  cells/diam   f error    Q error
====================  ===========  =========  ======
10                    12.0         +0.61 %    +1.14 %
13                    15.6         +0.46 %    +0.79 %
16                    19.2         +0.41 %    +0.33 %
====================  ===========  =========  ======

(With the edge rule of the first version, harmonic along sub-rays: +2.99 % and +2.23 %;
the weight the model now uses, and the figures behind it, are in
:func:`ringprint.analysis.model._dielectric_average`.)

The electric dipole (a_1 pole, k0 a = 0.72179 - 0.00949j) checks the other
polarization, whose field crosses the surface: frequency -0.49 % at cells_per_wavelength
10 over 1.2-1.55 GHz. Its Q comes out about 20 % low on this grid and padding and is
not asserted: the electric dipole's near field reaches further out than the magnetic
one's, and one radius of padding is tight for it (not investigated further).
"""

from __future__ import annotations

import pytest

from ringprint.meshing import primitives

try:  # works both as a rootdir-relative module and inside a tests package
    from . import _e2e
    from . import _references as ref
except ImportError:
    import _e2e
    import _references as ref

pytestmark = pytest.mark.slow

EPS_R = 36.0
RADIUS_MM = 25.0
GRIDS = (10, 13, 16)                 # cells per wavelength in the sphere at f_max
F_TOL, Q_TOL = 0.01, 0.05            # the tolerances (1 % and 5 %)


def _reference():
    pole = ref.dielectric_sphere_pole(EPS_R, RADIUS_MM * 1e-3, n=1, kind="TE")
    return ref.pole_frequency(pole), ref.pole_q(pole)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """One run per grid: ``{cells_per_wavelength: summary}``."""
    folder = tmp_path_factory.mktemp("dielectric_sphere")
    _e2e.write_stl(folder / "ball.stl", primitives.sphere(RADIUS_MM, n=128))
    out = {}
    for n in GRIDS:
        case = _e2e.write_case(folder, f"sphere_n{n}", [("ball", "ball.stl", f"{{ eps_r = {EPS_R} }}")],
                               {"f_min": "0.8 GHz", "f_max": "1.2 GHz"},
                               grid={"cells_per_wavelength": n, "padding": RADIUS_MM},
                               analysis={"q_max": 25})
        out[n] = _e2e.run(case, out_name=f"out_n{n}")
    return out


def _errors(summary):
    f_ref, q_ref = _reference()
    return _e2e.relative_errors(_e2e.nearest_mode(summary, f_ref), f_ref, q_ref)


def test_mesh_volume_error_is_negligible():
    """The tessellated sphere holds the sphere's volume to 0.2 % (radius to 0.07 %)."""
    s = primitives.sphere(RADIUS_MM, n=128)
    exact = 4.0 / 3.0 * 3.141592653589793 * RADIUS_MM ** 3
    assert abs(s.volume / exact - 1.0) < 2e-3


def test_magnetic_dipole_q_within_5_percent_and_improving(runs):
    """Q of the b_1 pole (Bohren & Huffman 1983) within 5 % on the finest grid, and
    closer there than on the coarsest."""
    errs = {n: _errors(runs[n]) for n in GRIDS}
    q_fine, q_coarse = abs(errs[GRIDS[-1]][1]), abs(errs[GRIDS[0]][1])
    assert q_fine < Q_TOL, errs
    assert q_fine < q_coarse, errs


def test_magnetic_dipole_frequency_error_falls_with_the_grid(runs):
    """The frequency error against the b_1 pole (Bohren & Huffman 1983) is smaller on the
    finest grid than on the coarsest."""
    errs = {n: _errors(runs[n]) for n in GRIDS}
    assert abs(errs[GRIDS[-1]][0]) < abs(errs[GRIDS[0]][0]), errs


def test_magnetic_dipole_frequency_within_1_percent(runs):
    """Frequency of the b_1 pole (Bohren & Huffman 1983) within 1 % on the finest grid."""
    f_err, _ = _errors(runs[GRIDS[-1]])
    assert abs(f_err) < F_TOL, f_err


def test_every_mode_respects_the_chu_bound(runs):
    """No mode has a Q below the Chu limit of the smallest sphere enclosing the part
    (Chu 1948; McLean 1996): a radiating resonance cannot beat it."""
    for n, summary in runs.items():
        assert summary["modes"], f"grid {n}: no mode found"
        assert not _e2e.chu_violations(summary), f"grid {n}: " + _e2e.describe(summary)


@pytest.fixture(scope="module")
def electric_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("dielectric_sphere_a1")
    _e2e.write_stl(folder / "ball.stl", primitives.sphere(RADIUS_MM, n=128))
    case = _e2e.write_case(folder, "sphere_a1", [("ball", "ball.stl", f"{{ eps_r = {EPS_R} }}")],
                           {"f_min": "1.2 GHz", "f_max": "1.55 GHz"},
                           grid={"cells_per_wavelength": GRIDS[0], "padding": RADIUS_MM},
                           analysis={"q_max": 25})
    return _e2e.run(case, out_name="out_a1")


def test_electric_dipole_frequency_within_1_percent(electric_run):
    """Frequency of the a_1 pole (Bohren & Huffman 1983, eqs. 4.56-4.57) within 1 % on the
    coarse grid: the field crossing the surface checks the harmonic part of the edge rule."""
    pole = ref.dielectric_sphere_pole(EPS_R, RADIUS_MM * 1e-3, n=1, kind="TM")
    f_ref = ref.pole_frequency(pole)
    mode = _e2e.nearest_mode(electric_run, f_ref)
    assert abs(mode["frequency_hz"] / f_ref - 1.0) < F_TOL, _e2e.describe(electric_run)
