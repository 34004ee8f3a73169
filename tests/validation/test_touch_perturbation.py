"""Cavity perturbation (ringprint.analysis.touch) against exact slab-loaded cavities.

The unperturbed mode is TE101 of an air-filled PEC box a x b x d (x, y, z), in the
exp(-i w t) convention (Pozar, *Microwave Engineering*, 4th ed., 2012, sec. 6.3,
eqs. 6.42, conjugated):

    Ey = E0 sin(pi x/a) sin(pi z/d),  Hx ~ (i E0 beta / (k eta)) sin(pi x/a) cos(pi z/d),
    Hz ~ (-i E0 pi / (a k eta)) cos(pi x/a) sin(pi z/d),  k = sqrt((pi/a)^2 + (pi/d)^2).

It is sampled on a node lattice at the cell centres of the box (midpoint rule), so
lattice sums are volume integrals to O(h^2), and a slab of n nodes is exactly n h thick.

The exact frequency of the box with a dielectric slab (relative permittivity eps)
filling the cross-section against one wall comes from the transverse-resonance
equation of the layered guide (Harrington, *Time-Harmonic Electromagnetic Fields*,
1961, partially filled guides; Pozar 2012 ch. 3, dielectric-loaded guide), derived here:

- slab 0 < z < t, E tangential to it (the mode stays TE to z, Ey = sin(pi x/a) f(z)):
  Ey and Hx ~ dEy/dz continuous at z = t, Ey = 0 at z = 0, d:
  ``kz1 cot(kz1 t) + kz2 cot(kz2 (d - t)) = 0``, ``kz_i^2 = eps_i k0^2 - (pi/a)^2``.
- slab 0 < y < t, E normal to it (LSM to y, potential psi = cos(ky y) per layer; psi
  and (1/eps) dpsi/dy continuous, dpsi/dy = 0 on the walls):
  ``ky1 tan(ky1 t) / eps + ky2 tan(ky2 (b - t)) = 0``, ``ky_i^2 = eps_i k0^2 - kt^2``,
  ``kt^2 = (pi/a)^2 + (pi/d)^2``.

Both left-hand sides are even in kz, ky, so complex square roots give the analytic
continuation (imaginary k, or a lossy slab with complex eps) with no branch choice.
Real roots: scipy.optimize.brentq; complex roots (lossy slab): scipy.optimize.newton
(secant) started from the lossless root.

Tolerances. First-order perturbation drops terms of the order of the shift itself
(relative error O(|delta|), with |delta| ~ 1e-3 here) and the local-field form for the
normal slab neglects the change of the outside field, again O(t/b); the midpoint
lattice adds O((h/t)^2). Each assertion states its bound.
"""

import numpy as np
import pytest
from scipy.optimize import brentq, newton

from ringprint.analysis.fieldset import FieldSet, ModeField
from ringprint.analysis.touch import perturbation_shift, q_after, shift_percent
from ringprint.fdtd import C0, EPS0, MU0

A, B, D = 20e-3, 10e-3, 30e-3    # box (m): TE101 at about 9.0 GHz
H = 0.25e-3                     # lattice spacing (m)
KT = np.hypot(np.pi / A, np.pi / D)


def _box_fieldset() -> FieldSet:
    x, y, z = (np.arange(int(round(L / H))) * H + H / 2 for L in (A, B, D))
    X, _, Z = np.meshgrid(x, y, z, indexing="ij")
    eta = np.sqrt(MU0 / EPS0)
    e = np.zeros((3, *X.shape), complex)
    h = np.zeros_like(e)
    e[1] = np.sin(np.pi * X / A) * np.sin(np.pi * Z / D)
    h[0] = 1j * (np.pi / D) / (KT * eta) * np.sin(np.pi * X / A) * np.cos(np.pi * Z / D)
    h[2] = -1j * (np.pi / A) / (KT * eta) * np.cos(np.pi * X / A) * np.sin(np.pi * Z / D)
    w = 0.25 * np.sum(EPS0 * np.abs(e) ** 2 + MU0 * np.abs(h) ** 2) * H ** 3
    e, h = e / np.sqrt(w), h / np.sqrt(w)       # 1 J, as fields.h5 stores them
    shape = X.shape
    mode = ModeField(1, C0 * KT / (2 * np.pi), np.inf, e, h)
    return FieldSet(x, y, z, np.ones(shape, np.float32), np.zeros(shape, np.float32),
                    np.zeros(shape, np.uint8), parts={}, modes=[mode])


@pytest.fixture(scope="module")
def box():
    return _box_fieldset()


