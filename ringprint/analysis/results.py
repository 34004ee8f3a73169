"""The modes table: checking the run summary, and writing it as JSON, CSV and text.

The data model (the ``summary`` dict, the ``bands`` list) is documented in
:mod:`ringprint.analysis.report`. This module

- checks a summary and returns a plain JSON-ready copy (:func:`validate_summary`),
- writes ``modes.json`` (:func:`write_json`) and ``modes.csv`` (:func:`write_csv`),
- ranks hazards when the summary brings none (:func:`hazards_from_modes`),
- formats the terminal table printed at the end of a run (:func:`format_summary_table`).
"""

from __future__ import annotations

import csv
import dataclasses
import io
import json
import math
import os
from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np

from ringprint import __version__
from ringprint.analysis.outputs import atomic_write_text
from ringprint.analysis.symmetry import wall_column
from ringprint.analysis.textformat import (format_frequency_pm, format_like, format_percent, format_q,
                                           format_q_pm)
from ringprint.errors import RingprintError

__all__ = ["MODE_KEYS", "CSV_COLUMNS", "UNCERTAINTY_KEYS", "frequency_text", "q_text",
           "q_over_chu_text", "basis_text", "STATUSES", "to_jsonable", "validate_bands",
           "validate_summary", "hazards_from_modes", "q_over_chu", "worst_status", "write_json",
           "write_csv", "csv_rows", "format_summary_table"]

#: Keys every mode must have (the contract; keys may be added, never renamed).
MODE_KEYS = ("index", "frequency_hz", "q", "decay_rate_per_s", "amplitude", "error",
             "q_chu", "bands", "participation")
#: Columns of modes.csv, in order; other scalar mode keys follow, sorted by name.
CSV_COLUMNS = ("index", "frequency_hz", "q", "decay_rate_per_s", "amplitude", "error",
               "q_chu", "q_over_chu", "confidence", "worst_status", "bands", "participation")
#: The Q columns of the conductor-loss model (ringprint.analysis.conductor_loss) follow
#: "q"; each part's share of the conductor loss ("part=share; ...") goes last.
CSV_COLUMNS = CSV_COLUMNS[:3] + ("q_solver", "q_conductor") + CSV_COLUMNS[3:] + ("conductor_loss",)
#: Each mode's uncertainty (ringprint.analysis.uncertainty); optional, but always
#: columns of modes.csv, after :data:`CSV_COLUMNS` (empty cells when absent).
UNCERTAINTY_KEYS = ("fit_error", "frequency_uncertainty_hz", "q_uncertainty", "uncertainty_basis",
                    "frequency_extrapolated_hz", "q_extrapolated", "grid_order")
#: Band statuses, worst first.
STATUSES = ("inside", "near", "clear")


def _fail(path: str, problem: str, fix: str):
    raise RingprintError(f"{path} {problem}; {fix}")


def to_jsonable(obj, path: str = "summary"):
    """A plain copy of ``obj`` that :func:`json.dumps` writes exactly.

    numpy scalars and arrays become Python numbers and lists, tuples become lists;
    dict keys must be strings. NaN, infinities and complex numbers are refused
    (JSON has no such numbers): give a finite value, ``None``, or the magnitude and
    phase as two keys.
    """
    if obj is None or isinstance(obj, (str, bool)):
        return obj
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, (bool, int)):
        return obj
    if isinstance(obj, float):
        if not math.isfinite(obj):
            _fail(path, f"is {obj}", "give a finite number, or None when it is unknown")
        return obj
    if isinstance(obj, complex):
        _fail(path, f"is complex ({obj})", "store abs() here and the angle as a separate key")
    if isinstance(obj, Mapping):
        out = {}
        for key, value in obj.items():
            if not isinstance(key, str):
                _fail(path, f"has a non-text key {key!r}", "use str keys")
            out[key] = to_jsonable(value, f"{path}.{key}")
        return out
    if isinstance(obj, (list, tuple, np.ndarray)):
        return [to_jsonable(v, f"{path}[{i}]") for i, v in enumerate(obj)]
    _fail(path, f"is a {type(obj).__name__}", "give numbers, text, lists or dicts only")


