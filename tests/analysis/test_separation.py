"""Mode separation from running DFTs (ringprint.analysis.separation) on exact signals.

Reference: the signal model itself. A sum of damped sinusoids of known complex
frequency, sampled at known times, is summed into DFTs exactly as the solver does;
the closed-form geometric series (any algebra text) must give back every mode's
phasor to rounding, where a plain DFT at each mode's frequency would mix in its
neighbours' tails.
"""

import numpy as np
import pytest

from ringprint.analysis.separation import _series, leakage_system, separate


def _record(f, q, phasors, times):
    w = 2 * np.pi * f - 1j * np.pi * f / q
    field = np.real(np.einsum("kp,kn->np", phasors, np.exp(-1j * np.outer(w, times))))
    return w, field


def _dft(field, times, f):
    return np.einsum("np,jn->jp", field, np.exp(2j * np.pi * np.outer(f, times)))


@pytest.fixture
def signals():
    rng = np.random.default_rng(3)
    f = np.array([1.0e9, 1.15e9, 1.6e9])
    q = np.array([4.0, 30.0, 300.0])  # Q = 4: the conjugate (negative-frequency) term matters
    phasors = rng.normal(size=(3, 40)) + 1j * rng.normal(size=(3, 40))
    dt = 1 / (3 * 1.6e9)
    times = 2e-9 + dt * np.arange(3000)
    return f, q, phasors, times


def test_series_closed_form_equals_the_sum():
    t = 1e-9 + 1e-11 * np.arange(500)
    for x in (0.0, 1e-3, 2 * np.pi * 1e9, 2 * np.pi * 1e9 - 3e8j, np.pi / 1e-11):
        assert _series(np.array(x), t) == pytest.approx(np.exp(1j * x * t).sum(), rel=1e-9, abs=1e-9)


def test_exact_recovery_of_every_phasor(signals):
    f, q, phasors, times = signals
    w, field = _record(f, q, phasors, times)
    got, cond = separate(_dft(field, times, f), times, w)
    np.testing.assert_allclose(got, phasors, atol=1e-10 * np.abs(phasors).max())
    assert 1 <= cond < 1e3


def test_a_plain_dft_would_mix_the_modes(signals):
    """Without the leakage model the Q = 4 mode spoils its neighbour 15 % away by several
    percent (6.5 % measured here); the separation above is exact to rounding."""
    f, q, phasors, times = signals
    w, field = _record(f, q, phasors, times)
    sums = _dft(field, times, f)
    own = _series(w.real - w, times)  # each mode's own DFT response
    naive = 2 * sums / own[:, None]
    err = np.abs(naive - phasors).max(axis=1) / np.abs(phasors).max(axis=1)
    assert err[1] > 0.03


def test_blocks_and_dtype_do_not_change_the_result(signals):
    f, q, phasors, times = signals
    w, field = _record(f, q, phasors, times)
    sums = _dft(field, times, f).reshape(3, 4, 10)
    a, _ = separate(sums, times, w)
    b, _ = separate(sums, times, w, dtype=np.complex64, block=7)
    assert b.shape == (3, 4, 10) and b.dtype == np.complex64
    np.testing.assert_allclose(b, a, rtol=1e-5, atol=1e-6 * np.abs(a).max())


def test_nearly_equal_modes_show_a_large_condition_number():
    times = 1e-11 * np.arange(200)
    w = 2 * np.pi * np.array([1e9, 1e9 * (1 + 1e-7)]) - 1e6j
    assert np.linalg.cond(leakage_system(times, w, w.real)) > 1e5
