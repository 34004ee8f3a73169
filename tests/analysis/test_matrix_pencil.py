"""Unit tests of ringprint.analysis.matrix_pencil (Hua & Sarkar 1990).

References: the synthetic records' own parameters (exact sums of damped exponentials).
"""

import numpy as np
import pytest

from ringprint.analysis import Resonance, matrix_pencil
from ringprint.errors import RingprintError

import _synthetic

DT, N = 1e-10, 1200


def damped(modes, n=N, dt=DT, real=True):
    """Modes ``(f_hz, q, d)`` -> ``sum d exp(-i w t)`` (+ conjugate if real)."""
    return _synthetic.damped(modes, n, dt, real)


MODES = [(1.0e9, 30, 0.5), (1.5e9, 5000, 0.005j), (1.8e9, 300, 0.25)]


@pytest.mark.parametrize("how", [dict(n_modes=3), dict(tolerance=1e-9)])
def test_real_record_recovered(how):
    found = matrix_pencil(damped(MODES), DT, **how)
    assert len(found) == 3 and all(isinstance(r, Resonance) for r in found)
    for r, (f, q, d) in zip(found, MODES):
        assert r.frequency_hz == pytest.approx(f, rel=1e-9)
        assert r.q == pytest.approx(q, rel=1e-7)
        assert r.amplitude[0] == pytest.approx(d, rel=1e-7)
        assert r.error < 1e-9


def test_complex_record_and_window():
    modes = [(-1.0e9, 40, 1.0), (2.0e9, 400, 0.5j)]
    found = matrix_pencil(damped(modes, real=False), DT, 2)
    assert [r.frequency_hz for r in found] == pytest.approx([-1.0e9, 2.0e9], rel=1e-9)
    only = matrix_pencil(damped(modes, real=False), DT, 2, f_min=0.0, f_max=3e9)
    assert len(only) == 1 and only[0].q == pytest.approx(400, rel=1e-7)


def test_multi_signal_shared_poles():
    sig0 = damped([(1.2e9, 400, 1.0), (1.3e9, 600, 0.0)])
    sig1 = damped([(1.2e9, 400, 0.3), (1.3e9, 600, 0.5j)])
    found = matrix_pencil(np.stack([sig0, sig1]), DT, 2)
    assert [r.frequency_hz for r in found] == pytest.approx([1.2e9, 1.3e9], rel=1e-9)
    assert abs(found[1].amplitude[0]) < 1e-9
    assert found[1].amplitude[1] == pytest.approx(0.5j, rel=1e-7)


def test_growing_pole_dropped():
    found = matrix_pencil(damped([(1.2e9, -300, 0.5), (1.3e9, 300, 0.5)]), DT, 2)
    assert [r.frequency_hz for r in found] == pytest.approx([1.3e9], rel=1e-9)


@pytest.mark.parametrize("kwargs, word", [
    (dict(), "n_modes or tolerance"),
    (dict(n_modes=0), "n_modes = 0"),
    (dict(n_modes=1000), "n_modes = 1000"),
    (dict(tolerance=2.0), "tolerance = 2.0"),
    (dict(n_modes=2, max_samples=100), "max_samples = 100"),
    (dict(n_modes=2, pencil=1), "pencil = 1"),
    (dict(n_modes=2, dt=-1.0), "dt = -1.0"),
    (dict(n_modes=2, f_max=1e12), "Nyquist"),
])
def test_bad_input_one_line_error(kwargs, word):
    args = dict(signal=damped(MODES), dt=DT)
    args.update(kwargs)
    with pytest.raises(RingprintError) as info:
        matrix_pencil(args.pop("signal"), **args)
    assert word in str(info.value) and "\n" not in str(info.value)
