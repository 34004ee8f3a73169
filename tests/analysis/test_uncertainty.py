"""Each mode's uncertainty: Richardson extrapolation and the Grid Convergence Index,
matching modes between grids, the stated bound, and printing to supported digits.

References: Roache, P. J., J. Fluids Eng. 116:405-413, 1994 (Richardson extrapolation,
GCI with safety factor 3 for two grids and 1.25 for three); Celik, I. B. et al.,
J. Fluids Eng. 130:078001, 2008 (observed order, eq. 3; from memory); Taflove, A. &
Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005, ch. 4 (Yee dispersion).
The end-to-end grid study is in test_pipeline.py.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy.optimize import brentq

from ringprint.analysis import uncertainty as un
from ringprint.analysis.textformat import format_frequency_pm, format_q_pm, round_with_uncertainty
from ringprint.fdtd import C0


def _power_law(h, f0=2.4e9, c=3.0e13, p=2.0):
    """A quantity with a known discretization error, f(h) = f0 + C h^p."""
    return f0 + c * h ** p


@pytest.mark.parametrize("p", [1.0, 2.0])
@pytest.mark.parametrize("ratio", [1.3, 1.5])
def test_richardson_recovers_the_limit_of_a_power_law(p, ratio):
    """f(h) = f0 + C h^p on h and r h: Richardson gives f0 exactly (Roache 1994); only
    rounding remains (1e-13 relative: f0 is ~1e9, the differences ~1e6-1e7)."""
    h = 1e-3
    f1, f2 = _power_law(h, p=p), _power_law(ratio * h, p=p)
    assert un.richardson(f1, f2, ratio, p) == pytest.approx(2.4e9, rel=1e-13)


def test_gci_two_grids_is_three_times_the_distance_to_the_limit():
    """Two grids, safety factor 3 (Roache 1994): on an exact power law the GCI is 3 |f1 - f0|
    (to rounding, 1e-9 relative)."""
    h, r = 1e-3, 1.3
    f1, f2 = _power_law(h), _power_law(r * h)
    assert un.gci(f1, f2, r, 2.0) == pytest.approx(3.0 * abs(f1 - 2.4e9), rel=1e-9)
    est = un.grid_estimate([f1, f2], r, 2.0)
    assert est.safety == 3.0 and est.order == 2.0 and est.order_basis == "stated 2"
    assert est.uncertainty >= abs(f1 - 2.4e9)


def test_gci_with_a_wrong_assumed_order_still_covers_when_order_is_underestimated():
    """Assuming p = 1 for a second-order error extrapolates too far, but the GCI
    (3 |f1 - f2| / (r - 1)) still covers the true error: 3/(r-1) > 1/(r^2-1) for r = 1.3."""
    h, r = 1e-3, 1.3
    f1, f2 = _power_law(h), _power_law(r * h)
    assert un.gci(f1, f2, r, 1.0) > abs(f1 - 2.4e9)


def test_three_grids_observe_the_order_and_use_safety_1_25():
    """Three grids of an exact p = 1.6 law: the observed order is 1.6 (Celik et al. 2008,
    eq. 3, to 1e-9), Richardson with it is exact, and the GCI is 1.25 |f1 - f0|."""
    h, r = 1e-3, 1.3
    f = [_power_law(h * r ** k, p=1.6) for k in range(3)]
    assert un.observed_order(*f, r) == pytest.approx(1.6, rel=1e-9)
    est = un.grid_estimate(f, r, 2.0)
    assert est.order == pytest.approx(1.6, rel=1e-9) and est.safety == 1.25
    assert est.extrapolated == pytest.approx(2.4e9, rel=1e-13)
    assert est.uncertainty == pytest.approx(1.25 * abs(f[0] - 2.4e9), rel=1e-7)


def test_observed_order_above_the_stated_one_is_capped():
    """An observed p = 3 is not trusted beyond these grids: p = 2 is used (conservative:
    the GCI with p = 2 is larger than with p = 3)."""
    h, r = 1e-3, 1.3
    f = [_power_law(h * r ** k, p=3.0) for k in range(3)]
    est = un.grid_estimate(f, r, 2.0)
    assert est.order == 2.0 and "capped" in est.order_basis
    assert est.uncertainty > 1.25 * abs(f[0] - 2.4e9)


def test_oscillating_grids_fall_back_to_the_larger_difference():
    """Differences of opposite sign: no observed order (NaN); the GCI uses the stated order,
    safety 3 and the larger of the two differences."""
    f = [1.000e9, 1.002e9, 0.995e9]
    assert math.isnan(un.observed_order(*f, 1.3))
    est = un.grid_estimate(f, 1.3, 2.0)
    assert est.safety == 3.0
    assert est.uncertainty == pytest.approx(3.0 * 7e6 / (1.3 ** 2 - 1), rel=1e-12)


@pytest.mark.parametrize("bad", [dict(ratio=1.0, order=2.0), dict(ratio=1.3, order=0.0),
                                 dict(ratio=float("nan"), order=2.0)])
def test_bad_ratio_or_order_is_refused(bad):
    with pytest.raises(ValueError):
        un.richardson(1.0, 1.1, **bad)


def test_matching_pairs_nearby_modes():
    f = [1.00e9, 1.50e9, 2.20e9]
    q = [40.0, 12.0, 300.0]
    fc = [1.006e9, 1.508e9, 2.19e9]
    qc = [41.0, 11.0, 290.0]
    got = un.match_modes(f, q, fc, qc, 0.01, 0.2)
    assert [m.partner for m in got] == [0, 1, 2]


def test_matching_refuses_two_candidates():
    """Two coarse modes within the window of one mode: ambiguous, left unmatched."""
    got = un.match_modes([1.0e9], [40.0], [0.997e9, 1.004e9], [40.0, 41.0], 0.01, 0.2)
    assert got[0].partner is None and got[0].reason.startswith("ambiguous: 2 modes")


def test_matching_refuses_a_partner_claimed_twice():
    """One coarse mode inside the windows of two modes: neither is matched."""
    got = un.match_modes([1.000e9, 1.006e9], [40.0, 42.0], [1.003e9], [41.0], 0.01, 0.2)
    assert [m.partner for m in got] == [None, None]
    assert all("also within the window" in m.reason for m in got)


def test_matching_uses_q_too():
    """Right frequency, Q three times off: not the same mode."""
    got = un.match_modes([1.0e9], [40.0], [1.001e9], [120.0], 0.01, 0.5)
    assert got[0].partner is None and got[0].reason.startswith("no mode")


def test_matching_leaves_a_lonely_mode_unmatched_and_refuses_bad_windows():
    got = un.match_modes([1.0e9, 2.0e9], [40.0, 40.0], [1.001e9], [40.0], 0.01, 0.2)
    assert [m.partner for m in got] == [0, None]
    with pytest.raises(ValueError):
        un.match_modes([1.0e9], [40.0], [1.0e9], [40.0], 0.0, 0.2)


def _yee_axis_frequency(k, h, dt):
    """Root of [sin(w dt/2)/(c dt)]^2 = sum_i [sin(k_i h/2)/h]^2 with k along x
    (Taflove & Hagness 2005, ch. 4), found numerically."""
    rhs = (math.sin(k * h / 2) / h) ** 2
    return brentq(lambda w: (math.sin(w * dt / 2) / (C0 * dt)) ** 2 - rhs, 1e-3, math.pi / dt * 0.999)


@pytest.mark.parametrize("cells", [10.0, 15.0, 40.0])
def test_dispersion_error_matches_the_yee_relation(cells):
    """The closed form against the dispersion relation solved by root finding (to 1e-10;
    brentq converges to machine precision), at the 3-D Courant number 0.99/sqrt(3)."""
    h = 1e-3
    dt = 0.99 * h / (C0 * math.sqrt(3))
    k = 2 * math.pi / (cells * h)
    exact = _yee_axis_frequency(k, h, dt) / (C0 * k) - 1.0
    assert un.yee_dispersion_error(cells, C0 * dt / h) == pytest.approx(exact, rel=1e-10, abs=1e-14)


def test_dispersion_error_falls_as_the_square_of_the_cell():
    """Leading term -(pi/N)^2 (1 - S^2) / 6 (Taylor expansion of the Yee relation along an
    axis): within 0.5 % of it at N = 60, where the next term is ~(pi/N)^2 ~ 0.3 % of it."""
    s = 0.99 / math.sqrt(3)
    lead = -(math.pi / 60) ** 2 * (1 - s * s) / 6
    assert un.yee_dispersion_error(60.0, s) == pytest.approx(lead, rel=5e-3)


def _scale(name, conductor, radius_mm, cells, eps_r=1.0):
    return un.PartScale(name, conductor, eps_r, radius_mm * 1e-3, cells)


def test_stated_bound_scales_with_the_cells_across_the_part():
    """Doubling the cells across the part halves the geometry term (the 1/D law the bound
    states) and the dispersion term falls by about four (second order)."""
    f, q = np.array([1.0e9]), np.array([40.0])
    step = 2e-3
    _, _, rel16, relq16 = un.stated_bound(f, q, [0.0], [_scale("a", True, 30, 16)], step, 0.5, 1.0)
    _, _, rel32, relq32 = un.stated_bound(f, q, [0.0], [_scale("a", True, 30, 32)], step, 0.5, 1.0)
    disp = abs(un.yee_dispersion_error(C0 / (1e9 * step), 0.5))
    assert rel16[0] - disp == pytest.approx(0.012, rel=1e-12)      # metal term at 16 cells
    assert rel32[0] - disp == pytest.approx(0.006, rel=1e-12)
    assert relq16[0] == pytest.approx(2 * relq32[0], rel=1e-12)


def test_stated_bound_ignores_parts_too_small_to_ring():
    """A screw (k a = 0.03 at 1 GHz, far below the lowest natural resonance of any body,
    k a = 0.866 for a conducting sphere, Stratton 1941) does not set a 1 GHz mode's bound."""
    f, q = np.array([1.0e9]), np.array([40.0])
    big = [_scale("frame", True, 60, 32)]
    with_screw = big + [_scale("screw", True, 1.5, 2)]
    a = un.stated_bound(f, q, [0.0], big, 2e-3, 0.5, 1.0)[2]
    b = un.stated_bound(f, q, [0.0], with_screw, 2e-3, 0.5, 1.0)[2]
    assert a[0] == b[0]


