"""The report's section on the fields of the hazardous modes (an HTML fragment).

For each mode that lies inside or near a band (modes.json ``"hazards"``, worst
first, at most :data:`MAX_MODES` modes) the section gives

- a heading naming the mode, its frequency and where its energy sits
  ("mode 4, 2.41 GHz: 71 % bezel ring, 18 % battery", from ``participation``),
  and a line with its Q and the bands it threatens;
- the field picture (:func:`~ringprint.analysis.field_plots.field_picture_png`:
  stored energy density in three slices through its peak);
- the touch map (:func:`~ringprint.analysis.field_plots.touch_map_png`) and a
  table of the worst touch spots (position in mm, frequency shift, Q after).

Pictures are embedded as base64 PNG, so the report stays one self-contained
file. All text goes through :func:`html.escape`.
"""

from __future__ import annotations

import base64
import html
from collections.abc import Mapping

from ringprint.analysis import field_plots
from ringprint.analysis.fieldset import FieldSet
from ringprint.analysis.results import frequency_text, q_text
from ringprint.analysis.textformat import format_q
from ringprint.errors import RingprintError

__all__ = ["MAX_MODES", "hazard_field_section", "mode_heading"]

#: At most this many hazardous modes get pictures (the report stays a few MB).
MAX_MODES = 8
#: Parts holding at least this share of a mode's energy are named in its heading,
#: at most :data:`HEADING_PARTS` of them.
HEADING_SHARE, HEADING_PARTS = 0.05, 3


def _e(value) -> str:
    return html.escape(str(value), quote=True)


def mode_heading(mode: Mapping) -> str:
    """``"mode 4, 2.41 GHz: 71 % bezel ring, 18 % battery"`` (plain text) from a
    modes.json entry; parts below 5 % are left out, at most three are named."""
    text = f"mode {mode['index']}, {frequency_text(mode, False)}"
    shares = sorted(((float(v), str(k)) for k, v in (mode.get("participation") or {}).items()
                     if v is not None), reverse=True)
    named = [f"{round(100 * v)} % {k}" for v, k in shares if v >= HEADING_SHARE][:HEADING_PARTS]
    return f"{text}: {', '.join(named)}" if named else text


def _hazard_modes(summary: Mapping) -> list[tuple[int, list]]:
    """(mode index, its hazard entries) in order of each mode's worst rank."""
    hazards = summary.get("hazards")
    if hazards is None:
        from ringprint.analysis.results import hazards_from_modes

        hazards = hazards_from_modes(summary.get("modes", []))
    by_mode: dict = {}
    for h in sorted(hazards, key=lambda h: h.get("rank", float("inf"))):
        by_mode.setdefault(int(h["mode"]), []).append(h)
    return list(by_mode.items())


def _threat_line(mode: Mapping, hazards: list) -> str:
    bands = ", ".join(f"{h['status']} {h['band']}" for h in hazards)
    return f"Q {q_text(mode)}; {bands} (hazard rank {hazards[0].get('rank', '-')})"


def _img(png: bytes, alt: str) -> str:
    data = base64.b64encode(png).decode("ascii")
    return f'<img alt="{_e(alt)}" src="data:image/png;base64,{data}" />'


def _spot_table(index: int, spots: list) -> str:
    if not spots:
        return '<p class="muted">No touch spots were found for this mode.</p>'
    points = field_plots.spot_points(spots)
    head = "".join(f"<th>{_e(h)}</th>" for h in ("spot", "position x, y, z (mm)",
                                                  "frequency shift (%)", "Q after"))
    rows = []
    for rank, (spot, p) in enumerate(zip(spots, points), start=1):
        where = ", ".join(f"{1e3 * v:.1f}" for v in p)
        cells = (rank, where, f"{float(spot['shift_percent']):+.2f}", format_q(spot.get("q_after")))
        rows.append("<tr>" + "".join(f'<td class="num">{_e(c)}</td>' for c in cells) + "</tr>")
    return (f'<table id="touch-spots-mode-{index}"><thead><tr>{head}</tr></thead>'
            f"<tbody>{''.join(rows)}</tbody></table>")


