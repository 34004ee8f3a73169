"""Unit tests of ringprint.analysis.harmonic_inversion (filter diagonalization).

The reference for every recovery check is the exact parameter set the synthetic record
is built from (model of Mandelshtam & Taylor 1997: ``sum_k d_k exp(-i w_k t)``).
"""

import dataclasses

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from ringprint.analysis import Resonance, harmonic_inversion
from ringprint.errors import RingprintError

import _synthetic

DT, N = 1e-10, 3000


def damped(modes, n=N, dt=DT, real=True):
    """Modes ``(f_hz, q, d)`` -> ``sum d exp(-i w t)`` (+ conjugate if real)."""
    return _synthetic.damped(modes, n, dt, real)


def nearest(found, f):
    return min(found, key=lambda r: abs(r.frequency_hz - f))


def test_result_type_and_sorting():
    modes = [(1.4e9, 300, 0.2), (1.1e9, 100, 0.5j)]
    found = harmonic_inversion(damped(modes), DT, 1.0e9, 1.5e9)
    assert [type(r) for r in found] == [Resonance, Resonance]
    assert found[0].frequency_hz < found[1].frequency_hz
    r = found[0]
    assert r.amplitude.shape == (1,) and r.amplitude.dtype == complex
    assert r.q == pytest.approx(2 * np.pi * r.frequency_hz / (2 * r.decay_rate))
    assert r.omega == pytest.approx(2 * np.pi * r.frequency_hz - 1j * r.decay_rate)
    with pytest.raises(dataclasses.FrozenInstanceError):
        r.q = 1.0
    with pytest.raises(ValueError):
        r.amplitude[0] = 0.0                  # read-only array


def test_real_record_modes_at_window_edges():
    # modes 0.05 % inside f_min and f_max, and one just outside each edge
    modes = [(1.0005e9, 200, 0.5), (1.4995e9, 300, 0.3j), (0.998e9, 200, 0.4),
             (1.502e9, 200, 0.4)]
    found = harmonic_inversion(damped(modes), DT, 1.0e9, 1.5e9)
    assert len(found) == 2
    for r, (f, q, d) in zip(found, modes[:2]):
        assert r.frequency_hz == pytest.approx(f, rel=1e-8)
        assert r.q == pytest.approx(q, rel=1e-6)
        assert r.amplitude[0] == pytest.approx(d, rel=1e-6)


def test_real_record_window_from_zero_to_nyquist():
    modes = [(0.2e9, 20, 0.5), (3.0e9, 500, 1.0), (4.8e9, 300, 0.3j)]
    found = harmonic_inversion(damped(modes), DT, 0.0, 0.5 / DT)
    assert len(found) == 3
    for r, (f, q, d) in zip(found, modes):
        assert r.frequency_hz == pytest.approx(f, rel=1e-7)
        assert r.q == pytest.approx(q, rel=1e-6)


def test_complex_record_negative_frequencies():
    modes = [(-2.0e9, 200, 0.5), (-1e8, 50, 1.0), (1.5e9, 300, 0.3j)]
    found = harmonic_inversion(damped(modes, real=False), DT, -2.5e9, 2.0e9)
    assert [r.frequency_hz for r in found] == pytest.approx([m[0] for m in modes], rel=1e-9)
    assert [r.q for r in found] == pytest.approx([m[1] for m in modes], rel=1e-7)
    assert [r.amplitude[0] for r in found] == pytest.approx([m[2] for m in modes], rel=1e-7)
    # the exp(+i w t) convention is the conjugate record: its modes appear at -f
    assert harmonic_inversion(np.conj(damped(modes, real=False)), DT, 1.4e9, 1.6e9) == []