def _tangential(k0, eps, t):
    kz1, kz2 = np.sqrt(eps * k0 ** 2 - (np.pi / A) ** 2 + 0j), np.sqrt(k0 ** 2 - (np.pi / A) ** 2 + 0j)
    return kz1 / np.tan(kz1 * t) + kz2 / np.tan(kz2 * (D - t))


def _normal(k0, eps, t):
    ky1, ky2 = np.sqrt(eps * k0 ** 2 - KT ** 2 + 0j), np.sqrt(k0 ** 2 - KT ** 2 + 0j)
    return ky1 * np.tan(ky1 * t) / eps + ky2 * np.tan(ky2 * (B - t))


def _exact_delta(equation, eps, t):
    """Exact (k0 - KT)/KT of the slab-loaded box; complex eps gives the complex root."""
    real = brentq(lambda k: equation(k, np.real(eps), t).real, 0.8 * KT, KT * (1 - 1e-12), xtol=1e-14)
    if np.imag(eps) == 0:
        return real / KT - 1
    root = newton(lambda k: equation(k, eps, t), real + 0j, tol=1e-12 * KT, maxiter=100)
    assert abs(equation(root, eps, t)) < 1e-6 * KT
    return root / KT - 1


def _slab(fs, axis, nodes):
    region = np.zeros(fs.shape, bool)
    sl = [slice(None)] * 3
    sl[axis] = slice(0, nodes)
    region[tuple(sl)] = True
    return region


def test_lattice_is_normalized(box):
    """The analytic TE101 phasors hold 1 J (fieldset contract) with equal E and H energy
    (Pozar 2012, eqs. 6.43-6.44: W_e = W_m at resonance)."""
    m = box.modes[0]
    we = np.sum(box.electric_density(m)) * box.cell_volume
    wm = np.sum(box.magnetic_density(m)) * box.cell_volume
    assert we + wm == pytest.approx(1.0, rel=1e-6)   # eps_r is stored in float32
    assert we == pytest.approx(wm, rel=1e-3)         # midpoint rule, O((h/d)^2)


def _k0t(t):
    return KT * t


@pytest.mark.parametrize("eps", [1.5, 3.0])
@pytest.mark.parametrize("t_nodes", [4, 8])
def test_tangential_slab_first_order(box, eps, t_nodes):
    """Slab of t = 1 or 2 mm on the z = 0 wall, E tangential to it (E is continuous, no
    local correction). First order neglects how the slab bends the field inside it:
    Ey ~ sin(kz1 z) with kz1^2 - kz^2 = (eps - 1) k0^2, a relative error of about
    (eps - 1) (k0 t)^2 / 3 (Taylor expansion of sin; measured 2.5 % and 9.9 % at
    t = 2 mm), so O(t^2). The midpoint lattice adds at most 1/(4 n^2) for n nodes across
    (the sum of (k + 1/2)^2). Bound: (eps - 1)(k0 t)^2 / 2 + 1/(4 n^2); first order
    underestimates |delta|."""
    exact = _exact_delta(_tangential, eps, t_nodes * H)
    got = perturbation_shift(box, 1, _slab(box, 2, t_nodes), eps, normal=(0, 0, 1))
    uncorrected = perturbation_shift(box, 1, _slab(box, 2, t_nodes), eps)
    assert exact < 0 and got.imag == 0
    error = got.real / exact - 1
    assert -((eps - 1) * _k0t(t_nodes * H) ** 2 / 2 + 0.25 / t_nodes ** 2) < error < 0
    assert uncorrected == pytest.approx(got, rel=1e-12)   # E has no normal part here


def _normal_bound(delta, eps, t):
    """Relative error bound of first order for the normal slab: the remainder is O(delta^2),
    i.e. a relative error O(|delta|) (from the small-t expansion of the exact equation,
    about 3 |delta|: the air layer is b - t, not b, and k0 itself moves), plus the
    tangential E that the wall's H induces in the slab once its normal E drops by eps,
    about eps (k0 t)^2 / 3 (Faraday's law across the layer)."""
    return 4 * abs(delta) + abs(eps) * _k0t(t) ** 2 / 3


