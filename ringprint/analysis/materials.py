"""Materials: the library of named materials and the loss conversion for the solver.

A :class:`Material` is either a dielectric (relative permittivity plus a loss given
as a loss tangent at a stated frequency, or as a conductivity) or a conductor.

Conductors. The solver treats every conductor as a perfect electric conductor: at
radio frequencies the skin depth of a metal (about 2 um for copper at 1 GHz) is far
below any grid cell, so the field stops at the surface. A conductor with a finite
bulk conductivity ``sigma`` (and an effective RF permeability ``mu_r`` of its surface
layer, 1 unless stated) then adds its loss afterwards by perturbation: its surface
resistance ``Rs = sqrt(omega mu0 mu_r / (2 sigma))`` (:func:`surface_resistance`;
Harrington 1961, ch. 2, from memory) dissipates ``Rs/2 |H_t|^2`` per unit area of
the mode's surface field (:mod:`ringprint.analysis.conductor_loss`). ``pec`` (no sigma) is the
lossless ideal. The model holds while the skin depth
``delta = sqrt(2 / (omega mu0 mu_r sigma))`` (:func:`skin_depth`) is small against
the metal's thickness and its radii of curvature; a plating must be a few skin
depths thick to carry the current alone.

The FDTD update uses a frequency-independent conductivity. A loss tangent
``tan_d`` is turned into ``sigma = 2 pi f_c eps0 eps_r tan_d`` at one frequency
``f_c``; the medium's dielectric quality factor ``Q_d = omega eps0 eps_r / sigma`` then
equals ``1 / tan_d`` exactly at ``f_c`` and scales like ``f / f_c`` away from it
(Pozar 2012, sec. 6.7: ``Q_d = 1/tan_d`` for a filled cavity; ``Q = omega eps / sigma``
for a conducting dielectric). By default ``f_c`` is the geometric centre
``sqrt(f_min f_max)`` of the analysed spectrum, which makes the worst-case factor on
``Q_d`` the same at both ends of the spectrum (``sqrt(f_max/f_min)``).
"""

from __future__ import annotations

import difflib
import functools
import math
import tomllib
from dataclasses import dataclass
from importlib import resources
from types import MappingProxyType

import numpy as np
from scipy.constants import epsilon_0, mu_0

from ringprint.analysis._units import parse_frequency
from ringprint.errors import RingprintError

__all__ = ["Material", "library", "get_material", "loss_tangent_to_sigma",
           "sigma_to_loss_tangent", "dielectric_q", "conversion_frequency",
           "surface_resistance", "skin_depth"]


def _check(ok: bool, message: str) -> None:
    if not ok:
        raise RingprintError(message)


def _nonneg(value, what: str) -> float:
    _check(isinstance(value, (int, float)) and not isinstance(value, bool),
           f"{what} must be a number, got {value!r}")
    _check(math.isfinite(value) and value >= 0, f"{what} must be finite and >= 0, got {value!r}")
    return float(value)


