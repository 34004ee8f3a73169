"""Cells and run time of one case with and without mirror planes ([grid] symmetry).

Runs the case as written (its own ``[grid] symmetry`` removed), then once per
symmetry table given, each into a fresh folder beside the case (mode fields off
unless ``--fields``), and prints the whole and solved cells, the steps and stepping
time of every wall combination, the wall time, and each mode of the plain run with
its nearest mirrored mode (frequency and Q differences). Note ``uptime`` beside the
figures: the machine is shared.

    python benchmarks/bench_symmetry.py CASE.toml '{ y = "both" }' ['{ y = "pec" }' ...]
        [--fields] [--json]
"""

from __future__ import annotations

import argparse
import json
import os
import re
import shutil
import tempfile
import time
from pathlib import Path

from ringprint.analysis.pipeline import run_case


def _variant(case: Path, folder: Path, table: str | None) -> Path:
    """A copy of the case file in ``folder`` (its mesh paths made absolute) with the
    given symmetry table (None: without one)."""
    text = case.read_text()
    text = re.sub(r"(?m)^symmetry\s*=.*$\n?", "", text)
    text = re.sub(r'(?m)^(file\s*=\s*)"([^"]+)"', lambda m: f'{m.group(1)}"{(case.parent / m.group(2)).resolve()}"',
                  text)
    if table is not None:
        if not re.search(r"(?m)^\[grid\]", text):
            text += "\n[grid]\n"
        text = re.sub(r"(?m)^\[grid\]$", f"[grid]\nsymmetry = {table}", text, count=1)
    path = folder / "case.toml"
    path.write_text(text)
    return path


def _run(case: Path, table: str | None, fields: bool) -> dict:
    folder = Path(tempfile.mkdtemp(prefix="bench_symmetry_"))
    try:
        path = _variant(case, folder, table)
        t0 = time.perf_counter()
        s = run_case(path, folder / "out", progress=False, echo=None, fields=fields)
        wall = time.perf_counter() - t0
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    block = s.get("symmetry")
    runs = block["runs"] if block else [{"symmetry": {}, "steps": s["run"]["steps"],
                                          "stepping_time_s": s["run"]["stepping_time_s"]}]
    return {"symmetry": table, "cells_whole": s["grid"]["cells"],
            "cells_solved": block["cells_solved"] if block else s["grid"]["cells"],
            "runs": [{"walls": r["symmetry"], "steps": r["steps"], "stepping_s": r["stepping_time_s"]}
                     for r in runs],
            "wall_s": wall, "load": os.getloadavg()[0],
            "modes": [(m["frequency_hz"], m["q"], m.get("symmetry_class", "")) for m in s["modes"]]}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("case", type=Path)
    ap.add_argument("tables", nargs="+", help='symmetry tables, e.g. \'{ y = "both" }\'')
    ap.add_argument("--fields", action="store_true", help="compute the mode fields too")
    ap.add_argument("--json", action="store_true")
    args = ap.parse_args()
    results = [_run(args.case.resolve(), t, args.fields) for t in [None] + args.tables]
    if args.json:
        print(json.dumps(results, indent=2))
        return
    plain = results[0]
    for r in results:
        steps = ", ".join(f"{'/'.join(f'{a}:{k}' for a, k in w['walls'].items()) or 'whole'} "
                          f"{w['steps']} steps {w['stepping_s']:.1f} s" for w in r["runs"])
        print(f"{r['symmetry'] or 'no mirrors'}: {r['cells_solved']:,} of {r['cells_whole']:,} cells; "
              f"{steps}; wall {r['wall_s']:.1f} s (load {r['load']:.1f})")
        if r is plain:
            continue
        for f, q, _label in plain["modes"]:
            g, p, label = min(r["modes"], key=lambda m: abs(m[0] - f)) if r["modes"] else (float("nan"),) * 2 + ("",)
            print(f"    {f / 1e6:10.3f} MHz Q {q:8.2f} -> {g / 1e6:10.3f} MHz Q {p:8.2f} [{label}] "
                  f"df {100 * (g / f - 1):+.4f} % dQ {100 * (p / q - 1):+.2f} %")


if __name__ == "__main__":
    main()
