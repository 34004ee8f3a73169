"""How far each mode's frequency and Q may be from the grid-converged answer.

Two ways, and modes.json names which one each mode got (``uncertainty_basis``):

- **Grid study** (``[analysis] grid_check``, ``ringprint run --grid-check``): the case is
  run again with ``cells_per_wavelength`` divided by :data:`GRID_RATIO` (and once more,
  divided by its square, for three grids). Every mode of the main run is matched to the
  coarser run's modes (:func:`match_modes`); a matched mode gets the Richardson
  extrapolation (:func:`richardson`) and, as its uncertainty, the Grid Convergence Index
  of Roache (:func:`gci`): safety factor 3 with two grids and the order ``p`` of the
  method, 1.25 with three grids and the order observed from them (when they converge
  monotonically; :func:`grid_estimate`). ``p`` is 1 when the case holds metal (metal is
  staircased onto the grid: a first-order error) and 2 otherwise (the interface
  averaging of dielectrics is second order, Farjadpour et al. 2006).
- **Stated bound** (every mode without a partner on the coarser grid, and every mode when
  no grid study ran): an estimate from the measured convergence of the method, not a
  bound proven for every geometry (:func:`stated_bound`). It adds the Yee dispersion
  error of the mode's own cells per wavelength (Taflove & Hagness 2005, ch. 4; exact
  dispersion relation along a grid axis, where it is largest) to a geometry term
  scaled from the validation runs of the README (tests/validation): dielectric sphere of
  eps_r 36 against its Mie pole, frequency +0.61 / +0.46 / +0.41 % and Q +1.14 / +0.79 /
  +0.33 % at 12 / 15.6 / 19.2 cells across; staircased conducting sphere, frequency
  +0.95 / +0.66 / +0.26 % and Q +9.2 / +7.6 / +6.1 % at 16 / 20 / 24 cells across;
  dielectric resonator +1.3 % against a formula that is itself 2 % accurate. The
  geometry term falls like one over the cells across each part that can ring at the
  mode's frequency (the measured errors fall no faster). The absorbing layer's loading
  of a strongly radiating mode (low Q, short padding) is not a grid error and is not
  in it.

:mod:`ringprint.analysis.grid_study` applies these rules to the modes of a run. The fit's
own error estimate (``fit_error``) is added in quadrature in both cases: the
relative error e of the complex frequency gives ``e f`` in frequency and about
``2 Q^2 e`` in Q (``Q = Re w / (2 |Im w|)``, and ``|Im w|`` carries the same absolute error).

References
----------
Roache, P. J., "Perspective: a method for uniform reporting of grid refinement studies",
J. Fluids Eng. 116:405-413, 1994 (Richardson extrapolation, Grid Convergence Index).
Celik, I. B. et al., "Procedure for estimation and reporting of uncertainty due to
discretization in CFD applications", J. Fluids Eng. 130:078001, 2008 (refinement ratio
above 1.3, observed order from three grids; from memory).
Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005, ch. 4.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ringprint.fdtd import C0

__all__ = ["GRID_RATIO", "richardson", "gci", "observed_order", "grid_estimate", "GridEstimate",
           "match_modes", "Match", "yee_dispersion_error", "PartScale", "part_scales",
           "stated_bound", "method_order", "fit_terms", "STATED_BASIS", "check_grid_study"]

#: cells_per_wavelength of the main run divided by the coarser run's (Celik et al. 2008:
#: at least 1.3, so the grids' difference stands above the other errors).
GRID_RATIO = 1.3
#: Roache's safety factors: two grids with an assumed order, three with the observed one.
SAFETY_TWO_GRIDS, SAFETY_THREE_GRIDS = 3.0, 1.25
#: Order of the method: staircased metal, and smooth (averaged) dielectric interfaces.
ORDER_STAIRCASE, ORDER_SMOOTH = 1.0, 2.0
#: An observed order below this is not asymptotic convergence (common practice).
MIN_OBSERVED_ORDER = 0.5
#: Matching window: this many times the mode's stated error on the coarser grid.
MATCH_WINDOW = 1.5
#: Geometry term of the stated bound, (frequency, Q) relative errors at ``cells`` across:
#: covers the measured errors listed in the module docstring when scaled by 1 / cells.
GEOMETRY_TERMS = {"dielectric": (0.008, 0.015, 12.0), "metal": (0.012, 0.12, 16.0),
                  "conformal metal": (0.008, 0.015, 12.0)}
#: A part can carry a mode at f only when 2 pi f a sqrt(eps_r) / c reaches this (a: half
#: the part's bounding-box diagonal). The lowest resonances of the references lie higher:
#: conducting sphere k a = 0.866 (Stratton 1941), eps_r-36 sphere k a sqrt(eps_r) = 3.07.
KA_MIN = 0.5
STATED_BASIS = (
    "estimate from the measured convergence of the method, not a bound proven for every "
    "geometry: Yee dispersion error at the mode's cells per wavelength (Taflove & Hagness "
    "2005, ch. 4) plus a geometry term falling like 1/(cells across the part) from the "
    "validation runs: dielectric sphere (eps_r 36) f +0.61/+0.46/+0.41 %, Q +1.14/+0.79/"
    "+0.33 % at 12/15.6/19.2 cells across; staircased metal sphere f +0.95/+0.66/+0.26 %, "
    "Q +9.2/+7.6/+6.1 % at 16/20/24 cells across; conformal metal sphere f +0.08/+0.08/"
    "+0.09 %, Q +0.37/+0.62/+0.47 % at 16/20/24 cells across, conformal cylindrical cavity "
    "f -0.70/-0.32/-0.18 % at 12/16/20 cells across; dielectric resonator f +1.3 % at 15.5 "
    "cells across (against a 2 % formula)")


def richardson(fine, coarse, ratio: float, order: float):
    """Richardson extrapolation of a quantity computed on two grids.

    For ``f(h) = f0 + C h^p`` and ``h_coarse = ratio h_fine`` this returns ``f0``
    exactly: ``f_fine + (f_fine - f_coarse) / (ratio^p - 1)``.

    References
    ----------
    Roache, P. J., J. Fluids Eng. 116:405-413, 1994.
    """
    _check_ratio_order(ratio, order)
    fine, coarse = np.asarray(fine, float), np.asarray(coarse, float)
    return fine + (fine - coarse) / (ratio ** order - 1.0)


def gci(fine, coarse, ratio: float, order: float, safety: float = SAFETY_TWO_GRIDS):
    """Grid Convergence Index of the fine-grid value, as an absolute uncertainty.

    ``safety |f_fine - f_coarse| / (ratio^p - 1)``: Roache's relative GCI times
    ``|f_fine|``, i.e. ``safety`` times the distance to the Richardson value.

    References
    ----------
    Roache, P. J., J. Fluids Eng. 116:405-413, 1994.
    """
    _check_ratio_order(ratio, order)
    if not safety >= 1.0:
        raise ValueError(f"safety factor {safety!r} must be >= 1")
    diff = np.abs(np.asarray(fine, float) - np.asarray(coarse, float))
    return safety * diff / (ratio ** order - 1.0)


def observed_order(f1: float, f2: float, f3: float, ratio: float) -> float:
    """Order observed from three grids (fine ``f1``, medium ``f2``, coarse ``f3``) with a
    constant ``ratio``: ``ln((f3 - f2) / (f2 - f1)) / ln(ratio)``; NaN when the values do
    not converge monotonically (the differences change sign or one of them is zero).

    References
    ----------
    Roache, P. J., J. Fluids Eng. 116:405-413, 1994; Celik et al. 2008, eq. 3.
    """
    _check_ratio_order(ratio, 1.0)
    d21, d32 = f2 - f1, f3 - f2
    if d21 == 0 or d32 == 0 or (d21 > 0) != (d32 > 0):
        return math.nan
    return math.log(d32 / d21) / math.log(ratio)


def _check_ratio_order(ratio, order):
    if not (math.isfinite(ratio) and ratio > 1.0):
        raise ValueError(f"grid ratio {ratio!r} must be a finite number above 1")
    if not (math.isfinite(order) and order > 0):
        raise ValueError(f"order {order!r} must be a positive finite number")


@dataclass(frozen=True)
class GridEstimate:
    """Richardson value, GCI (absolute), the order used and how it was had, safety factor."""

    extrapolated: float
    uncertainty: float
    order: float
    order_basis: str
    safety: float


def grid_estimate(values, ratio: float, order: float) -> GridEstimate:
    """Extrapolated value and GCI from two or three grids, finest first.

    Two grids: the stated ``order`` and safety factor 3. Three grids that converge
    monotonically with an observed order of at least :data:`MIN_OBSERVED_ORDER`: the
    observed order, capped at the stated one (a higher observed order is not trusted
    to hold beyond these grids), and safety factor 1.25. Otherwise the two finest grids
    with the stated order and safety factor 3, on the larger of the two differences.
    """
    values = [float(v) for v in values]
    if len(values) not in (2, 3):
        raise ValueError(f"give two or three grid values, not {len(values)}")
    f1, f2 = values[0], values[1]
    if len(values) == 3:
        p = observed_order(f1, f2, values[2], ratio)
        if p >= MIN_OBSERVED_ORDER:
            used = min(p, order)
            return GridEstimate(float(richardson(f1, f2, ratio, used)),
                                float(gci(f1, f2, ratio, used, SAFETY_THREE_GRIDS)), used,
                                f"observed {p:.2f}" + (f", capped at {order:g}" if p > order else ""),
                                SAFETY_THREE_GRIDS)
        worst = max(abs(f1 - f2), abs(f2 - values[2]))
        return GridEstimate(float(richardson(f1, f2, ratio, order)),
                            float(gci(0.0, worst, ratio, order, SAFETY_TWO_GRIDS)), order,
                            f"stated {order:g} (the three grids do not converge monotonically)",
                            SAFETY_TWO_GRIDS)
    return GridEstimate(float(richardson(f1, f2, ratio, order)),
                        float(gci(f1, f2, ratio, order, SAFETY_TWO_GRIDS)), order,
                        f"stated {order:g}", SAFETY_TWO_GRIDS)


@dataclass(frozen=True)
class Match:
    """The partner (index into the other run's modes) of one mode, or None and why."""

    partner: int | None
    reason: str = ""


def match_modes(f, q, f_other, q_other, f_window, q_window) -> list[Match]:
    """Pair each mode ``(f[i], q[i])`` with one mode of another run, or refuse.

    A candidate lies within ``|f_other / f - 1| <= f_window[i]`` and
    ``|ln(q_other / q)| <= ln(1 + q_window[i])``. A mode is matched only when it has
    exactly one candidate and that candidate is nobody else's candidate; otherwise it
    stays unmatched, with the reason.
    """
    f, q = np.asarray(f, float), np.asarray(q, float)
    fo, qo = np.asarray(f_other, float), np.asarray(q_other, float)
    fw = np.broadcast_to(np.asarray(f_window, float), f.shape)
    qw = np.broadcast_to(np.asarray(q_window, float), f.shape)
    if np.any(~(fw > 0)) or np.any(~(qw > 0)):
        raise ValueError("matching windows must be positive")
    near = (np.abs(fo[None, :] / f[:, None] - 1.0) <= fw[:, None]) & \
           (np.abs(np.log(qo[None, :] / q[:, None])) <= np.log1p(qw)[:, None])
    out = []
    for i in range(f.size):
        cand = np.flatnonzero(near[i])
        window = f"within {100 * fw[i]:.2g} % in frequency and {100 * qw[i]:.2g} % in Q"
        if cand.size == 0:
            out.append(Match(None, f"no mode on the coarser grid {window}"))
        elif cand.size > 1:
            out.append(Match(None, f"ambiguous: {cand.size} modes on the coarser grid {window}"))
        else:
            j = int(cand[0])
            rivals = np.flatnonzero(near[:, j])
            if rivals.size > 1:
                out.append(Match(None, f"ambiguous: its partner on the coarser grid is also "
                                       f"within the window of {rivals.size - 1} other mode(s)"))
            else:
                out.append(Match(j))
    return out


def yee_dispersion_error(cells_per_wavelength, courant: float):
    """Relative frequency error of a plane wave along a Yee grid axis (negative: low).

    ``sin(w dt / 2) = S sin(k h / 2)`` with ``S = c dt / h``, for a wave of fixed
    ``k = 2 pi / (N h)``: returns ``w_num / (c k) - 1``. Along an axis the error is the
    largest of all directions.

    References
    ----------
    Taflove, A. & Hagness, S. C., Computational Electrodynamics, 3rd ed., 2005, ch. 4.
    """
    n = np.asarray(cells_per_wavelength, float)
    if np.any(~(n > 1)) or not 0 < courant <= 1:
        raise ValueError("cells per wavelength must exceed 1 and the Courant number lie in (0, 1]")
    half = np.pi / n
    return np.arcsin(courant * np.sin(half)) / (courant * half) - 1.0


@dataclass(frozen=True)
class PartScale:
    """What the stated bound needs of a part: conductor or not, eps_r, half its
    bounding-box diagonal (m), and the cells spanned along its longest side."""

    name: str
    conductor: bool
    eps_r: float
    radius_m: float
    cells_across: float
    staircase: bool = True     #: a conductor staircased onto the grid (sheets, thin parts)


def part_scales(model) -> list[PartScale]:
    """One :class:`PartScale` per part of a :class:`~ringprint.analysis.model.Model`
    (cells counted on the actual grid lines, so a graded grid counts its fine cells)."""
    out = []
    for p in model.parts:
        lo = np.min([s.bounds[0] for s in p.surfaces], axis=0)
        hi = np.max([s.bounds[1] for s in p.surfaces], axis=0)
        axis = int(np.argmax(hi - lo))
        line = model.grid.axes[axis]
        cells = max(float(np.searchsorted(line, hi[axis]) - np.searchsorted(line, lo[axis])), 1.0)
        eps_r = 1.0 if p.is_conductor else float(model.case.medium(p.part)[0])
        fills = getattr(p, "fills", ())
        conformal = bool(fills) and all(getattr(f, "faces", None) is not None for f in fills)
        out.append(PartScale(p.name, p.is_conductor, eps_r,
                             0.5 * float(np.linalg.norm(hi - lo)), cells,
                             staircase=p.is_conductor and not conformal))
    return out


def method_order(scales) -> float:
    """Order of the method for a case: 1 when any part is staircased metal (a sheet or
    a conductor thinner than the conformal rule takes), else 2 (smooth dielectric
    interfaces and conformal metal, tests/validation/test_conformal_cavity.py)."""
    return ORDER_STAIRCASE if any(s.conductor and s.staircase for s in scales) else ORDER_SMOOTH


def fit_terms(f, q, fit_error):
    """Absolute (frequency, Q) uncertainty from the fit's own relative error ``e``:
    ``e f`` and ``2 Q^2 e`` (module docstring)."""
    e = np.nan_to_num(np.asarray(fit_error, float), nan=0.0)
    q = np.asarray(q, float)
    return e * np.asarray(f, float), 2.0 * q * q * e


def stated_bound(f, q, fit_error, scales, step_m: float, courant: float, eps_r_max: float):
    """The stated (f, Q) uncertainty of modes, absolute; see the module docstring.

    Parameters
    ----------
    f, q, fit_error : array_like
        The modes' frequencies (Hz), Q and fit errors (relative).
    scales : list of PartScale
        The case's parts (:func:`part_scales`).
    step_m : float
        Largest cell step among the parts (the coarsest sampling a mode sees there).
    courant : float
        ``c dt / step_m`` of the run.
    eps_r_max : float
        Largest permittivity of the case (the shortest wavelength of each mode).

    Returns
    -------
    (u_f, u_q, relative_f, relative_q) : arrays
    """
    f, q = np.asarray(f, float), np.asarray(q, float)
    cells = C0 / (f * math.sqrt(eps_r_max) * step_m)
    disp = np.abs(yee_dispersion_error(np.maximum(cells, 2.0), min(courant, 1.0)))
    geo_f, geo_q = np.zeros_like(f), np.zeros_like(f)
    for k, fk in enumerate(f):
        k0 = 2 * math.pi * fk / C0
        able = [s for s in scales if k0 * s.radius_m * math.sqrt(max(s.eps_r, eps_r_max)) >= KA_MIN]
        for s in able or scales:
            kind = ("metal" if s.staircase else "conformal metal") if s.conductor else "dielectric"
            gf, gq, ref = GEOMETRY_TERMS[kind]
            geo_f[k] = max(geo_f[k], gf * ref / s.cells_across)
            geo_q[k] = max(geo_q[k], gq * ref / s.cells_across)
    rel_f, rel_q = disp + geo_f, geo_q
    fit_f, fit_q = fit_terms(f, q, fit_error)
    return np.hypot(rel_f * f, fit_f), np.hypot(rel_q * q, fit_q), rel_f, rel_q


#: Lowest cells_per_wavelength a coarser run may use (the case file's own floor).
MIN_CELLS = 10.0


def check_grid_study(cells_per_wavelength: float, grids: int) -> str | None:
    """What is wrong with a grid study of ``grids`` grids from ``cells_per_wavelength``
    (the coarsest grid must keep :data:`MIN_CELLS`), or None when it can run."""
    if grids not in (0, 1, 2, 3):
        return f"grid_check = {grids}: give true (two grids), 3 (three grids) or false"
    if grids < 2:
        return None
    need = MIN_CELLS * GRID_RATIO ** (grids - 1)
    if cells_per_wavelength < need * (1 - 1e-9):
        return (f"a grid check on {grids} grids needs [grid] cells_per_wavelength >= {need:.4g} "
                f"(the coarsest run divides it by {GRID_RATIO ** (grids - 1):.4g} and needs "
                f"{MIN_CELLS:g}); raise cells_per_wavelength"
                + (" or use two grids (grid_check = true)" if grids == 3 else ""))
    return None
