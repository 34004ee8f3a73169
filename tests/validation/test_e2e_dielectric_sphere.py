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

Convergence (checked): the Q error against the pole falls at least like the cell (measured
ratio 0.29 from 12 to 19.2 cells across, order 2.6), and the observed order of the
frequency from the three grids (Richardson; Roache, P. J., *Verification and
Validation in Computational Science and Engineering*, 1998, ch. 5) is at least 1
(measured 3.6). Expected order: 1 for the diagonal-only interface average on an
oblique surface (Farjadpour et al. 2006), up to 2 for the Yee scheme itself (Taflove
& Hagness 2005, ch. 4).

The electric dipole (a_1 pole, k0 a = 0.72179 - 0.00949j, 1.3776 GHz, Q = 38.03)
checks the other polarization, whose field crosses the surface, over 1.2-1.55 GHz (with
the b_2 pole, k0 a = 0.74104 - 0.00079j, split in two by the cubic grid). Its Q comes
out low, and the cause was looked for with targeted runs (cells per wavelength 10 at
1.55 GHz, 15.5 cells across, unless stated; Q error against the Mie pole):

=========================================  ==========
run                                        Q error
=========================================  ==========
padding 25 mm (one radius), q_max 25       -20.3 %
padding 50 mm                              -20.3 %
q_max 80 (record 3.2 times longer)         -20.2 %
interface weight n_a^2 instead of n_a^4    -21.2 %
plain volume average (weight 0)            -22.9 %
cells per wavelength 13 (20.2 across)      -17.6 %
cells per wavelength 16 (24.8 across)      -14.4 %
=========================================  ==========

The reference is sound: the a_1 root zeroes the Mie denominator evaluated independently
with mpmath (test_references.py), and the sphere is lossless, so no loss frequency
enters. So it is neither the padding, nor the record, nor the interface weight: it is a grid
error of the surface that falls with the cell (frequency errors -0.49 %, -0.26 %,
-0.15 % on the same three grids). A mode whose field crosses a surface of eps_r 36
radiates through the small field just outside it, so its Q is far more sensitive to
the surface's representation than its frequency. The check runs the two finer grids
and extrapolates their Q to zero cell size at first order: -0.8 % from the Mie pole.
"""

from __future__ import annotations

import numpy as np
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


def _run_grids(folder, tag, grids, spectrum):
    """The sphere run once per grid: ``{cells_per_wavelength: summary}``."""
    _e2e.write_stl(folder / "ball.stl", primitives.sphere(RADIUS_MM, n=128))
    out = {}
    for n in grids:
        case = _e2e.write_case(folder, f"sphere{tag}_n{n}", [("ball", "ball.stl", f"{{ eps_r = {EPS_R} }}")],
                               spectrum, grid={"cells_per_wavelength": n, "padding": RADIUS_MM},
                               analysis={"q_max": 25})
        out[n] = _e2e.run(case, out_name=f"out{tag}_n{n}")
    return out


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """One run per grid over 0.8-1.2 GHz (the b_1 pole alone)."""
    return _run_grids(tmp_path_factory.mktemp("dielectric_sphere"), "", GRIDS,
                      {"f_min": "0.8 GHz", "f_max": "1.2 GHz"})


def _errors(summary):
    f_ref, q_ref = _reference()
    return _e2e.relative_errors(_e2e.nearest_mode(summary, f_ref), f_ref, q_ref)


def test_mesh_volume_error_is_negligible():
    """The tessellated sphere holds the sphere's volume to 0.2 % (radius to 0.07 %)."""
    s = primitives.sphere(RADIUS_MM, n=128)
    exact = 4.0 / 3.0 * 3.141592653589793 * RADIUS_MM ** 3
    assert abs(s.volume / exact - 1.0) < 2e-3


def test_magnetic_dipole_q_within_5_percent_and_converging_at_first_order(runs):
    """Q of the b_1 pole (Bohren & Huffman 1983) within 5 % on the finest grid, and its
    error against the pole falling at least like the cell (first order: the expected
    order is 1 for the diagonal-only interface average on an oblique surface, Farjadpour
    et al. 2006, up to 2 for the Yee scheme itself, Taflove & Hagness 2005 ch. 4):
    ``|e(16)| <= |e(10)| (10/16)``. Measured ratio 0.29 (order 2.6)."""
    errs = {n: _errors(runs[n]) for n in GRIDS}
    q_fine, q_coarse = abs(errs[GRIDS[-1]][1]), abs(errs[GRIDS[0]][1])
    assert q_fine < Q_TOL, errs
    assert q_fine <= q_coarse * GRIDS[0] / GRIDS[-1], errs


