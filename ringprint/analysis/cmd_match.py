"""Put a bench measurement beside a finished run: measured |S11| resonances paired with
the simulated modes.

Reads DIR/modes.json (and DIR/probe.s11.s1p when there) of `ringprint run`, and a
measured Touchstone file (.s1p, or .s2p with --port). Finds the measured resonances
(vector fitting, then a circle fit of each: loaded Q, coupling, unloaded Q, each with
an error), pairs them with the simulated modes in frequency order and by Q, and
prints the offsets (%) and Q ratios, the modes left unpaired on both sides, and the
dielectric part whose permittivity best explains the offsets. Writes match.json and
match.png (measured and simulated |S11| with the bands shaded) into --out (default
DIR/match_<file name>). The rules are in ringprint.analysis.bench_q and
ringprint.analysis.bench_match.
"""

from __future__ import annotations

import argparse
import json
import math
from pathlib import Path

import numpy as np

from ringprint.analysis.bench_match import DEFAULT_WITHIN, compare
from ringprint.analysis.bench_q import MIN_DIAMETER, reflection_resonances
from ringprint.analysis.outputs import atomic_write_bytes, atomic_write_text, prepare_output_dir
from ringprint.analysis.probe_s11 import FILE_NAME
from ringprint.analysis.run_dir import read_modes_json
from ringprint.analysis.s11_plots import Marks, Trace, render_s11_png
from ringprint.analysis.textformat import format_frequency, format_q
from ringprint.analysis.touchstone import read_reflection, s_db
from ringprint.errors import RingprintError


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("dir", metavar="DIR", help="results directory of `ringprint run`")
    parser.add_argument("measured", metavar="FILE", help="measured Touchstone file (.s1p or .s2p)")
    parser.add_argument("--port", type=int, choices=(1, 2), default=None,
                        help="which reflection of a .s2p file: 1 for S11, 2 for S22")
    parser.add_argument("--within", type=float, default=100 * DEFAULT_WITHIN, metavar="PCT",
                        help="largest frequency offset (%%) a pair may have (default %(default)g)")
    parser.add_argument("--min-q", type=float, default=2.0, metavar="Q",
                        help="smallest loaded Q counted as a measured resonance (default 2)")
    parser.add_argument("--min-circle", type=float, default=MIN_DIAMETER, metavar="D",
                        help="smallest resonance circle counted, as a fraction of |S11| = 1 "
                             "(default %(default)g, a dip of about 0.09 dB)")
    parser.add_argument("--out", metavar="OUT", default=None,
                        help="where match.json and match.png go (default DIR/match_<file name>)")


def _simulated_trace(results: Path, z0: float):
    """The run's probe S11 renormalised to the measured reference ``z0``, or None."""
    path = results / FILE_NAME
    if not path.is_file():
        return None
    sim = read_reflection(path)
    z = sim.z0 * (1 + sim.s) / (1 - sim.s)
    return sim.f_hz, (z - z0) / (z + z0)


def _dielectrics(summary: dict) -> dict:
    """Dielectric part name -> the eps_r the run used (None when the run did not say).
    Conductors are left out: modes.json gives them ``eps_r`` null, or material "pec"."""
    case = summary.get("case")
    parts = case.get("parts") if isinstance(case, dict) else None
    out = {}
    for p in parts if isinstance(parts, list) else []:
        if not isinstance(p, dict) or "name" not in p or str(p.get("material", "")).lower() == "pec":
            continue
        if "eps_r" in p:
            if p["eps_r"] is not None:
                out[p["name"]] = float(p["eps_r"])
        else:
            out[p["name"]] = None
    return out


def _pm(value: str, err: float, text: str) -> str:
    return value if not math.isfinite(err) else f"{value} +- {text}"


