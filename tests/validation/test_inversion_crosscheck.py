"""Filter diagonalization against the matrix pencil on the same records.

Reference: Hua, Y. & Sarkar, T. K., IEEE Trans. ASSP 38(5):814-824, 1990 (matrix
pencil), an estimator independent of filter diagonalization (Mandelshtam & Taylor
1997): it uses the whole band, an SVD of the full Hankel matrix and least-squares
amplitudes. Agreement to round-off on exact data, and within the statistical errors on
noisy data, checks both.
"""

import numpy as np
import pytest

from ringprint.analysis import harmonic_inversion, matrix_pencil

DT, N = 1e-10, 1500


def damped(modes, n=N, dt=DT):
    """Real record of modes ``(f_hz, q, d)``: ``2 Re sum d exp(-i w t)``."""
    t = np.arange(n) * dt
    x = np.zeros(n, complex)
    for f, q, d in modes:
        x += d * np.exp(-1j * (2 * np.pi * f - 1j * np.pi * abs(f) / q) * t)
    return 2 * x.real


MODES = [(0.61e9, 15, 1.0), (1.07e9, 900, 0.2j), (1.10e9, 250, 0.5 * np.exp(2j)),
         (1.93e9, 3000, 0.05), (2.71e9, 60, 0.3)]


def test_exact_record_both_agree():
    x = damped(MODES)
    fdm = harmonic_inversion(x, DT, 0.5e9, 3.0e9)
    mp = matrix_pencil(x, DT, len(MODES))
    assert len(fdm) == len(mp) == len(MODES)
    for a, b in zip(fdm, mp):
        assert a.frequency_hz == pytest.approx(b.frequency_hz, rel=1e-8)
        assert a.q == pytest.approx(b.q, rel=1e-6)
        assert a.amplitude[0] == pytest.approx(b.amplitude[0], rel=1e-6)


def test_noisy_record_agree_within_errors():
    rng = np.random.default_rng(11)
    x = damped(MODES) + 1e-3 * rng.standard_normal(N)
    fdm = harmonic_inversion(x, DT, 0.5e9, 3.0e9)
    mp = matrix_pencil(x, DT, len(MODES))
    assert len(fdm) == len(MODES)
    for a, b, (f, q, d) in zip(fdm, mp, MODES):
        # each estimate near the truth within a few of its own reported errors, and the
        # two estimators near each other on that scale
        scale = 5 * max(a.error, b.error) * f
        assert abs(a.frequency_hz - f) < scale
        assert abs(b.frequency_hz - f) < scale
        assert abs(a.frequency_hz - b.frequency_hz) < scale
        assert a.q == pytest.approx(b.q, rel=0.05)