def _number(value, path: str, *, minimum=None, strict=False, optional=False):
    if value is None and optional:
        return
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        _fail(path, f"is {value!r}", "give a number" + (" or None" if optional else ""))
    if minimum is not None and (value < minimum or (strict and value == minimum)):
        _fail(path, f"is {value!r}", f"give a number {'>' if strict else '>='} {minimum}")


def _text(value, path: str):
    if not isinstance(value, str) or not value.strip():
        _fail(path, f"is {value!r}", "give a non-empty text")


def validate_bands(bands, path: str = "bands") -> list[dict]:
    """Check a band list ``[{"name", "low_hz", "high_hz", "source"}, ...]``; return a copy.

    Band dataclass objects (:class:`ringprint.analysis.bands.Band`) are accepted and
    turned into dicts.
    """
    if not isinstance(bands, (list, tuple)):
        _fail(path, f"is a {type(bands).__name__}", "give a list of band dicts")
    bands = to_jsonable([dataclasses.asdict(b) if dataclasses.is_dataclass(b) else b
                         for b in bands], path)
    names = set()
    for i, band in enumerate(bands):
        p = f"{path}[{i}]"
        if not isinstance(band, dict):
            _fail(p, f"is {band!r}", 'give {"name", "low_hz", "high_hz", "source"}')
        for key in ("name", "low_hz", "high_hz", "source"):
            if key not in band:
                _fail(p, f"has no '{key}'", 'give {"name", "low_hz", "high_hz", "source"}')
        _text(band["name"], f"{p}.name")
        _number(band["low_hz"], f"{p}.low_hz", minimum=0)
        _number(band["high_hz"], f"{p}.high_hz", minimum=band["low_hz"], strict=True)
        if not isinstance(band["source"], str):
            _fail(f"{p}.source", f"is {band['source']!r}", "name the document the band is from")
        if band["name"] in names:
            _fail(f"{p}.name", f"repeats '{band['name']}'", "give each band a unique name")
        names.add(band["name"])
    return bands


def _check_band_entry(entry, path: str, band_names):
    if not isinstance(entry, dict):
        _fail(path, f"is {entry!r}", 'give {"band", "status", "distance_percent"}')
    for key in ("band", "status", "distance_percent"):
        if key not in entry:
            _fail(path, f"has no '{key}'", 'give {"band", "status", "distance_percent"}')
    _text(entry["band"], f"{path}.band")
    if band_names is not None and entry["band"] not in band_names:
        _fail(f"{path}.band", f"'{entry['band']}' is not in the band list",
              "use a band name from the bands given to the writer")
    if entry["status"] not in STATUSES:
        _fail(f"{path}.status", f"is {entry['status']!r}", "give 'inside', 'near' or 'clear'")
    _number(entry["distance_percent"], f"{path}.distance_percent")


