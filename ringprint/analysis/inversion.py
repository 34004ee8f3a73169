"""Harmonic inversion of ring-down records by filter diagonalization."""

from __future__ import annotations

import numpy as np

from ringprint.analysis import _fdm
from ringprint.analysis._poles import (Resonance, as_signals, check_dt, check_window, one_blas_thread,
                                       select)
from ringprint.errors import RingprintError

__all__ = ["Resonance", "harmonic_inversion"]

_MIN_SAMPLES = 24
_MIN_HALF = 8          # smallest M (half the decimated length) to analyse
_SHORTER = (0.9, 0.8)    # pieces of the record used to check that poles stay put
_ERROR_CELLS = 0.02     # default max_error: this fraction of max(1/T, line width)


@one_blas_thread
def harmonic_inversion(signal, dt, f_min, f_max, *, density=1.2, basis_per_window=100,
                       rcond=1e-10, max_error=None, min_amplitude=1e-7,
                       growth_tolerance=1e-6, oversampling=2.0, attenuation_db=100.0):
    """Resonances (frequency, Q, amplitude) of a ring-down record in a frequency window.

    The record is modelled as a sum of damped complex exponentials
    ``c(t_n) = sum_k d_k exp(-i w_k t_n)`` with ``w_k = 2 pi f_k - i gamma_k``; the poles
    with ``f_min <= f_k <= f_max`` are found by filter diagonalization: the record is
    mixed down, band limited and decimated (an FIR filter in valid mode, which keeps the
    poles exactly), the small matrices ``U0, U1, U2`` are built in closed form on a
    Fourier basis covering the window with a margin, U0 is cut to its numerical rank
    and the generalized eigenproblem ``U1 B = u U0 B`` gives ``u_k = exp(-i w_k tau)``.
    Wide windows are split into sub-windows of ``basis_per_window`` functions.

    Parameters
    ----------
    signal : array_like, shape (n_samples,) or (n_signals, n_samples)
        Samples as recorded, real or complex, at uniform interval ``dt``. Several
        signals (e.g. several pickups of one run) share one set of poles; each gets its
        own amplitudes, so a mode invisible to one pickup is found through another.
        A real record holds every mode at ``+f`` and ``-f``; only ``f >= 0`` is analysed.
        A complex record follows the ``exp(-i w t)`` convention above (pass
        ``np.conj(signal)`` for records in the ``exp(+i w t)`` convention).
    dt : float
        Sampling interval in s.
    f_min, f_max : float
        Analysis window in Hz; ``0 <= f_min < f_max <= 1/(2 dt)`` for real records,
        ``-1/(2 dt) <= f_min < f_max <= 1/(2 dt)`` for complex ones.
    density : float, optional
        Basis functions per Fourier resolution cell ``2 pi / ((M + 1) tau)`` (about
        ``2/T``); 1-2 is common practice. Default 1.2.
    basis_per_window : int, optional
        Basis functions inside each sub-window (a margin of ``max(10, 10 %)`` more is
        added on each side). Default 100.
    rcond : float, optional
        Singular values of U0 below ``rcond`` times the largest are dropped (numerical
        rank). Default 1e-10.
    max_error : float or None, optional
        Poles whose estimated relative frequency uncertainty (``error``) exceeds this are
        dropped as spurious. Default None: ``0.02 max(1/T, gamma/pi) / f``, i.e. the
        uncertainty may be 2 % of the larger of the Fourier resolution ``1/T`` (record
        duration ``T``) and the pole's own line width. On noise-only records the poles
        come out with 5-40 % (measured while tuning this default), on modes above the
        noise with well under 1 %.
    min_amplitude : float, optional
        Poles whose amplitude, relative to the largest magnitude of the band-limited
        record, is below this in every signal are dropped. Default 1e-7.
    growth_tolerance : float, optional
        Poles growing faster than ``1/Q < -(growth_tolerance + 2 error)`` are dropped.
        Default 1e-6 (growth below that is numerical noise on a lossless mode).
    oversampling : float, optional
        The decimated rate is at least this times the width of the kept band (window
        plus guard bands). Default 2.
    attenuation_db : float, optional
        Stop-band attenuation of the anti-alias FIR filter (Kaiser window). Default 100.

    Returns
    -------
    list of Resonance
        Sorted by frequency. ``amplitude`` holds one complex ``d_k`` per signal, referred
        to the first sample; ``error`` is ``|dw| / |Re w|`` where ``|dw|`` is the larger of
        the disagreement between ``u_k^2`` and the pencil ``(U2, U0)`` on the same
        eigenvector, and the distance to the nearest pole found again from the first 90 %
        and 80 % of the record decimated by other factors.

    Raises
    ------
    RingprintError
        Non-finite samples, a record too short, ``dt <= 0``, ``f_min >= f_max`` or a
        window outside ``[0 or -1/(2 dt), 1/(2 dt)]``.

    Notes
    -----
    Spurious poles are dropped when any of these hold: outside the window; ``error >
    max_error``; relative amplitude ``< min_amplitude``; growing beyond
    ``growth_tolerance``. Poles fitted to noise, and the faint aliases that leak through
    the decimation filter, are not found again at the same place from a shorter piece of
    the record decimated by another factor, so their ``error`` is large: pure noise gives
    no resonances.

    References
    ----------
    .. [1] V. A. Mandelshtam and H. S. Taylor, "Harmonic inversion of time signals and
       its applications", J. Chem. Phys. 107(17):6756-6769, 1997; erratum J. Chem. Phys.
       109(10):4128, 1998.
    .. [2] M. R. Wall and D. Neuhauser, "Extraction, through filter-diagonalization, of
       general quantum eigenvalues or classical normal mode frequencies from a small
       number of residues or a short-time segment of a signal", J. Chem. Phys.
       102:8011, 1995.
    .. [3] R. Chen and H. Guo, "Efficient calculation of matrix elements in low storage
       filter diagonalization", J. Chem. Phys. 111:464, 1999.
    """
    c, is_complex = as_signals(signal)
    dt = check_dt(dt)
    f_min, f_max = check_window(f_min, f_max, dt, is_complex)
    if c.shape[1] < _MIN_SAMPLES:
        raise RingprintError(f"signal has {c.shape[1]} samples; pass at least {_MIN_SAMPLES} "
                             "(a longer record)")
    if not (density > 0 and basis_per_window >= 4 and 0 < rcond < 1):
        raise RingprintError(f"density = {density}, basis_per_window = {basis_per_window}, "
                             f"rcond = {rcond}: need density > 0, basis_per_window >= 4, "
                             "0 < rcond < 1")
    band = dict(oversampling=oversampling, attenuation_db=attenuation_db, min_samples=256)
    bl = _fdm.band_limit(c.astype(complex), dt, f_min, f_max, **band)
    if int(_SHORTER[-1] * bl.x.shape[1]) < 2 * _MIN_HALF + 4:
        raise RingprintError(f"signal has {c.shape[1]} samples; too short to analyse "
                             f"[{f_min:g}, {f_max:g}] Hz, pass a longer record")
    lo, hi = f_min - bl.f_center, f_max - bl.f_center
    opts = dict(density=density, basis_per_window=basis_per_window, rcond=rcond)
    w, amp, du, inside = _fdm.window_poles(bl.x, bl.tau, lo, hi, **opts)
    w, amp, du = w[inside], amp[inside], du[inside]
    omega = w + 2 * np.pi * bl.f_center
    # error: |dw| from the (U2, U0) pencil, and the distance to the nearest pole found
    # in shorter pieces of the same record, decimated by other factors: noise poles do
    # not stay put, and the faint aliases left by the decimation filter move
    dw = du / bl.tau
    step = max(1, round(bl.tau / dt))
    for i, frac in enumerate(_SHORTER):
        piece = c[:, :int(frac * c.shape[1])].astype(complex)
        factor = max(1, int(step * (0.9 - 0.15 * i)))
        other = _fdm.band_limit(piece, dt, f_min, f_max, step=factor, **band)
        w_other = _fdm.window_poles(other.x, other.tau, lo, hi, **opts)[0]
        w_other = w_other + 2 * np.pi * (other.f_center - bl.f_center)
        near = (np.min(np.abs(w[:, None] - w_other[None, :]), axis=1) if w_other.size
                else np.full(w.size, np.inf))
        dw = np.maximum(dw, near)
    error = dw / np.maximum(np.abs(omega.real), 1e-300)
    scale = np.max(np.abs(bl.x), axis=1)
    scale[scale == 0] = 1.0
    rel = np.max(np.abs(amp) / scale, axis=1) if amp.size else np.zeros(0)
    if max_error is None:
        width = np.maximum(1.0 / (c.shape[1] * dt), np.abs(omega.imag) / np.pi)
        limit = _ERROR_CELLS * width / np.maximum(np.abs(omega.real) / (2 * np.pi), 1e-300)
    else:
        limit = np.full(w.size, float(max_error))
    return select(omega, _refer_to_start(amp, w, bl), error, rel, limit, f_min, f_max,
                  min_amplitude=min_amplitude, growth_tolerance=growth_tolerance)


def _refer_to_start(amp: np.ndarray, w_shift: np.ndarray, bl: _fdm.BandLimited) -> np.ndarray:
    """Undo the filter gain ``H(z)`` and the delay ``z^n0`` of the band-limited record."""
    if bl.fir is None:
        return amp
    z = np.exp(-1j * w_shift * bl.dt)
    gain = np.polyval(bl.fir[::-1], 1.0 / z) * z ** bl.n0
    return amp / gain[:, None]
