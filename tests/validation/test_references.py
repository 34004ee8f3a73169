"""Checks of the reference-resonance calculators against independent published facts.

Each test names its source. The calculators live in ``_references.py``; here their
results are compared with numbers stated in the literature, with analytic zeros,
with known limits, and with independent evaluations (mpmath Bessel functions in
place of scipy's, a different physical model in place of the same formula).
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
from scipy.constants import c as C0
from scipy.optimize import brentq
from scipy.special import jn_zeros, spherical_jn, spherical_yn

from ringprint.errors import RingprintError

try:  # works both as a rootdir-relative module and inside a tests package
    from . import _references as ref
except ImportError:
    import _references as ref


# ------------------------------------------------------------ dielectric sphere
def test_sphere_eps36_magnetic_dipole_pole_found_independently_with_mpmath():
    """eps_r = 36: the b_1 pole is k0 a = 0.51204 - 0.00593j, Q = 43.2.

    Source: Bohren & Huffman (1983), eqs. 4.56-4.57: the natural frequency is the
    complex zero of the b_1 denominator ``psi_1(mx) xi_1'(x) - m xi_1(x) psi_1'(mx)``.
    Found here a second time, independently of ``_references`` (mpmath cylinder Bessel
    functions of half-integer order, A&S 10.1.1, and mpmath's secant root finder),
    started from the high-permittivity limit ``m k0 a = pi`` (first zero of j_0).
    Tolerance 1e-10: both roots are solved to ~1e-15; the stated digits are the
    rounding of the same root (the end-to-end sphere check quotes them).
    """
    m = 6.0
    root = complex(mpmath.findroot(lambda x: _mie_denominator_mpmath(x, m, 1, "TE", scaled=False),
                                   mpmath.mpc(np.pi / m, -1e-3), tol=1e-28))
    x = ref.dielectric_sphere_ka(36.0, n=1, kind="TE")
    assert abs(x - root) < 1e-10, (x, root)
    assert (round(root.real, 5), round(root.imag, 5)) == (0.51204, -0.00593)
    assert round(ref.pole_q(root), 1) == 43.2


def _mie_denominator_mpmath(x, m, n, kind, scaled=True):
    """b_n / a_n denominators (Bohren & Huffman 1983, eqs. 4.56-4.57), mpmath Bessel J/Y.

    ``scaled``: its modulus relative to the larger of its two terms (a size-free
    residual); otherwise the complex, analytic denominator itself (for root finding).
    """

    def riccati(z):
        pref = mpmath.sqrt(mpmath.pi * z / 2)
        j, jm = pref * mpmath.besselj(n + 0.5, z), pref * mpmath.besselj(n - 0.5, z)
        y, ym = pref * mpmath.bessely(n + 0.5, z), pref * mpmath.bessely(n - 0.5, z)
        # psi = z j_n, xi = z h_n; (z f_n)' = z f_{n-1} - n f_n
        return j, jm - n * j / z, j + 1j * y, (jm + 1j * ym) - n * (j + 1j * y) / z

    psi_x, _, xi_x, dxi_x = riccati(mpmath.mpc(x))
    psi_mx, dpsi_mx, _, _ = riccati(mpmath.mpc(m * x))
    if kind == "TE":
        terms = (psi_mx * dxi_x, m * xi_x * dpsi_mx)
    else:
        terms = (m * psi_mx * dxi_x, xi_x * dpsi_mx)
    if not scaled:
        return terms[0] - terms[1]
    return abs(terms[0] - terms[1]) / max(abs(terms[0]), abs(terms[1]))


@pytest.mark.parametrize("eps_r", [6.0, 36.0, 80.0])
@pytest.mark.parametrize("n", [1, 2])
@pytest.mark.parametrize("kind", ["TE", "TM"])
def test_sphere_pole_is_a_zero_of_mie_denominator_evaluated_with_mpmath(eps_r, n, kind):
    """The returned pole zeroes the b_n / a_n denominator evaluated independently.

    Source: Bohren & Huffman (1983), eqs. 4.56-4.57, evaluated with mpmath's
    cylinder Bessel functions of half-integer order (A&S 10.1.1) rather than scipy's
    spherical ones. Tolerance 1e-9 relative: the root is solved to ~1e-15.
    """
    x = ref.dielectric_sphere_ka(eps_r, n=n, kind=kind)
    assert x.real > 0 and x.imag < 0  # decaying
    assert _mie_denominator_mpmath(x, np.sqrt(eps_r), n, kind) < 1e-9


def test_sphere_high_permittivity_limits():
    """eps_r -> inf: TE_1 has k0 a sqrt(eps_r) -> pi, TM_1 -> first zero of j_1 (4.4934).

    Known limit of the Mie poles (small-argument forms of the Hankel functions;
    e.g. van Bladel, IEEE Trans. MTT 23(2):199-208, 1975, from memory). The limit
    values are computed here independently (mpmath zero of J_{3/2}). Convergence is
    O(1/eps_r) so eps_r = 1e4 agrees to ~1e-3.
    """
    j1_zero = float(mpmath.findroot(lambda z: mpmath.besselj(1.5, z), 4.5))
    assert abs(j1_zero - 4.4934) < 1e-4
    te = ref.dielectric_sphere_ka(1e4, kind="TE") * 100.0
    tm = ref.dielectric_sphere_ka(1e4, kind="TM") * 100.0
    assert abs(te.real - np.pi) < 2e-3
    assert abs(tm.real - j1_zero) < 2e-3
    # approach from below: the finite sphere rings lower than the limit
    assert ref.dielectric_sphere_ka(36.0).real * 6.0 < np.pi


def test_sphere_magnetic_dipole_q_grows_as_eps_to_three_halves():
    """Q of the confined TE_1 mode grows like eps_r^(3/2) for high permittivity.

    Source: van Bladel (1975), magnetic-dipole radiation of confined modes (from
    memory). Tolerance 2 %: the next term is O(1/eps_r).
    """
    q3 = ref.pole_q(ref.dielectric_sphere_ka(1e3))
    q4 = ref.pole_q(ref.dielectric_sphere_ka(1e4))
    assert q4 / q3 == pytest.approx(10**1.5, rel=0.02)


def test_sphere_pole_in_hertz_scales_with_radius():
    """f = c (k0 a) / (2 pi a): natural frequency is inversely proportional to size (Maxwell scaling)."""
    x = ref.dielectric_sphere_ka(36.0)
    p = ref.dielectric_sphere_pole(36.0, radius_m=5e-3)
    assert p == pytest.approx(C0 * x / (2 * np.pi * 5e-3), rel=1e-12)
    assert ref.dielectric_sphere_pole(36.0, radius_m=10e-3) == pytest.approx(p / 2, rel=1e-9)
    assert ref.pole_frequency(p) == p.real
    assert ref.pole_q(p) == pytest.approx(ref.pole_q(x), rel=1e-12)


@pytest.mark.parametrize(
    "call",
    [
        lambda: ref.dielectric_sphere_ka(-2.0),
        lambda: ref.dielectric_sphere_ka(1.2),
        lambda: ref.dielectric_sphere_ka(36.0, n=0),
        lambda: ref.dielectric_sphere_ka(36.0, kind="TX"),
        lambda: ref.dielectric_sphere_pole(36.0, radius_m=0.0),
        lambda: ref.pec_sphere_pole(float("nan")),
        lambda: ref.kajfez_te01d(5e-3, 4e-3, 10.0),
        lambda: ref.half_wave_dipole_length(1e9, 0.1),
        lambda: ref.thin_wire_pole(0.06, 0.01),
        lambda: ref.thin_wire_pole(0.06, 0.001, segments=7),
        lambda: ref.yee_cavity_frequency(0.1, 0.1, 0.1, 1, 1, 0, 1e-3, 1e-3, 1e-3, 1e-11),
        lambda: ref.rect_cavity_modes(0.1, -0.1, 0.1, 3e9),
    ],
)
def test_bad_input_raises_ringprint_error(call):
    """Bad input is refused with the project's one user-facing error type (DEVELOPERS.md)."""
    with pytest.raises(RingprintError):
        call()


# ------------------------------------------------------------------- PEC sphere
def test_pec_sphere_tm1_is_the_analytic_zero():
    """TM_1 of a PEC sphere: k a = +-sqrt(3)/2 - i/2 exactly, Q = 0.866.

    Source: Stratton (1941); Baum, Interaction Note 88 (1971). d/dx[x h_1(x)] = 0 is
    x^2 + i x - 1 = 0 (h_1 = -e^{ix}(1 + i/x)/x), whose roots are these.
    """
    zeros = ref.pec_sphere_ka_zeros(1, "TM")
    expected = np.array([-np.sqrt(3) / 2 - 0.5j, np.sqrt(3) / 2 - 0.5j])
    np.testing.assert_allclose(zeros, expected, atol=1e-13)
    pole = ref.pec_sphere_pole(0.05, n=1, kind="TM")
    assert pole / (C0 / (2 * np.pi * 0.05)) == pytest.approx(np.sqrt(3) / 2 - 0.5j, abs=1e-13)
    assert round(ref.pole_q(pole), 3) == 0.866


def test_pec_sphere_te1_is_purely_damped():
    """TE_1: h_1(x) = 0 at x = -i (1 + i/x = 0): a non-oscillating pole (Stratton 1941)."""
    np.testing.assert_allclose(ref.pec_sphere_ka_zeros(1, "TE"), [-1j], atol=1e-13)


@pytest.mark.parametrize("n", [1, 2, 3, 5])
def test_pec_sphere_zeros_checked_with_scipy_hankel(n):
    """Zeros of h_n (n of them) and of d/dx[x h_n] (n + 1), all decaying.

    Independent evaluation with scipy.special.spherical_jn/yn at complex argument;
    counts from the degree of the Hankel polynomial (A&S 10.1.16); Im < 0 for all
    natural frequencies of a passive radiator (Baum 1971).
    """
    te = ref.pec_sphere_ka_zeros(n, "TE")
    tm = ref.pec_sphere_ka_zeros(n, "TM")
    assert len(te) == n and len(tm) == n + 1
    assert np.all(te.imag < 0) and np.all(tm.imag < 0)
    for x in te:
        h = spherical_jn(n, x) + 1j * spherical_yn(n, x)
        scale = abs(spherical_yn(n, abs(x)))
        assert abs(h) < 1e-9 * scale
    for x in tm:
        h = spherical_jn(n, x) + 1j * spherical_yn(n, x)
        dh = spherical_jn(n, x, derivative=True) + 1j * spherical_yn(n, x, derivative=True)
        scale = abs(spherical_yn(n, abs(x)))
        assert abs(h + x * dh) < 1e-9 * scale


# ------------------------------------------------ cylindrical dielectric resonator
def _magnetic_wall_te01d(a, ell, eps_r):
    """TE01delta by the magnetic-wall waveguide model: k_c a = 2.405, tan(beta L/2) = alpha/beta.

    Source: Pozar, Microwave Engineering, 4th ed., 2012, sec. 6.5 (Cohn's model),
    quoted there as about 10 % accurate (from memory).
    """
    kc = jn_zeros(0, 1)[0] / a

    def g(k0):
        beta = np.sqrt(eps_r * k0**2 - kc**2)
        alpha = np.sqrt(kc**2 - k0**2)
        return np.tan(beta * ell / 2) - alpha / beta

    lo = kc / np.sqrt(eps_r) * (1 + 1e-9)
    hi = min(kc, np.sqrt((np.pi / ell) ** 2 + kc**2) / np.sqrt(eps_r)) * (1 - 1e-9)
    return brentq(g, lo, hi) * C0 / (2 * np.pi)


@pytest.mark.parametrize("a_mm, l_mm, eps_r", [(5.0, 4.0, 38.0), (5.0, 10.0, 30.0), (5.0, 2.5, 50.0), (4.0, 4.0, 36.0)])
def test_kajfez_te01d_agrees_with_magnetic_wall_model(a_mm, l_mm, eps_r):
    """Kajfez & Guillon (1986) vs the magnetic-wall model (Pozar 2012 sec. 6.5).

    The magnetic wall confines the field more than the real open side, so that model
    reads low; it is quoted as ~10 % accurate. So 0.88 < f_wall / f_Kajfez < 1.
    """
    f_k = ref.kajfez_te01d(a_mm * 1e-3, l_mm * 1e-3, eps_r)
    f_w = _magnetic_wall_te01d(a_mm * 1e-3, l_mm * 1e-3, eps_r)
    assert 0.88 < f_w / f_k < 1.0


def test_kajfez_te01d_formula_value_and_range():
    """f[GHz] = 34/(a sqrt(er)) (a/L + 3.45), a, L in mm (Kajfez & Guillon 1986, from memory).

    a = 5 mm, L = 4 mm, er = 38: 34/(5 sqrt 38)(1.25 + 3.45) = 5.1846 GHz (hand
    arithmetic). Out of range (a/L = 3) is refused unless check_range=False.
    """
    assert ref.kajfez_te01d(5e-3, 4e-3, 38.0) == pytest.approx(5.1846e9, rel=1e-4)
    with pytest.raises(RingprintError):
        ref.kajfez_te01d(6e-3, 2e-3, 38.0)
    # a/L = 3 on request: 34/(6 sqrt 38)(3 + 3.45) = 5.9292 GHz (hand arithmetic)
    assert ref.kajfez_te01d(6e-3, 2e-3, 38.0, check_range=False) == pytest.approx(5.9292e9, rel=1e-4)


# ------------------------------------------------------- thin straight conductor
def test_half_wave_dipole_impedance_is_73_plus_j42():
    """Induced-EMF impedance of a thin lambda/2 dipole: 73.1 + j42.5 ohm.

    Source: Balanis, Antenna Theory, 3rd ed., 2005, sec. 4.6 (from memory). At
    kl = pi the radius term drops out, so the value holds for any thin wire.
    """
    f = 1e9
    lam = C0 / f
    assert ref.dipole_radiation_resistance(lam / 2, f) == pytest.approx(73.1, abs=0.1)
    for radius in (1e-5, 1e-3):
        assert ref.dipole_reactance(lam / 2, radius * lam, f) == pytest.approx(42.5, abs=0.1)


def test_dipole_resonant_length_slightly_below_half_wave():
    """First resonance: L a little below lambda/2, shorter for thicker wires (common practice).

    For a/lambda = 1e-3 practice says about 0.47-0.48 lambda (Balanis 2005 sec. 4.6,
    from memory); L -> lambda/2 as the wire gets thinner (logarithmically).
    """
    f = 2.4e9
    lam = C0 / f
    lengths = [ref.half_wave_dipole_length(f, r * lam) / lam for r in (1e-2, 1e-3, 1e-4, 1e-6, 1e-12)]
    assert all(0.0 < a < b < 0.5 for a, b in zip(lengths[:-1], lengths[1:]))
    assert 0.47 <= lengths[1] <= 0.485
    assert lengths[-1] > 0.495


def test_thin_wire_first_resonance_inverts_length():
    """thin_wire_first_resonance is the inverse of half_wave_dipole_length (same reactance zero)."""
    f = 1.575e9
    ell = ref.half_wave_dipole_length(f, 0.5e-3)
    assert ref.thin_wire_first_resonance(ell, 0.5e-3) == pytest.approx(f, rel=1e-9)
    assert ref.thin_wire_first_resonance(ell, 0.5e-3) < C0 / (2 * ell)


def test_thin_wire_pole_matches_tesche_for_omega_10_6():
    """First natural frequency of a thin wire with L/a = 200 (Omega = 2 ln(L/a) = 10.6).

    Source: Tesche, F. M., IEEE Trans. Antennas Propag. 21(1):53-62, 1973, table of
    thin-wire poles: ``s L / (pi c) = -0.0826 + 0.9251 j`` (from memory), i.e.
    ``k L / pi = 0.9251 - 0.0826 j``, Q = 5.60. Tolerance 2.5 % on the frequency and
    2 % on Q: the reduced-kernel Hallen solution drifts by 0.7 % per halving of its
    segments (see ``thin_wire_pole``), and the recalled digits may be off in the last
    place.
    """
    ell, a = 1.0, 1.0 / 200.0
    x = ref.thin_wire_pole(ell, a) * 2.0 * ell / C0
    assert x.real == pytest.approx(0.9251, rel=0.025), x
    assert ref.pole_q(x) == pytest.approx(0.9251 / (2 * 0.0826), rel=0.02), x


def test_thin_wire_pole_tends_to_the_induced_emf_resonance_as_the_wire_thins():
    """Two independent models, one thin-wire limit: Hallen's natural frequency and the
    zero of the induced-EMF reactance (Balanis 2005 sec. 8.5, from memory) both tend to
    ``c / (2 L)``, and to each other, as the wire thins (Hallen 1938: the current becomes
    sinusoidal as 1/Omega -> 0).

    The free oscillation lies below the driven reactance zero (by 6.6 % at L/a = 60, the
    strip of test_e2e_strip.py) and the gap closes monotonically; at L/a = 1e6 it is
    below 0.5 % (computed 0.35 %). The damping falls too: Q grows with L/a.
    """
    ell = 1.0
    gaps, qs = [], []
    for ratio in (60.0, 1e3, 1e6):
        pole = ref.thin_wire_pole(ell, ell / ratio)
        f_x = ref.thin_wire_first_resonance(ell, ell / ratio)
        assert pole.real < f_x < C0 / (2 * ell)
        gaps.append(1.0 - pole.real / f_x)
        qs.append(ref.pole_q(pole))
    assert gaps[0] > gaps[1] > gaps[2] > 0 and gaps[2] < 0.005, gaps
    assert qs[0] < qs[1] < qs[2], qs


def test_thin_wire_pole_segment_spread_is_inside_the_stated_one():
    """Hallen's equation with the reduced kernel (Hallen 1938) at L/a = 60 with segments of
    2a, a and a/2: the frequency moves by less than 0.8 % per halving and Q by less than
    0.3 % (the spread ``thin_wire_pole`` states and the strip check budgets)."""
    ell, a = 0.060, 0.001
    poles = [ref.thin_wire_pole(ell, a, segments=n) for n in (30, 60, 120)]
    for p, q in zip(poles[:-1], poles[1:]):
        assert abs(q.real / p.real - 1.0) < 0.008, poles
        assert abs(ref.pole_q(q) / ref.pole_q(p) - 1.0) < 0.003, poles


# ----------------------------------------------------------------- PEC box cavity
def test_cube_lowest_mode_is_triply_degenerate():
    """Cube of side a: TE101, TE011, TM110 at f = c / (a sqrt 2), then TE111/TM111 at c sqrt3/(2a) (Pozar 2012 sec. 6.3)."""
    a = 0.1
    modes = ref.rect_cavity_modes(a, a, a, 2.7e9)
    assert [(md.kind, md.m, md.n, md.l) for md in modes[:3]] == [("TE", 0, 1, 1), ("TE", 1, 0, 1), ("TM", 1, 1, 0)]
    for md in modes[:3]:
        assert md.frequency_hz == pytest.approx(C0 / (a * np.sqrt(2)), rel=1e-12)
    assert len(modes) == 5
    assert {md.kind for md in modes[3:]} == {"TE", "TM"}
    assert modes[3].frequency_hz == pytest.approx(C0 * np.sqrt(3) / (2 * a), rel=1e-12)


def test_cavity_mode_count_follows_weyl_law():
    """Number of modes below k: V k^3/(3 pi^2) - (a+b+d) k/(2 pi) + ... .

    Leading term: Weyl (1912); the edge correction for a box (Baltes & Hilf,
    Spectra of Finite Systems, 1976) is from memory. With ~3000 modes the
    remaining fluctuation is well under 1 %.
    """
    a, b, d = 0.1, 0.07, 0.05
    f = 30e9
    k = 2 * np.pi * f / C0
    count = len(ref.rect_cavity_modes(a, b, d, f))
    weyl = a * b * d * k**3 / (3 * np.pi**2) - (a + b + d) * k / (2 * np.pi)
    assert count == pytest.approx(weyl, rel=0.01)
    assert all(md.m + md.n + md.l >= 2 and (md.m, md.n, md.l).count(0) <= 1
               for md in ref.rect_cavity_modes(a, b, d, f))


def test_yee_cavity_converges_to_continuum_at_second_order():
    """Yee dispersion error falls as h^2 (Taflove & Hagness 2005 ch. 4) and reads low.

    Halving the cell (and dt, fixed Courant number 0.5 of the 3-D limit) divides the
    error by 4 to within 3 %; the grid mode sits below the continuum (Pozar) mode.
    """
    a, b, d = 0.1, 0.07, 0.05
    exact = 0.5 * C0 * np.sqrt((1 / a) ** 2 + (1 / d) ** 2)  # TE101
    errors = []
    for h in (5e-3, 2.5e-3, 1.25e-3):
        dt = 0.5 * h / (C0 * np.sqrt(3))
        f = ref.yee_cavity_frequency(a, b, d, 1, 0, 1, h, h, h, dt)
        assert f < exact
        errors.append(exact - f)
    assert errors[0] / errors[1] == pytest.approx(4.0, rel=0.03)
    assert errors[1] / errors[2] == pytest.approx(4.0, rel=0.03)


def test_yee_cavity_is_exact_along_the_diagonal_at_the_courant_limit():
    """Cube mode (m, m, m), dx = dy = dz, dt at the 3-D Courant limit: no dispersion.

    Taflove & Hagness (2005) ch. 4: a wave along the grid diagonal at S = 1/sqrt 3
    propagates at exactly c. The continuum value is Pozar's f_mnl.
    """
    a, h = 0.1, 2e-3
    dt = h / (C0 * np.sqrt(3))
    f = ref.yee_cavity_frequency(a, a, a, 2, 2, 2, h, h, h, dt)
    assert f == pytest.approx(0.5 * C0 * np.sqrt(3 * (2 / a) ** 2), rel=1e-12)
