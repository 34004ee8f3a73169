"""Test utility: complex frequencies of a ring-down, for the solver validation tests.

Uses the project's harmonic inversion (``ringprint.analysis.harmonic_inversion``)
when it is importable. Until then it falls back to a small matrix-pencil
estimator (Hua, Y. & Sarkar, T. K., "Matrix pencil method for estimating
parameters of exponentially damped/undamped sinusoids in noise", IEEE Trans. ASSP
38(5):814-824, 1990) written here as a test helper only; the real signal-analysis
code belongs to ``ringprint.analysis``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg


@dataclass
class Pole:
    frequency_hz: float
    q: float
    decay_rate: float   # 1/s, amplitude decays as exp(-decay_rate t)
    amplitude: float


def _matrix_pencil(y, dt, rel_tol):
    n = y.size
    pencil = n // 3
    hank = scipy.linalg.hankel(y[: n - pencil], y[n - pencil - 1:])
    _u, s, vh = np.linalg.svd(hank, full_matrices=False)
    m = int(np.sum(s > rel_tol * s[0]))
    v = vh[:m].conj().T
    z = np.linalg.eigvals(np.linalg.pinv(v[:-1]) @ v[1:])
    vander = z[None, :] ** np.arange(n)[:, None]
    amp = np.linalg.lstsq(vander, y.astype(complex), rcond=None)[0]
    return np.log(z) / dt, amp


def ringdown_poles(signal, dt, f_min, f_max, rel_tol=1e-9, min_rel_amplitude=1e-4):
    """Poles with ``f_min <= f <= f_max`` of a real ring-down sampled every ``dt``.

    Poles whose amplitude is below ``min_rel_amplitude`` of the largest in the
    window are dropped. In the matrix-pencil fallback the record is subsampled so
    its Nyquist frequency is about 2.5 f_max (the FDTD record is heavily
    oversampled).
    """
    signal = np.asarray(signal, float)
    try:
        from ringprint.analysis import harmonic_inversion
    except ImportError:
        harmonic_inversion = None
    if harmonic_inversion is not None:
        poles = [Pole(float(m.frequency_hz), float(m.q), float(m.decay_rate),
                      float(np.abs(np.asarray(m.amplitude)).max()))
                 for m in harmonic_inversion(signal, dt, f_min, f_max)]
    else:
        step = max(1, int(1.0 / (2.5 * 2.0 * f_max * dt)))
        s, amp = _matrix_pencil(signal[::step], dt * step, rel_tol)
        poles = []
        for si, ai in zip(s, amp):
            decay = -si.real
            fr = si.imag / (2 * np.pi)
            q = np.inf if decay <= 0 else np.pi * fr / decay
            poles.append(Pole(fr, q, decay, abs(ai)))
    poles = [p for p in poles if f_min <= p.frequency_hz <= f_max]
    if not poles:
        return []
    big = max(p.amplitude for p in poles)
    return sorted((p for p in poles if p.amplitude >= min_rel_amplitude * big),
                  key=lambda p: p.frequency_hz)
