"""Shared pieces of the resonance estimators: the result type, input checks, and the
conversion of fitted poles into :class:`Resonance` objects with the spurious-pole rules.

Sign convention (Mandelshtam & Taylor 1997): a record is modelled as
``c_n = sum_k d_k exp(-i w_k n dt)`` with complex angular frequencies
``w_k = 2 pi f_k - i gamma_k``; ``gamma_k > 0`` is a decaying mode.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
from threadpoolctl import threadpool_limits

from ringprint.errors import RingprintError


def one_blas_thread(func):
    """Run ``func`` with the BLAS/LAPACK thread pool limited to one thread.

    The inversions solve many small dense problems (about 100 x 100); threading them
    gains nothing, and when other threads compete for the cores (numba's pool, a
    second job) OpenBLAS's spinning threads slowed the test suite 2-20 times here.
    """
    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with threadpool_limits(limits=1, user_api="blas"):
            return func(*args, **kwargs)
    return wrapper


@dataclass(frozen=True, eq=False)
class Resonance:
    """One fitted resonance (a pole of the record).

    Attributes
    ----------
    frequency_hz : float
        Ringing frequency ``Re(w) / (2 pi)`` in Hz.
    q : float
        Quality factor ``|Re(w)| / (2 decay_rate)``; ``inf`` for a pole with no decay,
        negative for a (slightly) growing pole kept within tolerance.
    decay_rate : float
        Amplitude decay rate ``gamma = -Im(w)`` in 1/s (the envelope goes as
        ``exp(-gamma t)``).
    amplitude : numpy.ndarray
        Complex amplitude ``d_k`` of ``exp(-i w_k t)`` at the first sample of the record,
        one entry per signal. A real record ``A exp(-gamma t) cos(2 pi f t + phi)`` has
        ``d = (A / 2) exp(-i phi)`` at ``+f``.
    error : float
        Estimated relative uncertainty of the complex frequency, ``|dw| / |Re(w)|``.
    """

    frequency_hz: float
    q: float
    decay_rate: float
    amplitude: np.ndarray
    error: float

    @property
    def omega(self) -> complex:
        """Complex angular frequency ``w = 2 pi f - i gamma`` in rad/s."""
        return complex(2.0 * np.pi * self.frequency_hz, -self.decay_rate)

    def __repr__(self) -> str:
        amp = np.array2string(np.abs(self.amplitude), precision=3)
        return (f"Resonance(f={self.frequency_hz:.9g} Hz, q={self.q:.6g}, "
                f"decay_rate={self.decay_rate:.6g}/s, |amplitude|={amp}, error={self.error:.2e})")


def as_signals(signal, name: str = "signal") -> tuple[np.ndarray, bool]:
    """Return ``(array (n_signals, n_samples), is_complex)`` after checking the samples."""
    arr = np.asarray(signal)
    if arr.dtype == object or not (np.issubdtype(arr.dtype, np.number)):
        raise RingprintError(f"{name} has dtype {arr.dtype}; pass a numeric array of samples")
    if arr.ndim == 1:
        arr = arr[None, :]
    if arr.ndim != 2:
        raise RingprintError(f"{name} has shape {arr.shape}; pass (n_samples,) or "
                             "(n_signals, n_samples)")
    if arr.shape[0] < 1:
        raise RingprintError(f"{name} has shape {arr.shape}; pass at least one signal")
    bad = ~np.isfinite(arr)
    if bad.any():
        s, n = np.argwhere(bad)[0]
        raise RingprintError(f"{name}[{s}, {n}] = {arr[s, n]} is not finite; "
                             "remove NaN/inf samples (e.g. cut the record before them)")
    is_complex = np.iscomplexobj(arr)
    return arr.astype(np.complex128 if is_complex else np.float64), is_complex


def check_dt(dt) -> float:
    """Check the sampling interval and return it as float."""
    try:
        dt = float(dt)
    except (TypeError, ValueError):
        raise RingprintError(f"dt = {dt!r} is not a number; pass the sampling interval in s") from None
    if not np.isfinite(dt) or dt <= 0:
        raise RingprintError(f"dt = {dt!r} s must be a positive finite sampling interval")
    return dt


def check_window(f_min, f_max, dt: float, is_complex: bool) -> tuple[float, float]:
    """Check the analysis window ``[f_min, f_max]`` against the Nyquist limit."""
    nyq = 0.5 / dt
    try:
        f_min, f_max = float(f_min), float(f_max)
    except (TypeError, ValueError):
        raise RingprintError(f"f_min/f_max = {f_min!r}/{f_max!r} are not numbers; pass Hz") from None
    if not (np.isfinite(f_min) and np.isfinite(f_max)):
        raise RingprintError(f"f_min/f_max = {f_min}/{f_max} Hz must be finite")
    if f_min >= f_max:
        raise RingprintError(f"f_min = {f_min:g} Hz must be below f_max = {f_max:g} Hz")
    if f_max > nyq:
        raise RingprintError(f"f_max = {f_max:g} Hz is above the Nyquist frequency "
                             f"1/(2 dt) = {nyq:g} Hz; lower f_max or sample faster")
    lowest = -nyq if is_complex else 0.0
    if f_min < lowest:
        what = "-1/(2 dt)" if is_complex else "0 for a real-valued record"
        raise RingprintError(f"f_min = {f_min:g} Hz is below {what} ({lowest:g} Hz); raise f_min")
    return f_min, f_max


def omega_from_z(z: np.ndarray, tau: float) -> np.ndarray:
    """Complex angular frequency of ``z = exp(-i w tau)`` (principal branch)."""
    return 1j * np.log(z) / tau


def select(omega, amplitude, error, rel_amplitude, max_error, f_min, f_max, *, min_amplitude,
           growth_tolerance) -> list[Resonance]:
    """Turn poles into resonances in ``[f_min, f_max]`` and drop the spurious ones.

    A pole is kept when all hold:

    - ``f_min <= f <= f_max``;
    - ``error <= max_error`` (relative frequency uncertainty; ``max_error`` per pole);
    - ``rel_amplitude >= min_amplitude``, where the estimator computes ``rel_amplitude``
      as the largest over signals of ``|amplitude_s|`` divided by the largest sample
      magnitude of signal ``s`` in the analysed band;
    - it is not growing: ``-1/Q <= growth_tolerance + 2 error`` (a pole whose growth is
      within its own uncertainty of zero is a lossless mode, not a growing one).
    """
    omega = np.asarray(omega, dtype=complex)
    freq = omega.real / (2 * np.pi)
    decay = -omega.imag
    out = []
    for k in range(omega.size):
        f, g, err = freq[k], decay[k], float(error[k])
        if not (f_min <= f <= f_max) or not np.isfinite(err) or err > max_error[k]:
            continue
        if not rel_amplitude[k] >= min_amplitude:
            continue
        amp = np.array(amplitude[k], dtype=complex)
        w_abs = abs(omega.real[k])
        inv_q = 2 * g / w_abs if w_abs > 0 else 0.0
        if -inv_q > growth_tolerance + 2 * err:
            continue
        q = w_abs / (2 * g) if g != 0 else np.inf
        amp.setflags(write=False)
        out.append(Resonance(float(f), float(q), float(g), amp, err))
    out.sort(key=lambda r: r.frequency_hz)
    return out
