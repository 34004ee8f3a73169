"""Tolerances in the case file, and the frequency spread and band verdict they give.

Case keys (lengths in the case ``units``; every value a +- half-range, 0 for none)::

    [tolerance]                 # the default for every part (optional, default all 0)
    position = 0.1              # a part may sit this far off along each axis; or [x, y, z]
    offset = 0.05               # its whole surface this far out or in (moulding, plating)
    eps_r = 5                   # its eps_r this many percent off (dielectrics only)

    [[part]]
    ...
    tolerance = { position = 0.2, eps_r = 3 }   # this part's own; missing keys: the default

Spread of a mode (first order, from its ``sensitivity``,
:mod:`ringprint.analysis.sensitivity`): each tolerance ``t`` of each part gives a term
``df = (df/dx) t``, the move along x, y and z one term each. ``rss_hz`` is the
root-sum-square of the terms and ``worst_hz`` their sum of magnitudes (every
tolerance at its worst end at once).

Band verdict with the tolerance: every toleranced quantity is taken as **uniformly
distributed over its +- range, independently of the others**, so the share of the
tolerance range for which the mode lies inside a band is the probability that
``f + sum(df_i u_i)``, ``u_i`` uniform on [-1, 1], falls between the band edges. That
distribution (a convolution of uniform densities; with one term uniform over the
worst-case range, with many close to normal) is computed numerically on a grid of
:data:`GRID_POINTS` steps across the worst-case range: "inside lte-b7-dl for 18 % of
the tolerance range".
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ringprint.errors import RingprintError

__all__ = ["TOLERANCE_KEYS", "PartTolerance", "Tolerances", "parse_tolerances",
           "resolved_tolerances", "tolerance_terms", "inside_share", "mode_spread",
           "attach_spreads", "DISTRIBUTION"]

TOLERANCE_KEYS = ("position", "offset", "eps_r")
#: Steps of the numerical convolution across the worst-case range.
GRID_POINTS = 4000
#: What the band verdict assumes (written into modes.json and the report).
DISTRIBUTION = "each tolerance uniform over its +- range, independent (first order)"
AXES = ("x", "y", "z")


@dataclass(frozen=True)
class PartTolerance:
    """+- half-ranges of one part: position per axis (m), surface offset (m), eps_r (%)."""

    position_m: tuple = (0.0, 0.0, 0.0)
    offset_m: float = 0.0
    eps_r_percent: float = 0.0

    @property
    def empty(self) -> bool:
        return not (any(self.position_m) or self.offset_m or self.eps_r_percent)


@dataclass(frozen=True)
class Tolerances:
    """The default tolerance and the parts that have their own (name, PartTolerance)."""

    default: PartTolerance = PartTolerance()
    parts: tuple = ()

    def of(self, name: str) -> PartTolerance:
        return dict(self.parts).get(name, self.default)

    @property
    def empty(self) -> bool:
        return self.default.empty and all(t.empty for _, t in self.parts)


def _one(ck, table: dict, here: tuple, unit: float, base: PartTolerance, conductor: bool) -> PartTolerance:
    hint = "a +- half-range in the case units, 0 for none"
    pos = table.get("position")
    if pos is None:
        position = base.position_m
    elif isinstance(pos, list):
        vec = ck.vector3(pos, here + ("position",))
        for i, v in enumerate(vec):
            ck.number(v, here + ("position", i), low=0.0, hint=hint)
        position = tuple(v * unit for v in vec)
    else:
        position = (ck.number(pos, here + ("position",), low=0.0, hint=hint) * unit,) * 3
    offset = ck.number(table["offset"], here + ("offset",), low=0.0, hint=hint) * unit \
        if "offset" in table else base.offset_m
    if "eps_r" in table and conductor:
        ck.fail(here + ("eps_r",), "this part is a conductor and has no eps_r; remove the key")
    eps = ck.number(table["eps_r"], here + ("eps_r",), low=0.0, high=100.0, high_open=True,
                    hint="a percentage of the part's eps_r: write 5 for +-5 %") \
        if "eps_r" in table else base.eps_r_percent
    return PartTolerance(tuple(float(v) for v in position), float(offset), float(eps))


def parse_tolerances(ck, data: dict, parts, unit: float) -> Tolerances:
    """The ``[tolerance]`` table and each ``[[part]]``'s ``tolerance`` (SI; one-line errors)."""
    if not isinstance(data.get("tolerance", {}), dict):
        ck.fail(("tolerance",), "expected a [tolerance] table with position, offset and/or eps_r")
    table = ck.table(data.get("tolerance", {}), ("tolerance",), TOLERANCE_KEYS)
    default = _one(ck, table, ("tolerance",), unit, PartTolerance(), conductor=False)
    conductor = {p.name: p.material.is_pec for p in parts}
    own = []
    for i, t in enumerate(data.get("part") or []):
        if isinstance(t, dict) and "tolerance" in t:
            here = ("part", i, "tolerance")
            if not isinstance(t["tolerance"], dict):
                ck.fail(here, "expected a table such as tolerance = { position = 0.1, offset = 0.05, "
                        "eps_r = 5 } (any of those keys)")
            sub = ck.table(t["tolerance"], here, TOLERANCE_KEYS)
            own.append((t["name"], _one(ck, sub, here, unit, default, conductor[t["name"]])))
    return Tolerances(default, tuple(own))


