"""Touch detuning: how far a fingertip pressed on the outside pulls each mode.

Cavity perturbation (Harrington 1961, sec. 7-2). Air (``eps0``) in a region ``V_t`` is
replaced by tissue of complex relative permittivity ``eps_t`` (``exp(-i w t)``
convention: ``Im eps_t >= 0`` for loss, see :mod:`ringprint.analysis.tissue`). To first
order the complex angular frequency ``omega = w_r - i gamma`` moves by

    delta = d_omega / omega = - Int_Vt( d_eps E0* . E_in ) dV / Int( eps |E0|^2 + mu0 |H0|^2 ) dV,

with ``d_eps = eps0 (eps_t - 1)``, ``E0, H0`` the unperturbed mode and ``E_in`` the field
inside the tissue. The denominator is four times the stored energy, taken from the
lattice itself (``eps = eps0 eps_r``), so it is 4 J for normalized fields.

Local field. Inside a small body of tissue in a slowly varying field the field along
each principal axis of the body is ``E_in,a = E0_a / (1 + N_a (eps_t - 1))``, with
``N_a`` its depolarization factors (exact for an ellipsoid, Stratton 1941 sec. 3.27;
``N_x = (abc/3) R_D(b^2, c^2, a^2)`` with Carlson's elliptic integral R_D, and
``sum N_a = 1``). For a pad pressed on a surface with unit normal ``n``, with factors
``N_n`` along the normal and ``N_t`` in its plane,

    E0* . E_in = L_t |E0|^2 + (L_n - L_t) |n . E0|^2,   L = 1 / (1 + N (eps_t - 1)).

A thin flat pad has ``N_n = 1, N_t = 0`` (tangential E passes, normal D is
continuous: ``E_in = E_t + E_n / eps_t``). The touch map's pad is the ball of tissue
cut by the surface, a hemisphere on a flat face, taken as the spheroid of the same
volume with semi-axes ``(R, R, R/2)``: ``N_n = 0.527, N_t = 0.236``
(:data:`FINGERTIP_DEPOLARIZATION`). Without a local field at all, a high-permittivity
tissue would be overestimated by up to ``|eps_t|`` (about 40 for skin) where E is
normal, and by about ``1 + N_t |eps_t|`` (about 10) where it is tangential.

Q after the touch. With ``omega = w_r - i gamma`` and ``Q = w_r / (2 gamma)``, the new
``omega' = omega (1 + delta)`` has ``w_r' = w_r (1 + Re delta) + gamma Im delta`` and
``gamma' = gamma (1 + Re delta) - w_r Im delta``, so

    1/Q' = 2 gamma' / w_r' = ((1 + Re delta)/Q - 2 Im delta) / (1 + Re delta + Im delta / (2 Q))
         ~ 1/Q - 2 Im delta          (to first order).

A lossy tissue has ``Im eps_t > 0``, hence ``Im delta < 0`` and ``1/Q' > 1/Q``: the
touch adds its own loss ``1/Q_t = -2 Im delta`` (losses add as ``1/Q``; Pozar 2012,
sec. 6.7). The frequency shift reported is ``100 (w_r' / w_r - 1)`` percent.

Limits (measured against exact slab-loaded cavities in
tests/validation/test_touch_perturbation.py). First order drops terms of the size of
the shift itself, and the local field above is the quasi-static one of a pad thin
against the wavelength *inside the tissue*. For a pad of thickness t on a conductor
where E is normal, the normal field inside is not uniform: it grows away from the
metal as in a short-circuited line, ``E_n(u) ~ E0_n/eps_t + (t^2 - u^2) k0^2 E0_n / 2``
(u the height above the metal; the wave equation in the pad with dE_n/du = 0 on the
metal), so the shift comes out too small by a factor of about
``1 + |eps_t| (k0 t)^2 / 3`` and the added loss ``1/Q_t`` by about
``1 + |eps_t|^2 (k0 t)^2 / 3``, because the quasi-static loss
``eps'' |E_n|^2 / |eps_t|^2`` is tiny. The model holds when ``sqrt(|eps_t|) k0 t << 1``.
For skin (``|eps_t|`` about 45) that is t below about 1 mm at 2.4 GHz or 2 mm at 1 GHz.
With the default 5 mm pad on a metal, the first factor is about 1.15 at 1 GHz and 2 at
2.5 GHz, and the Q drop comes out several times too small. Where E is tangential to the
surface (a plastic housing) the shift error is about ``(eps_t - 1) (k0 t)^2 / 3`` and the
loss follows the quasi-static field. So read the map as a ranking of spots and a lower
bound on the detuning. For the size of the effect, run the full-wave model with the
tissue in place.

The map (:func:`touch_map`): touch points, normals and pads as
:mod:`ringprint.analysis.touch_surface` describes.
"""