def test_fit_error_enters_in_quadrature():
    """A fit error e adds e f to the frequency and 2 Q^2 e to Q (Q = Re w / 2|Im w|)."""
    f, q = np.array([1.0e9]), np.array([50.0])
    parts = [_scale("ball", False, 25, 12, eps_r=36.0)]
    u0 = un.stated_bound(f, q, [0.0], parts, 1e-3, 0.5, 36.0)
    u1 = un.stated_bound(f, q, [1e-3], parts, 1e-3, 0.5, 36.0)
    assert u1[0][0] == pytest.approx(math.hypot(u0[0][0], 1e-3 * 1e9), rel=1e-12)
    assert u1[1][0] == pytest.approx(math.hypot(u0[1][0], 2 * 50.0 ** 2 * 1e-3), rel=1e-12)


def test_grid_study_needs_enough_cells_on_the_coarsest_grid():
    assert un.check_grid_study(13.0, 2) is None
    assert "cells_per_wavelength >= 13" in un.check_grid_study(12.0, 2)
    assert "two grids" in un.check_grid_study(16.0, 3)
    assert un.check_grid_study(12.0, 0) is None


# -- digits -------------------------------------------------------------------------

def test_worked_examples_of_printing():
    assert format_frequency_pm(2.41e9, 0.012e9) == "2.410 \u00b1 0.012 GHz"
    assert format_frequency_pm(977.2e6, 6.5e6) == "977 \u00b1 7 MHz"
    assert format_q_pm(43.2, 2.1) == "43 \u00b1 3"
    assert format_q_pm(43.2, 0.96) == "43.2 \u00b1 1.0"
    assert round_with_uncertainty(12345.0, 300.0) == ("12300", "300", -2)
    # without an uncertainty the old digits from the fit error come back
    assert format_frequency_pm(1.57542e9, None, 1e-7) == "1.5754200 GHz"


