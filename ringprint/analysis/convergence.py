"""Stop the ring-down once its answer has converged: the mode list checked as it grows.

Rule (the report cites it; ``[analysis] stop_when_converged``, default on):

- **Schedule**: the record is inverted when its ring-down (the part after the
  source) reaches :data:`FIRST_CHECK_PERIODS` (5) periods of f_min, and again each
  time it has grown by the factor :data:`CHECK_RATIO` (1.5), up to the q_max ceiling.
  The checks may stop a run before the decay rule's floor of ``MIN_PERIODS`` periods:
  that floor keeps the energy rule from stopping on a dip, while two agreeing
  inversions are direct evidence that the record already holds the answer. A check looks at
  the record truncated to its scheduled length exactly, so it does not depend on how
  the stepping was chunked, and a resumed run repeats the same checks (the check
  before the first one after a restart is recomputed from the stored record).
- **Cheap inversion**: the pickups are low-pass filtered and decimated first, to a
  rate of at least :data:`RATE_OVER_F_MAX` (4) times f_max: a Kaiser-window FIR filter
  flat to ``1.25 f_max`` (the inversion's own guard band above f_max) whose stop band
  starts where content would fold back onto it (``fs' - 1.25 f_max``), attenuating
  by 100 dB. Only fully overlapped ("valid") outputs are kept, so the record's poles
  are unchanged (a valid-mode FIR filter maps a sum of damped exponentials onto one
  with the same poles). The decimated record goes through the same
  :func:`ringprint.analysis.modes.find_resonances` as the final answer (filter
  diagonalization, Mandelshtam & Taylor 1997).
- **Stable**: two successive checks find the same number of modes, and, paired in
  order of frequency, every mode moved by at most :data:`F_STABLE` (1e-5) in relative
  frequency and :data:`Q_STABLE` (0.1 %) in Q, and every mode's own error bar (the
  inversion's relative error of the complex frequency, ``error``; on Q it is about
  ``2 Q error``) lies inside those same bounds. These are ten and ten times tighter
  than the promise they serve (the mode list equals the full-length one to 1e-4 in
  f and 1 % in Q; checked on the bundled cases by ``benchmarks/bench_convergence.py``).
- **High Q**: a mode whose Q exceeds q_max keeps the run going to the ceiling: the
  ceiling ``q_max / (pi f_min)`` is what the case allows for resolving it.

The decay rule and the q_max ceiling of :mod:`ringprint.analysis.ringdown` still
apply; whichever comes first ends the run.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from types import SimpleNamespace

import numpy as np
import scipy.signal

from ringprint.analysis.modes import find_resonances

#: Ring-down length (periods of f_min) at the first check.
FIRST_CHECK_PERIODS = 5.0
#: Ring-down length grows by this factor between two checks.
CHECK_RATIO = 1.5
#: Decimated sampling rate of the checks, in units of f_max.
RATE_OVER_F_MAX = 4.0
#: The inversion's guard band above f_max (ringprint.analysis._fdm.band_limit keeps
#: f_max + W/4 at least); the decimation filter is flat up to this multiple of f_max.
PASS_OVER_F_MAX = 1.25
ATTENUATION_DB = 100.0
#: Largest change between two checks (and largest error bar) still called stable.
F_STABLE = 1e-5
Q_STABLE = 1e-3


def first_check(f_min: float, dt: float) -> int:
    """Ring-down steps of the first check: :data:`FIRST_CHECK_PERIODS` periods of f_min."""
    return int(math.ceil(FIRST_CHECK_PERIODS / (f_min * dt)))


def check_lengths(first: int, ceiling: int, ratio: float = CHECK_RATIO) -> list:
    """Ring-down lengths (steps after the source) at which the record is inverted:
    ``first, first * ratio, ...`` below ``ceiling`` (integers, strictly increasing)."""
    out = []
    n = float(max(1, first))
    while n < ceiling:
        k = int(math.ceil(n))
        if not out or k > out[-1]:
            out.append(k)
        n *= ratio
    return out


def decimate(signals: np.ndarray, dt: float, f_max: float):
    """Low-pass and decimate records sampled at ``dt`` for analysis up to ``f_max``.

    Returns ``(x, dt_x)``: the fully overlapped outputs of a Kaiser-window FIR filter
    taken every ``step`` samples, with ``1 / dt_x >= RATE_OVER_F_MAX f_max`` (the
    records unchanged when no decimation is possible). Poles are kept exactly; see
    the module docstring for the anti-alias rule.

    References
    ----------
    Kaiser, J. F., "Nonrecursive digital filters design using the I0-sinh window
    function", Proc. IEEE ISCAS, 1974 (window and its order formula).
    """
    fs = 1.0 / dt
    step = int(fs / (RATE_OVER_F_MAX * f_max))
    n = signals.shape[-1]
    if step < 2:
        return signals, dt
    pass_edge = PASS_OVER_F_MAX * f_max
    stop_edge = fs / step - pass_edge
    numtaps, beta = scipy.signal.kaiserord(ATTENUATION_DB, (stop_edge - pass_edge) / (0.5 * fs))
    first = -(-(numtaps - 1) // step)
    last = (n - 1) // step
    if last - first + 1 < 64:
        return signals, dt
    taps = scipy.signal.firwin(numtaps, 0.5 * (pass_edge + stop_edge), window=("kaiser", beta), fs=fs)
    y = scipy.signal.upfirdn(taps, signals, up=1, down=step, axis=-1)
    return np.ascontiguousarray(y[..., first:last + 1]), dt * step


@dataclass
class Check:
    """One inversion of the growing record: its length and the modes it found."""

    steps: int                     # ring-down steps the record held
    f: np.ndarray                  # Hz
    q: np.ndarray
    error: np.ndarray
    seconds: float = 0.0           # wall time of the check

    @property
    def n(self) -> int:
        return int(self.f.size)


def invert(signals: np.ndarray, dt: float, f_min: float, f_max: float, steps: int) -> Check:
    """The modes of ``signals`` (ring-down only, first ``steps`` samples), decimated first."""
    t0 = time.perf_counter()
    x, dt_x = decimate(signals[:, :steps], dt, f_max)
    res, _rows = find_resonances(SimpleNamespace(signals=x, start_index=0, dt=dt_x), f_min, f_max)
    return Check(steps, np.array([r.frequency_hz for r in res], float),
                 np.array([r.q for r in res], float), np.array([r.error for r in res], float),
                 time.perf_counter() - t0)


def compare(prev: Check, cur: Check, q_max: float) -> tuple[bool, str]:
    """Whether ``cur`` confirms ``prev`` (the rule in the module docstring), and why (not)."""
    if cur.n == 0 and prev.n == 0:
        return False, "no mode found yet"
    if cur.n != prev.n:
        return False, f"mode count changed ({prev.n} -> {cur.n})"
    df = np.abs(cur.f - prev.f) / cur.f
    dq = np.abs(cur.q - prev.q) / np.abs(cur.q)
    err = np.maximum(cur.error, prev.error)
    bad_f = (df > F_STABLE) | (err > F_STABLE)
    bad_q = (dq > Q_STABLE) | (2.0 * np.abs(cur.q) * err > Q_STABLE)
    high = cur.q > q_max
    for k in range(cur.n):
        what = f"{cur.f[k] / 1e9:.6g} GHz"
        if high[k]:
            return False, f"mode at {what} has Q {cur.q[k]:.4g} above q_max {q_max:g}"
        if bad_f[k]:
            return False, f"mode at {what}: f moved {df[k]:.2g}, error {err[k]:.2g}"
        if bad_q[k]:
            return False, f"mode at {what}: Q moved {dq[k]:.2g}, error {2 * abs(cur.q[k]) * err[k]:.2g}"
    return True, f"{cur.n} modes stable over two checks"


@dataclass
class Watch:
    """Schedules the checks of one run and says when the answer has converged.

    Parameters
    ----------
    start : int
        First step of the ring-down (after the source).
    first, ceiling : int
        Ring-down steps of the first check and of the q_max ceiling.
    dt, f_min, f_max, q_max : float
        Of the case.
    """

    start: int
    first: int
    ceiling: int
    dt: float
    f_min: float
    f_max: float
    q_max: float
    checks: list = field(default_factory=list)
    lines: list = field(default_factory=list)

    def __post_init__(self):
        self.schedule = check_lengths(self.first, self.ceiling)

    def due(self, step: int) -> bool:
        """A check is due once the record reaches the next scheduled length."""
        done = self.checks[-1].steps if self.checks else 0
        return any(done < n <= step - self.start for n in self.schedule)

    def check(self, record: np.ndarray) -> str | None:
        """Invert ``record`` (all pickups, from step 0) at the latest scheduled length it
        holds; returns the stop reason once two successive checks agree, else None."""
        have = record.shape[1] - self.start
        lengths = [n for n in self.schedule if n <= have]
        n = lengths[-1]
        ring = record[:, self.start:]
        prev = self.checks[-1] if self.checks else None
        if prev is None and len(lengths) > 1:       # resumed: recompute the check before
            prev = self._add(invert(ring, self.dt, self.f_min, self.f_max, lengths[-2]), None)
        cur = invert(ring, self.dt, self.f_min, self.f_max, n)
        ok, why = (False, "first check") if prev is None else compare(prev, cur, self.q_max)
        self._add(cur, why)
        return f"converged: {why}" if ok else None

    def _add(self, chk: Check, why) -> Check:
        self.checks.append(chk)
        line = (f"convergence check at {chk.steps} ring-down steps: {chk.n} modes, "
                f"{chk.seconds:.2f} s" + ("" if why is None else f"; {why}"))
        self.lines.append(line)
        return chk
