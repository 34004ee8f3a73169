"""The report's "what moves it" tables: per hazardous mode, the parts and changes that
move its frequency most, worst first, and its spread under the case's tolerances.

From modes.json alone (each mode's ``sensitivity`` and ``tolerance``,
:mod:`ringprint.analysis.sensitivity`, :mod:`ringprint.analysis.tolerance`), so
``ringprint show`` could draw it from a results folder too. The rows are ranked by the
size of the shift per report step: MHz per 0.1 mm for a surface offset or a move, MHz
per 1 % of eps_r for a dielectric's permittivity; at most :data:`MAX_ROWS` rows.
All text goes through :func:`html.escape`.
"""

from __future__ import annotations

import html
from collections.abc import Mapping

from ringprint.analysis.textformat import format_frequency

__all__ = ["MAX_ROWS", "MAX_MODES", "sensitivity_rows", "sensitivity_section"]

MAX_ROWS = 8
MAX_MODES = 8
AXES = ("x", "y", "z")


def _e(value) -> str:
    return html.escape(str(value), quote=True)


def sensitivity_rows(mode: Mapping) -> list[tuple[str, str, float, str]]:
    """``(part, change, MHz per step, step)`` of one mode, largest shift first."""
    rows = []
    for name, s in mode.get("sensitivity", {}).get("parts", {}).items():
        if s.get("eps_r_mhz_per_percent") is not None:
            rows.append((name, "eps_r", s["eps_r_mhz_per_percent"], "+1 % of eps_r"))
        rows.append((name, "surface offset (outward)", s["offset_mhz_per_0_1_mm"], "+0.1 mm"))
        rows += [(name, f"move along {a}" + (" (sheet: edges not counted)" if s.get("sheet") else ""),
                  v, "+0.1 mm") for a, v in zip(AXES, s["move_mhz_per_0_1_mm"])]
    return sorted(rows, key=lambda r: -abs(r[2]))


def _tolerance_text(mode: Mapping) -> str:
    tol = mode.get("tolerance")
    if not tol:
        return ('<p class="muted">No tolerances in the case ([tolerance] table or a part\'s '
                "tolerance key): no spread computed.</p>")
    bands = "; ".join(f"inside {b['band']} for {b['inside_percent']:.0f} % of the tolerance range"
                      for b in tol["bands"]) or "no band within reach"
    return (f"<p>Spread with the case's tolerances: +-{tol['rss_mhz']:.3g} MHz root-sum-square, "
            f"+-{tol['worst_mhz']:.3g} MHz worst case; {_e(bands)} "
            f'<span class="muted">({_e(tol["distribution"])})</span>.</p>')


def _mode_table(mode: Mapping) -> str:
    rows = sensitivity_rows(mode)[:MAX_ROWS]
    head = "".join(f"<th>{_e(h)}</th>" for h in ("part", "change", "step", "frequency shift (MHz)"))
    body = "".join(f"<tr><td>{_e(p)}</td><td>{_e(c)}</td><td>{_e(step)}</td>"
                   f'<td class="num">{v:+.3g}</td></tr>' for p, c, v, step in rows)
    return (f'<table id="what-moves-mode-{int(mode["index"])}"><thead><tr>{head}</tr></thead>'
            f"<tbody>{body}</tbody></table>")


def sensitivity_section(summary: Mapping) -> str:
    """``<section id="what-moves-it">``: one table per hazardous mode with sensitivities,
    in hazard order (worst first); ``""`` when there is none."""
    modes = {int(m["index"]): m for m in summary.get("modes", [])}
    order = []
    for h in sorted(summary.get("hazards") or [], key=lambda h: h.get("rank", float("inf"))):
        i = int(h["mode"])
        if i not in order and modes.get(i, {}).get("sensitivity"):
            order.append(i)
    if not order:
        return ""
    out = ['<section id="what-moves-it">', "<h2>What moves each hazardous mode (worst first)</h2>",
           "<p>First-order shifts from the mode fields (Harrington 1961 for eps_r, Slater's "
           "theorem for metal surfaces, Johnson et al. 2002 for dielectric surfaces); an "
           "outward offset grows the part, a move shifts all of it. Negative: the mode "
           "moves down.</p>"]
    for i in order[:MAX_MODES]:
        m = modes[i]
        out.append(f"<h3>Mode {i}, {_e(format_frequency(m['frequency_hz']))}</h3>")
        out.append(_mode_table(m))
        check = m["sensitivity"].get("scale_check")
        if check is not None:
            out.append(f'<p class="muted">Scale check: the terms add up to {check:.2f} of the '
                       "exact shift of a uniform scaling (1 for a complete set; far from 1: read "
                       "them as rough).</p>")
        out.append(_tolerance_text(m))
    out.append("</section>")
    return "\n".join(out)
