"""The results of ``ringprint run``: modes.json, modes.csv, spectrum.png, report.html, run.log.

:func:`write_results` writes them all, each file only when complete
(:mod:`ringprint.analysis.outputs`). Re-exported here: ``write_json``, ``write_csv``,
``write_spectrum_png``, ``write_run_log``, ``format_summary_table`` (the terminal table).

Data model
----------
The writers take plain, JSON-ready Python data (numpy scalars/arrays are accepted
and converted), so they know nothing of the solver. SI units throughout.

``summary`` (dict) -- becomes ``modes.json`` as is (plus ``"ringprint_version"``
when absent, and ``"bands"`` -- the band list -- when absent)::

    "case":  str (the case name) or dict
             {"name": str, required
              "title": str, optional (default: the name)
              "file": str, optional (path of the case file)
              "units": str, optional (the case's length unit: facts in it)
              "parts": [{"name": str, "material": str, optional "eps_r",
                         "loss_tangent", "sigma_s_per_m", "conductor",
                         "perfect_conductor", ...}, ...], optional
              "spectrum": {"f_min_hz": float, "f_max_hz": float, optional
                           "loss_at_hz"}, optional
                          (the analysed span; also the plot's frequency axis)
              ...any other keys}
    "grid":  dict, shown key by key; the keys the report labels are
             "nodes": [Nx, Ny, Nz], "cells": int, "step_min_m": float,
             "step_max_m": float, "cpml_cells": int; others are shown as given.
    "modes": list, one dict per resonance, numbered from 1 in order of frequency:
             "index": int (1, 2, ...),
             "frequency_hz": float > 0, the real part of the complex frequency / 2 pi,
             "q": float > 0, the mode's Q: the combined 1/q = 1/q_solver + 1/q_conductor
                  when a conductor Q is known, else q_solver,
             "decay_rate_per_s": float >= 0, the ring-down's amplitude decay rate (field ~
                                 exp(-rate t)), so q_solver = omega / (2 decay_rate),
             "amplitude": float >= 0, the magnitude of the mode's complex amplitude
                          (its phase, if wanted, under an added key "phase_rad"),
             "error": float >= 0 or None, the relative error estimate of the
                      complex frequency (|delta omega| / |omega|; shown in ppm or %),
                      the fit's own error (the same value as the optional "fit_error"),
             "q_chu": float > 0 or None, the Chu lower bound of Q for the sphere
                      that encloses the part(s) that ring,
             "bands": [{"band": str (a band name), "status": "inside"|"near"|"clear",
                        "distance_percent": float (100 x distance to the nearest band
                        edge / frequency, negative inside; see ringprint.analysis.bands),
                        optional "overlap": float 0..1}, ...],
             "participation": {part name: fraction of the mode's energy in that
                               part and its shell, 0..1} (empty without fields),
             optional: "q_solver": float > 0, the ring-down's Q (radiation and
             dielectric loss), "q_conductor": float > 0 or None, the conductor Q from
             the surface resistance of the lossy metal parts (None: perfect
             conductors only, or no mode fields), "conductor_loss": {part: share of
             the conductor loss, 0..1} (ringprint.analysis.conductor_loss),
                          "q_over_chu": float (default q / q_chu; the run gives q_solver / q_chu), "confidence": str
             (e.g. "high"/"low") or float, "phase_rad": float; the uncertainty
             (ringprint.analysis.uncertainty; tables print f and Q to the digits it
             supports): "fit_error", "frequency_uncertainty_hz", "q_uncertainty"
             (absolute), "uncertainty_basis": "grid study"|"stated bound",
             "frequency_extrapolated_hz", "q_extrapolated", "grid_order" (None for a
             mode the grid study could not match); any other scalar keys
             (they become extra CSV columns); with mode fields
             (ringprint.analysis.field_stage): "rings_in": part name or None,
             "participation_detail": {part: {"electric_inside", "electric_near",
             "magnetic_inside", "magnetic_near": fractions, "surface_current":
             fraction or None}}, "touch": {"tissue": str, "worst": [{"point_m",
             "normal", "shift_percent", "q_after", "q_drop_percent"}, ...]}.
    optional:
    "hazards": [{"mode": int (mode index), "band": str, "status": "inside"|"near",
                 "distance_percent": float, "rank": int >= 1 (1 = worst, unique),
                 optional "part": the part that carries the mode}, ...];
               when absent the writers rank the modes' inside/near entries
               (:func:`~ringprint.analysis.results.hazards_from_modes`).
    "run": {"steps": int, "dt_s": float, "wall_time_s": float, "memory_bytes": int,
            ...other facts, shown as given},
    "notes": [str, ...] -- warnings of the run, shown after the hazard table,
    "uncertainty": {"basis": "grid study"|"stated bound", "stated_bound": str (what
             the stated bound rests on), "grid_study": None or {"method", "grids":
             [{"cells_per_wavelength", "cell_m", "modes_found", ...}], "ratio",
             "stated_order", "order_reason", "safety_factor", "matched": [mode
             indices], "unmatched": [{"mode", "reason"}]}},
    "ringprint_version": str.

``bands`` (list) -- the operating bands checked, ``[{"name": str (unique), "low_hz",
"high_hz" > low_hz, "source": str}, ...]``, or :class:`ringprint.analysis.bands.Band` objects.

``spectrum`` (dict) -- for the plot: ``{"frequency_hz": 1-D increasing array,
"magnitude_db": same shape}``, or a probe record ``{"record": (n_samples,) or
(n_pickups, n_samples) array, "dt_s": float, "start_index": int (default 0)}`` that
:func:`~ringprint.analysis.plots.spectrum_from_record` transforms (Hann window, 4x zero
padding, pickups summed in power, dB re the peak).

A failed check raises :class:`~ringprint.errors.RingprintError` naming the key path
(``summary.modes[2].q``) and the fix; nothing is written then.
"""

