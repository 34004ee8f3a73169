"""The loop probe as a lumped port: its input impedance and S11 from the run's ring-down.

Rules (the report cites them):

- **What the probe is**: the drive (:class:`ringprint.fdtd.LoopSource`) imposes a
  current ``I(t)`` (A), the pulse itself, on the loop's edges as a soft source; it is
  an ideal current source. The pickup ``probe_emf`` records the loop's EMF, the
  circulation of E in the direction of that current. The power the source gives the
  field is ``-I * EMF``, so the port voltage is ``V = -EMF`` and ``Z_in = V / I``: the
  loop's own inductance (the field of its own current) is in it, as on the bench.
- **Time base**: the current enters the update from ``n dt`` to ``(n+1) dt`` at the
  half step ``(n + 1/2) dt``; it is paired with the mean of the EMF at both ends of
  that step, the product whose sum is the scheme's own power balance.
- **Open-loop ring-down**: an ideal current source is an open circuit, so after the
  pulse the loop carries no current and the record rings with the poles of ``Z_in``
  (the modes with the probe unloaded; the run's Q is the unloaded Q). ``Z_in`` of a
  linear one-port does not depend on how it was driven, so ``S11 = (Z - Z0)/(Z + Z0)``
  with the reference resistance ``Z0`` (case key ``output.port_impedance``, default
  50 ohm) is the bench's S11, loaded poles and all.
- **Truncation**: the Fourier sums run over the whole record, and beyond its end the
  record is continued analytically by the run's own poles (harmonic inversion), with
  amplitudes fitted by least squares to the last half of the ring-down: the closed
  sums of the damped exponentials are added, so a record stopped before a sharp mode
  has died gives the same S11 as a longer one. ``tail_share`` states how much the
  continuation adds (largest ``|V_tail| / |V|`` in the band).
- **Frequencies**: ``[f_min, f_max]`` of the case, uniformly, at least
  ``MIN_POINTS``, more when needed to put ``POINTS_PER_WIDTH`` points in the
  half-power width ``f/Q`` of the sharpest mode, at most ``MAX_POINTS``.

References
----------
Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005 (soft
current sources; the half-step pairing of E and J). Pozar, D. M., Microwave
Engineering, 4th ed., 2012, sec. 4.3 (reflection coefficient of a load,
``(Z - Z0)/(Z + Z0)``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.signal

from ringprint.analysis.touchstone import Reflection
from ringprint.errors import RingprintError

DEFAULT_PORT_OHM = 50.0
MIN_POINTS, MAX_POINTS = 1001, 20001
POINTS_PER_WIDTH = 8
FIT_ROWS = 20000
FILE_NAME = "probe.s11.s1p"


@dataclass(frozen=True)
class ProbeS11(Reflection):
    """The probe port over the band: a :class:`Reflection` (``source`` names the run)
    plus the impedance ``z`` (ohm, ``exp(+j w t)``) and the tail share (module docstring)."""

    z: np.ndarray
    tail_share: float

    def db_at(self, f_hz) -> np.ndarray:
        """``|S11|`` (dB) interpolated at the given frequencies."""
        return np.interp(f_hz, self.f_hz, self.db)


def band_frequencies(f_min: float, f_max: float, poles=()) -> np.ndarray:
    """The uniform frequency list of the module docstring (``poles``: Resonance-like)."""
    if not 0 < f_min < f_max:
        raise RingprintError(f"probe S11 band [{f_min!r}, {f_max!r}] Hz: need 0 < f_min < f_max")
    widths = [p.frequency_hz / p.q for p in poles if p.q > 0 and np.isfinite(p.q)
              and f_min <= p.frequency_hz <= f_max]
    n = MIN_POINTS
    if widths:
        n = int(np.ceil(POINTS_PER_WIDTH * (f_max - f_min) / min(widths))) + 1
    return np.linspace(f_min, f_max, int(np.clip(n, MIN_POINTS, MAX_POINTS)))


def _dtft(x: np.ndarray, dt: float, f: np.ndarray) -> np.ndarray:
    """``dt * sum_n x_n exp(-j 2 pi f n dt)`` on the uniform list ``f`` (chirp z-transform)."""
    if f.size == 1:
        return dt * np.sum(x * np.exp(-2j * np.pi * f[0] * dt * np.arange(x.size)))[None]
    df = f[1] - f[0]
    return dt * scipy.signal.czt(x, m=f.size, w=np.exp(-2j * np.pi * df * dt),
                                 a=np.exp(2j * np.pi * f[0] * dt))


def _fit_amplitudes(emf: np.ndarray, z: np.ndarray, first: int) -> np.ndarray:
    """Least-squares ``c_k`` of ``emf[n] = sum_k 2 Re(c_k z_k^n)`` over ``n >= first``."""
    n_all = np.arange(first, emf.size)
    stride = max(1, int(np.ceil(n_all.size / FIT_ROWS)))
    n = n_all[::-1][::stride][::-1]
    basis = np.exp(np.log(z)[None, :] * n[:, None])
    a = np.concatenate([2 * basis.real, -2 * basis.imag], axis=1)
    scale = np.max(np.abs(a), axis=0)
    scale[scale == 0] = 1.0
    sol, *_ = np.linalg.lstsq(a / scale, emf[n], rcond=1e-12)
    sol = sol / scale
    k = z.size
    return sol[:k] + 1j * sol[k:]


def port_impedance(emf, dt: float, current, f_hz, poles=(), ringdown_start: int = 0):
    """Input impedance ``V/I`` of the loop probe (module docstring).

    Parameters
    ----------
    emf : array_like
        The loop EMF record (V), ``emf[n]`` at ``(n + 1) dt``.
    dt : float
        Time step (s).
    current : callable
        The drive current ``I(t)`` (A), e.g. the source's pulse.
    f_hz : array_like
        Uniform, increasing frequencies (Hz).
    poles : sequence of Resonance
        The run's poles (``frequency_hz``, ``decay_rate``) that continue the record
        beyond its end; none: the record is taken as complete.
    ringdown_start : int
        First record index after the source (the amplitude fit uses the last half of
        the samples from there).

    Returns
    -------
    (numpy.ndarray, float)
        ``Z(f)`` in ohm (``exp(+j w t)``) and the tail share of the module docstring.
    """
    emf = np.asarray(emf, float)
    f = np.asarray(f_hz, float)
    if emf.ndim != 1 or emf.size < 2 or not np.all(np.isfinite(emf)):
        raise RingprintError("probe EMF record must be a finite 1-D array of >= 2 samples")
    if not (dt > 0 and f.ndim == 1 and f.size >= 1 and np.all(np.diff(f) > 0)):
        raise RingprintError("port impedance: need dt > 0 and increasing frequencies")
    n_rec = emf.size
    v_half = -0.5 * (emf + np.concatenate([[0.0], emf[:-1]]))
    i_half = np.asarray(current((np.arange(n_rec) + 0.5) * dt), float)
    v = _dtft(v_half, dt, f)
    i = _dtft(i_half, dt, f)
    tail = np.zeros_like(v)
    good = [p for p in poles if np.isfinite(p.decay_rate) and p.frequency_hz > 0]
    if good:
        s_k = np.array([complex(-p.decay_rate, 2 * np.pi * p.frequency_hz) for p in good])
        z_k = np.exp(s_k * dt)
        first = max(int(ringdown_start), 0)
        first = first + (n_rec - first) // 2
        if n_rec - first >= 2 * z_k.size + 2:
            c = _fit_amplitudes(emf, z_k, first)
            u = np.exp(-2j * np.pi * f * dt)[:, None]
            for zz, cc in ((z_k, c), (np.conj(z_k), np.conj(c))):
                zu = zz[None, :] * u
                # sum over m >= N of the half-step mean of the continued record
                tail += -0.5 * dt * np.sum(cc[None, :] * (1 + u) * zu ** n_rec / (1 - zu), axis=1)
            tail += -0.5 * dt * emf[-1] * u[:, 0] ** n_rec
    v = v + tail
    if np.any(np.abs(i) == 0):
        raise RingprintError("port impedance: the drive has no content at some frequency; keep "
                             "the frequencies inside the pulse's band")
    share = float(np.max(np.abs(tail) / np.maximum(np.abs(v), 1e-300))) if good else 0.0
    return v / i, share


def reflection(z, z0: float = DEFAULT_PORT_OHM) -> np.ndarray:
    """``S11 = (Z - Z0) / (Z + Z0)`` (Pozar 2012, sec. 4.3)."""
    if not z0 > 0:
        raise RingprintError(f"port impedance {z0!r} ohm must be > 0")
    z = np.asarray(z, complex)
    return (z - z0) / (z + z0)


def probe_s11(ring, pulse, poles, f_min: float, f_max: float, z0: float = DEFAULT_PORT_OHM) -> ProbeS11:
    """The probe's S11 from a finished run (:class:`ringprint.analysis.ringdown.Ringdown`)."""
    f = band_frequencies(f_min, f_max, poles)
    emf = ring.signals[ring.probe_signal]
    z, share = port_impedance(emf, ring.dt, pulse, f, poles, ring.start_index)
    return ProbeS11(f, reflection(z, z0), float(z0), "simulated probe", z, share)
