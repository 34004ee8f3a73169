"""Filter diagonalization under white noise against the Cramer-Rao bound.

References
----------
- Rife, D. C. & Boorstyn, R. R., "Single-tone parameter estimation from discrete-time
  observations", IEEE Trans. Inf. Theory 20(5):591-598, 1974: for one undamped complex
  tone ``b exp(i(w n T + theta))`` in complex white noise of variance ``sigma^2`` per
  component, ``var(w) >= 12 sigma^2 / (b^2 T^2 N (N^2 - 1))``.
- For the damped tone the bound is computed here numerically: the inverse of the Fisher
  information ``J^T J / sigma^2`` of the real model ``A exp(-g t) cos(w t + phi)`` in real
  white Gaussian noise of variance ``sigma^2`` (parameters A, phi, w, g). The first test
  checks that this computation reproduces the closed form above for g = 0.

SNR is defined on the initial amplitude: ``(A^2 / 2) / sigma^2 = 10^4`` (40 dB).
"""

import numpy as np

from ringprint.analysis import harmonic_inversion, matrix_pencil

DT, N = 1e-10, 4000
F0, Q0, A0, PHI0 = 1.23e9, 2000.0, 1.0, 0.4
SIGMA = np.sqrt(A0 ** 2 / 2 / 1e4)


def fisher_crb_real(t, amp, phi, w, g, sigma):
    """CRB matrix of (A, phi, w, g) for the real damped tone in real white noise."""
    e = np.exp(-g * t)
    s, c = np.sin(w * t + phi), np.cos(w * t + phi)
    jac = np.stack([e * c, -amp * e * s, -amp * t * e * s, -amp * t * e * c], axis=1)
    return np.linalg.inv(jac.T @ jac / sigma ** 2)


def test_fisher_computation_reproduces_rife_boorstyn():
    # complex undamped tone = two real records (I and Q) with independent noise: the
    # Fisher information adds; compare var(w) with the closed form of Rife & Boorstyn.
    t = np.arange(N) * DT
    b, theta, w, sigma = 0.7, 0.3, 2 * np.pi * 1e8, 0.05
    e = np.ones_like(t)
    fim = np.zeros((4, 4))
    for shift in (0.0, -np.pi / 2):           # real part, imaginary part
        ph = w * t + theta + shift
        jac = np.stack([e * np.cos(ph), -b * np.sin(ph), -b * t * np.sin(ph),
                        -b * t * np.cos(ph)], axis=1)
        fim += jac.T @ jac / sigma ** 2
    crb = np.linalg.inv(fim[:3, :3])          # g is not a parameter of the undamped tone
    closed = 12 * sigma ** 2 / (b ** 2 * DT ** 2 * N * (N ** 2 - 1))
    assert np.isclose(crb[2, 2], closed, rtol=1e-6)


def test_frequency_and_decay_errors_within_a_few_times_the_bound():
    t = np.arange(N) * DT
    w0, g0 = 2 * np.pi * F0, np.pi * F0 / Q0
    clean = A0 * np.exp(-g0 * t) * np.cos(w0 * t + PHI0)
    crb = fisher_crb_real(t, A0, PHI0, w0, g0, SIGMA)
    sd_f, sd_g = np.sqrt(crb[2, 2]) / (2 * np.pi), np.sqrt(crb[3, 3])
    rng = np.random.default_rng(20240611)
    df, dg, err, df_mp = [], [], [], []
    for _ in range(40):
        x = clean + SIGMA * rng.standard_normal(N)
        found = harmonic_inversion(x, DT, 1.0e9, 1.5e9)
        assert len(found) == 1                # the mode, and no noise pole
        df.append(found[0].frequency_hz - F0)
        dg.append(found[0].decay_rate - g0)
        err.append(found[0].error)
        mp = matrix_pencil(x[:1500], DT, 1)
        df_mp.append(mp[0].frequency_hz - F0)
    rms_f, rms_g = np.sqrt(np.mean(np.square(df))), np.sqrt(np.mean(np.square(dg)))
    # 40 realizations: the RMS is known to about +-12 %; an efficient estimator gives
    # ratio 1. "A few times" the bound: below 4 (measured with this seed: 2.8 for the
    # frequency, 1.8 for the decay rate; filter diagonalization keeps a full basis, so
    # it fits some noise). Below 0.7 would mean a wrong bound.
    assert 0.7 * sd_f < rms_f < 4 * sd_f
    assert 0.7 * sd_g < rms_g < 4 * sd_g
    # the reported error is an honest size of the actual relative error (within 10x)
    actual = rms_f / F0
    assert actual / 10 < np.median(err) < 10 * actual
    # the matrix pencil on the first 1500 samples: also near its own (larger) bound
    crb_mp = fisher_crb_real(t[:1500], A0, PHI0, w0, g0, SIGMA)
    rms_mp = np.sqrt(np.mean(np.square(df_mp)))
    assert rms_mp < 3 * np.sqrt(crb_mp[2, 2]) / (2 * np.pi)


def test_pure_noise_gives_no_resonances():
    rng = np.random.default_rng(5)
    for _ in range(8):
        x = SIGMA * rng.standard_normal(N)
        assert harmonic_inversion(x, DT, 1.0e9, 1.5e9) == []
        two = SIGMA * rng.standard_normal((2, N))
        assert harmonic_inversion(two, DT, 0.3e9, 2.0e9) == []
