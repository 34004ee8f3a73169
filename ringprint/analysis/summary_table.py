"""The plain-text mode table ``ringprint run`` prints at the end of a run.

Written with the same helpers as the report (:func:`~ringprint.analysis.results.frequency_text`,
:func:`~ringprint.analysis.results.q_text`, :func:`~ringprint.analysis.results.carrier_text`),
so a mode reads the same in the terminal and on the page.
"""

from __future__ import annotations

from collections.abc import Mapping

from ringprint.analysis.results import (STATUSES, basis_text, carrier_text, frequency_text,
                                        q_over_chu_text, q_text, validate_summary)
from ringprint.analysis.symmetry import wall_column
from ringprint.analysis.textformat import format_percent, format_q

__all__ = ["format_summary_table"]


def _bands_hit(mode: Mapping) -> str:
    hits = []
    for e in sorted(mode["bands"], key=lambda e: STATUSES.index(e["status"])):
        if e["status"] == "inside":
            hits.append(f"{e['band']} inside")
        elif e["status"] == "near":
            hits.append(f"{e['band']} near ({format_percent(e['distance_percent'])})")
    return ", ".join(hits) or "-"


def format_summary_table(summary: Mapping) -> str:
    """The plain-text table printed at the end of a run (mode, f and Q with their
    uncertainties, Q/Chu, where the uncertainty comes from, bands hit).

    When a conductor Q is known, "Q solver" (the ring-down's) and "Q cond" follow the
    combined "Q".

    Columns are aligned with spaces; numbers are right-aligned. A run with no modes
    gives one line saying so.
    """
    data = validate_summary(summary)
    modes = data["modes"]
    if not modes:
        return "no resonances found in the analysed spectrum"
    header = ["mode", "frequency", "Q", "Q/Q_Chu", "uncertainty from", "bands hit"]
    rows = [[str(m["index"]), frequency_text(m), q_text(m), q_over_chu_text(m), basis_text(m),
             _bands_hit(m)] for m in modes]
    right = [True, True, True, True, False, False]
    if any(m.get("q_conductor") is not None for m in modes):
        header[3:3] = ["Q solver", "Q cond"]
        right[3:3] = [True, True]
        for r, m in zip(rows, modes):
            r[3:3] = [format_q(m.get("q_solver", m["q"])), format_q(m.get("q_conductor"))]
    if any("rings_in" in m for m in modes):
        header.append("rings in")
        right.append(False)
        for r, m in zip(rows, modes):
            r.append(carrier_text(m))
    wall_column(header, rows, right, modes)
    widths = [max(len(r[c]) for r in rows + [header]) for c in range(len(header))]

    def line(cells):
        parts = [c.rjust(w) if r else c.ljust(w) for c, w, r in zip(cells, widths, right)]
        return "  ".join(parts).rstrip()

    rule = "  ".join("-" * w for w in widths)
    return "\n".join([line(header), rule] + [line(r) for r in rows])