def _mode_block(summary_mode: Mapping, hazards: list, fs: FieldSet, spots) -> list[str]:
    index = int(summary_mode["index"])
    heading = mode_heading(summary_mode)
    out = [f'<h3 id="fields-mode-{index}">{_e(heading)}</h3>',
           f"<p>{_e(_threat_line(summary_mode, hazards))}</p>"]
    if not any(m.index == index for m in fs.modes):
        out.append('<p class="muted">No field was stored for this mode.</p>')
        return out
    title = f"mode {index}, {frequency_text(summary_mode, False)}, Q {q_text(summary_mode, False)}"
    out.append(_img(field_plots.field_picture_png(fs, index, title=title),
                    f"{heading}: stored energy density in three slices"))
    tmap = fs.touch.get(index)
    if tmap is None:
        out.append('<p class="muted">No touch map for this mode (no outer surface found).</p>')
        return out
    if spots is None:
        from ringprint.analysis.touch import worst_spots

        spots = worst_spots(tmap, q_before=fs.mode(index).q)
    out.append(_img(field_plots.touch_map_png(fs, tmap, spots, mode=index, mode_text=title),
                    f"{heading}: touch map"))
    out.append(_spot_table(index, list(spots)))
    return out


def hazard_field_section(summary: Mapping, fs: FieldSet, worst_spots_by_mode=None,
                         max_modes: int = MAX_MODES) -> str:
    """HTML fragment with the field picture, touch map and worst spots of each
    hazardous mode, worst first.

    Parameters
    ----------
    summary : mapping
        The modes.json content (``"modes"`` and ``"hazards"``; without ``"hazards"``
        they are ranked from the modes' band entries).
    fs : FieldSet
        The mode fields and touch maps.
    worst_spots_by_mode : mapping, optional
        ``{mode index: [spot, ...]}``, each spot as
        :func:`ringprint.analysis.touch.worst_spots` gives it (modes.json
        ``touch.worst``); a mode missing here gets that function's five.
    max_modes : int
        At most this many modes get pictures; a line says how many more there are.

    Returns
    -------
    str
        ``<section id="mode-fields">...</section>``, or ``""`` when no mode is
        hazardous.

    References
    ----------
    Harrington, R. F., *Time-Harmonic Electromagnetic Fields*, McGraw-Hill, 1961
    (cavity perturbation behind the touch shifts).
    """
    modes = {int(m["index"]): m for m in summary.get("modes", [])}
    hazardous = _hazard_modes(summary)
    if not hazardous:
        return ""
    spots_by_mode = worst_spots_by_mode or {}
    out = ['<section id="mode-fields">',
           "<h2>Fields of the hazardous modes (worst first)</h2>",
           "<p>Each mode is scaled to 1 J of stored energy. The slices pass through the "
           "point where the energy density peaks (+); part outlines and the probe loop are "
           "drawn over them. The touch map shows the predicted frequency shift when a "
           "fingertip touches the outer surface at each point; the worst spots are "
           "numbered as in the table.</p>"]
    for index, hazards in hazardous[:max_modes]:
        if index not in modes:
            raise RingprintError(f"summary.hazards names mode {index}, which summary.modes lacks; "
                                 "list hazards of existing modes only")
        out += _mode_block(modes[index], hazards, fs, spots_by_mode.get(index))
    rest = hazardous[max_modes:]
    if rest:
        listed = ", ".join(str(i) for i, _ in rest)
        out.append(f'<p class="muted">{len(rest)} more hazardous mode'
                   f"{'s' if len(rest) != 1 else ''} without pictures here (mode {_e(listed)}); "
                   "see them with <code>ringprint show DIR --mode N</code>.</p>")
    out.append("</section>")
    return "\n".join(out)