from __future__ import annotations

import numbers

import numpy as np

from ringprint.analysis.fieldset import FieldSet, ModeField, TouchMap, stored_energy
from ringprint.analysis.tissue import tissue_permittivity
from ringprint.analysis.touch_surface import (PAD_METHODS, TouchSurface, exterior_air, pad_sums,
                                              solid_nodes, touch_points)
from ringprint.errors import RingprintError
from ringprint.fdtd import EPS0

__all__ = ["DEFAULT_PAD_RADIUS_M", "PAD_METHODS", "exterior_air", "perturbation_shift", "q_after",
           "shift_percent", "touch_map", "touch_maps", "touch_points", "worst_spots"]

#: Default pad radius (m): a fingertip contact about 10 mm across (common practice).
DEFAULT_PAD_RADIUS_M = 5e-3
#: Depolarization (along the normal, in the plane) of a thin flat pad.
THIN_PAD_DEPOLARIZATION = (1.0, 0.0)


def ellipsoid_depolarization(a: float, b: float, c: float) -> tuple[float, float, float]:
    """Depolarization factors ``(N_a, N_b, N_c)`` of an ellipsoid with semi-axes a, b, c.

    ``N_a = (abc/3) R_D(b^2, c^2, a^2)`` (Carlson's symmetric elliptic integral);
    ``N_a + N_b + N_c = 1``, 1/3 each for a sphere.

    References
    ----------
    Stratton, J. A., Electromagnetic Theory, McGraw-Hill, 1941, sec. 3.27; Carlson, B. C.,
    Numer. Math. 33:1-16, 1979 (R_D).
    """
    from scipy.special import elliprd

    axes = np.array([a, b, c], float)
    if not np.all(np.isfinite(axes) & (axes > 0)):
        raise RingprintError(f"ellipsoid semi-axes {a!r}, {b!r}, {c!r} must be lengths > 0")
    abc = float(np.prod(axes))
    return tuple(float(abc / 3.0 * elliprd(axes[(k + 1) % 3] ** 2, axes[(k + 2) % 3] ** 2, axes[k] ** 2))
                 for k in range(3))


#: Depolarization (along the normal, in the plane) of the touch pad: a hemisphere of
#: tissue on a flat face, as the spheroid of equal volume with semi-axes (R, R, R/2).
FINGERTIP_DEPOLARIZATION = tuple(ellipsoid_depolarization(1.0, 1.0, 0.5)[k] for k in (2, 0))


def local_factor(eps_t: complex, n_depol: float) -> complex:
    """``E_in / E0 = 1 / (1 + N (eps_t - 1))`` along an axis of depolarization factor N."""
    return 1.0 / (1.0 + n_depol * (eps_t - 1.0))



def _mode(fs: FieldSet, mode) -> ModeField:
    if isinstance(mode, ModeField):
        found = mode
    elif isinstance(mode, numbers.Integral):
        found = fs.mode(int(mode))
    else:
        raise RingprintError(f"mode must be a ModeField or a mode index, got {type(mode).__name__}")
    if found.e.shape != (3, *fs.shape) or found.h.shape != (3, *fs.shape):
        raise RingprintError(f"mode {found.index}: field shape {found.e.shape} does not match the "
                             f"lattice (3, {', '.join(map(str, fs.shape))}); rebuild the field set")
    if not (np.isfinite(found.frequency_hz) and found.frequency_hz > 0):
        raise RingprintError(f"mode {found.index}: frequency {found.frequency_hz!r} Hz must be > 0")
    if not found.q > 0:  # also refuses NaN; inf (lossless) is fine
        raise RingprintError(f"mode {found.index}: Q {found.q!r} must be > 0 (inf for a lossless mode)")
    return found


