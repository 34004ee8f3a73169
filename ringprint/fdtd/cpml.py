"""Convolutional PML (CPML) grading and coefficients, per axis."""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np

from ringprint.errors import RingprintError
from ringprint.fdtd.grid import EPS0, MU0

ETA0 = float(np.sqrt(MU0 / EPS0))
FACES = ("x-", "x+", "y-", "y+", "z-", "z+")
BOUNDARY_KINDS = ("cpml", "pec", "pmc")


@dataclass(frozen=True)
class CpmlSettings:
    """Grading of the CPML layer (complex-frequency-shifted stretch).

    ``sigma(r) = sigma_max r^m``, ``kappa(r) = 1 + (kappa_max - 1) r^m``,
    ``alpha(r) = alpha_max (1 - r)`` with r the normalized depth into the layer
    (0 at the inner interface, 1 at the outer wall) and
    ``sigma_max = sigma_scale * 0.8 (m + 1) / (eta0 d)`` with d the mean cell size
    across the layer.

    Parameters
    ----------
    order : float
        Polynomial grading order m (3..4 is common practice).
    sigma_scale : float
        Multiplier of the ``0.8 (m+1)/(eta0 d)`` estimate of the optimal
        conductivity (Taflove & Hagness 2005, ch. 7; the 0.8 factor is from memory).
    kappa_max : float
        Largest real coordinate stretch (>= 1).
    alpha_max : float
        Largest complex frequency shift (S/m). A non-zero value absorbs
        evanescent and low-frequency fields; it weakens absorption of waves below
        about ``alpha_max / (2 pi eps0)`` Hz, so keep that well below the band
        (the default 0.01 S/m corresponds to about 180 MHz).

    References
    ----------
    Roden, J. A. & Gedney, S. D., Microw. Opt. Technol. Lett. 27(5):334-339, 2000.
    Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005, ch. 7.
    """

    order: float = 3.0
    sigma_scale: float = 1.0
    kappa_max: float = 5.0
    alpha_max: float = 0.01

    def __post_init__(self):
        for key, ok in (("order", self.order >= 1), ("sigma_scale", self.sigma_scale > 0),
                        ("kappa_max", self.kappa_max >= 1), ("alpha_max", self.alpha_max >= 0)):
            value = getattr(self, key)
            if not (np.isfinite(value) and ok):
                raise RingprintError(f"cpml {key} = {value!r} is out of range; see CpmlSettings")

    def to_dict(self) -> dict:
        return asdict(self)


def parse_boundaries(boundaries) -> dict:
    """Normalize ``"cpml" | "pec" | "pmc" | {face: kind}`` to a dict over all faces.

    Faces missing from a dict default to ``"cpml"``.
    """
    if isinstance(boundaries, str):
        out = {f: boundaries for f in FACES}
    elif isinstance(boundaries, dict):
        unknown = set(boundaries) - set(FACES)
        if unknown:
            raise RingprintError(f"boundaries: unknown face {sorted(unknown)[0]!r}; "
                                 f"use {', '.join(FACES)}")
        out = {f: boundaries.get(f, "cpml") for f in FACES}
    else:
        raise RingprintError(f"boundaries {boundaries!r}: give 'cpml', 'pec', 'pmc' or a dict face -> kind")
    for f, kind in out.items():
        if kind not in BOUNDARY_KINDS:
            raise RingprintError(f"boundaries[{f!r}] = {kind!r} unknown; use one of "
                                 f"{', '.join(BOUNDARY_KINDS)}")
    return out


def axis_profiles(nodes, centres, n_lo, n_hi, dt, settings: CpmlSettings):
    """CPML coefficients along one axis.

    Parameters
    ----------
    nodes, centres : ndarray
        Node and cell-centre coordinates of the axis.
    n_lo, n_hi : int
        Layer thickness in cells at the low and high end (0: no layer).
    dt : float
        Time step (s).

    Returns
    -------
    dict
        ``kappa_e, b_e, a_e`` at the nodes (E terms) and ``kappa_h, b_h, a_h`` at the
        cell centres (H terms); kappa is 1 and b, a are 0 outside the layers.
    """
    out = {}
    for tag, pos in (("e", nodes), ("h", centres)):
        kappa = np.ones(pos.size)
        b = np.zeros(pos.size)
        a = np.zeros(pos.size)
        for n, side in ((n_lo, -1), (n_hi, +1)):
            if n == 0:
                continue
            if side < 0:
                inner, outer = nodes[n], nodes[0]
            else:
                inner, outer = nodes[-1 - n], nodes[-1]
            thick = abs(inner - outer)
            r = (pos - inner) / (outer - inner)
            inside = r > 0
            rho = np.where(inside, np.minimum(r, 1.0), 0.0)
            m = settings.order
            smax = settings.sigma_scale * 0.8 * (m + 1) / (ETA0 * thick / n)
            sig = smax * rho ** m
            kap = 1.0 + (settings.kappa_max - 1.0) * rho ** m
            alp = settings.alpha_max * (1.0 - rho)
            bb = np.exp(-(sig / kap + alp) * dt / EPS0)
            denom = sig * kap + kap * kap * alp
            aa = np.where(sig > 0, sig * (bb - 1.0) / np.where(denom > 0, denom, 1.0), 0.0)
            kappa = np.where(inside, kap, kappa)
            b = np.where(inside, bb, b)
            a = np.where(inside, aa, a)
        out["kappa_" + tag], out["b_" + tag], out["a_" + tag] = kappa, b, a
    return out
