"""Measured resonances against simulated ones: which is which, how far off, and which
material value most likely explains the offsets.

Rules (``ringprint match`` prints and writes them):

- **What is compared**: a measured resonance's unloaded Q (``Q_0``, from the circle
  fit of :mod:`ringprint.analysis.bench_q`) with the run's ``q``: the run rings the
  model with the probe open (an ideal current source), so its Q is unloaded too.
  Frequencies: the measured loaded ``f_L`` against the run's ``frequency_hz``.
- **Pairing** keeps the frequency order on both sides (an order-preserving alignment
  by dynamic programming, Needleman & Wunsch 1970): a pair costs
  ``(df/f / within)^2 + Q_WEIGHT (log10(Q_meas/Q_sim))^2`` and is allowed only when
  ``|df/f| <= within`` (default 10 %); leaving a mode unpaired costs ``GAP_COST``
  (1). The pairing of least total cost wins: a measured mode pairs with the nearest
  simulated one of similar Q, and the modes left over on either side are listed as
  unmatched.
- **Offsets**: ``offset_percent = 100 (f_meas - f_sim) / f_sim``; ``q_ratio =
  Q_0,meas / Q_sim``.
- **Material hint** (first-order cavity perturbation, Harrington 1961):
  ``df/f = -(W_e,part / W) d eps/eps``, ``W_e,part`` the mode's electric energy in
  the part and ``W`` its whole stored energy, i.e. ``-1/2`` times the part's share of
  the electric energy. modes.json's ``participation_detail[part].electric_inside``
  is ``W_e,part / W``. For each dielectric part, one ``x = d eps/eps`` is fitted to
  the paired modes' offsets by least squares; the part whose fit leaves the least
  residual, with at least ``HINT_MIN_SHARE`` of some paired mode's energy in it,
  is named with ``eps_r (1 + x)``. The fit is first order: a change of more than
  ``HINT_FIRST_ORDER`` (30 %) is flagged as beyond it, and a fit that leaves more
  than ``HINT_EXPLAINS`` (half) of the offsets' rms is reported as explaining
  nothing (``explains`` false: no single part's permittivity accounts for the
  offsets; look at the geometry, the metals or the probe). Without fields in the run
  (no ``participation_detail``) there is no hint.

References
----------
S. B. Needleman and C. D. Wunsch, "A general method applicable to the search for
similarities in the amino acid sequence of two proteins", J. Mol. Biol.
48(3):443-453, 1970 (order-preserving alignment).
R. F. Harrington, Time-Harmonic Electromagnetic Fields, McGraw-Hill, 1961, sec. 7-2
(cavity perturbation).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ringprint.errors import RingprintError

DEFAULT_WITHIN = 0.10
Q_WEIGHT = 0.5
GAP_COST = 1.0
HINT_MIN_SHARE = 0.02
HINT_FIRST_ORDER = 0.30
HINT_EXPLAINS = 0.5


@dataclass(frozen=True)
class Pairing:
    """Index pairs ``(sim, meas)`` into the two sorted lists, and the unpaired indices."""

    pairs: list
    sim_only: list
    meas_only: list


def _pair_cost(f_sim, q_sim, f_meas, q_meas, within):
    rel = (f_meas - f_sim) / f_sim
    if abs(rel) > within:
        return math.inf
    cost = (rel / within) ** 2
    if q_sim > 0 and q_meas > 0 and math.isfinite(q_sim) and math.isfinite(q_meas):
        cost += Q_WEIGHT * math.log10(q_meas / q_sim) ** 2
    return cost


def pair_modes(f_sim, q_sim, f_meas, q_meas, within: float = DEFAULT_WITHIN) -> Pairing:
    """Order-preserving pairing of least cost (module docstring).

    Both lists must be sorted by frequency.
    """
    if not 0 < within < 1:
        raise RingprintError(f"--within {100 * within:g} %: give a tolerance between 0 and 100 %")
    ns, nm = len(f_sim), len(f_meas)
    cost = np.full((ns + 1, nm + 1), math.inf)
    step = np.zeros((ns + 1, nm + 1), np.int8)       # 1 sim gap, 2 meas gap, 3 pair
    cost[0, :] = GAP_COST * np.arange(nm + 1)
    cost[:, 0] = GAP_COST * np.arange(ns + 1)
    step[1:, 0], step[0, 1:] = 1, 2
    for i in range(1, ns + 1):
        for j in range(1, nm + 1):
            options = (cost[i - 1, j] + GAP_COST, cost[i, j - 1] + GAP_COST,
                       cost[i - 1, j - 1] + _pair_cost(f_sim[i - 1], q_sim[i - 1], f_meas[j - 1],
                                                       q_meas[j - 1], within))
            k = int(np.argmin(options))
            cost[i, j], step[i, j] = options[k], k + 1
    pairs, sim_only, meas_only = [], [], []
    i, j = ns, nm
    while i > 0 or j > 0:
        s = step[i, j]
        if s == 3:
            pairs.append((i - 1, j - 1))
            i, j = i - 1, j - 1
        elif s == 1:
            sim_only.append(i - 1)
            i -= 1
        else:
            meas_only.append(j - 1)
            j -= 1
    return Pairing(pairs[::-1], sim_only[::-1], meas_only[::-1])


def material_hint(offsets, shares: dict, eps_r: dict) -> dict | None:
    """The part whose permittivity change best explains the relative offsets.

    Parameters
    ----------
    offsets : array_like
        ``(f_meas - f_sim) / f_sim`` of the paired modes.
    shares : dict
        part -> array of ``W_e,part / W`` for the same modes.
    eps_r : dict
        part -> the permittivity the run used (parts missing here get no value).

    Returns
    -------
    dict or None
        ``{"part", "d_eps_over_eps", "eps_r", "suggested_eps_r", "residual_rms",
        "offset_rms", "first_order", "explains"}``, or None when no part qualifies.
    """
    y = np.asarray(offsets, float)
    if y.size == 0:
        return None
    best = None
    for part, e in shares.items():
        e = np.asarray(e, float)
        if e.shape != y.shape or not np.any(e >= HINT_MIN_SHARE):
            continue
        x = -float(np.dot(y, e) / np.dot(e, e))
        resid = float(np.sqrt(np.mean((y + e * x) ** 2)))
        if best is None or resid < best["residual_rms"]:
            eps = eps_r.get(part)
            best = {"part": part, "d_eps_over_eps": x, "eps_r": eps,
                    "suggested_eps_r": None if eps is None else float(eps * (1 + x)),
                    "residual_rms": resid, "offset_rms": float(np.sqrt(np.mean(y ** 2))),
                    "first_order": abs(x) <= HINT_FIRST_ORDER}
    if best is not None:
        best["explains"] = best["residual_rms"] <= HINT_EXPLAINS * best["offset_rms"]
    return best


def compare(sim_modes, meas_modes, parts_eps: dict, within: float = DEFAULT_WITHIN) -> dict:
    """Pair simulated modes (modes.json entries) with measured ones
    (:class:`~ringprint.analysis.bench_q.BenchMode`); offsets, Q ratios, hint.

    ``parts_eps``: the dielectric parts (name -> the eps_r the run used, or None); only
    they are candidates for the hint.
    """
    sim = sorted(sim_modes, key=lambda m: m["frequency_hz"])
    meas = sorted(meas_modes, key=lambda m: m.fit.frequency_hz)
    pairing = pair_modes([m["frequency_hz"] for m in sim], [m["q"] for m in sim],
                         [m.fit.frequency_hz for m in meas], [m.fit.q_unloaded for m in meas], within)
    rows = []
    for i, j in pairing.pairs:
        s, m = sim[i], meas[j]
        rows.append({"mode": s["index"], "frequency_sim_hz": s["frequency_hz"], "q_sim": s["q"],
                     "measured": m.to_dict(),
                     "offset_percent": 100 * (m.fit.frequency_hz - s["frequency_hz"]) / s["frequency_hz"],
                     "offset_error_percent": 100 * m.fit.frequency_error_hz / s["frequency_hz"],
                     "q_ratio": m.fit.q_unloaded / s["q"] if s["q"] > 0 else None,
                     "q_ratio_error": m.fit.q_unloaded_error / s["q"] if s["q"] > 0 else None})
    hint, why = None, "no paired modes"
    if rows:
        details = [sim[i].get("participation_detail") or {} for i, _ in pairing.pairs]
        names = sorted({n for d in details for n in d if n in parts_eps})
        if not any(details):
            why = "the run has no participation (run it with output.fields = true)"
        elif not names:
            why = "the run has no dielectric parts"
        else:
            shares = {n: [float(d.get(n, {}).get("electric_inside", 0.0)) for d in details]
                      for n in names}
            hint = material_hint([r["offset_percent"] / 100 for r in rows], shares, parts_eps)
            why = "" if hint else f"no paired mode has {100 * HINT_MIN_SHARE:g} % of its energy in a dielectric"
    return {"within_percent": 100 * within, "pairs": rows,
            "unmatched_simulated": [{"mode": sim[i]["index"], "frequency_hz": sim[i]["frequency_hz"],
                                     "q": sim[i]["q"]} for i in pairing.sim_only],
            "unmatched_measured": [meas[j].to_dict() for j in pairing.meas_only],
            "material_hint": hint, "material_hint_note": why}
