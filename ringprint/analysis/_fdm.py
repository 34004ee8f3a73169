"""Filter-diagonalization internals: band limiting of the record and the windowed solve.

Notation follows Mandelshtam & Taylor (1997): ``c_n = sum_k d_k u_k^n`` with
``u_k = exp(-i w_k tau)``; the Fourier basis functions are
``Psi_j = sum_{n=0}^{M} z_j^{-n} Phi_n`` with ``z_j = exp(-i phi_j)`` on the unit circle, and
the small matrices are ``U^(p)_{jj'} = sum_{n,n'=0}^{M} z_j^{-n} z_j'^{-n'} c_{n+n'+p}``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg
import scipy.signal


@dataclass(frozen=True)
class BandLimited:
    """A record mixed down to the window centre, low-pass filtered and decimated.

    Sample ``m`` of ``x`` holds ``sum_k d_k H(z_k) z_k^(n0 + m step)`` where ``z_k`` is the
    mode's pole at the raw rate in the mixed frame and ``H`` the FIR filter: a valid-mode
    FIR filter maps a sum of damped exponentials onto one with the same poles exactly.
    """

    x: np.ndarray          # (n_signals, n_dec) complex
    tau: float             # interval of x, s
    dt: float              # raw interval, s
    f_center: float        # mixing frequency, Hz
    fir: np.ndarray | None  # filter taps (None: no filtering, x is the mixed record)
    n0: int                # raw index of x[:, 0]


def band_limit(c: np.ndarray, dt: float, f_lo: float, f_hi: float, *, oversampling: float,
               attenuation_db: float, min_samples: int, step: int | None = None) -> BandLimited:
    """Mix ``[f_lo, f_hi]`` to zero frequency, low-pass and decimate (Kaiser-window FIR).

    The kept band is ``f_center +- half`` with a guard of ``max(W/4, 40/T)`` on each side
    of the window ``W``; the decimated rate is at least ``oversampling * 2 * half`` so that
    the transition band is wide and the filter short (``step`` forces a decimation
    factor no larger than the one so chosen). Only fully overlapped ("valid") filter
    outputs are kept, so the poles of the record are not changed.
    """
    n = c.shape[1]
    fs = 1.0 / dt
    width = f_hi - f_lo
    f_center = 0.5 * (f_lo + f_hi)
    half = 0.5 * width + max(0.25 * width, 40.0 / (n * dt))
    frac = np.mod(f_center * dt * np.arange(n), 1.0)
    x = c * np.exp(2j * np.pi * frac)          # exp(-i w t) convention: shift by +f_center
    step = min(int(fs / (oversampling * 2.0 * half)), step or np.inf)
    while step >= 2:
        trans = fs / step - 2.0 * half          # transition band width, Hz
        numtaps, beta = scipy.signal.kaiserord(attenuation_db, trans / (0.5 * fs))
        first = -(-(numtaps - 1) // step)       # first fully overlapped output
        last = (n - 1) // step
        if numtaps <= n // 4 and last - first + 1 >= min_samples:
            h = scipy.signal.firwin(numtaps, 0.5 * fs / step, window=("kaiser", beta), fs=fs)
            y = scipy.signal.upfirdn(h, x, up=1, down=step, axis=-1)
            return BandLimited(np.ascontiguousarray(y[:, first:last + 1]), dt * step, dt,
                               f_center, h, first * step)
        step = int(step * 0.7)
    return BandLimited(x, dt, dt, f_center, None, 0)


def fourier_sums(x: np.ndarray, phi: np.ndarray, m: int, block: int = 1024) -> np.ndarray:
    """Sums over the record needed by the closed-form matrix elements.

    Returns ``F`` of shape (n_signals, 3, 3, K): for ``p = 0, 1, 2``
    ``F[s, 0, p] = g_p = sum_{n=0}^{M} e^{i phi n} c_{n+p}``,
    ``F[s, 1, p] = h_p = sum_{n=0}^{M} e^{i phi n} c_{n+p+M+1}`` and
    ``F[s, 2, p] = sum_{n=0}^{2M} e^{i phi n} (M + 1 - |M - n|) c_{n+p}``, evaluated by blocks
    of BLAS products (cost O(K N)).
    """
    ns = x.shape[0]
    length = 2 * m + 1
    cols = np.zeros((length, ns, 3, 3), dtype=complex)
    w = (m + 1 - np.abs(m - np.arange(length))).astype(float)
    for p in range(3):
        cols[:m + 1, :, 0, p] = x[:, p:p + m + 1].T
        cols[:m + 1, :, 1, p] = x[:, p + m + 1:p + 2 * m + 2].T
        cols[:, :, 2, p] = (w[:, None] * x[:, p:p + length].T)
    cols = cols.reshape(length, ns * 9)
    block = min(block, length)
    e_blk = np.exp(1j * np.outer(phi, np.arange(block)))
    acc = np.zeros((phi.size, ns * 9), dtype=complex)
    for start in range(0, length, block):
        stop = min(start + block, length)
        part = e_blk[:, :stop - start] @ cols[start:stop]
        acc += part * np.exp(1j * phi * start)[:, None]
    return acc.T.reshape(ns, 3, 3, phi.size)


def matrices(sums: np.ndarray, phi: np.ndarray, m: int) -> np.ndarray:
    """Matrices ``U^(p)`` (p = 0, 1, 2) per signal, shape (3, n_signals, K, K).

    Off the diagonal (the closed form of Mandelshtam & Taylor 1997, with the 1998 erratum;
    derived here again from the shift relation ``U F(z) = z [F(z) - Phi_0 + z^{-M-1} Phi_{M+1}]``)::

        U_jj' = [z' g(z) - z g(z') - z'^{-M} h(z) + z^{-M} h(z')] / (z' - z)

    with ``z = z_j, z' = z_j'``; on the diagonal the weighted single sum.
    """
    z = np.exp(-1j * phi)
    zm = np.exp(1j * phi * m)                  # z^{-M}
    zi, zj = z[:, None], z[None, :]
    denom = zj - zi
    np.fill_diagonal(denom, 1.0)
    k = phi.size
    idx = np.arange(k)
    out = np.empty((3, sums.shape[0], k, k), dtype=complex)
    for s in range(sums.shape[0]):
        for p in range(3):
            g, h, d = sums[s, 0, p], sums[s, 1, p], sums[s, 2, p]
            u = (zj * g[:, None] - zi * g[None, :] - zm[None, :] * h[:, None]
                 + zm[:, None] * h[None, :]) / denom
            u[idx, idx] = d
            out[p, s] = u
    return out


def solve_window(u_mats: np.ndarray, g0: np.ndarray, rcond: float):
    """Shared poles of a (multi-signal) window by the rank-truncated pencil (U1, U0).

    ``u_mats`` (3, S, K, K); ``g0`` (S, K) the sums ``g_0`` at the basis points. The
    signals' blocks are stacked into (S K, K) matrices; U0 is cut to its numerical rank
    (singular values above ``rcond`` times the largest) before the eigenproblem.

    Returns ``(u, amp, du)``: eigenvalues ``u_k``, amplitudes (r, S) and the estimated
    uncertainty ``|du|`` from the consistency of U2 with ``u^2``.
    """
    n_sig, k = g0.shape
    u0, u1, u2 = (u_mats[p].reshape(n_sig * k, k) for p in range(3))
    a, sig, bh = scipy.linalg.svd(u0, full_matrices=False, lapack_driver="gesdd")
    if sig.size == 0 or sig[0] == 0:
        return np.empty(0, complex), np.empty((0, n_sig), complex), np.empty(0)
    r = int(np.count_nonzero(sig > rcond * sig[0]))
    a, sig, b = a[:, :r], sig[:r], bh[:r].conj().T
    red = (a.conj().T @ u1 @ b) / sig[:, None]
    u, y = scipy.linalg.eig(red)
    v = b @ y                                   # eigenvectors in the basis (K, r)
    u0v, u2v = u0 @ v, u2 @ v
    lam = np.sum(u0v.conj() * u2v, axis=0) / np.sum(np.abs(u0v) ** 2, axis=0)
    root = np.sqrt(lam)
    root = np.where(np.abs(root - u) <= np.abs(root + u), root, -root)
    du = np.abs(root - u)
    # amplitudes: a_s = v^T g0_s = alpha d_s and b_s = v^T U0_s v = alpha^2 d_s
    a_s = (g0 @ v).T                            # (r, S)
    b_s = np.einsum("jr,sjr->rs", v, u0v.reshape(n_sig, k, r))
    alpha = np.sum(a_s.conj() * b_s, axis=1) / np.sum(np.abs(a_s) ** 2, axis=1)
    amp = a_s / alpha[:, None]
    return u, amp, du


def window_poles(x: np.ndarray, tau: float, lo: float, hi: float, *, density: float,
                 basis_per_window: int, rcond: float):
    """All poles of ``x`` (interval ``tau``) found in the frequency range ``[lo, hi]`` Hz.

    The range is split into sub-windows of about ``basis_per_window`` basis functions
    spaced ``1 / (density (M + 1) tau)``, each with a margin of ``max(10, 10 %)``
    functions on both sides. Returns ``(w, amp, du, inside)``: complex angular
    frequencies (rad/s, in the frame of ``x``), amplitudes (n, S), eigenvalue
    uncertainties ``|du|`` and a mask of the poles inside their own sub-window (the
    ones to report; the others come from the margins).
    """
    m = (x.shape[1] - 4) // 2
    step = 1.0 / (density * (m + 1) * tau)     # basis spacing in Hz
    n_win = max(1, int(np.ceil((hi - lo) / step / basis_per_window)))
    edges = np.linspace(lo, hi, n_win + 1)
    width = edges[1] - edges[0]
    margin = max(10 * step, 0.1 * width)
    margin = min(margin, max(0.5 * (1.0 / tau - width) - step, 2 * step))
    phis = [2 * np.pi * tau * np.arange(a - margin, b + margin + 0.5 * step, step)
            for a, b in zip(edges[:-1], edges[1:])]
    sums = fourier_sums(x, np.concatenate(phis), m)
    out_w, out_amp, out_du, out_in, out_win = [], [], [], [], []
    start = 0
    for i, phi in enumerate(phis):
        part = sums[..., start:start + phi.size]
        start += phi.size
        u, amp, du = solve_window(matrices(part, phi, m), part[:, 0, 0], rcond)
        ok = (u != 0) & np.isfinite(u) & np.isfinite(du)
        u, amp, du = u[ok], amp[ok], du[ok]
        w = 1j * np.log(u) / tau
        f = w.real / (2 * np.pi)
        slack = 0.01 * step                     # a pole on an edge may land either side
        out_w.append(w)
        out_amp.append(amp)
        out_du.append(du / np.abs(u))
        out_in.append((f >= edges[i] - slack) & (f <= edges[i + 1] + slack))
        out_win.append(np.full(w.size, i))
    w, du, inside, win = (np.concatenate(a) for a in (out_w, out_du, out_in, out_win))
    # a pole claimed by two neighbouring sub-windows: keep the better-determined one
    cand = np.flatnonzero(inside)
    cand = cand[np.argsort(w[cand].real)]
    for a, b in zip(cand[:-1], cand[1:]):
        if win[a] != win[b] and abs(w[a] - w[b]) < 2 * np.pi * 0.01 * step:
            inside[b if du[b] > du[a] else a] = False
    return w, np.concatenate(out_amp), du, inside