def test_magnetic_dipole_frequency_converges_at_first_order_or_better(runs):
    """Observed order of convergence of the b_1 frequency (Bohren & Huffman 1983) from the
    three grids (Richardson, as in Roache 1998 ch. 5; :func:`_e2e.observed_order`) is at
    least 1, the expected order (see the Q check above). Measured 3.6: on these grids
    the Yee dispersion (reads low) and the interface average (reads high) partly cancel,
    so the differences shrink faster than either error alone; a first-order regression
    would bring it down to about 1."""
    freqs = [_e2e.nearest_mode(runs[n], _reference()[0])["frequency_hz"] for n in GRIDS]
    order = _e2e.observed_order(GRIDS, freqs)
    assert order >= 1.0, (order, freqs)


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


ELECTRIC_GRIDS = (13, 16)           # cells per wavelength in the sphere at 1.55 GHz


def _electric_reference():
    pole = ref.dielectric_sphere_pole(EPS_R, RADIUS_MM * 1e-3, n=1, kind="TM")
    return ref.pole_frequency(pole), ref.pole_q(pole)


@pytest.fixture(scope="module")
def electric_runs(tmp_path_factory):
    """One run per grid over 1.2-1.55 GHz (the a_1 pole and the split b_2 pair)."""
    return _run_grids(tmp_path_factory.mktemp("dielectric_sphere_a1"), "_a1", ELECTRIC_GRIDS,
                      {"f_min": "1.2 GHz", "f_max": "1.55 GHz"})


def test_electric_dipole_frequency_within_1_percent(electric_runs):
    """Frequency of the a_1 pole (Bohren & Huffman 1983, eqs. 4.56-4.57) within 1 % on both
    grids: the field crossing the surface checks the harmonic part of the edge rule."""
    f_ref, _ = _electric_reference()
    for n, summary in electric_runs.items():
        mode = _e2e.nearest_mode(summary, f_ref)
        assert abs(mode["frequency_hz"] / f_ref - 1.0) < F_TOL, (n, _e2e.describe(summary))


def test_electric_dipole_q_extrapolates_to_the_mie_pole(electric_runs):
    """Q of the a_1 pole (Bohren & Huffman 1983): the grid error falls, and the first-order
    Richardson extrapolation of the two grids (Roache 1998 ch. 5; first order as measured,
    module docstring) lies within 5 % (the issue's Q tolerance) of the Mie pole's Q.

    ``Q_inf = Q_f + (Q_f - Q_c) h_f / (h_c - h_f)``; measured -0.8 % (raw errors -17.6 %
    and -14.4 %).
    """
    f_ref, q_ref = _electric_reference()
    coarse, fine = (_e2e.nearest_mode(electric_runs[n], f_ref)["q"] for n in ELECTRIC_GRIDS)
    assert abs(fine / q_ref - 1.0) < abs(coarse / q_ref - 1.0), (coarse, fine, q_ref)
    n_c, n_f = ELECTRIC_GRIDS
    q_inf = fine + (fine - coarse) * (1.0 / n_f) / (1.0 / n_c - 1.0 / n_f)
    assert abs(q_inf / q_ref - 1.0) < Q_TOL, (coarse, fine, q_inf, q_ref)


# --- mirror planes ([grid] symmetry): the same sphere on a quarter of the grid -----------
#
# The b_1 pole is a magnetic dipole, three-fold degenerate (m along x, y or z). Image
# theory (Harrington, R. F., Time-Harmonic Electromagnetic Fields, 1961, sec. 3-6) puts
# each orientation in one wall class: the field of m_a has tangential E even about the
# plane normal to a (a PMC wall keeps it) and odd about the planes parallel to a (PEC
# walls). With mirrors normal to x and y, each run both ways, the pole must appear with
# walls (x:pec, y:pec) as m_z, (x:pmc, y:pec) as m_x and (x:pec, y:pmc) as m_y, and not at
# all with (x:pmc, y:pmc). Measured at the time of writing (cells_per_wavelength 10):
# 983.15-983.19 MHz in the three classes against 983.18 MHz on the whole grid (Mie:
# 977.2 MHz, +0.61 %), Q 43.49 against 43.5 (Mie 43.17); on 24,334 solved cells of 97,336.

MIRROR_CELLS = GRIDS[0]
#: The wall combination that holds each orientation of the magnetic dipole (above).
DIPOLE_CLASSES = {"z": "x:pec, y:pec", "x": "x:pmc, y:pec", "y": "x:pec, y:pmc"}
EMPTY_CLASS = "x:pmc, y:pmc"