@settings(max_examples=400, deadline=None)
@given(st.floats(-1e12, 1e12, allow_nan=False), st.floats(1e-6, 1e6), st.floats(1e-9, 1e3))
def test_printed_value_lies_within_its_uncertainty(scale, u_rel, mantissa):
    """Read back, the printed value differs from the value by less than the uncertainty,
    and the printed uncertainty is at least the uncertainty but below 1.5 times it
    (rounded up to one digit, two when the digit is 1)."""
    x = scale
    u = max(abs(x), 1.0) * u_rel * 1e-6 + mantissa
    xt, ut, _ = round_with_uncertainty(x, u)
    assert abs(float(xt) - x) < u
    assert u * (1 - 1e-9) <= float(ut) < 1.5 * u


@settings(max_examples=200, deadline=None)
@given(st.floats(1e3, 1e11), st.floats(1e-5, 0.3))
def test_printed_frequency_reads_back_within_its_uncertainty(hz, rel):
    text = format_frequency_pm(hz, rel * hz)
    value, _pm, unc, unit = text.split()
    scale = {"GHz": 1e9, "MHz": 1e6, "kHz": 1e3, "Hz": 1.0}[unit]
    assert abs(float(value) * scale - hz) < rel * hz
    assert float(unc) * scale >= rel * hz * (1 - 1e-9)


