"""The facts at the end of ``report.html``: the case (parts, spectrum, bands) and the run.

Written as people read them: lengths in the case's unit (``summary["case"]["units"]``,
metres with an SI prefix when the summary does not say), vectors as ``(x, y, z) mm``,
the probe and pickups in words, a dielectric's loss tangent beside the conductivity it
became at the loss frequency, never a Python repr.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from ringprint.analysis._units import LENGTH_UNITS as _UNITS_M
from ringprint.analysis.textformat import (format_bytes, format_duration, format_frequency,
                                           format_number, format_si, significant)

__all__ = ["case_facts", "parts_rows", "grid_facts", "run_facts", "length_text"]

def _case(summary: Mapping) -> dict:
    case = summary["case"]
    return {"name": case} if isinstance(case, str) else dict(case)


def _number(x: float, digits: int = 4) -> str:
    """``x`` to ``digits`` significant digits, trailing zeros dropped (``"500"``, ``"1.824"``)."""
    text = significant(x, digits)
    return text.rstrip("0").rstrip(".") if "." in text else text


def length_text(metres, summary: Mapping, digits: int = 4) -> str:
    """A length in the case's unit (``"1.824 mm"``), or with an SI prefix (``"500 µm"``)."""
    unit = _case(summary).get("units")
    if unit in _UNITS_M and isinstance(metres, (int, float)):
        return f"{_number(metres / _UNITS_M[unit], digits)} {unit}"
    return format_si(metres, "m", 3)


def _vector_text(values, summary: Mapping) -> str:
    unit = _case(summary).get("units")
    if unit in _UNITS_M:
        return "(" + ", ".join(_number(v / _UNITS_M[unit]) for v in values) + f") {unit}"
    return "(" + ", ".join(format_si(v, "m") for v in values) + ")"


def _plain(value) -> str:
    """Any other fact without Python syntax: lists joined, dicts as ``key value``."""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return format_number(value, 4)
    if isinstance(value, (list, tuple)):
        return ", ".join(_plain(v) for v in value)
    if isinstance(value, dict):
        return "; ".join(f"{k.replace('_', ' ')} {_plain(v)}" for k, v in value.items())
    return "-" if value is None else str(value)


def case_facts(summary: Mapping, limits) -> list[tuple[str, str]]:
    case = _case(summary)
    facts = [("case", case["name"])]
    if case.get("file"):
        facts.append(("case file", case["file"]))
    if limits:
        facts.append(("spectrum analysed", f"{format_frequency(limits[0], trim=True)} to "
                                           f"{format_frequency(limits[1], trim=True)}"))
    loss_at = (case.get("spectrum") or {}).get("loss_at_hz")
    if loss_at:
        facts.append(("loss tangents hold exactly at", format_frequency(loss_at, digits=4, trim=True)))
    grid = summary["grid"]
    line = []
    if isinstance(grid.get("nodes"), list):
        line.append(" \u00d7 ".join(str(v) for v in grid["nodes"]) + " nodes")
    if isinstance(grid.get("cells"), int):
        line.append(f"{grid['cells']:,} cells")
    steps = list(dict.fromkeys(length_text(grid[k], summary) for k in ("step_min_m", "step_max_m")
                               if isinstance(grid.get(k), (int, float))))
    if steps:
        line.append("cell " + " to ".join(steps))
    if line:
        facts.append(("grid", ", ".join(line)))
    return facts


def _medium_text(part: Mapping) -> str:
    """``"eps_r 2.7, loss tangent 0.006 -> sigma 9.0e-4 S/m"``, ``"perfect conductor"``."""
    if part.get("conductor") and part.get("sigma_s_per_m"):
        return (f"perfect conductor in the solver; sigma {format_number(part['sigma_s_per_m'], 3)} "
                "S/m for its surface loss")
    if part.get("perfect_conductor") or part.get("conductor"):
        return "perfect conductor"
    if "eps_r" not in part:
        return "-"
    text = f"eps_r {_number(part['eps_r'])}"
    sigma = part.get("sigma_s_per_m")
    if part.get("loss_tangent") is not None:
        text += f", loss tangent {_number(part['loss_tangent'], 3)}"
        if sigma is not None:
            text += f" \u2192 sigma {format_number(sigma, 3)} S/m"
    elif sigma is not None:
        text += f", sigma {format_number(sigma, 3)} S/m"
    return text


