"""Resonances of a measured (or simulated) reflection S11(f): frequency, loaded Q,
coupling and unloaded Q, each with an error.

Rules (the comparison report cites them):

- **Finding them**: scikit-rf's vector fitting (:class:`skrf.vectorFitting.VectorFitting`,
  its adaptive ``auto_fit``; Gustavsen & Semlyen 1999) fits the whole trace with
  poles. A complex pole ``p = -sigma + j w`` inside the measured span, with loaded Q
  ``w / (2 sigma)`` of at least ``q_min`` and a circle at least ``MIN_DIAMETER``
  across (``|residue| / sigma``), is a resonance.
- **Measuring each one** (Kajfez 1994; Kajfez 2011): near a resonance the reflection
  traces a circle, ``S(t) = (a1 t + a2) / (a3 t + 1)`` with ``t = 2 (f - f0) / f0``.
  ringprint adds one term, ``b t^2`` in the numerator: a circle plus a background
  that drifts linearly across the window, ``S = alpha t + beta + gamma/(a3 t + 1)``
  (the probe loop's own reactance ``w L``, the other modes and any cable length move
  the detuned point; without the term that drift biases Q_L by several percent, with
  it the fit is exact for a plain circle, ``b = 0``). The four complex coefficients
  are fitted by linear least squares of ``S (a3 t + 1) = b t^2 + a1 t + a2`` to the
  points within ``WINDOW_HALF_WIDTHS`` half-power half-widths ``f/(2 Q_L)`` of the
  resonance (at least ``MIN_POINTS`` points), weighted by ``1/|a3 t + 1|`` of the
  previous pass and re-centred ``f0 = f_L``; ``PASSES`` passes. The pole
  ``t_p = -1/a3`` gives ``f_L = f0 (1 + Re t_p / 2)`` and ``Q_L = f_L / (f0 |Im t_p|)``.
- **Coupling**: at resonance the detuned reflection is ``S_d = alpha t_L + beta``
  (``alpha = b/a3``, ``beta = (b t_p + a1)/a3``, ``t_L = Re t_p``) and the circle's
  diameter ``d = |gamma| / (|a3| |Im t_p|)`` with ``gamma = b t_p^2 + a1 t_p + a2``.
  With lossless coupling ``|S_d| = 1`` and
  ``kappa = d / (2 - d)``; coupling loss shrinks the whole circle by ``|S_d|``
  (modelled as a matched attenuator between port and resonator), so
  ``d' = d / |S_d|`` and ``kappa = d' / (2 - d')``; ``kappa < 1`` is under-coupled,
  ``> 1`` over-coupled. Unloaded ``Q_0 = Q_L (1 + kappa)`` (reflection-type Q
  measurement, Kajfez & Hwan 1984).
- **Errors**: the least-squares covariance of the coefficients, scaled by the
  residual of the fit, carried to ``f_L, Q_L, kappa, Q_0`` through their numerical
  derivatives (one standard deviation). Noise-free data give errors near round-off.
- **Fallback**: a circle fit whose ``f_L`` lands farther than ``f/(2 Q_L)`` from the
  pole, or whose ``Q_L`` differs from the pole's by a factor of 2 or more, or that
  finds no circle at all (a weakly coupled, broad line on a background that is not
  linear across it) is replaced by the pole itself: ``f_L`` and ``Q_L`` from ``p``,
  the diameter ``|r| / |Re p|`` about the rest of the fitted model at ``f_L``
  (``method = "vector fit"``); these carry no error estimate (NaN, null in JSON).

References
----------
B. Gustavsen and A. Semlyen, "Rational approximation of frequency domain responses
by vector fitting", IEEE Trans. Power Deliv. 14(3):1052-1061, 1999.
D. Kajfez and E. J. Hwan, "Q-factor measurement with network analyzer", IEEE Trans.
Microw. Theory Tech. 32(7):666-670, 1984.
D. Kajfez, "Linear fractional curve fitting for measurement of high Q factors", IEEE
Trans. Microw. Theory Tech. 42(7):1149-1153, 1994.
D. Kajfez, Q Factor Measurements Using MATLAB, Artech House, 2011.
"""

from __future__ import annotations

import logging
import warnings
from dataclasses import asdict, dataclass

import numpy as np

from ringprint.errors import RingprintError

log = logging.getLogger("ringprint.bench")

MIN_DIAMETER = 0.01
WINDOW_HALF_WIDTHS = 4.0
MIN_POINTS = 9
PASSES = 5


@dataclass(frozen=True)
class CircleFit:
    """One resonance measured from its circle (module docstring); errors are 1 sigma."""

    frequency_hz: float
    frequency_error_hz: float
    q_loaded: float
    q_loaded_error: float
    coupling: float
    coupling_error: float
    q_unloaded: float
    q_unloaded_error: float
    detuned: complex
    diameter: float
    points: int
    method: str = "circle fit"