# -- applying it to a mode table -------------------------------------------------------

def _fake_model(cell=1e-3, cells=20.0):
    """The little of a Model the annotation reads: one dielectric part 24 mm long on a
    uniform grid of ``cell``."""
    from types import SimpleNamespace as NS

    axis = np.arange(-40, 41) * cell
    surface = NS(bounds=(np.array([-12e-3, -5e-3, -5e-3]), np.array([12e-3, 5e-3, 5e-3])))
    part = NS(name="puck", surfaces=[surface], is_conductor=False, part="puck")
    case = NS(grid=NS(cells_per_wavelength=cells), medium=lambda _p: (9.0, 0.0, False))
    return NS(parts=[part], grid=NS(axes=(axis, axis, axis), cell=cell), case=case)


def _modes(f, q, err=1e-7):
    return [{"index": k + 1, "frequency_hz": fk, "q": qk, "error": err} for k, (fk, qk)
            in enumerate(zip(f, q))]


def test_annotate_three_grids_observes_the_order_and_leaves_a_lonely_mode():
    """Two modes following f(h) = f0 (1 + C h^1.7) on three grids (ratio 1.3): the first is
    matched through both coarser runs, gets the observed order 1.7 (Celik et al. 2008),
    safety 1.25 and the exact limit (Roache 1994); a third mode with no partner keeps the
    stated bound and is listed as unmatched with the reason."""
    from ringprint.analysis.grid_study import CoarseRun, annotate

    h, r, p = 1e-3, 1.3, 1.7
    f0, q0 = np.array([2.0e9, 3.0e9]), np.array([40.0, 90.0])

    def law(level):
        g = (h * r ** level) ** p * 3e2               # 2 % at h, a relative error ~ h^1.7
        return f0 * (1 + g), q0 * (1 - 2 * g)

    f1, q1 = law(0)
    modes = _modes(list(f1) + [4.0e9], list(q1) + [30.0])
    coarse = [CoarseRun(20.0 / r ** k, h * r ** k, *law(k), np.zeros(2), 100) for k in (1, 2)]
    block = annotate(modes, _fake_model(), 0.5e-3 / C0, coarse)
    study = block["grid_study"]
    assert block["basis"] == "grid study" and study["matched"] == [1, 2]
    assert study["unmatched"][0]["mode"] == 3 and study["unmatched"][0]["reason"].startswith("no mode")
    for k in (0, 1):
        m = modes[k]
        assert m["uncertainty_basis"] == "grid study" and m["grid_order"] == pytest.approx(p, rel=1e-6)
        assert m["frequency_extrapolated_hz"] == pytest.approx(f0[k], rel=1e-12)
        assert m["q_extrapolated"] == pytest.approx(q0[k], rel=1e-10)
        # GCI with safety 1.25 on the exact error, plus the fit term e f in quadrature
        expect = math.hypot(1.25 * (f1[k] - f0[k]), 1e-7 * f1[k])
        assert m["frequency_uncertainty_hz"] == pytest.approx(expect, rel=1e-6)
    lonely = modes[2]
    assert lonely["uncertainty_basis"] == "stated bound" and lonely["frequency_extrapolated_hz"] is None
    assert lonely["frequency_uncertainty_hz"] > 0 and lonely["fit_error"] == 1e-7