def _eps_tissue(tissue, frequency_hz: float) -> complex:
    if isinstance(tissue, str):
        return complex(tissue_permittivity(tissue, frequency_hz))
    try:
        eps = complex(tissue)
    except (TypeError, ValueError):
        raise RingprintError(f"tissue must be a tissue name or a complex permittivity, "
                             f"got {tissue!r}") from None
    if not (np.isfinite(eps.real) and np.isfinite(eps.imag) and eps.real >= 1.0 and eps.imag >= 0):
        raise RingprintError(f"tissue permittivity {eps} must have real part >= 1 and imaginary part "
                             f">= 0 (loss, exp(-i w t) convention)")
    return eps


def _energy4(fs: FieldSet, m: ModeField) -> float:
    """``Int(eps |E|^2 + mu0 |H|^2) dV`` over the lattice (four times the stored energy)."""
    total = 4.0 * stored_energy(fs.eps_r, m.e, m.h, fs.node_volumes())
    if not total > 0:
        raise RingprintError(f"mode {m.index} has no stored energy on the lattice; its fields are empty")
    return total


def _unit(normal) -> np.ndarray:
    n = np.asarray(normal, dtype=float)
    if n.shape != (3,) or not np.all(np.isfinite(n)) or np.linalg.norm(n) == 0:
        raise RingprintError(f"normal must be a non-zero 3-vector, got {normal!r}")
    return n / np.linalg.norm(n)


def perturbation_shift(fs: FieldSet, mode, region, eps_tissue, normal=None,
                       depolarization=None) -> complex:
    """Relative complex frequency shift when tissue fills the air nodes of ``region``.

    Parameters
    ----------
    fs : FieldSet
        Lattice, media and fields.
    mode : ModeField or int
        The mode (or its 1-based index in ``fs``).
    region : ndarray of bool, shape ``fs.shape``
        Air nodes filled with tissue; it must not overlap a part.
    eps_tissue : complex or str
        Relative permittivity of the tissue (``Im >= 0`` is loss, ``exp(-i w t)``), or a
        tissue name from :data:`ringprint.analysis.tissue.TISSUES`, evaluated at the
        mode's frequency.
    normal : array_like of 3 floats, optional
        Unit normal of the pad; with it the local field uses ``depolarization`` as
        ``(N_n, N_t)`` (default :data:`THIN_PAD_DEPOLARIZATION`, a thin pad:
        ``E_in = E_t + E_n/eps_t``).
    depolarization : float or (float, float), optional
        Without ``normal``: one factor N for every axis (1/3: a sphere or, nearly, a
        cube); None uses ``E_in = E0``. With ``normal``: ``(N_n, N_t)``.

    Returns
    -------
    complex
        ``d_omega / omega``; the real part is the relative frequency shift (negative:
        down), ``-2 Im`` the added ``1/Q`` (see the module docstring).

    Raises
    ------
    RingprintError
        For a region of the wrong shape, an empty region or one overlapping a part, a
        bad permittivity or normal, or a mode without energy.

    References
    ----------
    Harrington, R. F., *Time-Harmonic Electromagnetic Fields*, McGraw-Hill, 1961,
    sec. 7-2 (cavity perturbation by a material change).
    """
    m = _mode(fs, mode)
    region = np.asarray(region)
    if region.shape != fs.shape or region.dtype != bool:
        raise RingprintError(f"region must be a boolean mask shaped like the lattice {fs.shape}, "
                             f"got {region.dtype} {region.shape}")
    if not region.any():
        raise RingprintError("region selects no node; give at least one air node")
    if (region & solid_nodes(fs)).any():
        raise RingprintError("region overlaps a part; tissue can only replace air nodes")
    eps_t = _eps_tissue(eps_tissue, m.frequency_hz)
    e = m.e[:, region].astype(complex)
    dv = fs.node_volumes()[region]
    s = float(np.sum(dv * np.sum(np.abs(e) ** 2, axis=0)))
    if normal is not None:
        n_n, n_t = THIN_PAD_DEPOLARIZATION if depolarization is None else _pair(depolarization)
        n = _unit(normal)
        en2 = float(np.sum(dv * np.abs(np.einsum("c,cp->p", n, e)) ** 2))
        l_n, l_t = local_factor(eps_t, n_n), local_factor(eps_t, n_t)
        s = l_t * s + (l_n - l_t) * en2
    elif depolarization is not None:
        s = local_factor(eps_t, _factor(depolarization)) * s
    return complex(-EPS0 * (eps_t - 1.0) * s / _energy4(fs, m))


