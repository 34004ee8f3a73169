"""Writing a case back out: resolved TOML, its digest, syntax messages (private helper).

Kept apart from :mod:`ringprint.analysis.case`, which reads and validates.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
from typing import TYPE_CHECKING

import tomli_w

from ringprint.analysis._units import format_frequency, to_user_length
from ringprint.analysis.tolerance import resolved_tolerances

if TYPE_CHECKING:  # pragma: no cover
    from ringprint.analysis.case import Case, Part

_POSITION = re.compile(r"\(at line (\d+), column (\d+)\)")


def syntax_message(display: str, message: str) -> str:
    """One-line message for a TOML syntax error, with ``file:line:column`` first."""
    match = _POSITION.search(message)
    reason = _POSITION.sub("", message).replace("(at end of document)", "").strip()
    if match:
        place = f"{display}:{match.group(1)}:{match.group(2)}"
    else:
        place = f"{display}: at the end of the file"
    return f"{place}: not valid TOML: {reason}; check the quotes, brackets and '=' there"


def _material(part: Part):
    m = part.material
    if m.is_conductor and m.sigma is None:
        return part.material_name or "pec"
    out: dict = {"name": m.name}
    if m.is_conductor:
        out.update(conductor=True, sigma=m.sigma)
        if m.mu_r != 1.0:
            out["mu_r"] = m.mu_r
        return out
    out["eps_r"] = m.eps_r
    if m.sigma is not None:
        out["sigma"] = m.sigma
    else:
        out["loss_tangent"] = m.loss_tangent or 0.0
    if m.frequency_hz is not None:
        out["at"] = format_frequency(m.frequency_hz)
    return out


def _file_text(path, relative_to) -> str:
    """A part's file as written in the resolved case: relative to ``relative_to`` (the
    folder the resolved file goes to) when given, else absolute; always with ``/``."""
    if relative_to is None:
        return path.as_posix()
    try:
        return os.path.relpath(path, os.path.abspath(relative_to)).replace(os.sep, "/")
    except ValueError:  # another drive (Windows): keep the absolute path
        return path.as_posix()


def resolved_dict(case: Case, relative_to=None) -> dict:
    """The case with every default filled in, lengths in the user's unit; part files
    relative to the folder ``relative_to`` when given (see :func:`_file_text`)."""
    unit = case.unit_m

    def length(v):
        return to_user_length(v, unit)

    out: dict = {"title": case.title, "units": case.units, "band_presets": list(case.band_presets)}
    sp = case.spectrum
    out["spectrum"] = {"f_min": format_frequency(sp.f_min_hz), "f_max": format_frequency(sp.f_max_hz),
                       "loss_at": format_frequency(sp.loss_at_hz)}
    # parts made by [[assembly]] rules are written out as one [[part]] per body
    out["part"] = [{
        "name": p.name, "file": _file_text(p.file, relative_to), **({"body": p.body} if p.body is not None else {}),
        "material": _material(p), "translate": [length(v) for v in p.translate_m],
        "rotate": {"axis": list(p.rotate_axis), "degrees": p.rotate_degrees},
        "scale": p.scale, "mirror": p.mirror or "none", "overlap_rank": p.overlap_rank,
    } for p in case.parts]
    out["tolerance"], own = resolved_tolerances(case.tolerances, unit,
                                                [p.name for p in case.parts if p.material.is_pec])
    for entry in out["part"]:
        entry.update({"tolerance": own[entry["name"]]} if entry["name"] in own else {})
    if case.custom_bands:
        out["band"] = [{"name": b.name, "low": format_frequency(b.low_hz),
                        "high": format_frequency(b.high_hz), "source": b.source}
                       for b in case.custom_bands]
    if case.probe is not None:
        out["probe"] = {"at": [length(v) for v in case.probe.at_m], "normal": case.probe.normal,
                        "size": length(case.probe.size_m)}
    out["grid"] = {"cells_per_wavelength": case.grid.cells_per_wavelength,
                   "padding": length(case.grid.padding_m),
                   "cpml_cells": case.grid.absorber_cells, "graded": case.grid.graded,
                   "min_feature": length(case.grid.min_feature_m)}
    if case.grid.symmetry:
        out["grid"]["symmetry"] = dict(case.grid.symmetry)
    out["analysis"] = {"q_max": case.analysis.q_max,
                       "detuning_margin": case.analysis.detuning_margin,
                       "grid_check": case.analysis.grid_check or False,
                       "stop_when_converged": case.analysis.stop_when_converged}
    out["output"] = {"fields": case.output.fields, "images": case.output.images,
                     "field_memory": case.output.field_memory_bytes / 2.0 ** 20,
                     "port_impedance": case.output.port_impedance_ohm}
    return out


#: A multi-line array of plain values (numbers, strings without brackets) as tomli_w writes it.
_LONG_ARRAY = re.compile(r"\[\n((?:[ \t]+[^\[\]{}\n]+,\n)+)\]")


def to_toml(resolved: dict) -> str:
    """The resolved case as TOML, every vector on one line (``translate = [0.0, 0.0, 1.5]``)."""
    header = "# The case as run: every default filled in (written by ringprint).\n"
    text = tomli_w.dumps(resolved)
    text = _LONG_ARRAY.sub(lambda m: "[" + ", ".join(
        item.strip().rstrip(",") for item in m.group(1).splitlines()) + "]", text)
    return header + text


def _file_sha256(path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _canonical(obj):
    """Floats rounded to 12 significant digits, so that a case read back from its
    resolved TOML (lengths written in the user's unit) has the same digest."""
    if isinstance(obj, float):
        return float(f"{obj:.12g}") + 0.0     # + 0.0 turns -0.0 into 0.0
    if isinstance(obj, dict):
        return {k: _canonical(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_canonical(v) for v in obj]
    return obj


def digest(case: Case) -> str:
    """SHA-256 of the simulation-relevant content of a case, in SI (see ``Case.digest``)."""
    parts, sha = [], {}  # an assembly file feeds many parts: hash it once
    for p in case.parts:
        eps_r, sigma, pec = case.medium(p)
        if p.file not in sha:
            sha[p.file] = _file_sha256(p.file)
        parts.append({"name": p.name, "file_sha256": sha[p.file],
                      "matrix": p.matrix().tolist(), "eps_r": eps_r,
                      "sigma": sigma, "pec": pec, "priority": p.overlap_rank})  # key kept: digests stay
        if p.body is not None:  # only then: digests of one-file-per-part cases stay as they were
            parts[-1]["body"] = p.body
    probe = None if case.probe is None else \
        {"at": list(case.probe.at_m), "normal": case.probe.normal, "size": case.probe.size_m}
    content = {
        "version": 1,
        "spectrum": [case.spectrum.f_min_hz, case.spectrum.f_max_hz, case.spectrum.loss_at_hz],
        "parts": parts, "probe": probe,
        "grid": [case.grid.cells_per_wavelength, case.grid.padding_m, case.grid.absorber_cells,
                 case.grid.graded, case.grid.min_feature_m],
        "q_max": case.analysis.q_max,
    }
    if case.grid.symmetry:  # only then: digests of cases without mirrors stay as they were
        content["grid"].append([list(pair) for pair in case.grid.symmetry])
    text = json.dumps(_canonical(content), sort_keys=True, separators=(",", ":"), allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()