@dataclass(frozen=True)
class Material:
    """A material as the solver sees it.

    Parameters
    ----------
    name : str
        Library name or the user's label.
    eps_r : float
        Relative permittivity (>= 1; 1 for conductors).
    loss_tangent : float or None
        Dielectric loss tangent at ``frequency_hz`` (dielectrics only).
    sigma : float or None
        Conductivity in S/m. For a dielectric: a frequency-independent conductivity
        given instead of a loss tangent. For a conductor: its bulk conductivity
        (> 0), whose surface resistance gives the conductor loss, or None for the
        lossless perfect conductor.
    frequency_hz : float or None
        The frequency at which ``eps_r`` and ``loss_tangent`` were stated.
    is_conductor : bool
        True for metals; the solver treats them as perfect conductors and a finite
        ``sigma`` adds the surface loss afterwards (module docstring).
    source : str
        Where the values come from.
    mu_r : float
        Effective relative permeability of a conductor's surface layer at RF (>= 1;
        it raises the surface resistance as ``sqrt(mu_r)``). Dielectrics take 1.

    Raises
    ------
    RingprintError
        For values out of range, a dielectric given both a loss tangent and sigma,
        or a conductor with sigma <= 0.
    """

    name: str
    eps_r: float = 1.0
    loss_tangent: float | None = None
    sigma: float | None = None
    frequency_hz: float | None = None
    is_conductor: bool = False
    source: str = ""
    mu_r: float = 1.0

    def __post_init__(self):
        _check(isinstance(self.name, str) and self.name.strip() != "",
               f"a material name must be a non-empty string, got {self.name!r}")
        label = f"material {self.name!r}"
        _check(isinstance(self.eps_r, (int, float)) and not isinstance(self.eps_r, bool)
               and math.isfinite(self.eps_r) and self.eps_r >= 1.0,
               f"{label}: eps_r must be a finite number >= 1, got {self.eps_r!r}")
        object.__setattr__(self, "eps_r", float(self.eps_r))
        if self.loss_tangent is not None:
            object.__setattr__(self, "loss_tangent",
                               _nonneg(self.loss_tangent, f"{label}: loss_tangent"))
        if self.sigma is not None:
            object.__setattr__(self, "sigma", _nonneg(self.sigma, f"{label}: sigma (S/m)"))
        if self.frequency_hz is not None:
            f = _nonneg(self.frequency_hz, f"{label}: frequency")
            _check(f > 0, f"{label}: the frequency its values hold at must be > 0")
            object.__setattr__(self, "frequency_hz", f)
        _check(isinstance(self.mu_r, (int, float)) and not isinstance(self.mu_r, bool)
               and math.isfinite(self.mu_r) and self.mu_r >= 1.0,
               f"{label}: mu_r must be a finite number >= 1, got {self.mu_r!r}")
        object.__setattr__(self, "mu_r", float(self.mu_r))
        if self.is_conductor:
            _check(self.loss_tangent is None and self.eps_r == 1.0,
                   f"{label}: a conductor takes no eps_r or loss_tangent; remove them")
            _check(self.sigma is None or self.sigma > 0,
                   f"{label}: a conductor's sigma must be > 0 S/m, got {self.sigma!r}; "
                   'leave sigma out (or use material = "pec") for the lossless ideal')
        else:
            _check(self.loss_tangent is None or self.sigma is None,
                   f"{label}: give either loss_tangent or sigma, not both")
            _check(self.mu_r == 1.0, f"{label}: mu_r is for conductors only; remove it")

    @property
    def is_pec(self) -> bool:
        """True when the solver treats the material as a perfect conductor (every conductor)."""
        return self.is_conductor

    @property
    def is_lossy_conductor(self) -> bool:
        """True for a conductor with a finite conductivity (it has a conductor loss)."""
        return self.is_conductor and self.sigma is not None

    def surface_resistance(self, frequency_hz):
        """Surface resistance (ohm) at ``frequency_hz``: :func:`surface_resistance` of a
        lossy conductor, 0 for the perfect conductor and for dielectrics."""
        if not self.is_lossy_conductor:
            return np.zeros_like(np.asarray(frequency_hz, dtype=float))[()]
        return surface_resistance(frequency_hz, self.sigma, self.mu_r)

    def conductivity(self, frequency_hz: float) -> float:
        """The frequency-independent conductivity (S/m) the solver uses.

        A loss tangent is converted at ``frequency_hz`` (see :func:`loss_tangent_to_sigma`);
        a conductivity given directly is returned as is. Conductors return ``inf``.
        """
        if self.is_conductor:
            return math.inf
        if self.sigma is not None:
            return self.sigma
        if not self.loss_tangent:
            return 0.0
        return float(loss_tangent_to_sigma(self.loss_tangent, self.eps_r, frequency_hz))


def _positive_array(value, what: str) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    _check(bool(np.all(np.isfinite(arr)) and np.all(arr > 0)), f"{what} must be finite and > 0")
    return arr


def loss_tangent_to_sigma(loss_tangent, eps_r, frequency_hz):
    """Conductivity with the same loss as ``loss_tangent`` at ``frequency_hz``.

    ``sigma = 2 pi f eps0 eps_r tan_d`` (S/m). Vectorized over all arguments.

    References
    ----------
    Pozar, D. M., *Microwave Engineering*, 4th ed., Wiley, 2012, eq. (1.58):
    ``tan_d = (omega eps'' + sigma) / (omega eps')``.
    """
    tan_d = np.asarray(loss_tangent, dtype=float)
    _check(bool(np.all(np.isfinite(tan_d)) and np.all(tan_d >= 0)), "loss_tangent must be >= 0")
    return 2 * np.pi * _positive_array(frequency_hz, "frequency_hz") * epsilon_0 \
        * _positive_array(eps_r, "eps_r") * tan_d


