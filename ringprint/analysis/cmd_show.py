"""Show one mode of a finished run in 3-D: the parts, the field and the probe.

Reads DIR/modes.json and DIR/fields.h5 (written by `ringprint run`). The parts are
drawn as translucent surfaces, the field magnitude (|E| by default; --quantity h
for |H|, energy for the stored energy density; every mode is scaled to 1 J stored)
as isosurfaces at 30 % and 60 % of its maximum plus a slice through the maximum,
and the probe as a small black square. The default mode is the worst band hazard
(rank 1 in modes.json), else mode 1. Opens a window; with --png FILE it writes a
picture instead (no display needed).
"""

from __future__ import annotations

import argparse
from pathlib import Path

from ringprint.analysis.field_plots import QUANTITIES
from ringprint.analysis.run_dir import read_modes_json
from ringprint.errors import RingprintError

#: The oldest results layout (modes.json "results_layout") that holds mode fields.
FIELDS_LAYOUT = 2


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("dir", metavar="DIR", help="results directory of `ringprint run`")
    parser.add_argument("--mode", type=int, metavar="N", default=None,
                        help="mode number as in modes.json (default: the worst hazard, else 1)")
    parser.add_argument("--png", metavar="FILE", default=None,
                        help="write a picture to FILE instead of opening a window")
    parser.add_argument("--quantity", choices=tuple(QUANTITIES), default="e",
                        help="what to show: e = |E|, h = |H|, energy = stored energy density "
                             "(default e)")


def load_summary(results: Path) -> dict:
    """modes.json of a results directory, checked to come with mode fields."""
    summary = read_modes_json(results)
    layout = summary.get("results_layout")
    if not isinstance(layout, int) or layout < FIELDS_LAYOUT:
        raise RingprintError(f"{results} holds results of an older ringprint (no mode fields); "
                             "run the case again")
    if summary.get("fields") is None or not (results / "fields.h5").is_file():
        raise RingprintError(f"{results} holds no mode fields (the run skipped them: --no-fields, "
                             "output.fields = false, or too small output.field_memory); run the "
                             "case again with fields")
    return summary


def default_mode(summary: dict) -> int:
    """The mode of the worst hazard (rank 1), else mode 1."""
    hazards = [h for h in summary.get("hazards") or [] if isinstance(h, dict) and "mode" in h]
    if hazards:
        worst = min(hazards, key=lambda h: h.get("rank", float("inf")))
        return int(worst["mode"])
    return 1


def _title(summary: dict, index: int) -> str | None:
    """``"mode 1, 2.28 GHz, Q 1.8"``, f and Q written as the report writes them."""
    from ringprint.analysis.results import frequency_text, q_text

    entry = next((m for m in summary["modes"] if isinstance(m, dict) and m.get("index") == index), None)
    try:
        return f"mode {index}, {frequency_text(entry, False)}, Q {q_text(entry, False)}"
    except (KeyError, TypeError, ValueError):   # an entry without f or Q: the field's own title
        return None


def run(args: argparse.Namespace) -> int:
    from ringprint.analysis import field_views
    from ringprint.analysis.fieldset_io import FIELDS_NAME, read_fieldset

    results = Path(args.dir)
    summary = load_summary(results)
    if args.png is None and not field_views.display_available():
        raise RingprintError("no display to open a window on (DISPLAY and WAYLAND_DISPLAY are "
                             "unset); pass --png FILE to write a picture instead")
    png = None
    if args.png is not None:
        png = Path(args.png)
        if not png.parent.is_dir():
            raise RingprintError(f"--png {args.png}: folder {png.parent} does not exist; create it "
                                 "or give another path")
    fs = read_fieldset(results / FIELDS_NAME)
    index = default_mode(summary) if args.mode is None else args.mode
    mode = fs.mode(index)  # "there is no mode N (this result has modes a-b)"
    title = _title(summary, mode.index)
    if png is None:
        field_views.show(fs, mode.index, args.quantity, title=title)
        return 0
    field_views.render_png(fs, mode.index, png, args.quantity, title=title)
    print(f"wrote {png} (mode {mode.index}, {args.quantity})")
    return 0
