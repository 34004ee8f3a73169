"""Test utility: write a small case (meshes + TOML) and run ``ringprint run`` on it.

The end-to-end checks (``test_e2e_*.py``) build their parts from
:mod:`ringprint.meshing.primitives`, write them as binary STL with meshio into a
temporary folder, write a case file naming them, and run the whole pipeline
(:func:`ringprint.analysis.pipeline.run_case`). Lengths in the case are millimetres.
"""

from __future__ import annotations

from pathlib import Path

import meshio
import numpy as np
from scipy.optimize import brentq

from ringprint.analysis.modes import CHU_Q_MIN
from ringprint.analysis.pipeline import run_case


def write_stl(path, surface, scale=1.0) -> Path:
    """Write a primitive surface (coordinates times ``scale``) as a binary STL file."""
    mesh = meshio.Mesh(np.asarray(surface.vertices, float) * scale, [("triangle", np.asarray(surface.faces))])
    meshio.write(path, mesh, file_format="stl", binary=True)
    return Path(path)


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str) and not v.startswith("{"):
        return f'"{v}"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    return str(v)


def write_case(folder, name, parts, spectrum, grid=None, analysis=None, probe=None, bands=()) -> Path:
    """Write ``<folder>/<name>.toml`` (units mm).

    ``parts`` is a list of ``(part_name, stl_file_name, material)`` where material is
    ``"pec"`` or an inline TOML table as text, e.g. ``"{ eps_r = 36.0 }"``. ``spectrum``,
    ``grid``, ``analysis``, ``probe`` are dicts of keys written as they are (strings
    quoted, numbers and lists as TOML). ``bands`` lists ``(name, low, high)`` custom
    bands (frequencies as text, e.g. "2.4 GHz"). A ``parts`` entry may carry a fourth
    item, the part's overlap_rank. The grid is uniform (``graded = false``) unless ``grid``
    says otherwise: the tolerances of these checks were measured on uniform grids.
    """
    grid = {"graded": False, **(grid or {})}
    lines = [f'title = "{name}"', 'units = "mm"', "", "[spectrum]"]
    lines += [f"{k} = {_value(v)}" for k, v in spectrum.items()]
    for part, file, material, *rank in parts:
        lines += ["", "[[part]]", f'name = "{part}"', f'file = "{file}"', f"material = {_value(material)}"]
        lines += [f"overlap_rank = {p}" for p in rank]
    for band, low, high in bands:
        lines += ["", "[[band]]", f'name = "{band}"', f'low = "{low}"', f'high = "{high}"']
    for table, values in (("grid", grid), ("analysis", analysis), ("probe", probe)):
        if values:
            lines += ["", f"[{table}]"] + [f"{k} = {_value(v)}" for k, v in values.items()]
    path = Path(folder) / f"{name}.toml"
    path.write_text("\n".join(lines) + "\n")
    return path


def run(case_path, out_name="out", fields=False) -> dict:
    """Run the case end to end (no progress bar, no echo); the modes.json summary.

    Mode fields are off unless asked for: the frequency checks do not need the
    second pass, and it would double their time.
    """
    case_path = Path(case_path)
    return run_case(case_path, case_path.parent / out_name, progress=False, echo=None, fields=fields)


def nearest_mode(summary, f_ref: float) -> dict:
    """The mode of a run whose frequency lies nearest ``f_ref`` (fails when there is none)."""
    modes = summary["modes"]
    assert modes, "the run found no mode at all"
    return min(modes, key=lambda m: abs(m["frequency_hz"] - f_ref))


def relative_errors(mode, f_ref: float, q_ref: float) -> tuple[float, float]:
    """``(frequency error, Q error)`` of a mode against a reference, as signed fractions."""
    return mode["frequency_hz"] / f_ref - 1.0, mode["q"] / q_ref - 1.0


def observed_order(cells, values) -> float:
    """Observed order of convergence from three grids (Richardson; Roache, P. J.,
    *Verification and Validation in Computational Science and Engineering*, Hermosa,
    1998, ch. 5): the ``p`` with ``(h1^p - h2^p) / (h2^p - h3^p) = (v1 - v2) / (v2 - v3)``,
    ``h = 1 / cells``, for values that converge monotonically (``nan`` otherwise, or when
    ``p`` falls outside 0.1..10). ``cells`` must increase (coarse to fine grid).
    """
    h = 1.0 / np.asarray(cells, float)
    v = np.asarray(values, float)
    ratio = (v[0] - v[1]) / (v[1] - v[2])
    g = lambda p: (h[0] ** p - h[1] ** p) / (h[1] ** p - h[2] ** p) - ratio  # noqa: E731
    if not np.all(np.diff(h) < 0) or not ratio > 0 or g(0.1) * g(10.0) > 0:
        return float("nan")
    return float(brentq(g, 0.1, 10.0, xtol=1e-10))


def chu_violations(summary) -> list:
    """Modes of a run whose Q lies below the Chu bound of the enclosing sphere (Chu 1948),
    among those where the bound applies to a pole's Q (``Q >= CHU_Q_MIN``; see
    ringprint.analysis.modes: for Q near 1 the pole Q is not Chu's energy Q).

    Every mode must carry ``q_chu``; a missing bound counts as a violation too, since
    the check would otherwise pass without checking anything.
    """
    bad = []
    for m in summary["modes"]:
        if m["q_chu"] is None:
            bad.append(m)
        elif m["q"] >= CHU_Q_MIN and (m["below_chu"] or not m["q"] >= m["q_chu"]):
            bad.append(m)
    return bad


def describe(summary) -> str:
    """One line per mode (f, Q, Q_chu, amplitude), for assertion messages."""
    return "; ".join(f"{m['frequency_hz'] / 1e9:.4f} GHz Q {m['q']:.3g} (chu {m['q_chu'] or float('nan'):.3g}, "
                     f"amp {m['amplitude']:.2g}, vis {m['visibility']:.2g})" for m in summary["modes"])