@pytest.fixture(scope="module")
def mirrored(tmp_path_factory):
    """The 12-cell sphere with mirrors normal to x and y, both walls each, with fields."""
    folder = tmp_path_factory.mktemp("dielectric_sphere_mirrored")
    _e2e.write_stl(folder / "ball.stl", primitives.sphere(RADIUS_MM, n=128))
    case = _e2e.write_case(folder, "sphere_mirrored", [("ball", "ball.stl", f"{{ eps_r = {EPS_R} }}")],
                           {"f_min": "0.8 GHz", "f_max": "1.2 GHz"},
                           grid={"cells_per_wavelength": MIRROR_CELLS, "padding": RADIUS_MM,
                                 "symmetry": '{ x = "both", y = "both" }'},
                           analysis={"q_max": 25})
    return folder, _e2e.run(case, out_name="out_mirrored", fields=True)


def _near(summary, f_ref, label):
    return [m for m in summary["modes"] if m.get("symmetry_class") == label
            and abs(m["frequency_hz"] / f_ref - 1.0) < 0.05]


def test_mirrored_sphere_finds_each_dipole_in_its_wall_class_at_the_whole_grid_pole(runs, mirrored):
    """Every orientation of the b_1 pole (Bohren & Huffman 1983) in the wall class image
    theory predicts (comment above), none in the fourth; each agrees with the whole-grid
    run of the same cells (same discretisation: f within 0.05 %, Q within 1 %) and with
    the Mie pole (1 % in f, 5 % in Q, the issue's tolerances); a quarter of the cells."""
    _folder, summary = mirrored
    f_ref, q_ref = _reference()
    whole = _e2e.nearest_mode(runs[MIRROR_CELLS], f_ref)
    assert not _near(summary, f_ref, EMPTY_CLASS), _e2e.describe(summary)
    for label in DIPOLE_CLASSES.values():
        found = _near(summary, f_ref, label)
        assert len(found) == 1, (label, _e2e.describe(summary))
        mode = found[0]
        assert abs(mode["frequency_hz"] / whole["frequency_hz"] - 1.0) < 5e-4, (mode, whole)
        assert abs(mode["q"] / whole["q"] - 1.0) < 0.01, (mode, whole)
        f_err, q_err = _e2e.relative_errors(mode, f_ref, q_ref)
        assert abs(f_err) < F_TOL and abs(q_err) < Q_TOL, (label, f_err, q_err)
    block = summary["symmetry"]
    assert 4 * block["cells_solved"] == block["cells_whole"] == runs[MIRROR_CELLS]["grid"]["cells"]
    assert len(block["runs"]) == 4


def test_mirrored_sphere_fields_are_the_whole_dipoles(mirrored):
    """The unfolded fields cover the whole sphere, hold 1 J in the whole model
    (the normalization of :mod:`ringprint.analysis.fieldset`), and at the sphere's
    centre H points along the dipole's axis: inside the sphere the b_1 mode's E is the
    vector spherical harmonic M_1 (zero at the centre) and its H the harmonic N_1 built on
    j_1(kr), which at the centre is finite and along the dipole's axis (Bohren & Huffman
    1983, ch. 4, the internal fields in vector spherical harmonics; section from memory)."""
    from ringprint.analysis.fieldset import stored_energy
    from ringprint.analysis.fieldset_io import read_fieldset

    folder, summary = mirrored
    fs = read_fieldset(folder / "out_mirrored" / "fields.h5")
    assert fs.x[0] == pytest.approx(-fs.x[-1]) and fs.y[0] == pytest.approx(-fs.y[-1])
    assert fs.x[0] < -RADIUS_MM * 1e-3 and fs.y[0] < -RADIUS_MM * 1e-3
    centre = tuple(int(np.argmin(np.abs(ax))) for ax in (fs.x, fs.y, fs.z))
    f_ref, _ = _reference()
    for axis, label in DIPOLE_CLASSES.items():
        mode = _near(summary, f_ref, label)[0]
        mf = fs.mode(mode["index"])
        w = stored_energy(fs.eps_r, mf.e, mf.h, fs.node_volumes())
        assert w == pytest.approx(1.0, rel=1e-3), (label, w)
        h = np.abs(mf.h[(slice(None),) + centre])
        assert h["xyz".index(axis)] > 5 * np.delete(h, "xyz".index(axis)).max(), (label, h)
        assert mode["participation"]["ball"] > 0.8, mode["participation"]