def _factor(v) -> float:
    try:
        v = float(v)
    except (TypeError, ValueError):
        v = np.nan
    if not 0.0 <= v <= 1.0:
        raise RingprintError(f"a depolarization factor must lie in [0, 1], got {v!r}")
    return v


def _pair(v) -> tuple[float, float]:
    try:
        n_n, n_t = v
    except (TypeError, ValueError):
        raise RingprintError(f"with a normal, depolarization is (N_normal, N_tangential), got {v!r}") from None
    return _factor(n_n), _factor(n_t)


def _q_arg(q) -> float:
    q = float(q)
    if not q > 0:
        raise RingprintError(f"Q {q!r} must be > 0 (inf for a lossless mode)")
    return q


def shift_percent(delta, q):
    """Frequency shift in percent, ``100 (w_r'/w_r - 1) = 100 (Re delta + Im delta / (2Q))``."""
    delta = np.asarray(delta, dtype=complex)
    return 100.0 * (delta.real + delta.imag / (2.0 * _q_arg(q)))


def q_after(delta, q):
    """Q with the tissue present, ``Re omega' / (-2 Im omega')`` for ``omega' = omega (1 + delta)``.

    ``q`` may be ``inf`` (lossless before the touch); the result is ``inf`` only when the
    mode stays lossless. See the module docstring for the derivation.
    """
    delta = np.asarray(delta, dtype=complex)
    inv_q = 1.0 / _q_arg(q)
    num = 1.0 + delta.real + 0.5 * delta.imag * inv_q
    den = (1.0 + delta.real) * inv_q - 2.0 * delta.imag
    with np.errstate(divide="ignore"):
        return np.where(den > 0, num / np.where(den > 0, den, 1.0), np.inf)


def _shifts(fs: FieldSet, m: ModeField, surf: TouchSurface, eps_t: complex,
            depolarization=FINGERTIP_DEPOLARIZATION) -> np.ndarray:
    """``delta`` at every touch point (see the module docstring)."""
    at = pad_sums(fs, m, surf)                   # (6, m)
    n = surf.normals.T
    total = at[0] + at[1] + at[2]
    normal = (n[0] ** 2 * at[0] + n[1] ** 2 * at[1] + n[2] ** 2 * at[2]
              + 2.0 * (n[0] * n[1] * at[3] + n[0] * n[2] * at[4] + n[1] * n[2] * at[5]))
    l_n, l_t = (local_factor(eps_t, v) for v in depolarization)
    s = l_t * total + (l_n - l_t) * normal
    return -EPS0 * (eps_t - 1.0) * s / _energy4(fs, m)


def _map(fs: FieldSet, mode, tissue, surf: TouchSurface, depolarization=FINGERTIP_DEPOLARIZATION) -> TouchMap:
    m = _mode(fs, mode)
    delta = _shifts(fs, m, surf, _eps_tissue(tissue, m.frequency_hz), _pair(depolarization))
    return TouchMap(points=surf.points.copy(), normals=surf.normals.copy(),
                    shift_percent=shift_percent(delta, m.q), q_after=q_after(delta, m.q))