def parts_rows(summary: Mapping) -> list[list[str]]:
    """Rows ``[part, material, medium as the solver sees it]`` of the parts table."""
    return [[p.get("name", "?"), p.get("material", "?"), _medium_text(p)]
            for p in _case(summary).get("parts") or []]


_GRID_LABELS = {"nodes": "grid nodes (x, y, z)", "cells": "cells",
                "step_min_m": "smallest cell", "step_max_m": "largest cell",
                "cpml_cells": "absorbing layer (CPML), cells per face", "padding_m": "air padding",
                "origin_m": "grid origin"}


def grid_facts(summary: Mapping) -> list[tuple[str, str]]:
    facts = []
    for key, value in summary["grid"].items():
        if key == "nodes" and isinstance(value, list):
            text = " \u00d7 ".join(str(v) for v in value)
        elif key.endswith("_m") and isinstance(value, list) and len(value) == 3:
            text = _vector_text(value, summary)
        elif key.endswith("_m") and isinstance(value, (int, float)):
            text = length_text(value, summary)
        elif isinstance(value, int) and not isinstance(value, bool):
            text = f"{value:,}"
        else:
            text = _plain(value)
        facts.append((_GRID_LABELS.get(key, key.replace("_", " ")), text))
    return facts


def _probe_text(probe: Mapping, summary: Mapping) -> str:
    placed = {"case": "as the case gives it", "checkpoint": "as in the checkpoint"}.get(
        probe.get("placed"), f"placed {probe.get('placed')}" if probe.get("placed") else "")
    cells = probe.get("size_cells")
    parts = [f"loop at {_vector_text(probe['center_m'], summary)}" if "center_m" in probe else "loop",
             f"axis {probe['normal']}" if "normal" in probe else "",
             f"{cells} cell{'s' if cells != 1 else ''} across" if cells is not None else "", placed]
    return ", ".join(p for p in parts if p)


def run_facts(summary: Mapping) -> list[tuple[str, str]]:
    run = dict(summary.get("run") or {})
    facts = []
    steps = run.pop("steps", None)
    if steps is not None:
        facts.append(("time steps", f"{steps:,}"))
    if "dt_s" in run:
        dt = run.pop("dt_s")
        facts.append(("time step", format_si(dt, "s")))
        if isinstance(steps, int):
            facts.append(("simulated time", format_si(steps * dt, "s")))
    if "ringdown_start_s" in run:
        facts.append(("ring-down analysed from", format_si(run.pop("ringdown_start_s"), "s")))
    if "stop_reason" in run:
        facts.append(("stopped because", _plain(run.pop("stop_reason"))))
    if "wall_time_s" in run:
        facts.append(("wall time", format_duration(run.pop("wall_time_s"))))
    if "stepping_time_s" in run:
        facts.append(("of which stepping", format_duration(run.pop("stepping_time_s"))))
    if "memory_bytes" in run:
        facts.append(("peak memory", format_bytes(run.pop("memory_bytes"))))
    if isinstance(run.get("probe"), Mapping):
        facts.append(("probe", _probe_text(run.pop("probe"), summary)))
    if isinstance(run.get("pickups"), Sequence) and not isinstance(run.get("pickups"), str):
        names = list(run.pop("pickups"))
        field = sum(1 for n in names if n != "probe_emf")
        facts.append(("pickups", f"{len(names)}: the probe's own EMF and {field} field pickups"
                      if "probe_emf" in names else f"{len(names)} field pickups"))
    facts += [(k.replace("_", " "), _plain(v)) for k, v in run.items()]
    facts.append(("ringprint version", str(summary.get("ringprint_version", "unknown"))))
    return facts