@pytest.mark.parametrize("eps, t_nodes", [(1.5, 2), (3.0, 2), (40.0, 1), (40.0, 2)])
def test_normal_slab_needs_local_field(box, eps, t_nodes):
    """Slab of t = 0.25 or 0.5 mm (t/b = 0.025, 0.05) on the y = 0 wall, E normal to it.
    With E_in = E_n / eps the first order matches the exact root within _normal_bound
    (measured: 2.2 %, 4.7 %, 6.0 %, 17 %; the lattice is exact along y since Ey does not
    vary with y). Without the correction the shift is overestimated by the factor eps
    (for the skin-like eps = 40, a fingertip on metal, by a factor near 40)."""
    t = t_nodes * H
    exact = _exact_delta(_normal, eps, t)
    region = _slab(box, 1, t_nodes)
    got = perturbation_shift(box, 1, region, eps, normal=(0, -1, 0))
    naive = perturbation_shift(box, 1, region, eps)
    assert exact < 0
    assert abs(got.real / exact - 1) < _normal_bound(got, eps, t)
    assert abs(naive.real / exact - 1) > 0.4
    assert naive.real / got.real == pytest.approx(eps, rel=1e-9)


@pytest.mark.parametrize("eps", [2.5 + 0.5j, 5.0 + 2.0j])
def test_lossy_slab_q(box, eps):
    """Lossy slab (eps = eps' + i sigma/(w eps0), exp(-i w t)), t = 0.25 mm on the normal
    wall of the lossless box: Q = Re k / (-2 Im k) of the exact complex root vs q_after,
    and the frequency shift vs shift_percent. The loss through E_n / eps is small
    (eps''/|eps|^2), so the relative error of 1/Q carries the O(|delta|) remainder with a
    larger coefficient, plus the loss of the induced tangential E, about
    |eps|^2 (k0 t)^2 / 3 relative; bound 8 |delta| + |eps|^2 (k0 t)^2 / 3 (measured
    4.7 % and 8 %)."""
    t_nodes = 1
    t = t_nodes * H
    exact = _exact_delta(_normal, eps, t)
    assert exact.imag < 0                                   # the tissue's loss damps the mode
    q_exact = (1 + exact.real) / (-2 * exact.imag)
    delta = perturbation_shift(box, 1, _slab(box, 1, t_nodes), eps, normal=(0, 1, 0))
    bound = 8 * abs(delta) + abs(eps) ** 2 * _k0t(t) ** 2 / 3
    assert abs(float(q_after(delta, np.inf)) / q_exact - 1) < bound
    assert abs(float(shift_percent(delta, np.inf)) / (100 * exact.real) - 1) < _normal_bound(delta, eps, t)


@pytest.mark.parametrize("t_nodes", [1, 2])
def test_thick_skin_pad_limit_is_as_documented(box, t_nodes):
    """The limit stated in touch.py: for a skin-like lossy pad (eps = 40 + 20j) on metal
    where E is normal, first order misses the growth of E_n inside the pad,
    E_n(u) ~ E0_n/eps + (t^2 - u^2) k0^2 E0_n / 2 (here k0 = kt, the wave equation in the
    pad with dE_n/du = 0 on the wall). The added loss then comes out several times too
    small (measured: 37 % and 11 % of the exact -Im delta at t = 0.25, 0.5 mm), while
    first order corrected by that term, delta (1 + (eps - 1) (k0 t)^2 / 3), recovers it
    to within 25 % (measured 7 % and 23 %) and the shift to within 8 %."""
    eps, t = 40.0 + 20.0j, t_nodes * H
    exact = _exact_delta(_normal, eps, t)
    delta = perturbation_shift(box, 1, _slab(box, 1, t_nodes), eps, normal=(0, 1, 0))
    assert delta.imag / exact.imag < 0.5                        # loss far too small
    second = delta * (1 + (eps - 1) * _k0t(t) ** 2 / 3)
    assert abs(second.imag / exact.imag - 1) < 0.25
    assert abs(second.real / exact.real - 1) < 0.08


def test_q_after_adds_losses():
    """1/Q' = 1/Q + 1/Q_t to first order (losses add as 1/Q: Pozar 2012, sec. 6.7), with
    1/Q_t = -2 Im delta; exact algebra of omega' = omega (1 + delta) checked at one point."""
    q, delta = 500.0, -1e-3 - 2e-4j
    w = 1.0 - 0.5j / q
    wn = w * (1 + delta)
    assert float(q_after(delta, q)) == pytest.approx(wn.real / (-2 * wn.imag), rel=1e-12)
    assert 1 / float(q_after(delta, q)) == pytest.approx(1 / q + 4e-4, rel=2e-3)
    assert float(shift_percent(delta, q)) == pytest.approx(100 * (wn.real - 1), rel=1e-12)
    assert float(q_after(0.0, q)) == pytest.approx(q) and np.isinf(q_after(-1e-3, np.inf))