def _as_dict(t: PartTolerance, unit: float) -> dict:
    x, y, z = (v / unit for v in t.position_m)
    return {"position": x if x == y == z else [x, y, z], "offset": t.offset_m / unit,
            "eps_r": t.eps_r_percent}


def resolved_tolerances(tol: Tolerances, unit: float, conductors=()) -> tuple[dict, dict]:
    """``({the [tolerance] table}, {part name: its own tolerance table})`` in the case units;
    a conductor's own table has no ``eps_r`` (it would be refused)."""
    own = {name: _as_dict(t, unit) for name, t in tol.parts}
    for name in set(conductors) & set(own):
        del own[name]["eps_r"]
    return _as_dict(tol.default, unit), own


def tolerance_terms(parts: dict, tol: Tolerances) -> list[dict]:
    """First-order terms ``{"part", "quantity", "tolerance", "hz"}`` of one mode.

    ``parts`` is a mode's ``sensitivity["parts"]``; ``hz`` is the shift at the + end of
    the tolerance (signed), ``tolerance`` the half-range in SI (m, or percent of eps_r).
    Terms of zero size are left out.
    """
    out = []
    for name, s in parts.items():
        t = tol.of(name)
        if s.get("eps_r_mhz_per_percent") is not None and t.eps_r_percent:
            out.append({"part": name, "quantity": "eps_r", "tolerance": t.eps_r_percent,
                        "hz": s["eps_r_mhz_per_percent"] * 1e6 * t.eps_r_percent})
        if t.offset_m:
            out.append({"part": name, "quantity": "offset", "tolerance": t.offset_m,
                        "hz": s["offset_hz_per_m"] * t.offset_m})
        for a, axis in enumerate(AXES):
            if t.position_m[a]:
                out.append({"part": name, "quantity": f"move {axis}", "tolerance": t.position_m[a],
                            "hz": s["move_hz_per_m"][a] * t.position_m[a]})
    return [d for d in out if d["hz"] != 0.0]


def inside_share(f_hz: float, half_widths, low_hz: float, high_hz: float) -> float:
    """Probability that ``f + sum(w_i u_i)`` lies in [low, high], ``u_i`` uniform on [-1, 1].

    ``half_widths`` are the terms' magnitudes (Hz). The density is the convolution of
    the uniform densities, sampled at :data:`GRID_POINTS` steps across
    ``+- sum(w_i)``; a term narrower than a step counts as exact.
    """
    w = np.abs(np.asarray(half_widths, float))
    w = w[w > 0]
    if not (low_hz < high_hz):
        raise RingprintError(f"band edges must satisfy low < high, got {low_hz!r}, {high_hz!r}")
    if w.size == 0:
        return float(low_hz <= f_hz <= high_hz)
    step = 2.0 * w.sum() / GRID_POINTS
    pdf = np.ones(1)
    for wi in w:
        n = max(1, int(round(2.0 * wi / step)))
        pdf = np.convolve(pdf, np.full(n, 1.0 / n))
    x = f_hz + (np.arange(pdf.size) - 0.5 * (pdf.size - 1)) * step
    # each sample stands for a cell of one step: count the part of it inside the band
    lo_cell, hi_cell = x - 0.5 * step, x + 0.5 * step
    frac = np.clip((np.minimum(hi_cell, high_hz) - np.maximum(lo_cell, low_hz)) / step, 0.0, 1.0)
    return float(np.clip(np.sum(pdf * frac), 0.0, 1.0))


def mode_spread(mode: dict, tol: Tolerances, bands) -> dict | None:
    """A mode's ``tolerance`` entry for modes.json, or None without sensitivities.

    ``{"rss_hz", "worst_hz", "rss_mhz", "worst_mhz", "distribution", "terms"
    (largest first), "bands": [{"band", "inside_share", "inside_percent"}]}``: every band
    that the worst-case range reaches, or that the mode sits inside or near.
    """
    sens = mode.get("sensitivity")
    if not sens:
        return None
    terms = sorted(tolerance_terms(sens["parts"], tol), key=lambda d: -abs(d["hz"]))
    size = np.array([abs(d["hz"]) for d in terms])
    rss, worst = float(np.sqrt(np.sum(size ** 2))), float(np.sum(size))
    f = float(mode["frequency_hz"])
    nominal = {b["band"]: b["status"] for b in mode.get("bands", [])}
    verdicts = []
    for b in bands:
        share = inside_share(f, size, b.low_hz, b.high_hz)
        reach = b.low_hz <= f + worst and f - worst <= b.high_hz
        if reach or nominal.get(b.name) in ("inside", "near"):
            verdicts.append({"band": b.name, "inside_share": share, "inside_percent": 100.0 * share})
    return {"rss_hz": rss, "worst_hz": worst, "rss_mhz": rss / 1e6, "worst_mhz": worst / 1e6,
            "distribution": DISTRIBUTION, "terms": terms, "bands": verdicts}


def attach_spreads(modes, tol: Tolerances | None, bands) -> None:
    """Give every mode with sensitivities its ``tolerance`` entry (none when ``tol`` is empty),
    and the scalars ``tolerance_rss_hz``, ``tolerance_worst_hz`` (columns of modes.csv)."""
    if tol is None or tol.empty:
        return
    for m in modes:
        spread = mode_spread(m, tol, bands)
        if spread is not None:
            m["tolerance"] = spread
            m["tolerance_rss_hz"], m["tolerance_worst_hz"] = spread["rss_hz"], spread["worst_hz"]
