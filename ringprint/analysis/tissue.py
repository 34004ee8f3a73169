"""Body-tissue permittivity from the four-term Cole-Cole model.

The library (``data/tissue.toml``) holds the parameters of Gabriel, Lau & Gabriel
(1996) for a few tissues a hand brings near a device: dry skin, wet skin, muscle, fat
and blood (:data:`TISSUES`). The parameters were recalled from memory; the tests check
them against the widely quoted values at 900 MHz, 1.8 GHz and 2.45 GHz.

Sign convention. The paper writes the model for the time dependence ``exp(j w t)``,

    eps(w) = eps_inf + sum_n d_eps_n / (1 + (j w tau_n)^(1 - alpha_n)) + sigma_i / (j w eps0),

whose imaginary part is negative for a lossy medium. ringprint's phasors use
``exp(-i w t)`` (see :mod:`ringprint.analysis.fieldset`), so everything here returns the
complex conjugate::

    eps_r = eps' + i eps'',   eps'' = sigma_eff / (w eps0) >= 0,

where ``sigma_eff`` (S/m) is the effective conductivity: the ionic conductivity plus
the dielectric loss of the relaxations. With this sign a lossy tissue lowers the Q of a
mode it touches (:mod:`ringprint.analysis.touch`).
"""

from __future__ import annotations

import difflib
import functools
import tomllib
from importlib import resources
from types import MappingProxyType
from typing import NamedTuple

import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd import EPS0

__all__ = ["TISSUES", "TissueProperties", "cole_cole_permittivity", "describe",
           "tissue_permittivity", "tissue_properties"]

#: Frequency range accepted (Hz). The paper fitted 10 Hz to 20 GHz; above that the
#: model is an extrapolation, kept up to 100 GHz where it is still commonly used.
F_MIN_HZ, F_MAX_HZ = 10.0, 100e9


class TissueProperties(NamedTuple):
    """Real relative permittivity and effective conductivity of a tissue at one frequency."""

    eps_real: float | np.ndarray
    sigma_s_per_m: float | np.ndarray


@functools.cache
def _library() -> MappingProxyType:
    text = resources.files("ringprint.analysis").joinpath("data/tissue.toml").read_text("utf-8")
    out = {}
    for name, t in tomllib.loads(text).items():
        out[name] = {key: (tuple(float(v) for v in t[key]) if isinstance(t[key], list) else t[key])
                     for key in ("eps_inf", "delta_eps", "tau_s", "alpha", "sigma_ionic", "description")}
    return MappingProxyType(out)


@functools.cache
def _aliases() -> dict[str, str]:
    text = resources.files("ringprint.analysis").joinpath("data/tissue.toml").read_text("utf-8")
    return {old: name for name, t in tomllib.loads(text).items() for old in t.get("aliases", [])}


#: Names of the tissues in the library.
TISSUES: tuple[str, ...] = tuple(_library())


def _frequency(frequency_hz) -> np.ndarray:
    try:
        f = np.asarray(frequency_hz, dtype=float)
    except (TypeError, ValueError):
        raise RingprintError(f"tissue frequency must be a number in Hz, got {frequency_hz!r}") from None
    if not (np.all(np.isfinite(f)) and np.all(f >= F_MIN_HZ) and np.all(f <= F_MAX_HZ)):
        raise RingprintError(f"tissue frequency {frequency_hz!r} Hz is outside the model's range; "
                             f"give a frequency from {F_MIN_HZ:g} Hz to {F_MAX_HZ:g} Hz")
    return f


