"""Steps saved by stopping on convergence, and whether the answer is the same.

Usage: python benchmarks/bench_convergence.py [CASE ...] [--out DIR] [--no-fields] [--json FILE] [--reuse]

Each case (default: the bundled cases/tag, cases/wrist, cases/tracker) is run end to
end twice with ``ringprint run``'s own code path: once as the case says
(``stop_when_converged`` on by default: the ring-down and the field pass stop once
their results are stable) and once with the full-length record
(``stop_when_converged = false``: the ring-down runs to the decay rule or the q_max
ceiling, the field pass to the same length). It prints, per case: steps and time of
the first pass and of the field pass both ways, the number of modes, the largest
relative change of f and Q between the two mode lists (promise: f to 1e-4, Q to 1 %),
the smallest field correlation per mode (stored-energy inner product; promise
>= 0.999) and the largest change of a part's energy share (promise: within 1 %).

The machine is often shared: the load (``os.getloadavg``) is printed beside the times.
``--reuse`` compares result folders already made (e.g. the full-length run by a checkout
of the code before this rule existed: ``ringprint run CASE --out OUT/<case>_full``).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path

import numpy as np

from ringprint.analysis.field_window import field_correlation
from ringprint.analysis.fieldset_io import FIELDS_NAME, read_fieldset
from ringprint.analysis.pipeline import run_case

ROOT = Path(__file__).resolve().parents[1]
CASES = ["tag", "wrist", "tracker"]


def _run(case, out, converge, fields, reuse):
    """Run the case (or, with ``reuse``, read the results a run already left in ``out``)."""
    load0 = os.getloadavg()[0]
    if reuse and (out / "modes.json").is_file():
        summary = json.loads((out / "modes.json").read_text())
    else:
        summary = run_case(case, out, progress=False, echo=None, fields=fields,
                           stop_when_converged=converge)
    run = summary["run"]
    old = run.get("field_pass") or {}         # the layout of the first version of this branch
    if old:
        run.setdefault("field_pass_steps", old["steps"] - old["start_step"])
        run.setdefault("field_pass_time_s", old["wall_time_s"])
        run.setdefault("field_pass_stop_reason", old["stop_reason"])
    if isinstance(run.get("convergence_checks"), list):
        run["convergence_checks"] = len(run["convergence_checks"])
    return {"steps": run["steps"], "first_pass_s": run["stepping_time_s"], "stop": run["stop_reason"],
            "field_steps": run.get("field_pass_steps", 0), "field_s": run.get("field_pass_time_s", 0.0),
            "field_stop": run.get("field_pass_stop_reason", ""), "total_s": run["wall_time_s"],
            "load": [load0, os.getloadavg()[0]], "checks": run.get("convergence_checks", 0),
            "modes": [(m["frequency_hz"], m.get("q_solver", m["q"])) for m in summary["modes"]],
            "participation": [m.get("participation", {}) for m in summary["modes"]]}


def _compare_modes(a, b):
    """Largest relative change of f and of Q, pairing each mode of ``b`` with the nearest of ``a``."""
    if not a or not b:
        return float("nan"), float("nan"), []
    fa = np.array([m[0] for m in a])
    pairs = [(int(np.argmin(np.abs(fa - f))), k) for k, (f, _q) in enumerate(b)]
    df = max(abs(a[i][0] - b[k][0]) / b[k][0] for i, k in pairs)
    dq = max(abs(a[i][1] - b[k][1]) / abs(b[k][1]) for i, k in pairs)
    return df, dq, pairs


def _compare_fields(out_a, out_b, pairs, part_a, part_b):
    fa, fb = read_fieldset(out_a / FIELDS_NAME), read_fieldset(out_b / FIELDS_NAME)
    vol = fb.node_volumes()
    corr, share = [], 0.0
    for i, k in pairs:
        ma, mb = fa.modes[i], fb.modes[k]
        corr.append(field_correlation(ma.e, ma.h, mb.e, mb.h, fb.eps_r, vol))
        for part, v in part_b[k].items():
            share = max(share, abs(part_a[i].get(part, 0.0) - v))
    return min(corr) if corr else float("nan"), share


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("cases", nargs="*", help="case files (default: the bundled cases)")
    ap.add_argument("--out", default="bench_convergence_out", help="folder for the runs' results")
    ap.add_argument("--no-fields", action="store_true", help="skip the field pass")
    ap.add_argument("--json", help="also write the figures to this file")
    ap.add_argument("--reuse", action="store_true",
                    help="read the results already in OUT/<case>_full and OUT/<case>_converged "
                         "instead of running again (e.g. a full-length run made by another checkout)")
    a = ap.parse_args(argv)
    cases = [Path(c) for c in a.cases] or [ROOT / "cases" / c / "case.toml" for c in CASES]
    out = Path(a.out)
    rows = {}
    for case in cases:
        name = case.parent.name if case.stem == "case" else case.stem
        full = _run(case, out / f"{name}_full", False, not a.no_fields, a.reuse)
        conv = _run(case, out / f"{name}_converged", True, not a.no_fields, a.reuse)
        df, dq, pairs = _compare_modes(full["modes"], conv["modes"])
        row = {"full": full, "converged": conv, "df": df, "dq": dq,
               "same_count": len(full["modes"]) == len(conv["modes"])}
        if pairs and (out / f"{name}_full" / FIELDS_NAME).is_file() \
                and (out / f"{name}_converged" / FIELDS_NAME).is_file():
            row["corr_min"], row["share_max"] = _compare_fields(
                out / f"{name}_converged", out / f"{name}_full", [(k, i) for i, k in pairs],
                conv["participation"], full["participation"])
        rows[name] = row
        _print_row(name, row)
    if a.json:
        Path(a.json).write_text(json.dumps(rows, indent=1, default=float))
    return 0


def _print_row(name, r):
    f, c = r["full"], r["converged"]
    print(f"== {name}: load {f['load'][0]:.1f}-{c['load'][1]:.1f}")
    print(f"  first pass  full {f['steps']:7d} steps {f['first_pass_s']:7.1f} s ({f['stop']})")
    print(f"              conv {c['steps']:7d} steps {c['first_pass_s']:7.1f} s ({c['stop']}; {c['checks']} checks)")
    print(f"  field pass  full {f['field_steps']:7d} steps {f['field_s']:7.1f} s ({f['field_stop']})")
    print(f"              conv {c['field_steps']:7d} steps {c['field_s']:7.1f} s ({c['field_stop']})")
    print(f"  end to end  full {f['total_s']:7.1f} s, conv {c['total_s']:7.1f} s")
    print(f"  modes {len(f['modes'])} full / {len(c['modes'])} conv; max |df|/f {r['df']:.2e}, "
          f"max |dQ|/Q {r['dq']:.2e}")
    if "corr_min" in r:
        print(f"  fields: smallest correlation {r['corr_min']:.6f}, largest share change {r['share_max']:.4f}")
    sys.stdout.flush()


if __name__ == "__main__":
    sys.exit(main())