@dataclass(frozen=True)
class BenchMode:
    """A resonance of a reflection trace: the circle fit plus vector fitting's pole."""

    fit: CircleFit
    vf_frequency_hz: float
    vf_q_loaded: float
    depth_db: float

    def to_dict(self) -> dict:
        d = {k: (float(v) if isinstance(v, (float, np.floating)) else v)
             for k, v in asdict(self.fit).items() if k != "detuned"}
        d.update(vf_frequency_hz=float(self.vf_frequency_hz), vf_q_loaded=float(self.vf_q_loaded),
                 depth_db=float(self.depth_db))
        return d


def _solve(t, s, w):
    """Weighted least squares of ``s = a1 t + a2 - a3 t s + b t^2``: ``(a1, a2, a3, b)``
    and their covariance."""
    a = np.stack([t, np.ones_like(t), -t * s, t * t], axis=1) * w[:, None]
    b = s * w
    coef, *_ = np.linalg.lstsq(a, b, rcond=None)
    resid = b - a @ coef
    dof = max(2 * t.size - 8, 1)
    var = float(np.sum(np.abs(resid) ** 2)) / dof
    cov = var * np.linalg.pinv(a.conj().T @ a)
    return coef, cov, resid


def _derived(coef, f0):
    a1, a2, a3, b = coef
    tp = -1.0 / a3
    f_l = f0 * (1.0 + tp.real / 2.0)
    q_l = f_l / (f0 * abs(tp.imag))
    sd = (b / a3) * tp.real + (b * tp + a1) / a3
    d = abs(b * tp * tp + a1 * tp + a2) / (abs(a3) * abs(tp.imag))
    dn = d / abs(sd)
    kappa = dn / (2.0 - dn)
    return np.array([f_l, q_l, kappa, q_l * (1.0 + kappa)]), sd, d


def _propagate(coef, cov, f0):
    """1-sigma errors of (f_L, Q_L, kappa, Q_0) from the coefficient covariance."""
    base, _, _ = _derived(coef, f0)
    jac = np.zeros((4, 8))
    for k in range(4):
        for part, unit in ((0, 1.0), (1, 1j)):
            h = 1e-7 * max(abs(coef[k]), 1e-12)
            c = coef.copy()
            c[k] += h * unit
            jac[:, 2 * k + part] = (_derived(c, f0)[0] - base) / h
    # covariance of the real and imaginary parts of a circular complex estimate
    real_cov = np.zeros((8, 8))
    real_cov[0::2, 0::2] = real_cov[1::2, 1::2] = 0.5 * cov.real
    real_cov[0::2, 1::2] = -0.5 * cov.imag
    real_cov[1::2, 0::2] = 0.5 * cov.imag
    var = np.einsum("ij,jk,ik->i", jac, real_cov, jac)
    return np.sqrt(np.maximum(var, 0.0))


def circle_fit(f_hz, s, f_guess: float, q_guess: float) -> CircleFit:
    """Measure one resonance near ``f_guess`` by the linear fractional fit (module docstring).

    Parameters
    ----------
    f_hz, s : array_like
        Increasing frequencies (Hz) and complex reflection (``exp(+j w t)`` convention).
    f_guess, q_guess : float
        Where the resonance is and roughly its loaded Q (> 0).

    References
    ----------
    D. Kajfez, IEEE Trans. Microw. Theory Tech. 42(7):1149-1153, 1994; D. Kajfez and
    E. J. Hwan, IEEE Trans. Microw. Theory Tech. 32(7):666-670, 1984.
    """
    f_hz = np.asarray(f_hz, float)
    s = np.asarray(s, complex)
    if f_hz.size < MIN_POINTS:
        raise RingprintError(f"a circle fit needs at least {MIN_POINTS} frequencies, got {f_hz.size}")
    if not (q_guess > 0 and f_guess > 0):
        raise RingprintError(f"circle fit: f_guess = {f_guess!r}, q_guess = {q_guess!r} must be > 0")
    f0, q = float(f_guess), float(q_guess)
    for k in range(PASSES + 1):
        half = WINDOW_HALF_WIDTHS * f0 / (2.0 * q)
        sel = np.flatnonzero(np.abs(f_hz - f0) <= half)
        if sel.size < MIN_POINTS:
            sel = np.sort(np.argsort(np.abs(f_hz - f0))[:MIN_POINTS])
        t = 2.0 * (f_hz[sel] - f0) / f0
        # 1/|a3 t + 1| of the previous pass, which is 1/|1 + 2j Q_L (f - f_L)/f_L| up to a constant
        w = np.ones(sel.size) if k == 0 else 1.0 / np.abs(1.0 + 2j * q * (f_hz[sel] - f0) / f0)
        coef, cov, _ = _solve(t, s[sel], w)
        vals, sd, d = _derived(coef, f0)
        if not (np.all(np.isfinite(vals)) and vals[1] > 0):
            raise RingprintError(f"circle fit near {f_guess:.6g} Hz found no resonance (Q_L "
                                 f"{vals[1]:.3g}); the trace shows no circle there")
        if k < PASSES:
            f0, q = float(vals[0]), float(vals[1])
    err = _propagate(coef, cov, f0)
    return CircleFit(float(vals[0]), float(err[0]), float(vals[1]), float(err[1]), float(vals[2]),
                     float(err[2]), float(vals[3]), float(err[3]), complex(sd), float(d), int(sel.size))