def cole_cole_permittivity(frequency_hz, eps_inf, delta_eps, tau_s, alpha, sigma_ionic):
    """Relative permittivity of a multi-term Cole-Cole medium, ``exp(-i w t)`` convention.

    Parameters
    ----------
    frequency_hz : float or array_like
        Frequency (Hz), > 0.
    eps_inf : float
        Permittivity far above all relaxations.
    delta_eps, tau_s, alpha : sequence of float
        Magnitude, relaxation time (s) and broadening (0 <= alpha < 1) of each dispersion.
    sigma_ionic : float
        Static ionic conductivity (S/m).

    Returns
    -------
    complex or ndarray of complex
        ``eps' + i eps''`` with ``eps'' >= 0`` for a lossy medium: the complex conjugate
        of the model written for ``exp(j w t)``.

    References
    ----------
    Cole, K. S. & Cole, R. H., J. Chem. Phys. 9:341-351, 1941 (the dispersion function);
    Gabriel, S., Lau, R. W. & Gabriel, C., Phys. Med. Biol. 41:2271-2293, 1996, eq. (3)
    (the four-term sum with ionic conductivity).
    """
    f = np.asarray(frequency_hz, dtype=float)
    if not (np.all(np.isfinite(f)) and np.all(f > 0)):
        raise RingprintError(f"frequency must be finite and > 0 Hz, got {frequency_hz!r}")
    if not (len(delta_eps) == len(tau_s) == len(alpha)):
        raise RingprintError("Cole-Cole terms: delta_eps, tau_s and alpha need the same length")
    if any(not 0.0 <= a < 1.0 for a in alpha) or any(t <= 0 for t in tau_s) or sigma_ionic < 0:
        raise RingprintError("Cole-Cole terms: need 0 <= alpha < 1, tau_s > 0 and sigma_ionic >= 0")
    w = 2.0 * np.pi * f
    eps = np.full(f.shape, eps_inf, dtype=complex)
    for d, tau, a in zip(delta_eps, tau_s, alpha):
        eps += d / (1.0 + (1j * w * tau) ** (1.0 - a))
    eps += sigma_ionic / (1j * w * EPS0)
    eps = np.conj(eps)  # exp(j w t) model -> exp(-i w t) phasors
    return complex(eps) if eps.ndim == 0 else eps


def _params(name: str) -> dict:
    lib = _library()
    name = _aliases().get(name, name)
    if name not in lib:
        near = difflib.get_close_matches(str(name), TISSUES, n=1)
        hint = f"did you mean {near[0]!r}? " if near else ""
        raise RingprintError(f"unknown tissue {name!r}; {hint}valid tissues: {', '.join(TISSUES)}")
    return lib[name]


def tissue_permittivity(name: str, frequency_hz):
    """Complex relative permittivity of a body tissue, ``exp(-i w t)`` convention.

    Parameters
    ----------
    name : str
        One of :data:`TISSUES` (``"skin-dry"``, ``"skin-wet"``, ``"muscle"``, ``"fat"``,
        ``"blood"``).
    frequency_hz : float or array_like
        Frequency (Hz), from 10 Hz to 100 GHz.

    Returns
    -------
    complex or ndarray of complex
        ``eps' + i sigma_eff / (w eps0)``; the imaginary part is >= 0 (loss).

    Raises
    ------
    RingprintError
        For an unknown name (the message lists the valid ones) or a frequency out of range.

    References
    ----------
    Gabriel, S., Lau, R. W. & Gabriel, C., Phys. Med. Biol. 41:2271-2293, 1996 (four-term
    Cole-Cole parameters, Table 1; recalled from memory).
    """
    p = _params(name)
    f = _frequency(frequency_hz)
    return cole_cole_permittivity(f, p["eps_inf"], p["delta_eps"], p["tau_s"], p["alpha"],
                                  p["sigma_ionic"])


def tissue_properties(name: str, frequency_hz) -> TissueProperties:
    """Real relative permittivity and effective conductivity (S/m) of a tissue.

    ``eps_real = Re eps_r`` and ``sigma_s_per_m = w eps0 Im eps_r`` from
    :func:`tissue_permittivity` (same arguments, same errors).
    """
    eps = tissue_permittivity(name, frequency_hz)
    w = 2.0 * np.pi * _frequency(frequency_hz)
    sigma = w * EPS0 * np.imag(eps)
    if np.ndim(eps) == 0:
        return TissueProperties(float(np.real(eps)), float(sigma))
    return TissueProperties(np.real(eps), sigma)


def describe(name: str) -> str:
    """One-line description of a tissue entry."""
    return str(_params(name)["description"])