def _check_mode(mode, i: int, band_names):
    p = f"summary.modes[{i}]"
    if not isinstance(mode, dict):
        _fail(p, f"is {mode!r}", "give a dict per mode")
    for key in MODE_KEYS:
        if key not in mode:
            _fail(p, f"has no '{key}'", f"give every mode the keys {', '.join(MODE_KEYS)}")
    if isinstance(mode["index"], bool) or mode["index"] != i + 1:
        _fail(f"{p}.index", f"is {mode['index']!r}",
              "number the modes 1, 2, ... in order of frequency")
    _number(mode["frequency_hz"], f"{p}.frequency_hz", minimum=0, strict=True)
    _number(mode["q"], f"{p}.q", minimum=0, strict=True)
    _number(mode["decay_rate_per_s"], f"{p}.decay_rate_per_s", minimum=0)
    _number(mode["amplitude"], f"{p}.amplitude", minimum=0)
    _number(mode["error"], f"{p}.error", minimum=0, optional=True)
    _number(mode["q_chu"], f"{p}.q_chu", minimum=0, strict=True, optional=True)
    _number(mode.get("q_over_chu"), f"{p}.q_over_chu", minimum=0, optional=True)
    for key in ("fit_error", "frequency_uncertainty_hz", "q_uncertainty", "grid_order"):
        _number(mode.get(key), f"{p}.{key}", minimum=0, optional=True)
    for key in ("frequency_extrapolated_hz", "q_extrapolated"):
        _number(mode.get(key), f"{p}.{key}", optional=True)
    if mode.get("uncertainty_basis") not in (None, "grid study", "stated bound"):
        _fail(f"{p}.uncertainty_basis", f"is {mode['uncertainty_basis']!r}",
              "give 'grid study' or 'stated bound'")
    if not isinstance(mode["bands"], list):
        _fail(f"{p}.bands", f"is {mode['bands']!r}", "give a list (empty if no bands)")
    for j, entry in enumerate(mode["bands"]):
        _check_band_entry(entry, f"{p}.bands[{j}]", band_names)
    if not isinstance(mode["participation"], dict):
        _fail(f"{p}.participation", f"is {mode['participation']!r}",
              "give a dict {part name: energy fraction 0..1}")
    for part, share in mode["participation"].items():
        _number(share, f"{p}.participation.{part}", minimum=0)
        if share > 1 + 1e-9:
            _fail(f"{p}.participation.{part}", f"is {share!r}", "give a fraction between 0 and 1")
    _number(mode.get("q_solver"), f"{p}.q_solver", minimum=0, strict=True, optional=True)
    _number(mode.get("q_conductor"), f"{p}.q_conductor", minimum=0, strict=True, optional=True)
    if not isinstance(mode.get("conductor_loss", {}), dict):
        _fail(f"{p}.conductor_loss", f"is {mode['conductor_loss']!r}",
              "give a dict {part name: share of the conductor loss 0..1}")
    for part, share in mode.get("conductor_loss", {}).items():
        _number(share, f"{p}.conductor_loss.{part}", minimum=0)


def _check_hazard(hazard, k: int, modes):
    p = f"summary.hazards[{k}]"
    if not isinstance(hazard, dict):
        _fail(p, f"is {hazard!r}", 'give {"mode", "band", "status", "distance_percent", "rank"}')
    for key in ("mode", "band", "status", "distance_percent", "rank"):
        if key not in hazard:
            _fail(p, f"has no '{key}'", 'give {"mode", "band", "status", "distance_percent", "rank"}')
    m = hazard["mode"]
    if isinstance(m, bool) or not isinstance(m, int) or not 1 <= m <= len(modes):
        _fail(f"{p}.mode", f"is {m!r}", f"give a mode index between 1 and {len(modes)}")
    if hazard["status"] not in ("inside", "near"):
        _fail(f"{p}.status", f"is {hazard['status']!r}", "list only 'inside' or 'near' hazards")
    entry = next((e for e in modes[m - 1]["bands"] if e["band"] == hazard["band"]), None)
    if entry is None:
        _fail(f"{p}.band", f"'{hazard['band']}' is not among mode {m}'s bands",
              "list hazards that match an entry of that mode's 'bands'")
    if entry["status"] != hazard["status"]:
        _fail(f"{p}.status", f"is '{hazard['status']}' but mode {m}'s entry for "
              f"'{hazard['band']}' says '{entry['status']}'", "make the two agree")
    _number(hazard["distance_percent"], f"{p}.distance_percent")
    r = hazard["rank"]
    if isinstance(r, bool) or not isinstance(r, int) or r < 1:
        _fail(f"{p}.rank", f"is {r!r}", "give an integer rank >= 1 (1 = worst)")