def _finite(obj):
    """JSON-ready copy: numpy numbers as floats, non-finite values as null."""
    if isinstance(obj, dict):
        return {k: _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    if isinstance(obj, (bool, str)) or obj is None:
        return obj
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    value = float(obj)
    return value if math.isfinite(value) else None


def _table(result: dict) -> list[str]:
    lines = [f"{'mode':>4}  {'simulated':>12}  {'measured':>22}  {'offset':>16}  {'Q sim':>7}  "
             f"{'Q0 meas':>14}  {'Q ratio':>7}"]
    for r in result["pairs"]:
        m = r["measured"]
        lines.append(f"{r['mode']:>4}  {format_frequency(r['frequency_sim_hz']):>12}  "
                     f"{_pm(format_frequency(m['frequency_hz']), m['frequency_error_hz'], format_frequency(m['frequency_error_hz'])):>22}  "
                     f"{_pm(format(r['offset_percent'], '+8.3f'), r['offset_error_percent'], format(r['offset_error_percent'], '.3f')) + ' %':>16}  "
                     f"{format_q(r['q_sim']):>7}  "
                     f"{_pm(format_q(m['q_unloaded']), m['q_unloaded_error'], format_q(m['q_unloaded_error'])):>14}  "
                     f"{r['q_ratio']:7.3f}")
    for s in result["unmatched_simulated"]:
        lines.append(f"simulated mode {s['mode']} at {format_frequency(s['frequency_hz'])} "
                     f"(Q {format_q(s['q'])}): no measured resonance within "
                     f"{result['within_percent']:g} %")
    for m in result["unmatched_measured"]:
        lines.append(f"measured resonance at {format_frequency(m['frequency_hz'])} "
                     f"(Q0 {format_q(m['q_unloaded'])}): no simulated mode within "
                     f"{result['within_percent']:g} %")
    h = result["material_hint"]
    if h and not h["explains"]:
        lines.append(f"hint: no single dielectric part explains the offsets (the best, {h['part']!r}, "
                     f"takes their rms only from {100 * h['offset_rms']:.3f} % to "
                     f"{100 * h['residual_rms']:.3f} %)")
    elif h:
        eps = "" if h["eps_r"] is None else (f": eps_r {h['eps_r']:.4g} -> {h['suggested_eps_r']:.4g}")
        tail = "" if h["first_order"] else " (beyond first order: treat as a direction only)"
        lines.append(f"hint: the offsets fit best a change of {100 * h['d_eps_over_eps']:+.1f} % in "
                     f"the permittivity of {h['part']!r}{eps}; offsets rms "
                     f"{100 * h['offset_rms']:.3f} % -> {100 * h['residual_rms']:.3f} % after it{tail}")
    elif result["material_hint_note"]:
        lines.append(f"hint: none ({result['material_hint_note']})")
    return lines


def run(args: argparse.Namespace) -> int:
    results = Path(args.dir)
    summary = read_modes_json(results)
    if not 0 < args.within < 100:
        raise RingprintError(f"--within {args.within:g}: give a percentage between 0 and 100")
    meas = read_reflection(args.measured, args.port)
    if not (args.min_q > 0 and 0 < args.min_circle < 2):
        raise RingprintError(f"--min-q {args.min_q:g} must be > 0 and --min-circle {args.min_circle:g} "
                             "between 0 and 2")
    found = reflection_resonances(meas.f_hz, meas.s, meas.z0, q_min=args.min_q,
                                  min_diameter=args.min_circle)
    lo, hi = meas.f_hz[0], meas.f_hz[-1]
    sim_modes = [m for m in summary["modes"] if lo <= m.get("frequency_hz", -1.0) <= hi]
    result = compare(sim_modes, found, _dielectrics(summary), args.within / 100)
    result.update(measured_file=str(meas.source), reference_ohm=meas.z0,
                  span_hz=[float(lo), float(hi)], run=str(results))
    out = prepare_output_dir(Path(args.out) if args.out else results / f"match_{Path(args.measured).stem}")
    traces = [Trace(f"measured |S11| ({Path(args.measured).name})", meas.f_hz, meas.db)]
    marks = [Marks(0, [(f"M{k + 1}", m.fit.frequency_hz) for k, m in enumerate(found)], "^")]
    sim = _simulated_trace(results, meas.z0)
    if sim is not None:
        traces.append(Trace("simulated probe |S11|", sim[0], s_db(sim[1]),
                            "--", "0.45"))
        marks.append(Marks(1, [(m["index"], m["frequency_hz"]) for m in sim_modes], top=True))
    else:
        result["note"] = f"{results} has no {FILE_NAME} (a run of an older ringprint); only the measured trace is drawn"
    png = render_s11_png(traces, marks, summary.get("bands") or [],
                         title=f"bench against run: {Path(args.measured).name}")
    atomic_write_bytes(out / "match.png", png)
    atomic_write_text(out / "match.json", json.dumps(_finite(result), indent=2, allow_nan=False))
    print(f"{len(found)} measured resonance(s) in {format_frequency(lo)} - {format_frequency(hi)}, "
          f"{len(sim_modes)} simulated mode(s) there, {len(result['pairs'])} paired")
    print("\n".join(_table(result)))
    print(f"results in {out}")
    return 0
