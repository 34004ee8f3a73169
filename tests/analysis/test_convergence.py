"""The stop-on-convergence rule of the ring-down, on synthetic records.

Reference: a synthetic record is a sum of damped sinusoids whose frequencies and Q
are set exactly (tests/_synthetic.py), sampled as densely as an FDTD run samples its
pickups (dt far below 1/(2 f_max)); filter diagonalization recovers such poles to
round-off (Mandelshtam & Taylor 1997), so the checks must settle on them and stop.
"""

import numpy as np
import pytest

from ringprint.analysis import convergence as cv
from ringprint.analysis.modes import find_resonances
from ringprint.analysis.ringdown import Ringdown

from _synthetic import damped

F_MIN, F_MAX = 1.0e9, 3.0e9
DT = 1.0 / (40 * F_MAX)            # 40 samples per period at f_max, like an FDTD pickup
START = 500                        # first ring-down sample


def _record(modes, n, noise=0.0, seed=1):
    """Two pickups (different amplitudes), the ring-down starting at START."""
    rng = np.random.default_rng(seed)
    rows = []
    for scale in (1.0, 0.3):
        x = damped([(f, q, d * scale * (1 + 0.5j)) for f, q, d in modes], n, DT)
        rows.append(np.concatenate([np.zeros(START), x + noise * rng.standard_normal(n)]))
    return np.stack(rows)


MODES = [(1.3e9, 25.0, 1.0), (2.1e9, 60.0, 0.5), (2.7e9, 15.0, 0.8)]


def _watch(q_max=200.0, ceiling=40_000):
    return cv.Watch(START, cv.first_check(F_MIN, DT), ceiling, DT, F_MIN, F_MAX, q_max)


def test_check_lengths_grow_geometrically():
    assert cv.check_lengths(100, 1000) == [100, 150, 225, 338, 507, 760]
    assert cv.check_lengths(100, 100) == []


def test_decimation_keeps_the_poles_and_rejects_what_would_fold():
    """A strong tone above the decimated Nyquist rate (at 0.45 of the raw rate) would fold
    into the window without the anti-alias filter; with it the inversion finds exactly the
    synthetic modes (f to 1e-8, Q to 1e-5: noise-free, so round-off level)."""
    n = 6000
    sig = _record(MODES, n)[:, START:]
    t = np.arange(n) * DT
    sig = sig + 5.0 * np.cos(2 * np.pi * 0.45 / DT * t)
    x, dt_x = cv.decimate(sig, DT, F_MAX)
    assert 1 / dt_x >= cv.RATE_OVER_F_MAX * F_MAX and dt_x / DT >= 8
    res, _ = find_resonances(Ringdown(x, ["a", "b"], dt_x, 0, x.shape[1], "", 0.0, np.zeros(0), 0),
                             F_MIN, F_MAX)
    assert len(res) == len(MODES)
    for r, (f, q, _d) in zip(res, MODES):
        assert r.frequency_hz == pytest.approx(f, rel=1e-8)
        assert r.q == pytest.approx(q, rel=1e-5)


def test_stops_after_two_agreeing_checks_with_the_true_modes():
    rec = _record(MODES, 40_000)
    w = _watch()
    stop = None
    for n in w.schedule:                          # as ring() calls it while stepping
        assert w.due(START + n)
        stop = w.check(rec[:, :START + n])
        if stop:
            break
    assert stop == f"converged: {len(MODES)} modes stable over two checks"
    assert 2 <= len(w.checks) < len(w.schedule) and w.checks[-1].steps < 40_000 / 4
    assert len(w.lines) == len(w.checks) and "ring-down steps" in w.lines[0]
    last = w.checks[-1]
    np.testing.assert_allclose(last.f, [m[0] for m in MODES], rtol=1e-8)
    np.testing.assert_allclose(last.q, [m[1] for m in MODES], rtol=1e-5)


def test_a_resumed_watch_repeats_the_same_decision():
    """Without its past checks (a resumed run) the watch recomputes the check before."""
    rec = _record(MODES, 40_000)
    w = _watch()
    n = w.schedule[1]
    stop = w.check(rec[:, :START + n + 300])      # 300 steps past the scheduled length
    assert stop is not None and [c.steps for c in w.checks] == w.schedule[:2]


def test_a_mode_above_q_max_keeps_the_run_going():
    modes = MODES + [(1.8e9, 2000.0, 0.4)]        # Q ten times q_max
    rec = _record(modes, 40_000)
    w = _watch(q_max=200.0)
    stops = [w.check(rec[:, :START + n]) for n in w.schedule[:4]]
    assert stops == [None] * 4
    assert "above q_max" in w.lines[-1]


def test_noise_keeps_error_bars_too_wide_to_stop():
    """With noise at 1e-3 of the peak the fitted error bars stay above the stability
    bound, so the run goes on (to the decay or the ceiling)."""
    rec = _record(MODES, 40_000, noise=1e-3)
    w = _watch()
    stops = [w.check(rec[:, :START + n]) for n in w.schedule[:3]]
    assert stops == [None] * 3


def _check(f, q, err=1e-9, steps=100):
    return cv.Check(steps, np.array(f, float), np.array(q, float), np.full(len(f), err))


def test_compare_names_why_it_goes_on():
    a = _check([1e9, 2e9], [20, 50])
    assert cv.compare(a, _check([1e9, 2e9], [20, 50]), 200) == (True, "2 modes stable over two checks")
    assert "count changed" in cv.compare(a, _check([1e9], [20]), 200)[1]
    assert "f moved" in cv.compare(a, _check([1e9 * (1 + 3e-5), 2e9], [20, 50]), 200)[1]
    assert "Q moved" in cv.compare(a, _check([1e9, 2e9], [20, 50.5]), 200)[1]
    assert "error" in cv.compare(a, _check([1e9, 2e9], [20, 50], err=1e-4), 200)[1]
    assert cv.compare(_check([], []), _check([], []), 200)[0] is False