def touch_map(fs: FieldSet, mode, tissue="skin-dry", pad_radius_m: float = DEFAULT_PAD_RADIUS_M,
              depolarization=FINGERTIP_DEPOLARIZATION, method: str = "auto") -> TouchMap:
    """Predicted detuning of one mode by a fingertip at every touch point of the outer surface.

    Parameters
    ----------
    fs : FieldSet
        Lattice with at least one part, and the mode's fields.
    mode : ModeField or int
        The mode (or its 1-based index).
    tissue : str or complex
        Tissue name (evaluated at the mode's frequency) or a relative permittivity.
    pad_radius_m : float
        Radius of the tissue ball centred on each touch point (m); at least the touch
        node itself is used when it is below one lattice spacing.
    depolarization : (float, float)
        ``(N_n, N_t)`` of the pad for its local field; default the pressed fingertip
        (:data:`FINGERTIP_DEPOLARIZATION`), :data:`THIN_PAD_DEPOLARIZATION` for a thin pad.
    method : {"auto", "fft", "direct"}
        How the pad sums are taken (module docstring): "auto" uses the FFT on a uniform
        lattice and the direct neighbourhood sum on a graded one; "fft" needs a
        uniform lattice.

    Returns
    -------
    TouchMap
        Points (m), outward normals, shift in percent (negative: down) and Q after.

    Raises
    ------
    RingprintError
        If the lattice has no part, no exterior air, or for a bad tissue or radius.

    References
    ----------
    Harrington, R. F., *Time-Harmonic Electromagnetic Fields*, McGraw-Hill, 1961,
    sec. 7-2 (cavity perturbation); Stratton, J. A., *Electromagnetic Theory*, 1941,
    sec. 3.27 (field inside an ellipsoid: the pad's local field); Bentley, J. L.,
    "Multidimensional binary search trees used for associative searching", Commun.
    ACM 18(9):509-517, 1975 (k-d tree: the pads of a graded lattice).
    """
    m = _mode(fs, mode)
    _eps_tissue(tissue, m.frequency_hz)          # refuse a bad tissue before the geometry work
    return _map(fs, m, tissue, TouchSurface(fs, pad_radius_m, method), depolarization)


def touch_maps(fs: FieldSet, tissue="skin-dry", pad_radius_m: float = DEFAULT_PAD_RADIUS_M,
               depolarization=FINGERTIP_DEPOLARIZATION, method: str = "auto") -> dict:
    """:func:`touch_map` for every mode of ``fs``: ``{mode index: TouchMap}`` (surface found once)."""
    surf = TouchSurface(fs, pad_radius_m, method)
    return {m.index: _map(fs, m, tissue, surf, depolarization) for m in fs.modes}


def worst_spots(tmap: TouchMap, n: int = 5, min_separation_m: float = 0.01,
                q_before: float | None = None) -> list[dict]:
    """The ``n`` touch points with the largest ``|shift|``, at least ``min_separation_m`` apart.

    Greedy: take points in order of decreasing ``|shift_percent|`` and skip any closer
    than ``min_separation_m`` to one already taken (default 10 mm, a fingertip width).
    Each spot is ``{"point_m", "normal", "shift_percent", "q_after", "q_drop_percent"}``;
    ``q_drop_percent = 100 (1 - q_after / q_before)`` needs the mode's Q before the touch
    (``q_before``, e.g. ``mode.q``) and is None without it (a TouchMap does not carry it).
    """
    if not (isinstance(n, numbers.Integral) and n >= 1):
        raise RingprintError(f"n must be a whole number >= 1, got {n!r}")
    if not (isinstance(min_separation_m, numbers.Real) and min_separation_m >= 0):
        raise RingprintError(f"min_separation_m must be a length >= 0 in metres, got {min_separation_m!r}")
    if q_before is not None:
        q_before = _q_arg(q_before)
    size = np.abs(np.asarray(tmap.shift_percent, dtype=float))
    free = np.ones(size.shape, bool)
    taken: list[int] = []
    while len(taken) < n and free.any():
        i = int(np.flatnonzero(free)[np.argmax(size[free])])
        taken.append(i)
        free &= np.linalg.norm(tmap.points - tmap.points[i], axis=1) >= min_separation_m
        free[i] = False
    spots = []
    for i in taken:
        qa = float(tmap.q_after[i])
        drop = None
        if q_before is not None:
            drop = 100.0 if np.isinf(q_before) and np.isfinite(qa) else \
                (0.0 if np.isinf(q_before) else 100.0 * (1.0 - qa / q_before))
        spots.append({"point_m": [float(v) for v in tmap.points[i]],
                      "normal": [float(v) for v in tmap.normals[i]],
                      "shift_percent": float(tmap.shift_percent[i]), "q_after": qa,
                      "q_drop_percent": drop})
    return spots
