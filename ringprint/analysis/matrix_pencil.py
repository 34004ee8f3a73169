"""Matrix-pencil estimation of damped exponentials: an independent cross-check of the
filter diagonalization in :mod:`ringprint.analysis.inversion`."""

from __future__ import annotations

import numpy as np
import scipy.linalg

from ringprint.analysis._poles import (Resonance, as_signals, check_dt, check_window, one_blas_thread,
                                       select)
from ringprint.errors import RingprintError

__all__ = ["matrix_pencil"]


@one_blas_thread
def matrix_pencil(signal, dt, n_modes=None, *, tolerance=None, f_min=None, f_max=None,
                  pencil=None, max_samples=6000, max_error=1e-3, min_amplitude=0.0,
                  growth_tolerance=1e-6):
    """Resonances of a record by the total-least-squares matrix pencil method.

    The Hankel matrix of the record (of each record, stacked, for several signals with
    shared poles) is reduced by SVD to its ``n_modes`` dominant right singular vectors
    ``V``; the poles ``u_k = exp(-i w_k dt)`` are the eigenvalues of
    ``V[1:]^T pinv(V[:-1]^T)``; the amplitudes follow by linear least squares.

    Parameters
    ----------
    signal : array_like, shape (n_samples,) or (n_signals, n_samples)
        Samples, real or complex, modelled as ``sum_k d_k exp(-i w_k t_n)`` (same
        convention as :func:`ringprint.analysis.harmonic_inversion`). Several signals
        share one set of poles.
    dt : float
        Sampling interval in s.
    n_modes : int, optional
        Model order: the number of resonances at positive frequency for a real record
        (two exponentials each, ``+f`` and ``-f``), the number of exponentials for a
        complex one. Give this or ``tolerance``.
    tolerance : float, optional
        Keep the singular values above ``tolerance`` times the largest (Hua & Sarkar
        1990 choose the order this way). Used when ``n_modes`` is None.
    f_min, f_max : float, optional
        Report only poles in this window (Hz). Default: ``[0, 1/(2 dt)]`` for a real
        record, the whole ``[-1/(2 dt), 1/(2 dt)]`` for a complex one.
    pencil : int, optional
        Pencil parameter ``L`` (columns minus one of the Hankel matrix); default
        ``n_samples // 3`` (Hua & Sarkar recommend ``N/3 <= L <= N/2`` under noise).
    max_samples : int, optional
        Largest record accepted (the SVD costs O(N L^2)); decimate longer records first.
        Default 6000.
    max_error : float, optional
        Poles whose relative frequency uncertainty exceeds this are dropped. Default 1e-3.
    min_amplitude : float, optional
        Poles with ``|d_k|`` below this fraction of the largest sample magnitude in every
        signal are dropped. Default 0 (keep all).
    growth_tolerance : float, optional
        Poles with ``1/Q < -(growth_tolerance + 2 error)`` are dropped. Default 1e-6.

    Returns
    -------
    list of Resonance
        Sorted by frequency; ``error`` is ``|dw| / |Re w|`` from the disagreement between
        ``u_k^2`` and the eigenvalue of the two-step pencil ``(V[2:], V[:-2])`` on the
        same eigenvector.

    Raises
    ------
    RingprintError
        Non-finite samples, a record too short or too long, ``dt <= 0``, a bad window,
        neither or an invalid ``n_modes``/``tolerance``.

    References
    ----------
    .. [1] Y. Hua and T. K. Sarkar, "Matrix pencil method for estimating parameters of
       exponentially damped/undamped sinusoids in noise", IEEE Trans. Acoust., Speech,
       Signal Process. 38(5):814-824, 1990.
    """
    c, is_complex = as_signals(signal)
    dt = check_dt(dt)
    nyq = 0.5 / dt
    f_min = (-nyq if is_complex else 0.0) if f_min is None else f_min
    f_max = nyq if f_max is None else f_max
    f_min, f_max = check_window(f_min, f_max, dt, is_complex)
    n_sig, n = c.shape
    if n > max_samples:
        raise RingprintError(f"signal has {n} samples, above max_samples = {max_samples}; "
                             "decimate the record or raise max_samples")
    lp = n // 3 if pencil is None else int(pencil)
    if not 2 <= lp <= n - 3:
        raise RingprintError(f"pencil = {lp} with {n} samples; need 2 <= pencil <= n - 3 "
                             "(a longer record or a smaller pencil)")
    hank = np.concatenate([scipy.linalg.hankel(s[:n - lp], s[n - lp - 1:]) for s in c])
    _, sig, vh = scipy.linalg.svd(hank, full_matrices=False, lapack_driver="gesdd")
    order = _order(sig, n_modes, tolerance, is_complex, lp)
    if order == 0:
        return []
    vt = vh[:order]                            # (order, L+1): rows span the row space
    # Y2 = Y1 * (T Z T^-1) acting on the columns: vt[:, 1:] = T Z T^-1 vt[:, :-1]
    shift1 = vt[:, 1:] @ np.linalg.pinv(vt[:, :-1])
    u, t = scipy.linalg.eig(shift1)
    shift2 = vt[:, 2:] @ np.linalg.pinv(vt[:, :-2])
    u2 = np.diag(np.linalg.solve(t, shift2 @ t))
    root = np.sqrt(u2)
    root = np.where(np.abs(root - u) <= np.abs(root + u), root, -root)
    omega = 1j * np.log(u) / dt
    error = np.abs(root - u) / np.abs(u) / dt / np.maximum(np.abs(omega.real), 1e-300)
    vander = u[None, :] ** np.arange(n)[:, None]
    amp = np.linalg.lstsq(vander, c.T.astype(complex), rcond=None)[0]   # (order, S)
    scale = np.max(np.abs(c), axis=1)
    scale[scale == 0] = 1.0
    rel = np.max(np.abs(amp) / scale, axis=1)
    limit = np.full(order, float(max_error))
    return select(omega, amp, error, rel, limit, f_min, f_max, min_amplitude=min_amplitude,
                  growth_tolerance=growth_tolerance)


def _order(sig: np.ndarray, n_modes, tolerance, is_complex: bool, lp: int) -> int:
    """Model order from ``n_modes`` or from the singular values above ``tolerance``."""
    if n_modes is not None:
        if int(n_modes) != n_modes or n_modes < 1:
            raise RingprintError(f"n_modes = {n_modes!r}; pass a positive integer")
        order = int(n_modes) * (1 if is_complex else 2)
        if order > min(lp - 1, sig.size):
            raise RingprintError(f"n_modes = {n_modes} needs {order} exponentials, more "
                                 f"than the pencil ({lp}) holds; pass a longer record")
        return order
    if tolerance is None:
        raise RingprintError("matrix_pencil needs n_modes or tolerance; pass one, "
                             "e.g. tolerance=1e-8")
    if not 0 < tolerance < 1:
        raise RingprintError(f"tolerance = {tolerance!r}; pass a value in (0, 1)")
    if sig[0] == 0:
        return 0
    return int(min(np.count_nonzero(sig > tolerance * sig[0]), lp - 1))
