"""The top of ``report.html``: the one-line verdict and the hazard table.

The verdict names the worst hazard (rank 1, :func:`~ringprint.analysis.results.hazards_from_modes`
and :mod:`ringprint.analysis.bands` give the ranking): the mode, its frequency and Q
(with their uncertainty), the part that carries it, the band, how far it sits from the
band edge, and how much of the band its half-power band covers.

Half-power band: a resonance of frequency f and quality factor Q responds with at
least half its peak power over ``f - f/2Q .. f + f/2Q`` (full width f/Q; Pozar,
Microwave Engineering, 4th ed., 2012, sec. 6.1, the Q of a resonator as f over its
half-power bandwidth). A low-Q mode can sit well off a band in frequency and still cover
it: a Q 1.8 mode at 2.28 GHz spans 1.65-2.91 GHz, over the whole GNSS L1 band "29 %
away". The table shows each hazard's half-power band and the share of the band's width
it covers.
"""

from __future__ import annotations

import html
from collections.abc import Mapping, Sequence

from ringprint.analysis.results import carrier_text, frequency_text, q_text
from ringprint.analysis.textformat import format_frequency_as_pm, format_percent

__all__ = ["half_power_band", "band_coverage", "verdict_text", "verdict_html", "hazard_section",
           "participation_text"]


def _e(value) -> str:
    return html.escape(str(value), quote=True)


def half_power_band(frequency_hz: float, q: float) -> tuple[float, float]:
    """``(f - f/2Q, f + f/2Q)`` in Hz (module docstring)."""
    half = frequency_hz / (2.0 * q)
    return frequency_hz - half, frequency_hz + half


def band_coverage(frequency_hz: float, q: float, low_hz: float, high_hz: float) -> float:
    """The share (0..1) of the band ``[low_hz, high_hz]`` that the mode's half-power band covers."""
    lo, hi = half_power_band(frequency_hz, q)
    return max(0.0, min(hi, high_hz) - max(lo, low_hz)) / (high_hz - low_hz)


def _band_text(mode: Mapping) -> str:
    """``"1.65-2.91 GHz"``: the half-power band, each edge rounded like the mode's frequency."""
    lo, hi = half_power_band(mode["frequency_hz"], mode["q"])
    u, rel = mode.get("frequency_uncertainty_hz"), mode.get("fit_error", mode.get("error"))
    lo_text = format_frequency_as_pm(lo, u, rel)
    hi_text = format_frequency_as_pm(hi, u, rel)
    if lo_text.split()[-1] == hi_text.split()[-1]:
        lo_text = lo_text.rsplit(" ", 1)[0]
    return f"{lo_text}\u2013{hi_text}"


def _coverage_text(share: float | None) -> str:
    if share is None:
        return "-"
    if share >= 1.0 - 1e-9:
        return "all of it"
    if share <= 0.0:
        return "none"
    return f"{format_percent(100.0 * share)} of it"


def participation_text(mode: Mapping, top: int = 3) -> str:
    """``"ground plane; energy: housing 27 %, ground plane 17 %, air 51 %"``: the part
    that carries the mode and the largest energy shares; the rest of the energy, outside
    every part and its shell, is named "air"."""
    shares = mode.get("participation") or {}
    if not shares and not mode.get("rings_in"):
        return "-"
    largest = sorted(shares.items(), key=lambda kv: -kv[1])[:top]
    parts = [f"{part} {format_percent(100.0 * share)}" for part, share in largest]
    rest = 1.0 - sum(shares.values())
    if shares and rest > 0.005:
        parts.append(f"air {format_percent(100.0 * rest)}")
    energy = f"; energy: {', '.join(parts)}" if parts else ""
    return f"{carrier_text(mode)}{energy}"


def _coverage(mode: Mapping, hazard: Mapping, bands: Mapping[str, Mapping]) -> float | None:
    band = bands.get(hazard["band"])
    if band is None:
        return None
    return band_coverage(mode["frequency_hz"], mode["q"], band["low_hz"], band["high_hz"])


def verdict_text(summary: Mapping, hazards: Sequence[Mapping], bands: Sequence[Mapping]) -> str:
    """The report's first line: the worst hazard in one sentence (module docstring)."""
    modes = summary["modes"]
    if not modes:
        return "No resonance was found in the analysed spectrum."
    if not hazards:
        return (f"No band hazard: none of the {len(modes)} mode{'s' if len(modes) != 1 else ''} "
                "lies inside or near a band checked.")
    worst = min(hazards, key=lambda h: h["rank"])
    m = modes[worst["mode"] - 1]
    where = (f"{format_percent(-worst['distance_percent'])} inside it" if worst["status"] == "inside"
             else f"{format_percent(worst['distance_percent'])} from its edge")
    share = _coverage(m, worst, {b["name"]: b for b in bands})
    cover = "" if share is None else \
        f"; its half-power band {_band_text(m)} covers {_coverage_text(share)}"
    more = len(hazards) - 1
    rings = f", rings in {carrier_text(m)}" if "rings_in" in m else ""
    return (f"Worst: mode {m['index']} at {frequency_text(m)}, Q {q_text(m)}{rings}: "
            f"{worst['status']} {worst['band']}, {where}{cover}."
            + (f" {more} more hazard{'s' if more != 1 else ''} below." if more else ""))


def verdict_html(summary: Mapping, hazards: Sequence[Mapping], bands: Sequence[Mapping]) -> str:
    return f'<p id="verdict" class="verdict">{_e(verdict_text(summary, hazards, bands))}</p>'


def hazard_section(summary: Mapping, hazards: Sequence[Mapping], bands: Sequence[Mapping],
                   table) -> str:
    """The hazard table, worst first; ``table`` is the report's table writer."""
    out = ['<h2 id="hazards-title">Hazards: modes inside or near a band (worst first)</h2>']
    modes = summary["modes"]
    if not hazards:
        out.append('<p id="no-hazards">No mode lies inside or near any band checked.</p>')
        return "\n".join(out)
    by_name = {b["name"]: b for b in bands}
    rows, classes = [], []
    for h in sorted(hazards, key=lambda h: h["rank"]):
        m = modes[h["mode"] - 1]
        rows.append([h["rank"], m["index"], frequency_text(m), q_text(m), h["band"], h["status"],
                     format_percent(h["distance_percent"]), _band_text(m),
                     _coverage_text(_coverage(m, h, by_name)), participation_text(m)])
        classes.append(h["status"])
    out.append(table("hazards", ["rank", "mode", "frequency", "Q", "band", "status",
                                 "distance to edge", "half-power band", "covers of the band",
                                 "rings in"], rows,
                     [True, True, True, True, False, False, True, True, False, False], classes))
    out.append('<p class="muted">Distance to edge: from the mode to the nearest band edge, in '
               "percent of the mode frequency; negative inside the band. Half-power band: "
               "f \u00b1 f/2Q, where the mode responds with at least half its peak power; "
               "\"covers\" is the share of the band's width inside it. Rings in: the part that "
               "carries the mode, then the largest shares of its energy (air: the rest, "
               "outside every part).</p>")
    return "\n".join(out)