def test_annotate_without_a_study_gives_every_mode_the_stated_bound():
    from ringprint.analysis.grid_study import annotate

    modes = _modes([2.0e9], [40.0])
    block = annotate(modes, _fake_model(), 0.5e-3 / C0)
    assert block["basis"] == "stated bound" and block["grid_study"] is None
    assert "not a bound proven for every geometry" in block["stated_bound"]
    # dielectric term 0.8 % x 12 / 24 cells + Yee dispersion at 50 cells per wavelength
    # (c / (2 GHz x 3 x 1 mm)) with S = 0.5, plus the fit error in quadrature
    rel = 0.008 * 12 / 24 + abs(un.yee_dispersion_error(C0 / (2e9 * 3 * 1e-3), 0.5))
    assert modes[0]["frequency_uncertainty_hz"] == pytest.approx(math.hypot(rel * 2e9, 200.0), rel=1e-9)


def test_staircased_metal_keeps_at_least_the_stated_bound():
    """With metal (order 1, staircased) two grids that barely differ do not shrink the
    uncertainty below the stated bound (grid_study.STAIRCASE_FLOOR); the Richardson value
    is still reported (f1 + (f1 - f2) / (1.3 - 1), Roache 1994)."""
    from ringprint.analysis.grid_study import CoarseRun, annotate

    model = _fake_model()
    model.parts[0].is_conductor = True
    f1, f2 = 2.0e9, 2.0002e9
    stated = _modes([f1], [40.0])
    annotate(stated, model, 0.5e-3 / C0)
    modes = _modes([f1], [40.0])
    block = annotate(modes, model, 0.5e-3 / C0,
                     [CoarseRun(20 / 1.3, 1.3e-3, np.array([f2]), np.array([40.1]), np.zeros(1))])
    m = modes[0]
    assert block["grid_study"]["stated_order"] == 1.0 and block["grid_study"]["floor"]
    assert m["uncertainty_basis"] == "grid study"
    assert m["frequency_extrapolated_hz"] == pytest.approx(f1 + (f1 - f2) / 0.3, rel=1e-12)
    assert m["frequency_uncertainty_hz"] == stated[0]["frequency_uncertainty_hz"]
    assert m["q_uncertainty"] == stated[0]["q_uncertainty"]
    # the GCI alone (3 x 0.2 MHz / 0.3 = 2 MHz) is far below the stated bound here
    assert 3 * abs(f1 - f2) / 0.3 < 0.5 * m["frequency_uncertainty_hz"]


def test_conformal_metal_is_second_order_and_gets_the_conformal_geometry_term():
    """Conformal metal converges at second order (tests/validation/test_conformal_cavity.py:
    observed order 2.6 on the cylindrical cavity), staircased metal at first."""
    diel = _scale("puck", False, 5.0, 12, eps_r=36.0)
    staircase = _scale("strip", True, 20.0, 16)
    conformal = un.PartScale("can", True, 1.0, 20e-3, 16, staircase=False)
    assert un.method_order([diel, conformal]) == un.ORDER_SMOOTH
    assert un.method_order([diel, conformal, staircase]) == un.ORDER_STAIRCASE
    f, q = np.array([3.0e9]), np.array([30.0])
    args = (np.zeros(1), 1e-3, 0.5, 1.0)
    _, _, rel_s, qs = un.stated_bound(f, q, args[0], [staircase], *args[1:])
    _, _, rel_c, qc = un.stated_bound(f, q, args[0], [conformal], *args[1:])
    assert rel_c[0] < rel_s[0] and qc[0] < 0.2 * qs[0]