def validate_summary(summary, bands=None) -> dict:
    """Check a run summary against the data model; return a plain JSON-ready copy.

    Parameters
    ----------
    summary : dict
        The run summary (see :mod:`ringprint.analysis.report`).
    bands : list of dict, optional
        The band list; when given, every band name a mode or hazard uses must be in it.

    Raises
    ------
    RingprintError
        Naming the first offending key path (e.g. ``summary.modes[2].q``) and the fix.
    """
    if not isinstance(summary, Mapping):
        _fail("summary", f"is a {type(summary).__name__}", "give a dict")
    data = to_jsonable(summary, "summary")
    band_names = None if bands is None else {b["name"] for b in validate_bands(bands)}
    for key in ("case", "grid", "modes"):
        if key not in data:
            _fail("summary", f"has no '{key}'", "give 'case', 'grid' and 'modes'")
    case = data["case"]
    if isinstance(case, dict):
        if "name" not in case:
            _fail("summary.case", "has no 'name'", "give the case name")
        _text(case["name"], "summary.case.name")
    elif not isinstance(case, str):
        _fail("summary.case", f"is {case!r}", "give the case name or a dict with 'name'")
    if not isinstance(data["grid"], dict):
        _fail("summary.grid", f"is {data['grid']!r}", "give a dict of grid facts")
    modes = data["modes"]
    if not isinstance(modes, list):
        _fail("summary.modes", f"is {modes!r}", "give a list (empty if none were found)")
    for i, mode in enumerate(modes):
        _check_mode(mode, i, band_names)
        if i and mode["frequency_hz"] < modes[i - 1]["frequency_hz"]:
            _fail(f"summary.modes[{i}].frequency_hz", "is below the previous mode's",
                  "sort the modes by frequency before numbering them")
    hazards = data.get("hazards")
    if hazards is not None:
        if not isinstance(hazards, list):
            _fail("summary.hazards", f"is {hazards!r}", "give a list (empty if none)")
        for k, hazard in enumerate(hazards):
            _check_hazard(hazard, k, modes)
        ranks = [h["rank"] for h in hazards]
        if len(set(ranks)) != len(ranks):
            _fail("summary.hazards", "repeats a rank", "give each hazard its own rank")
    return data


def hazards_from_modes(modes: Sequence[Mapping]) -> list[dict]:
    """Hazards from the modes' band entries, worst first (used when a summary has none).

    Follows the ranking of :mod:`ringprint.analysis.bands` as far as the entries allow:
    'inside' before 'near'; then a larger ``"overlap"`` first, when the entries carry
    one; then the smaller ``distance_percent`` (negative inside: deeper inside first,
    then closer outside); then the higher Q; then the mode index. 'clear' entries are
    not hazards.
    """
    found = []
    for mode in modes:
        for entry in mode.get("bands", []):
            if entry.get("status") in ("inside", "near"):
                found.append(({"mode": mode["index"], "band": entry["band"],
                               "status": entry["status"],
                               "distance_percent": entry["distance_percent"]},
                              (STATUSES.index(entry["status"]),
                               -float(entry.get("overlap") or 0.0),
                               entry["distance_percent"], -mode["q"], mode["index"])))
    found.sort(key=lambda pair: pair[1])
    hazards = [hazard for hazard, _ in found]
    for rank, hazard in enumerate(hazards, start=1):
        hazard["rank"] = rank
    return hazards


def q_over_chu(mode: Mapping):
    """``mode["q_over_chu"]`` if given, else ``q / q_chu``, else None."""
    if mode.get("q_over_chu") is not None:
        return mode["q_over_chu"]
    q_chu = mode.get("q_chu")
    return None if not q_chu else mode["q"] / q_chu


def worst_status(mode: Mapping) -> str:
    """The worst band status of a mode: 'inside', 'near' or 'clear'."""
    statuses = {entry.get("status") for entry in mode.get("bands", [])}
    return next((s for s in STATUSES[:2] if s in statuses), "clear")


def write_json(path: str | os.PathLike, summary: Mapping) -> Path:
    """Write ``modes.json`` atomically: the checked summary, indented, UTF-8.

    ``"ringprint_version"`` is added when the summary has none. ``path`` may be a
    directory, in which case ``modes.json`` inside it is written.
    """
    data = validate_summary(summary)
    data.setdefault("ringprint_version", __version__)
    target = Path(path)
    if target.is_dir():
        target = target / "modes.json"
    text = json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    return atomic_write_text(target, text)


def _cell(value) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)  # shortest text that reads back to the same float
    return str(value)


def _shares_text(shares: Mapping) -> str:
    """``"part=fraction"`` joined by ``"; "``, largest first."""
    return "; ".join(f"{part}={share:.3g}" for part, share in
                     sorted(shares.items(), key=lambda kv: -kv[1]))