from __future__ import annotations

import base64
import datetime
import html
import os
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path

from ringprint import __version__
from ringprint.analysis.outputs import (atomic_write_bytes, atomic_write_text,
                                        prepare_output_dir, write_run_log)
from ringprint.analysis.plots import check_spectrum, render_spectrum_png, write_spectrum_png
from ringprint.analysis.report_facts import case_facts, grid_facts, parts_rows, run_facts
from ringprint.analysis.report_verdict import hazard_section, participation_text, verdict_html
from ringprint.analysis.summary_table import format_summary_table
from ringprint.analysis.results import (basis_text, frequency_text,
                                        hazards_from_modes, q_over_chu_text, q_text,
                                        validate_bands, validate_summary, write_csv, write_json)
from ringprint.analysis.symmetry import wall_column
from ringprint.analysis.textformat import (format_error, format_frequency, format_like,
                                           format_number, format_percent, format_q, format_sci)

__all__ = ["write_results", "write_report_html", "build_report_html", "SAFETY_NOTE",
           "write_json", "write_csv", "write_spectrum_png", "write_run_log",
           "format_summary_table"]

#: The fixed safety note every report carries.
SAFETY_NOTE = ("ringprint predicts resonances for design guidance only. It does not replace "
               "regulatory RF-exposure (SAR) evaluation or safety testing: defer to your "
               "local codes and licensed practice.")

_CSS = """
body{font-family:sans-serif;margin:1.5em auto;max-width:72em;color:#111;line-height:1.4}
h1{font-size:1.5em;margin-bottom:.2em} h2{font-size:1.15em;margin-top:1.6em;border-bottom:1px solid #999}
table{border-collapse:collapse;margin:.5em 0} th{background:#eee}
th,td{border:1px solid #bbb;padding:.2em .6em;text-align:left;vertical-align:top}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
tr.inside td{background:#ddd;font-weight:bold} tr.near td{background:#f3f3f3}
.safety{border:2px solid #333;padding:.6em .9em;background:#fafafa}
.muted{color:#555} img{max-width:100%;height:auto} .verdict{font-size:1.15em;font-weight:bold;border-left:6px solid #333;padding:.3em .7em;background:#f3f3f3}
"""


def _e(value) -> str:
    return html.escape(str(value), quote=True)


