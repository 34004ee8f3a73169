"""Test utility: complex frequencies of a ring-down, for the solver validation tests.

Runs the project's own harmonic inversion (``ringprint.analysis.harmonic_inversion``,
filter diagonalization) so the solver checks exercise the real pipeline, and keeps
only the poles inside ``[f_min, f_max]`` whose amplitude is not negligible.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ringprint.analysis import harmonic_inversion


@dataclass
class Pole:
    frequency_hz: float
    q: float
    decay_rate: float   # 1/s, amplitude decays as exp(-decay_rate t)
    amplitude: float


def ringdown_poles(signal, dt, f_min, f_max, min_rel_amplitude=1e-4):
    """Poles with ``f_min <= f <= f_max`` of a real ring-down sampled every ``dt``;
    poles below ``min_rel_amplitude`` of the largest amplitude are dropped."""
    poles = [Pole(float(m.frequency_hz), float(m.q), float(m.decay_rate),
                  float(np.abs(np.asarray(m.amplitude)).max()))
             for m in harmonic_inversion(np.asarray(signal, float), dt, f_min, f_max)]
    poles = [p for p in poles if f_min <= p.frequency_hz <= f_max]
    if not poles:
        return []
    big = max(p.amplitude for p in poles)
    return sorted((p for p in poles if p.amplitude >= min_rel_amplitude * big),
                  key=lambda p: p.frequency_hz)