def test_multi_signal_mode_invisible_to_one_pickup():
    # mode B has zero amplitude in signal 0 (e.g. a pickup on its symmetry plane)
    a, b = (1.2e9, 400, 1.0), (1.3e9, 600, 0.0)
    sig0 = damped([a, b])
    sig1 = damped([(1.2e9, 400, 0.3), (1.3e9, 600, 0.5j)])
    alone = harmonic_inversion(sig0, DT, 1.0e9, 1.5e9)
    assert [round(r.frequency_hz / 1e6) for r in alone] == [1200]
    found = harmonic_inversion(np.stack([sig0, sig1]), DT, 1.0e9, 1.5e9)
    assert len(found) == 2
    ra, rb = found
    assert rb.frequency_hz == pytest.approx(1.3e9, rel=1e-9)
    assert rb.q == pytest.approx(600, rel=1e-7)
    assert rb.amplitude.shape == (2,)
    assert abs(rb.amplitude[0]) < 1e-9 and rb.amplitude[1] == pytest.approx(0.5j, rel=1e-7)
    assert ra.amplitude == pytest.approx([1.0, 0.3], rel=1e-7)


def test_growing_pole_dropped():
    modes = [(1.2e9, -300, 0.5), (1.3e9, 300, 0.5)]   # q < 0: exp(+g t)
    found = harmonic_inversion(damped(modes), DT, 1.0e9, 1.5e9)
    assert len(found) == 1 and found[0].frequency_hz == pytest.approx(1.3e9, rel=1e-9)
    kept = harmonic_inversion(damped(modes), DT, 1.0e9, 1.5e9, growth_tolerance=1.0)
    assert len(kept) == 2 and kept[0].q == pytest.approx(-300, rel=1e-6)


def test_lossless_mode_kept():
    found = harmonic_inversion(damped([(1.2e9, np.inf, 1.0)]), DT, 1.0e9, 1.5e9)
    assert len(found) == 1 and abs(found[0].q) > 1e8


def test_thresholds_are_applied():
    modes = [(1.2e9, 300, 1.0), (1.3e9, 300, 1e-4)]
    x = damped(modes)
    assert len(harmonic_inversion(x, DT, 1.0e9, 1.5e9)) == 2
    assert len(harmonic_inversion(x, DT, 1.0e9, 1.5e9, min_amplitude=1e-3)) == 1
    assert harmonic_inversion(x, DT, 1.0e9, 1.5e9, max_error=1e-30) == []


@pytest.mark.parametrize("kwargs, word", [
    (dict(signal=np.r_[np.ones(100), np.nan]), "not finite"),
    (dict(signal=np.ones(10)), "samples"),
    (dict(signal=np.ones((2, 2, 50))), "shape"),
    (dict(signal=np.array(["a"] * 100)), "dtype"),
    (dict(dt=0.0), "dt = 0.0"),
    (dict(dt=-1e-9), "dt = -1e-09"),
    (dict(f_min=1.5e9, f_max=1.0e9), "f_min = 1.5e+09"),
    (dict(f_max=6e9), "Nyquist"),
    (dict(f_min=-1e9), "f_min = -1e+09"),
    (dict(signal=np.cos(np.arange(24.0))), "too short"),
])
def test_bad_input_one_line_error(kwargs, word):
    args = dict(signal=damped([(1.2e9, 300, 1.0)]), dt=DT, f_min=1.0e9, f_max=1.5e9)
    args.update(kwargs)
    with pytest.raises(RingprintError) as info:
        harmonic_inversion(args.pop("signal"), **args)
    msg = str(info.value)
    assert word in msg and "\n" not in msg


@settings(max_examples=20, deadline=None)
@given(f=st.floats(1.05e9, 1.45e9), logq=st.floats(np.log10(5), 4),
       amp=st.floats(1e-3, 1e3), phase=st.floats(0, 2 * np.pi))
def test_random_single_mode_recovered(f, logq, amp, phase):
    q = 10 ** logq
    d = amp * np.exp(1j * phase)
    found = harmonic_inversion(damped([(f, q, d)]), DT, 1.0e9, 1.5e9)
    assert len(found) == 1
    assert found[0].frequency_hz == pytest.approx(f, rel=1e-8)
    assert found[0].q == pytest.approx(q, rel=1e-6)
    assert found[0].amplitude[0] == pytest.approx(d, rel=1e-6)