def _table(table_id: str, header: Sequence[str], rows: Iterable[Sequence],
           numeric: Sequence[bool], row_classes: Sequence[str] | None = None) -> str:
    head = "".join(f"<th>{_e(h)}</th>" for h in header)
    body = []
    for k, row in enumerate(rows):
        cls = f' class="{_e(row_classes[k])}"' if row_classes else ""
        cells = "".join(f'<td class="num">{_e(c)}</td>' if num else f"<td>{_e(c)}</td>"
                        for c, num in zip(row, numeric))
        body.append(f"<tr{cls}>{cells}</tr>")
    return (f'<table id="{table_id}"><thead><tr>{head}</tr></thead>'
            f"<tbody>{''.join(body)}</tbody></table>")


def _facts(facts: Sequence[tuple[str, str]], table_id: str) -> str:
    rows = "".join(f"<tr><th>{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in facts)
    return f'<table id="{table_id}"><tbody>{rows}</tbody></table>'


def _case_dict(summary: Mapping) -> dict:
    case = summary["case"]
    return {"name": case} if isinstance(case, str) else dict(case)


def _spectrum_limits(summary: Mapping):
    spec = _case_dict(summary).get("spectrum") or {}
    lo, hi = spec.get("f_min_hz"), spec.get("f_max_hz")
    return (float(lo), float(hi)) if lo is not None and hi is not None and hi > lo else None


def _bands_text(mode: Mapping) -> str:
    return "; ".join(
        f"{e['band']} {e['status']}" + ("" if e["status"] == "inside"
                                        else f" ({format_percent(e['distance_percent'])})")
        for e in mode["bands"]) or "-"


def _case_section(summary: Mapping, bands: Sequence[Mapping]) -> str:
    out = ["<h2>Case</h2>", _facts(case_facts(summary, _spectrum_limits(summary)), "case-facts")]
    rows = parts_rows(summary)
    if rows:
        out.append("<h3>Parts</h3>")
        out.append(_table("parts", ["part", "material", "as the solver sees it"], rows,
                          [False, False, False]))
    if bands:
        out.append("<h3>Operating bands checked</h3>")
        out.append(_table("bands", ["band", "from", "to", "source"],
                          [[b["name"], format_frequency(b["low_hz"], trim=True, digits=7),
                            format_frequency(b["high_hz"], trim=True, digits=7), b["source"]]
                           for b in bands], [False, True, True, False]))
    return "\n".join(out)


def _modes_section(summary: Mapping) -> str:
    out = ["<h2>All modes</h2>"]
    modes = summary["modes"]
    if not modes:
        out.append('<p id="no-modes">No resonance was found in the analysed spectrum.</p>')
        return "\n".join(out)
    has_conf = any("confidence" in m for m in modes)
    header = ["mode", "frequency", "Q", "Q / Q_Chu", "decay rate (1/s)", "amplitude",
              "uncertainty from", "bands", "rings in"] + (["confidence"] if has_conf else [])
    rows = [[m["index"], frequency_text(m), q_text(m), q_over_chu_text(m),
             format_sci(m["decay_rate_per_s"]), format_number(m["amplitude"]), basis_text(m),
             _bands_text(m), participation_text(m)]
            + ([str(m.get("confidence", "-"))] if has_conf else []) for m in modes]
    numeric = [True] * 6 + [False, False, False] + ([False] if has_conf else [])
    has_qc = any(m.get("q_conductor") is not None for m in modes)
    if has_qc:
        header[3:3] = ["Q solver", "Q conductor"]
        numeric[3:3] = [True, True]
        for r, m in zip(rows, modes):
            r[3:3] = [format_q(m.get("q_solver", m["q"])), format_q(m.get("q_conductor"))]
    wall_column(header, rows, numeric, modes)
    out.append(_table("modes", header, rows, numeric))
    if has_qc:
        out.append('<p class="muted" id="q-note">Q combines the losses, 1/Q = 1/Q solver + '
                   "1/Q conductor: Q solver is the ring-down's (radiation and dielectric loss), "
                   "Q conductor the loss of the metal parts' surface resistance on the mode's "
                   "surface current. The decay rate is the ring-down's and Q / Q_Chu uses Q solver: "
                   "the Chu limit bounds radiation, and conductor loss may take Q below it.</p>")
    out.append('<p class="muted">Frequency and Q are shown with their uncertainty and to the '
               "digits it supports (details below). Q / Q_Chu compares the Q with the Chu limit "
               "of the smallest sphere around the part(s) that ring; near 1 means the part "
               "radiates about as well as anything of its size can; n/a below Q 5, where the "
               "Q of a complex frequency is not the energy Q the Chu limit bounds.</p>")
    out.append(_uncertainty_section(summary))
    return "\n".join(out)


def _uncertainty_section(summary: Mapping) -> str:
    """The details table: full-precision values, extrapolated values, fit error, basis."""
    modes = summary["modes"]
    out = ["<h3>Uncertainty details</h3>"]
    rows = []
    for m in modes:
        u_f, u_q = m.get("frequency_uncertainty_hz"), m.get("q_uncertainty")
        extrapolated = m.get("frequency_extrapolated_hz")
        rows.append([m["index"], frequency_text(m),
                     "-" if extrapolated is None else frequency_text({**m, "frequency_hz": extrapolated}, False),
                     format_percent(None if u_f is None else 100.0 * u_f / m["frequency_hz"]),
                     q_text(m), format_like(m.get("q_extrapolated"), None if u_q is None else u_q / m["q"]),
                     format_percent(None if u_q is None else 100.0 * u_q / m["q"]),
                     basis_text(m), format_error(m.get("fit_error", m.get("error")))])
    out.append(_table("uncertainty", ["mode", "frequency", "extrapolated",
                                      "frequency uncertainty", "Q", "extrapolated",
                                      "Q uncertainty", "from", "fit error"], rows,
                      [True] * 7 + [False, True]))
    block = summary.get("uncertainty") or {}
    study = block.get("grid_study")
    notes = []
    if study:
        grids = ", ".join(f"{g['cells_per_wavelength']:.4g}" for g in study["grids"])
        notes.append(f"Grid study: cells per wavelength {grids} (ratio {study['ratio']:.3g}); "
                     f"{study['method']}; order {study['order_reason']}; safety factor "
                     f"{study['safety_factor']}. Extrapolated: the Richardson value.")
        if study.get("floor"):
            notes.append(f"Grid uncertainty here: {study['floor']}.")
        notes += [f"Mode {u['mode']} kept the stated bound: {u['reason']}." for u in study["unmatched"]]
    if block.get("stated_bound") and any(m.get("uncertainty_basis") == "stated bound" for m in modes):
        notes.append(f"Stated bound: {block['stated_bound']}. Set grid_check = true under "
                     "[analysis] (or run with --grid-check) for a measured one.")
    notes.append("Fit error: the harmonic inversion's own relative error of the complex "
                 "frequency, a small part of the uncertainty. modes.json and modes.csv keep every "
                 "value at full precision.")
    out += [f'<p class="muted">{_e(n)}</p>' for n in notes]
    return "\n".join(out)


def build_report_html(summary: Mapping, png: bytes, bands: Sequence[Mapping] = (),
                      extra_html: str = "") -> str:
    """The report page as one self-contained HTML string (image embedded as base64).

    ``summary`` must already be checked (:func:`validate_summary`); ``png`` is the
    spectrum picture; ``extra_html`` (the hazardous modes' field pictures and touch
    maps, and any other section a stage adds) follows the warnings. Order, the answer
    first: title, the one-line verdict, the hazard table, the run's warnings, the safety
    note, ``extra_html``, all modes, the spectrum plot, the case (parts, spectrum,
    bands), the run facts.
    """
    case = _case_dict(summary)
    title = case.get("title") or case["name"]
    hazards = summary.get("hazards")
    if hazards is None:
        hazards = hazards_from_modes(summary["modes"])
    stamp = datetime.datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z")
    image = base64.b64encode(png).decode("ascii")
    n = len(summary["modes"])
    notes = summary.get("notes") or []
    parts = [
        "<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
        f"<title>ringprint report: {_e(title)}</title>", f"<style>{_CSS}</style></head><body>",
        f"<h1>{_e(title)}</h1>",
        verdict_html(summary, hazards, bands),
        f'<p class="muted">Resonances found by ringprint: {n} mode{"s" if n != 1 else ""}, '
        f"{len(hazards)} band hazard{'s' if len(hazards) != 1 else ''}. Written {_e(stamp)}.</p>",
        hazard_section(summary, hazards, bands, _table),
    ]
    if notes:
        parts.append('<h2 id="notes-title">Warnings from the run</h2><ul id="notes">'
                     + "".join(f"<li>{_e(note)}</li>" for note in notes) + "</ul>")
    parts += [
        f'<p class="safety" id="safety-note"><strong>Safety note.</strong> {_e(SAFETY_NOTE)}</p>',
        extra_html,
        _modes_section(summary),
        "<h2>Spectrum</h2>",
        f'<img id="spectrum" alt="Probe spectrum with the operating bands shaded and named, '
        f'and a marker with f and Q at each mode" src="data:image/png;base64,{image}">',
        _case_section(summary, bands),
        "<h2>Run</h2>",
        _facts(grid_facts(summary) + run_facts(summary), "run-facts"),
        "</body></html>",
    ]
    return "\n".join(parts) + "\n"


def write_report_html(path: str | os.PathLike, summary: Mapping, spectrum: Mapping,
                      bands: Sequence[Mapping] = (), png: bytes | None = None) -> Path:
    """Write ``report.html`` atomically (``path`` may be the output directory).

    Parameters
    ----------
    path : str or path-like
        The file, or a directory to hold ``report.html``.
    summary, spectrum, bands
        See the module docstring.
    png : bytes, optional
        An already rendered spectrum picture (saves drawing it twice).
    """
    data, bands, png = _checked(summary, spectrum, bands, png=png)
    target = Path(path)
    if target.is_dir():
        target = target / "report.html"
    return atomic_write_text(target, build_report_html(data, png, bands))


def _checked(summary, spectrum, bands, out_dir=None, png=None) -> tuple[dict, list, bytes]:
    """Check everything (and prepare ``out_dir``), then draw the spectrum unless given."""
    bands = validate_bands(list(bands))
    data = validate_summary(summary, bands)
    data.setdefault("ringprint_version", __version__)
    freq, mag = check_spectrum(spectrum) if png is None else (None, None)
    if out_dir is not None:
        prepare_output_dir(out_dir)
    if png is None:
        case = _case_dict(data)
        png = render_spectrum_png(freq, mag, data["modes"], bands, _spectrum_limits(data),
                                  case.get("title") or case["name"])
    return data, bands, png


def write_results(out_dir: str | os.PathLike, summary: Mapping, spectrum: Mapping,
                  bands: Sequence[Mapping], log_lines: Iterable[str] | None = None,
                  extra_html: str = "") -> dict[str, Path]:
    """Write every result file of a run into ``out_dir``.

    Everything is checked first, so bad input writes nothing. Then ``modes.json``,
    ``modes.csv``, ``spectrum.png``, ``report.html`` and (when ``log_lines`` is
    given) ``run.log`` are written, each atomically.

    Parameters
    ----------
    out_dir : str or path-like
        Output directory; created if missing (:func:`prepare_output_dir`).
    summary : dict
        The run summary (module docstring). ``modes.json`` holds it plus
        ``"bands"`` (this band list) and ``"ringprint_version"`` when those are absent.
    spectrum : dict
        The probe spectrum or record (module docstring).
    bands : list of dict
        The operating bands checked.
    log_lines : iterable of str, optional
        Lines for ``run.log``. Leave None when a
        :class:`~ringprint.analysis.outputs.RunLogHandler` writes the log.
    extra_html : str
        A ready HTML fragment placed after the hazard table (field pictures).

    Returns
    -------
    dict
        ``{"json", "csv", "png", "html"[, "log"]}`` -> written paths.

    Raises
    ------
    RingprintError
        On bad input (naming the key) or an unusable output directory.
    """
    data, bands, png = _checked(summary, spectrum, bands, out_dir)
    data.setdefault("bands", bands)
    out = Path(out_dir)
    written = {
        "json": write_json(out / "modes.json", data),
        "csv": write_csv(out / "modes.csv", data),
        "png": atomic_write_bytes(out / "spectrum.png", png),
        "html": atomic_write_text(out / "report.html", build_report_html(data, png, bands, extra_html)),
    }
    if log_lines is not None:
        written["log"] = write_run_log(out / "run.log", log_lines)
    return written
