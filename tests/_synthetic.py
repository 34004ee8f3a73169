"""Synthetic ring-down records whose exact parameters are the reference."""

import numpy as np


def damped(modes, n, dt, real=True):
    """Record of modes ``(f_hz, q, d)``: ``sum d exp(-i w t)``, ``w = 2 pi f - i 2 pi |f|/(2q)``;
    a real record adds the complex conjugate (the mode at -f)."""
    t = np.arange(n) * dt
    x = np.zeros(n, complex)
    for f, q, d in modes:
        x += d * np.exp(-1j * (2 * np.pi * f - 1j * np.pi * abs(f) / q) * t)
    return 2 * x.real if real else x