def vector_fit_poles(f_hz, s, z0: float = 50.0):
    """Poles and residues of a reflection trace by scikit-rf's adaptive vector fitting.

    Returns ``(poles, residues, model)``: poles and residues in rad/s (``s = j w``;
    complex poles once, with ``Im p > 0``) and ``model(f_hz)``, the fitted response.
    """
    import skrf
    from skrf.vectorFitting import VectorFitting

    net = skrf.Network(frequency=skrf.Frequency.from_f(np.asarray(f_hz, float), unit="hz"),
                       s=np.asarray(s, complex).reshape(-1, 1, 1), z0=float(z0))
    vf = VectorFitting(net)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        vf.auto_fit()
    poles = np.asarray(vf.poles)
    residues = np.asarray(vf.residues)[0]
    return poles, residues, lambda f: np.asarray(vf.get_model_response(0, 0, freqs=np.asarray(f, float)))


def pole_fit(p: complex, r: complex, model) -> CircleFit:
    """A resonance measured from one vector-fitting pole and residue (the fallback of the
    module docstring): ``f_L = Im p / 2 pi``, ``Q_L = Im p / (2 |Re p|)``, the circle
    ``d = |r| / |Re p|`` about the rest of the fitted model at ``f_L``; no error estimate."""
    w, sigma = p.imag, -p.real
    f_l = w / (2 * np.pi)
    jw = 1j * w
    sd = complex(model([f_l])[0]) - r / (jw - p) - np.conj(r) / (jw - np.conj(p))
    d = abs(r) / sigma
    dn = d / abs(sd)
    kappa = dn / (2.0 - dn)
    q_l = w / (2 * sigma)
    nan = float("nan")
    return CircleFit(float(f_l), nan, float(q_l), nan, float(kappa), nan, float(q_l * (1 + kappa)), nan,
                     sd, float(d), 0, "vector fit")


def reflection_resonances(f_hz, s, z0: float = 50.0, q_min: float = 2.0,
                          min_diameter: float = MIN_DIAMETER) -> list[BenchMode]:
    """Every resonance of a reflection trace (module docstring), sorted by frequency.

    ``min_diameter``: smallest circle counted (default 0.01, a dip of about 0.09 dB
    at ``|S| ~ 1``, above the trace noise of a calibrated analyzer, common practice);
    lower it for noise-free simulated traces of a weakly coupled probe.
    """
    f_hz = np.asarray(f_hz, float)
    s = np.asarray(s, complex)
    if f_hz.size < MIN_POINTS:
        raise RingprintError(f"the trace has {f_hz.size} frequencies; at least {MIN_POINTS} are needed "
                             "to find resonances")
    poles, residues, model = vector_fit_poles(f_hz, s, z0)
    out = []
    for p, r in zip(poles, residues):
        w, sigma = p.imag, -p.real
        if w <= 0 or sigma <= 0:
            continue
        f_vf, q_vf = w / (2 * np.pi), w / (2 * sigma)
        if not (f_hz[0] <= f_vf <= f_hz[-1] and q_vf >= q_min and abs(r) / sigma >= min_diameter):
            continue
        try:
            fit = circle_fit(f_hz, s, f_vf, q_vf)
            if not (abs(fit.frequency_hz - f_vf) <= f_vf / (2 * q_vf) and 0.5 < fit.q_loaded / q_vf < 2):
                fit = None
        except (RingprintError, np.linalg.LinAlgError, ZeroDivisionError, FloatingPointError):
            fit = None
        if fit is None:
            log.info("resonance near %.6g Hz: no clean circle; measured from its pole", f_vf)
            fit = pole_fit(p, r, model)
        k = int(np.argmin(np.abs(f_hz - fit.frequency_hz)))
        depth = float(20 * np.log10(max(abs(s[k]), 1e-300)))
        out.append(BenchMode(fit, float(f_vf), float(q_vf), depth))
    return sorted(out, key=lambda m: m.fit.frequency_hz)