def sigma_to_loss_tangent(sigma, eps_r, frequency_hz):
    """Loss tangent of a conductivity ``sigma`` (S/m) at ``frequency_hz``: ``sigma / (omega eps0 eps_r)``."""
    s = np.asarray(sigma, dtype=float)
    _check(bool(np.all(np.isfinite(s)) and np.all(s >= 0)), "sigma must be >= 0")
    return s / (2 * np.pi * _positive_array(frequency_hz, "frequency_hz") * epsilon_0
                * _positive_array(eps_r, "eps_r"))


def dielectric_q(sigma, eps_r, frequency_hz):
    """Quality factor of a medium of conductivity ``sigma``: ``Q_d = omega eps0 eps_r / sigma``.

    ``inf`` for a lossless medium. References: Pozar (2012), sec. 6.7.
    """
    with np.errstate(divide="ignore"):
        return 1.0 / sigma_to_loss_tangent(sigma, eps_r, frequency_hz)


def surface_resistance(frequency_hz, sigma, mu_r=1.0):
    """Surface resistance of a good conductor, ``Rs = sqrt(omega mu0 mu_r / (2 sigma))`` (ohm).

    The real part of the surface impedance ``(1 - i) Rs`` (``exp(-i w t)`` convention)
    of a conductor much thicker than its skin depth, ``Rs = 1 / (sigma delta)``.
    Vectorized over all arguments.

    References
    ----------
    Harrington, R. F., *Time-Harmonic Electromagnetic Fields*, McGraw-Hill, 1961,
    ch. 2 (surface impedance; chapter from memory); Pozar, D. M., *Microwave Engineering*, 4th ed.,
    Wiley, 2012, sec. 1.7 (surface resistance of a good conductor; section from memory).
    """
    omega = 2 * np.pi * _positive_array(frequency_hz, "frequency_hz")
    return np.sqrt(omega * mu_0 * _positive_array(mu_r, "mu_r")
                   / (2 * _positive_array(sigma, "sigma")))


def skin_depth(frequency_hz, sigma, mu_r=1.0):
    """Skin depth ``delta = sqrt(2 / (omega mu0 mu_r sigma))`` (m); Pozar (2012), sec. 1.4
    (plane waves in a good conductor; section from memory)."""
    omega = 2 * np.pi * _positive_array(frequency_hz, "frequency_hz")
    return np.sqrt(2 / (omega * mu_0 * _positive_array(mu_r, "mu_r")
                        * _positive_array(sigma, "sigma")))


def conversion_frequency(f_min: float, f_max: float) -> float:
    """Default frequency for the loss-tangent conversion: ``sqrt(f_min f_max)``."""
    _check(0 < f_min < f_max and math.isfinite(f_max), "need 0 < f_min < f_max")
    return math.sqrt(f_min * f_max)


def _entry(name: str, table: dict) -> Material:
    conductor = table.get("kind", "dielectric") == "conductor"
    at = table.get("at")
    return Material(
        name=name,
        eps_r=table.get("eps_r", 1.0),
        loss_tangent=table.get("loss_tangent"),
        sigma=table.get("sigma"),
        frequency_hz=parse_frequency(at) if at is not None else None,
        is_conductor=conductor,
        source=table.get("source", "") + (" (from memory)" if table.get("from_memory") else ""),
        mu_r=table.get("mu_r", 1.0),
    )


@functools.cache
def _load() -> tuple[MappingProxyType, MappingProxyType]:
    text = resources.files("ringprint.analysis").joinpath("data/materials.toml").read_text("utf-8")
    entries, aliases = {}, {}
    for name, table in tomllib.loads(text).items():
        entries[name] = _entry(name, table)
        for alias in table.get("aliases", ()):
            aliases[alias] = name
    return MappingProxyType(entries), MappingProxyType(aliases)


def library() -> MappingProxyType:
    """All library materials by name (read-only mapping of :class:`Material`)."""
    return _load()[0]


def get_material(name: str) -> Material:
    """Look up a library material by name or alias (case-insensitive).

    Raises
    ------
    RingprintError
        For an unknown name, with the closest known names.
    """
    entries, aliases = _load()
    key = str(name).strip().lower()
    key = aliases.get(key, key)
    if key in entries:
        return entries[key]
    known = sorted([*entries, *aliases])
    close = difflib.get_close_matches(key, known, n=3)
    hint = f"did you mean {' or '.join(repr(c) for c in close)}?" if close else \
        f"known materials: {', '.join(sorted(entries))}"
    raise RingprintError(f"unknown material {name!r}; {hint} (or give "
                         "{ eps_r = ..., loss_tangent = ... })")
