"""Reference resonances computed from published closed forms, for end-to-end checks.

Every function here computes its value from a published formula (roots found with
scipy / mpmath); nothing is a pasted number. The validation tests compare the
solver's poles with these. Conventions: time dependence ``exp(-i w t)``, outgoing
spherical Hankel functions ``h_n = h_n^(1) = j_n + i y_n``, so a decaying natural
resonance has a complex frequency with a *negative* imaginary part. SI units.

Public functions
----------------
dielectric_sphere_ka, dielectric_sphere_pole   Mie poles of a dielectric sphere
pec_sphere_ka_zeros, pec_sphere_pole           poles of a perfectly conducting sphere
kajfez_te01d                                   TE01delta of a cylindrical resonator
dipole_reactance, half_wave_dipole_length,
thin_wire_first_resonance                      thin straight conductor (induced EMF)
thin_wire_pole                                 its natural frequency (Hallen's equation)
rect_cavity_modes, yee_cavity_frequency        closed PEC box, continuum and Yee grid
pole_frequency, pole_q                         f and Q of a complex pole
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from scipy.constants import c as C0
from scipy.optimize import brentq, newton
from scipy.special import factorial, sici, spherical_jn, spherical_yn

from ringprint.errors import RingprintError

__all__ = [
    "CavityMode",
    "dielectric_sphere_ka",
    "dielectric_sphere_pole",
    "dipole_reactance",
    "half_wave_dipole_length",
    "kajfez_te01d",
    "pec_sphere_ka_zeros",
    "pec_sphere_pole",
    "pole_frequency",
    "pole_q",
    "rect_cavity_modes",
    "thin_wire_first_resonance",
    "thin_wire_pole",
    "yee_cavity_frequency",
]

_EULER_GAMMA = 0.5772156649015329


# --------------------------------------------------------------------------- poles
def pole_frequency(pole: complex) -> float:
    """Resonant frequency (Hz) of a complex natural frequency: its real part."""
    return float(np.real(pole))


def pole_q(pole: complex) -> float:
    """Quality factor ``Q = Re(w) / (2 |Im(w)|)`` of a complex natural frequency.

    Works for any complex pole (Hz, rad/s or dimensionless k a): Q is a ratio.
    """
    pole = complex(pole)
    if pole.imag == 0.0:
        return float("inf")
    return abs(pole.real) / (2.0 * abs(pole.imag))


def _check_positive(name: str, value: float) -> float:
    value = float(value)
    if not np.isfinite(value) or value <= 0.0:
        raise RingprintError(f"{name} = {value!r} must be a finite positive number")
    return value


def _check_order_kind(n: int, kind: str) -> str:
    if int(n) != n or n < 1:
        raise RingprintError(f"mode order n = {n!r} must be an integer >= 1")
    kind = str(kind).upper()
    if kind not in ("TE", "TM"):
        raise RingprintError(f"kind = {kind!r} must be 'TE' (magnetic, b_n) or 'TM' (electric, a_n)")
    return kind


# ------------------------------------------------------------- dielectric sphere
def _riccati(n: int, z):
    """Riccati-Bessel psi_n(z) = z j_n(z), xi_n(z) = z h_n(z) and their z-derivatives."""
    jn, yn = spherical_jn(n, z), spherical_yn(n, z)
    djn, dyn = spherical_jn(n, z, derivative=True), spherical_yn(n, z, derivative=True)
    hn, dhn = jn + 1j * yn, djn + 1j * dyn
    return z * jn, jn + z * djn, z * hn, hn + z * dhn


def _mie_denominator(x, m, n: int, kind: str):
    """Denominator of b_n (TE) or a_n (TM), Bohren & Huffman (1983) eqs. 4.56-4.57, mu1 = mu.

    Divided by ``m xi_n(x)`` (TE) or ``xi_n(x)`` (TM), which do not vanish at the
    root, so that the function stays of order one for small x and large m.
    """
    _, _, xi_x, dxi_x = _riccati(n, x)
    psi_mx, dpsi_mx, _, _ = _riccati(n, m * x)
    log_dxi = dxi_x / xi_x
    if kind == "TE":
        return psi_mx * log_dxi / m - dpsi_mx
    return m * psi_mx * log_dxi - dpsi_mx


def _first_bessel_zero(order: int) -> float:
    """First positive zero of the spherical Bessel function j_order (pi for j_0)."""
    f = lambda z: float(spherical_jn(order, z))  # noqa: E731
    grid = np.linspace(0.5, order + 10.0, 400)
    vals = [f(z) for z in grid]
    for a, b, fa, fb in zip(grid[:-1], grid[1:], vals[:-1], vals[1:]):
        if fa * fb < 0:
            return brentq(f, a, b, xtol=1e-14)
    raise RuntimeError("no zero found")  # pragma: no cover - the grid always brackets one


def dielectric_sphere_ka(eps_r: float, n: int = 1, kind: str = "TE") -> complex:
    """Dimensionless natural frequency ``k0 a`` of the lowest radial mode of a dielectric sphere.

    The complex zero of the denominator of the Mie coefficient b_n (``kind="TE"``,
    magnetic multipole) or a_n (``kind="TM"``, electric multipole) of a sphere of
    relative permittivity ``eps_r`` and mu = 1, found with outgoing Hankel functions.

    The root is followed by continuation in the refractive index m = sqrt(eps_r):
    for m -> infinity the TE_n pole obeys ``j_{n-1}(m k0 a) = 0`` and the TM_n pole
    ``j_n(m k0 a) = 0`` (from the small-argument forms of xi_n); the root is then
    tracked down to the requested m with a secant search (scipy.optimize.newton).

    Parameters
    ----------
    eps_r : float
        Relative permittivity of the sphere (real, > 1).
    n : int
        Multipole order (1 = dipole).
    kind : {"TE", "TM"}
        "TE" for the b_n (magnetic) family, "TM" for a_n (electric).

    Returns
    -------
    complex
        ``k0 a`` with negative imaginary part.

    References
    ----------
    Bohren, C. F. & Huffman, D. R., *Absorption and Scattering of Light by Small
    Particles*, Wiley, 1983, eqs. 4.52-4.53 and 4.56-4.57 (Mie coefficients).
    """
    eps_r = _check_positive("eps_r", eps_r)
    kind = _check_order_kind(n, kind)
    if eps_r <= 1.5:
        raise RingprintError(f"eps_r = {eps_r} too close to 1: the sphere has no isolated pole; use eps_r > 1.5")
    m_target = float(np.sqrt(eps_r))
    z0 = _first_bessel_zero(n - 1 if kind == "TE" else n)
    m_start = max(60.0, 2.0 * m_target)
    ms = np.geomspace(m_start, m_target, 60) if m_start > m_target else np.array([m_target])
    x = complex(z0 / ms[0])
    m_prev = ms[0]
    for m in ms:
        guess = x * m_prev / m  # keep m x fixed
        x = complex(newton(_mie_denominator, guess, x1=guess * (1 + 1e-4), args=(m, n, kind),
                           tol=1e-15 * abs(guess), maxiter=100))
        m_prev = m
    if not (x.real > 0 and x.imag < 0):
        raise RingprintError(f"no decaying {kind}_{n} pole found for eps_r = {eps_r}")
    return x


def dielectric_sphere_pole(eps_r: float, radius_m: float, n: int = 1, kind: str = "TE") -> complex:
    """Complex natural frequency (Hz) of a dielectric sphere's lowest TE_n or TM_n mode.

    ``f = c k0a / (2 pi a)`` with ``k0 a`` from :func:`dielectric_sphere_ka`; the
    imaginary part is negative (decay). ``kind="TE"`` with n = 1 is the
    magnetic-dipole (b_1) resonance.

    References
    ----------
    Bohren & Huffman (1983), eqs. 4.56-4.57; see :func:`dielectric_sphere_ka`.
    """
    radius_m = _check_positive("radius_m", radius_m)
    return C0 * dielectric_sphere_ka(eps_r, n, kind) / (2.0 * np.pi * radius_m)


# ------------------------------------------------------------------- PEC sphere
def _hankel_poly(n: int) -> np.ndarray:
    """Coefficients (ascending powers of y = 1/x) of P with h_n(x) = (-i)^(n+1) e^{ix}/x P(1/x)."""
    k = np.arange(n + 1)
    return (1j**k) * factorial(n + k) / (factorial(k) * factorial(n - k) * 2.0**k)


def pec_sphere_ka_zeros(n: int = 1, kind: str = "TM") -> np.ndarray:
    """All natural frequencies ``k a`` of order n of a perfectly conducting sphere.

    TE_n: zeros of h_n(x); TM_n: zeros of d/dx[x h_n(x)]. With
    ``x h_n(x) ~ e^{ix} P(1/x)`` (P a polynomial of degree n), these are the roots
    of ``P(y) = 0`` (n of them) and of ``i P(y) - y^2 P'(y) = 0`` (n + 1 of them),
    ``y = 1/x``. Returned sorted by real part; all lie in the lower half plane.

    References
    ----------
    Stratton, J. A., *Electromagnetic Theory*, McGraw-Hill, 1941, sec. 9.22;
    Baum, C. E., Interaction Note 88, 1971 (singularity expansion). Polynomial form
    of h_n: Abramowitz & Stegun (1964), eq. 10.1.16.
    """
    kind = _check_order_kind(n, kind)
    p = _hankel_poly(n)
    if kind == "TE":
        q = p
    else:
        q = 1j * np.append(p, 0.0)
        q[2:] -= np.arange(1, n + 1) * p[1:]  # - y^2 P'(y)
    y = np.roots(q[::-1])
    x = 1.0 / y
    return x[np.argsort(x.real)]


def pec_sphere_pole(radius_m: float, n: int = 1, kind: str = "TM") -> complex:
    """Highest-Q natural frequency (Hz) of order n of a perfectly conducting sphere.

    Among the zeros of :func:`pec_sphere_ka_zeros` with Re >= 0, the one nearest the
    real axis; ``f = c (k a) / (2 pi a)``. TM_1: ``k a = sqrt(3)/2 - i/2``, Q = 0.866.

    References
    ----------
    Stratton (1941); Baum, Interaction Note 88 (1971).
    """
    radius_m = _check_positive("radius_m", radius_m)
    x = pec_sphere_ka_zeros(n, kind)
    x = x[x.real >= -1e-12]
    best = x[np.argmin(np.abs(x.imag))]
    return complex(C0 * best / (2.0 * np.pi * radius_m))


# ------------------------------------------------- cylindrical dielectric resonator
def kajfez_te01d(radius_m: float, height_m: float, eps_r: float, *, check_range: bool = True) -> float:
    """TE01delta frequency (Hz) of an isolated cylindrical dielectric resonator.

    ``f[GHz] = 34 / (a sqrt(eps_r)) * (a/L + 3.45)`` with radius a and height L in mm;
    about 2 % accurate for 0.5 < a/L < 2 and 30 < eps_r < 50 (from memory). With
    ``check_range`` (default) a geometry outside that range is refused.

    References
    ----------
    Kajfez, D. & Guillon, P. (eds.), *Dielectric Resonators*, Artech House, 1986;
    also quoted in Pozar, *Microwave Engineering*, 4th ed., 2012, sec. 6.5.
    """
    a_mm = 1e3 * _check_positive("radius_m", radius_m)
    l_mm = 1e3 * _check_positive("height_m", height_m)
    eps_r = _check_positive("eps_r", eps_r)
    if check_range and not (0.5 <= a_mm / l_mm <= 2.0 and 30.0 <= eps_r <= 50.0):
        raise RingprintError(
            f"a/L = {a_mm / l_mm:.3g}, eps_r = {eps_r:.3g} outside the formula's range "
            "0.5..2, 30..50; pass check_range=False to use it anyway"
        )
    return 34.0 / (a_mm * np.sqrt(eps_r)) * (a_mm / l_mm + 3.45) * 1e9


# ------------------------------------------------------- thin straight conductor
def dipole_reactance(length_m: float, radius_m: float, f_hz: float) -> float:
    """Reactance (ohm, referred to the current maximum) of a thin centre-fed dipole.

    Induced-EMF method with a sinusoidal current:
    ``X = eta/(4 pi) {2 Si(kl) + cos(kl)[2 Si(kl) - Si(2kl)]
    - sin(kl)[2 Ci(kl) - Ci(2kl) - Ci(2 k a^2 / l)]}``.

    References
    ----------
    Balanis, C. A., *Antenna Theory: Analysis and Design*, 3rd ed., Wiley, 2005,
    sec. 8.5 (self-impedance by the induced-EMF method; equation recalled from
    memory). test_references.py checks it against the half-wave value 42.5 ohm
    quoted in sec. 4.6 (also from memory).
    """
    ell = _check_positive("length_m", length_m)
    a = _check_positive("radius_m", radius_m)
    k = 2.0 * np.pi * _check_positive("f_hz", f_hz) / C0
    kl = k * ell
    si1, ci1 = sici(kl)
    si2, ci2 = sici(2.0 * kl)
    _, cia = sici(2.0 * k * a * a / ell)
    eta0 = 376.730313668
    return eta0 / (4.0 * np.pi) * (
        2.0 * si1 + np.cos(kl) * (2.0 * si1 - si2) - np.sin(kl) * (2.0 * ci1 - ci2 - cia)
    )


def dipole_radiation_resistance(length_m: float, f_hz: float) -> float:
    """Radiation resistance (ohm, at the current maximum) of a thin dipole, induced EMF.

    References
    ----------
    Balanis (2005), sec. 4.5 (finite-length dipole; recalled from memory); 73.1 ohm
    at l = lambda/2, as quoted in sec. 4.6.
    """
    kl = 2.0 * np.pi * _check_positive("f_hz", f_hz) / C0 * _check_positive("length_m", length_m)
    si1, ci1 = sici(kl)
    si2, ci2 = sici(2.0 * kl)
    eta0 = 376.730313668
    return eta0 / (2.0 * np.pi) * (
        _EULER_GAMMA + np.log(kl) - ci1 + 0.5 * np.sin(kl) * (si2 - 2.0 * si1)
        + 0.5 * np.cos(kl) * (_EULER_GAMMA + np.log(kl / 2.0) + ci2 - 2.0 * ci1)
    )


def half_wave_dipole_length(f_hz: float, radius_m: float) -> float:
    """Length (m) of a straight wire of given radius whose first resonance is at f_hz.

    The zero of :func:`dipole_reactance` just below ``lambda/2``: slightly shorter for
    thicker wires, tending to lambda/2 (logarithmically) as the radius vanishes
    (common practice; Balanis 2005 sec. 4.6, from memory). Meant for ``radius << length``.
    """
    lam = C0 / _check_positive("f_hz", f_hz)
    radius_m = _check_positive("radius_m", radius_m)
    if radius_m > 0.01 * lam:
        raise RingprintError(f"radius_m = {radius_m} is not thin (> lambda/100 = {0.01 * lam:.3g} m)")
    return brentq(lambda ell: dipole_reactance(ell, radius_m, f_hz), 0.35 * lam, 0.5 * lam, xtol=1e-12 * lam)


def thin_wire_first_resonance(length_m: float, radius_m: float) -> float:
    """First resonant frequency (Hz) of a thin straight wire: inverse of :func:`half_wave_dipole_length`."""
    ell = _check_positive("length_m", length_m)
    radius_m = _check_positive("radius_m", radius_m)
    if radius_m > 0.02 * ell:
        raise RingprintError(f"radius_m = {radius_m} is not thin (> length/50 = {0.02 * ell:.3g} m)")
    f_half = C0 / (2.0 * ell)
    return brentq(lambda f: dipole_reactance(ell, radius_m, f), 0.8 * f_half, f_half, xtol=1e-12 * f_half)


def _hallen_matrix(k: complex, length: float, radius: float, segments: int) -> np.ndarray:
    """Hallen's equation for a wire without source, on ``segments`` equal segments.

    ``int I(z') e^{ikR} / (4 pi R) dz' = C1 cos kz + C2 sin kz`` with the reduced kernel
    ``R = sqrt((z - z')^2 + a^2)``, the current a sum of triangles on the interior nodes
    (zero at both ends) and the equation matched at every node, ends included: a square
    system in (currents, C1, C2). Each triangle half is integrated with its static part
    ``1/R`` in closed form (asinh) and the smooth rest ``(e^{ikR} - 1)/R`` by 12-point
    Gauss-Legendre quadrature.
    """
    z = np.linspace(-length / 2.0, length / 2.0, segments + 1)
    step = z[1] - z[0]
    gx, gw = np.polynomial.legendre.leggauss(12)
    lo, hi = z[:-1], z[1:]                               # segment s = [lo_s, hi_s]
    u1, u2 = lo[None, :] - z[:, None], hi[None, :] - z[:, None]   # (node m, segment s)
    q = (lo + hi)[None, :, None] / 2 + step / 2 * gx[None, None, :] - z[:, None, None]
    r = np.hypot(q, radius)
    smooth = np.expm1(1j * k * r) / r * gw * (step / 2)
    # on segment s: the rising half of triangle s+1 is (z' - lo)/h, the falling half of
    # triangle s is (hi - z')/h; with u = z' - z_m both are alpha + beta u
    asinh = np.arcsinh(u2 / radius) - np.arcsinh(u1 / radius)
    root = np.hypot(u2, radius) - np.hypot(u1, radius)
    rise = (-u1 * asinh + root) / step + np.sum(smooth * (q - u1[..., None]), axis=-1) / step
    fall = (u2 * asinh - root) / step + np.sum(smooth * (u2[..., None] - q), axis=-1) / step
    mat = np.empty((segments + 1, segments + 1), complex)
    mat[:, : segments - 1] = (rise[:, :-1] + fall[:, 1:]) / (4.0 * np.pi)   # interior nodes 1..N-1
    mat[:, segments - 1] = -np.cos(k * z)
    mat[:, segments] = -np.sin(k * z)
    return mat


def thin_wire_pole(length_m: float, radius_m: float, segments: int | None = None) -> complex:
    """Lowest natural frequency (Hz, complex, decaying) of a thin straight conductor.

    The first complex ``k`` at which Hallen's equation without source
    (:func:`_hallen_matrix`) has a non-trivial solution, ``det = 0``, found by a secant
    search from ``k L / pi = 0.9 - 0.1 i``; ``f = c k / (2 pi)``. This is the pole a
    ring-down measures (a free oscillation), not the zero of a centre-fed dipole's
    reactance (:func:`thin_wire_first_resonance`), which for ``L/a`` near 50 lies 6-7 %
    higher. ``segments`` defaults to ``L / a`` rounded to an even number, kept within
    40..200 (one segment per radius where that is affordable); the reduced kernel makes
    the result drift by about 0.7 % in frequency (0.2 % in Q) for each halving of the
    segment at ``L/a = 60`` (measured), and less for thinner wires.

    References
    ----------
    Hallen, E., Nova Acta Regiae Soc. Sci. Upsaliensis, Ser. IV, 11(4), 1938
    (Hallen's integral equation); natural frequencies of thin wires as its complex
    zeros: Tesche, F. M., IEEE Trans. Antennas Propag. 21(1):53-62, 1973, and Baum,
    C. E., Interaction Note 88, 1971 (singularity expansion).
    """
    ell = _check_positive("length_m", length_m)
    a = _check_positive("radius_m", radius_m)
    if a > 0.05 * ell:
        raise RingprintError(f"radius_m = {a} is not thin (> length/20 = {0.05 * ell:.3g} m)")
    n = min(200, max(40, 2 * int(round(ell / a / 2)))) if segments is None else int(segments)
    if n < 4 or n % 2:
        raise RingprintError(f"segments = {segments!r} must be an even integer >= 4")
    guess = 0.9 - 0.1j
    _, log_scale = np.linalg.slogdet(_hallen_matrix(guess * np.pi / ell, ell, a, n))

    def det(x):  # the determinant relative to its size at the guess (no overflow)
        sign, log_abs = np.linalg.slogdet(_hallen_matrix(complex(x) * np.pi / ell, ell, a, n))
        return sign * np.exp(log_abs - log_scale)

    x = complex(newton(det, guess, x1=guess * (1 + 1e-3), tol=1e-13, maxiter=100))
    if not (0.5 < x.real < 1.2 and x.imag < 0):
        raise RingprintError(f"no decaying first pole found for length {ell} m, radius {a} m")
    return C0 * x / (2.0 * ell)


# ----------------------------------------------------------------- PEC box cavity
class CavityMode(NamedTuple):
    """One mode of a closed PEC box: frequency (Hz), indices, and "TE"/"TM" (to z)."""

    frequency_hz: float
    m: int
    n: int
    l: int
    kind: str


def rect_cavity_modes(a: float, b: float, d: float, f_max: float) -> list[CavityMode]:
    """All modes of an air-filled a x b x d PEC box up to f_max, sorted by frequency.

    ``f_mnl = (c/2) sqrt((m/a)^2 + (n/b)^2 + (l/d)^2)``. Relative to z: TE_mnl needs
    l >= 1 and (m, n) != (0, 0); TM_mnl needs m, n >= 1 (l >= 0). Degenerate modes
    are listed once per field pattern.

    References
    ----------
    Pozar, D. M., *Microwave Engineering*, 4th ed., Wiley, 2012, sec. 6.3.
    """
    a, b, d = (_check_positive(k, v) for k, v in (("a", a), ("b", b), ("d", d)))
    f_max = _check_positive("f_max", f_max)
    mm, nn, ll = (int(np.floor(2.0 * f_max * s / C0)) for s in (a, b, d))
    modes = []
    for m in range(mm + 1):
        for n in range(nn + 1):
            for l in range(ll + 1):
                f = 0.5 * C0 * np.sqrt((m / a) ** 2 + (n / b) ** 2 + (l / d) ** 2)
                if f > f_max:
                    continue
                if l >= 1 and (m, n) != (0, 0):
                    modes.append(CavityMode(f, m, n, l, "TE"))
                if m >= 1 and n >= 1:
                    modes.append(CavityMode(f, m, n, l, "TM"))
    modes.sort(key=lambda md: (md.frequency_hz, md.kind, md.m, md.n, md.l))
    return modes


def yee_cavity_frequency(a, b, d, m, n, l, dx, dy, dz, dt) -> float:
    """Frequency (Hz) of the (m, n, l) mode of a PEC box on a uniform Yee grid.

    The discrete dispersion relation with ``k = (m pi/a, n pi/b, l pi/d)``:
    ``[sin(w dt/2)/(c dt)]^2 = sum_i [sin(k_i d_i/2)/d_i]^2``. Needs a, b, d to be whole
    multiples of dx, dy, dz for the box to sit on the grid (not checked here).
    Raises if dt exceeds the Courant limit ``1/(c sqrt(sum 1/d_i^2))`` (unstable grid).

    References
    ----------
    Taflove, A. & Hagness, S. C., *Computational Electrodynamics: The FDTD Method*,
    3rd ed., Artech House, 2005, ch. 4 (numerical dispersion).
    """
    a, b, d, dx, dy, dz, dt = (
        _check_positive(k, v)
        for k, v in (("a", a), ("b", b), ("d", d), ("dx", dx), ("dy", dy), ("dz", dz), ("dt", dt))
    )
    dt_max = 1.0 / (C0 * np.sqrt(dx**-2 + dy**-2 + dz**-2))
    if dt > dt_max * (1.0 + 1e-12):
        raise RingprintError(f"dt = {dt:.4g} s exceeds the Courant limit {dt_max:.4g} s of this grid; reduce dt")
    s = sum(
        (np.sin(q * np.pi / size * h / 2.0) / h) ** 2
        for q, size, h in ((m, a, dx), (n, b, dy), (l, d, dz))
    )
    arg = min(C0 * dt * np.sqrt(s), 1.0)  # <= 1 below the Courant limit (rounding only)
    return 2.0 / dt * np.arcsin(arg) / (2.0 * np.pi)
