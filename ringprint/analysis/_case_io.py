"""Writing a case back out: resolved TOML, its digest, syntax messages (private helper).

Kept apart from :mod:`ringprint.analysis.case`, which reads and validates.
"""

from __future__ import annotations

import hashlib
import json
import re
from typing import TYPE_CHECKING

import tomli_w

from ringprint.analysis._units import format_frequency, to_user_length

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


def resolved_dict(case: Case) -> dict:
    """The case with every default filled in, lengths in the user's unit."""
    unit = case.unit_m

    def length(v):
        return to_user_length(v, unit)

    out: dict = {"title": case.title, "units": case.units, "bands": list(case.band_presets)}
    sp = case.spectrum
    out["spectrum"] = {"f_min": format_frequency(sp.f_min_hz), "f_max": format_frequency(sp.f_max_hz),
                       "loss_at": format_frequency(sp.loss_at_hz)}
    # parts made by [[assembly]] rules are written out as one [[part]] per body
    out["part"] = [{
        "name": p.name, "file": p.file.as_posix(), **({"body": p.body} if p.body is not None else {}),
        "material": _material(p), "translate": [length(v) for v in p.translate_m],
        "rotate": {"axis": list(p.rotate_axis), "degrees": p.rotate_degrees},
        "scale": p.scale, "mirror": p.mirror or "none", "priority": p.priority,
    } for p in case.parts]
    if case.custom_bands:
        out["band"] = [{"name": b.name, "low": format_frequency(b.low_hz),
                        "high": format_frequency(b.high_hz), "source": b.source}
                       for b in case.custom_bands]
    if case.probe is not None:
        out["probe"] = {"at": [length(v) for v in case.probe.at_m], "normal": case.probe.normal,
                        "size": length(case.probe.size_m)}
    out["grid"] = {"cells_per_wavelength": case.grid.cells_per_wavelength,
                   "padding": length(case.grid.padding_m),
                   "absorber_cells": case.grid.absorber_cells, "graded": case.grid.graded,
                   "min_feature": length(case.grid.min_feature_m)}
    out["analysis"] = {"q_max": case.analysis.q_max,
                       "detuning_margin": case.analysis.detuning_margin,
                       "grid_check": case.analysis.grid_check or False}
    out["output"] = {"fields": case.output.fields, "images": case.output.images,
                     "field_memory": case.output.field_memory_bytes / 2.0 ** 20,
                     "port_impedance": case.output.port_impedance_ohm}
    return out


def to_toml(resolved: dict) -> str:
    header = "# The case as run: every default filled in (written by ringprint).\n"
    return header + tomli_w.dumps(resolved)


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
                      "sigma": sigma, "pec": pec, "priority": p.priority})
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
    text = json.dumps(_canonical(content), sort_keys=True, separators=(",", ":"), allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()