def csv_rows(summary: Mapping) -> tuple[list[str], list[list[str]]]:
    """Header and rows of ``modes.csv`` (one row per mode, bands flattened)."""
    modes = summary["modes"]
    extra = sorted({k for m in modes for k, v in m.items()
                    if k not in CSV_COLUMNS and (v is None or isinstance(v, (str, int, float)))})
    extra = [k for k in extra if k not in UNCERTAINTY_KEYS]
    header = list(CSV_COLUMNS) + list(UNCERTAINTY_KEYS) + extra
    rows = []
    for mode in modes:
        flat = dict(mode)
        flat["q_over_chu"] = q_over_chu(mode)
        flat["worst_status"] = worst_status(mode)
        flat["bands"] = "; ".join(f"{e['band']}: {e['status']} ({e['distance_percent']:.3g} %)"
                                  for e in mode["bands"])
        flat["participation"] = _shares_text(mode["participation"])
        flat["conductor_loss"] = _shares_text(mode.get("conductor_loss") or {})
        rows.append([_cell(flat.get(col)) for col in header])
    return header, rows


def write_csv(path: str | os.PathLike, summary: Mapping) -> Path:
    """Write ``modes.csv`` atomically (``path`` may be the output directory).

    Columns: :data:`CSV_COLUMNS`, then any other scalar mode keys in name order.
    Numbers are written with full precision; an unknown value is an empty cell.
    ``bands`` reads ``"name: status (distance %)"`` joined by ``"; "``;
    ``participation`` reads ``"part=fraction"`` joined by ``"; "``, largest first, and so
    does ``conductor_loss`` (each lossy part's share of the conductor loss).
    """
    data = validate_summary(summary)
    header, rows = csv_rows(data)
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(header)
    writer.writerows(rows)
    target = Path(path)
    if target.is_dir():
        target = target / "modes.csv"
    return atomic_write_text(target, buf.getvalue())


def _bands_hit(mode: Mapping) -> str:
    hits = []
    for e in sorted(mode["bands"], key=lambda e: STATUSES.index(e["status"])):
        if e["status"] == "inside":
            hits.append(f"{e['band']} inside")
        elif e["status"] == "near":
            hits.append(f"{e['band']} near ({format_percent(e['distance_percent'])})")
    return ", ".join(hits) or "-"


def frequency_text(mode: Mapping) -> str:
    """A mode's frequency to the digits its uncertainty supports (``"977 ± 7 MHz"``);
    a summary without uncertainties falls back to the fit error's digits."""
    return format_frequency_pm(mode["frequency_hz"], mode.get("frequency_uncertainty_hz"),
                               mode.get("error"))


def q_text(mode: Mapping) -> str:
    """A mode's Q with its uncertainty (``"43 ± 4"``), or three digits without one."""
    return format_q_pm(mode["q"], mode.get("q_uncertainty"))


def q_over_chu_text(mode: Mapping) -> str:
    """Q / Q_Chu to the digits the Q's relative uncertainty supports."""
    u = mode.get("q_uncertainty")
    return format_like(q_over_chu(mode), None if u is None else u / mode["q"])


def basis_text(mode: Mapping) -> str:
    """Where the uncertainty comes from, for tables: "grid study", "stated bound" or "-"."""
    return mode.get("uncertainty_basis") or "-"


def format_summary_table(summary: Mapping) -> str:
    """The plain-text table printed at the end of a run (mode, f and Q with their
    uncertainties, Q/Chu, where the uncertainty comes from, bands hit).

    When a conductor Q is known, "Q solver" (the ring-down's) and "Q cond" follow the
    combined "Q"; under mirror planes "mirror walls" names each mode's walls.

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
            r.append(m.get("rings_in") or "(air)")
    wall_column(header, rows, right, modes)
    widths = [max(len(r[c]) for r in rows + [header]) for c in range(len(header))]

    def line(cells):
        parts = [c.rjust(w) if r else c.ljust(w) for c, w, r in zip(cells, widths, right)]
        return "  ".join(parts).rstrip()

    rule = "  ".join("-" * w for w in widths)
    return "\n".join([line(header), rule] + [line(r) for r in rows])
