"""From a ring-down record to the list of modes, judged against the bands and the Chu bound.

Rules (the report cites them):

- **Inversion**: every pickup's ring-down (from the first sample after the source)
  is scaled to unit peak, so E, H and EMF records weigh alike, and all of them are
  fitted with one shared set of poles over [f_min, f_max] by filter
  diagonalization (:func:`ringprint.analysis.harmonic_inversion`), which already
  drops poles outside the window, growing ones, ones with negligible amplitude and
  ones whose error estimate is far above the record's resolution.
- **Duplicates**: two poles closer than ``DUPLICATE_SPACING`` times the larger of
  their half-power bandwidths ``f/(2Q)`` and their error estimates are one mode; the
  stronger is kept.
- **Strength**: ``amplitude`` is the mode's amplitude in the probe's own EMF record
  relative to the strongest mode there (1 = the strongest); ``visibility`` is the
  same ratio taken in the pickup that sees the mode best.
- **Fit error**: ``error`` (kept under this name) and ``fit_error`` are the inversion's
  own relative error of the complex frequency; the uncertainty that includes the grid
  is added by :mod:`ringprint.analysis.grid_study`.
- **Confidence**: ``high`` when the relative fit error is below 1e-4 and the mode is
  visible above 1e-3 somewhere, ``medium`` when the error is below 1e-2, else ``low``.
- **Chu bound**: ``q_chu = 1/(ka)^3 + 1/(ka)`` with ``a`` the radius of the smallest
  sphere enclosing the whole assembly (Chu 1948; McLean 1996). The bound limits the
  energy-ratio Q of a field radiating from within that sphere at a real frequency;
  the Q of a complex natural frequency, ``Re(w) / (2 |Im w|)``, equals that Q only
  when it is well above 1 (the exact TM_1 pole of a perfectly conducting sphere has
  Q = 0.866 against a bound of 2.69 for its own sphere; Stratton 1941). So
  ``below_chu`` states the comparison for every mode, and a mode with
  ``Q >= CHU_Q_MIN`` below the bound gets a note: there it signals a numerical
  problem, or a mode that is not a resonance of the parts. The comparison uses the
  ring-down's Q (``q_solver``): conductor loss may rightly take a Q below the bound.
- **Bands**: :func:`judge_modes` judges each mode by its ``q``; the run judges again
  once the conductor loss has made ``q`` the combined Q
  (:mod:`ringprint.analysis.conductor_loss`).
"""

from __future__ import annotations

import numpy as np

from ringprint.analysis.bands import STATUS_NAMES, judge, rank_hazards
from ringprint.analysis.bounds import chu_q
from ringprint.analysis.inversion import harmonic_inversion

DUPLICATE_SPACING = 0.5
#: Smallest Q at which a pole below the Chu bound is treated as suspect (see above).
CHU_Q_MIN = 5.0
HIGH_ERROR, MEDIUM_ERROR, VISIBLE = 1e-4, 1e-2, 1e-3


def normalized_ringdown(ring) -> np.ndarray:
    """The post-source part of every pickup record, each scaled to unit peak."""
    sig = ring.signals[:, ring.start_index:]
    peak = np.max(np.abs(sig), axis=1, keepdims=True)
    keep = (peak[:, 0] > 0) & np.all(np.isfinite(sig), axis=1)
    return sig[keep] / peak[keep], np.flatnonzero(keep)


def find_resonances(ring, f_min: float, f_max: float):
    """Resonances of the record (shared poles over all pickups), duplicates merged.

    Returns ``(resonances, rows)``: ``rows`` maps each amplitude entry back to the
    pickup row of ``ring.signals``.
    """
    sig, rows = normalized_ringdown(ring)
    res = [r for r in harmonic_inversion(sig, ring.dt, f_min, f_max) if r.q > 0]
    return _merge_duplicates(res), rows


def _merge_duplicates(res):
    out = []
    for r in sorted(res, key=lambda r: r.frequency_hz):
        if out:
            prev = out[-1]
            width = max(prev.frequency_hz / (2 * prev.q), r.frequency_hz / (2 * r.q),
                        prev.error * prev.frequency_hz, r.error * r.frequency_hz)
            if abs(r.frequency_hz - prev.frequency_hz) < DUPLICATE_SPACING * width:
                if np.max(np.abs(r.amplitude)) > np.max(np.abs(prev.amplitude)):
                    out[-1] = r
                continue
        out.append(r)
    return out


def _confidence(error: float, visibility: float) -> str:
    if error < HIGH_ERROR and visibility > VISIBLE:
        return "high"
    return "medium" if error < MEDIUM_ERROR else "low"


def mode_table(res, rows, probe_row: int, radius_m: float, bands, margin: float):
    """The ``modes`` and ``hazards`` lists of modes.json (see ringprint.analysis.report)."""
    if not res:
        return [], []
    amps = np.abs(np.stack([r.amplitude for r in res]))          # (modes, signals)
    strongest = np.max(amps, axis=0)
    rel = np.divide(amps, strongest, out=np.zeros_like(amps), where=strongest > 0)
    probe_col = np.flatnonzero(rows == probe_row)
    at_probe = rel[:, probe_col[0]] if probe_col.size else np.full(len(res), np.nan)
    f = np.array([r.frequency_hz for r in res])
    q = np.array([r.q for r in res])
    q_chu = np.asarray(chu_q(f, radius_m)) if radius_m > 0 else np.full(f.shape, np.nan)
    modes = []
    for k, r in enumerate(res):
        vis = float(np.max(rel[k]))
        entry = {
            "index": k + 1,
            "frequency_hz": float(r.frequency_hz),
            "q": float(r.q),
            "decay_rate_per_s": float(r.decay_rate),
            "amplitude": float(at_probe[k]) if np.isfinite(at_probe[k]) else 0.0,
            "visibility": vis,
            "error": float(r.error),
            "fit_error": float(r.error),
            "confidence": _confidence(r.error, vis),
            "q_chu": float(q_chu[k]) if np.isfinite(q_chu[k]) else None,
            "q_over_chu": float(q[k] / q_chu[k]) if np.isfinite(q_chu[k]) else None,
            "below_chu": bool(np.isfinite(q_chu[k]) and q[k] < q_chu[k]),
            "chu_applies": bool(q[k] >= CHU_Q_MIN),
            "bands": [],
            "participation": {},
        }
        modes.append(entry)
    return modes, judge_modes(modes, bands, margin)


def judge_modes(modes, bands, margin: float) -> list:
    """Judge every mode entry against the bands by its current ``q`` (fills each entry's
    ``bands``) and return the ranked hazards; run again once the final Q is known."""
    if not modes or not bands:
        return []
    f = np.array([m["frequency_hz"] for m in modes])
    q = np.array([m["q"] for m in modes])
    verdict = judge(f, q, [b.low_hz for b in bands], [b.high_hz for b in bands], margin)
    for k, entry in enumerate(modes):
        entry["bands"] = [{"band": b.name, "status": STATUS_NAMES[verdict.status[k, j]],
                           "distance_percent": float(verdict.distance_percent[k, j]),
                           "overlap": float(verdict.overlap[k, j])}
                          for j, b in enumerate(bands)]
    hazards = []
    for rank, (m, j) in enumerate(rank_hazards(verdict), start=1):
        hazards.append({"mode": int(m) + 1, "band": bands[j].name,
                        "status": STATUS_NAMES[verdict.status[m, j]],
                        "distance_percent": float(verdict.distance_percent[m, j]), "rank": rank})
    return hazards
