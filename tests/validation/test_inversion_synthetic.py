"""Filter diagonalization on exact sums of damped sinusoids.

Reference: the signals are built from their parameters, so the parameters themselves
are the reference values (the signal model of Mandelshtam & Taylor 1997,
``c_n = sum_k d_k exp(-i w_k n dt)``). In exact arithmetic the method recovers them
exactly; the tolerances (1e-6 relative, as the issue asks) leave room for round-off and
for the -100 dB aliasing floor of the decimation filter.
"""

import numpy as np
import pytest
import scipy.signal

from ringprint.analysis import harmonic_inversion

from _synthetic import damped


def match(found, modes):
    """For each reference mode, the found resonance nearest in frequency."""
    return [min(found, key=lambda r: abs(r.frequency_hz - f)) for f, _, _ in modes]


DT = 1e-11          # 100 GHz sampling: an FDTD-like, heavily oversampled record
N = 20000           # T = 200 ns


def test_several_modes_wide_q_and_amplitude_range():
    # Q from 5 to 5000, amplitudes over three decades, two modes closer than 1/T.
    sep = 0.5 / (N * DT)
    modes = [(1.0e9, 5, 0.5), (1.5e9, 5000, 0.005 * np.exp(1j)), (1.8e9, 300, 0.25j),
             (1.8e9 + sep, 300, 0.2), (2.3e9, 50, 5e-4 * np.exp(-2j))]
    found = harmonic_inversion(damped(modes, N, DT), DT, 0.8e9, 2.5e9)
    assert len(found) == len(modes)
    for r, (f, q, d) in zip(match(found, modes), modes):
        assert r.frequency_hz == pytest.approx(f, rel=1e-6)
        assert r.q == pytest.approx(q, rel=1e-6)
        assert r.decay_rate == pytest.approx(np.pi * f / q, rel=1e-6)
        assert abs(r.amplitude[0] - d) <= 1e-5 * abs(d)
        assert r.error < 1e-6


def test_modes_closer_than_fourier_resolution_fft_sees_one_peak():
    # Two modes 0.4/T apart: below the resolution limit 1/T of a Fourier transform of a
    # record of length T (common practice), so the zero-padded FFT of the same record
    # shows one peak there, while the inversion finds both.
    n, dt = 4000, 1e-10
    sep = 0.4 / (n * dt)
    modes = [(1.2e9, 4000, 1.0), (1.2e9 + sep, 4000, 0.8)]
    x = damped(modes, n, dt)
    spec = np.abs(np.fft.rfft(x, 64 * n))
    freqs = np.fft.rfftfreq(64 * n, dt)
    band = (freqs > 1.2e9 - 5 / (n * dt)) & (freqs < 1.2e9 + 5 / (n * dt))
    peaks, _ = scipy.signal.find_peaks(spec[band], prominence=0.05 * spec[band].max())
    assert len(peaks) == 1
    found = harmonic_inversion(x, dt, 1.1e9, 1.3e9)
    assert len(found) == 2
    for r, (f, q, d) in zip(match(found, modes), modes):
        assert r.frequency_hz == pytest.approx(f, rel=1e-6)
        assert r.q == pytest.approx(q, rel=1e-6)


def test_q_far_above_record_length():
    # Q far above pi f T (the envelope hardly decays over the record): the decay rate is
    # still recovered, as Mandelshtam & Taylor (1997) show for noise-free signals.
    n, dt = 3000, 1e-10
    modes = [(1.0e9, 2e5, 1.0), (1.1e9, 1e6, 0.3)]   # pi f T ~ 940
    found = harmonic_inversion(damped(modes, n, dt), dt, 0.9e9, 1.2e9)
    assert len(found) == 2
    for r, (f, q, d) in zip(match(found, modes), modes):
        assert r.frequency_hz == pytest.approx(f, rel=1e-9)
        assert r.q == pytest.approx(q, rel=1e-4)


def test_long_record_many_modes_in_window():
    # 2e5 samples and 40 modes in the window: the decimated record is short, the window
    # is split into sub-windows, all modes come back to 1e-6.
    rng = np.random.default_rng(7)
    n, dt = 200_000, 2e-12
    freqs = np.linspace(2.0e9, 3.0e9, 40) + rng.uniform(-5e6, 5e6, 40)
    modes = [(f, q, a * np.exp(1j * p)) for f, q, a, p in
             zip(freqs, rng.uniform(50, 3000, 40), rng.uniform(0.01, 1, 40),
                 rng.uniform(0, 2 * np.pi, 40))]
    found = harmonic_inversion(damped(modes, n, dt), dt, 1.95e9, 3.05e9)
    assert len(found) == 40
    for r, (f, q, d) in zip(match(found, modes), modes):
        assert r.frequency_hz == pytest.approx(f, rel=1e-6)
        assert r.q == pytest.approx(q, rel=1e-6)
        assert abs(r.amplitude[0] - d) <= 1e-5 * abs(d)
