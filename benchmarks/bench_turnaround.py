"""Turnaround of one case end to end (meshing, ring-down, inversion, fields, report),
two commits side by side on this machine, each from its own checkout.

Usage:
    python benchmarks/bench_turnaround.py [--base REV] [--new REV] [--case PATH]
                                          [--rounds N] [--keep DIR] [--no-fields]

Each revision is checked out with ``git worktree add --detach`` into a scratch folder
(nothing is installed: both run with this interpreter, whose environment must hold
ringprint's dependencies, and ``PYTHONPATH`` pointing at the checkout). Before timing,
each checkout runs the bundled tag demo once, so that numba has compiled and cached its
kernels there (compile time is not turnaround). Then the case runs ``--rounds`` times
per checkout, the two alternating (base, new, base, new, ...), so a change in the
machine's load falls on both; the best wall-clock time of each is compared.

The mode lists are compared too: every mode of one run matched to the nearest of the
other (relative frequency difference within 1e-4 and Q within 1 % count as the same);
unmatched modes are listed. Defaults: base = the commit main's first parent had when
this script was written (the landed main before the speed work, 8ce2181), new = HEAD,
case = benchmarks/handset/case.toml (an invented handset-size case: about 2.2 M cells,
0.6-6 GHz, q_max 200).
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
DEFAULT_BASE = "8ce2181"
DEFAULT_CASE = REPO / "benchmarks" / "handset" / "case.toml"
F_TOL, Q_TOL = 1e-4, 0.01


def checkout(rev: str, where: Path) -> Path:
    path = where / rev.replace("/", "_")
    subprocess.run(["git", "-C", str(REPO), "worktree", "add", "--detach", "--force", str(path), rev],
                   check=True, capture_output=True)
    return path


def remove_checkout(path: Path) -> None:
    subprocess.run(["git", "-C", str(REPO), "worktree", "remove", "--force", str(path)], check=False,
                   capture_output=True)


def run_case(tree: Path, case: Path, out: Path, fields: bool) -> float:
    """Wall-clock seconds of ``ringprint run`` of ``case`` from the checkout ``tree``."""
    env = dict(os.environ, PYTHONPATH=str(tree), MPLBACKEND="Agg")
    cmd = [sys.executable, "-m", "ringprint.analysis.cli", "run", str(case), "--out", str(out)]
    if not fields:
        cmd.append("--no-fields")
    t = time.perf_counter()
    done = subprocess.run(cmd, cwd=tree, env=env, capture_output=True, text=True)
    seconds = time.perf_counter() - t
    if done.returncode != 0:
        raise SystemExit(f"{tree.name}: ringprint run {case} failed (exit {done.returncode}): "
                         f"{done.stderr.strip().splitlines()[-1:] or done.stdout[-200:]}")
    return seconds


def modes_of(out: Path) -> list[tuple[float, float]]:
    data = json.loads((out / "modes.json").read_text())
    return [(m["frequency_hz"], m.get("q_solver", m["q"])) for m in data["modes"]], data.get("run", {})


def compare(base, new) -> tuple[list, list, list]:
    """Pairs (f_base, q_base, f_new, q_new, same) and the modes of either side left over."""
    pairs, left = [], list(new)
    for f, q in base:
        if not left:
            break
        k = min(range(len(left)), key=lambda i: abs(left[i][0] - f))
        fn, qn = left[k]
        if abs(fn - f) / f <= 10 * F_TOL:        # the same mode, though maybe not within tolerance
            same = abs(fn - f) / f <= F_TOL and abs(qn - q) / q <= Q_TOL
            pairs.append((f, q, fn, qn, same))
            left.pop(k)
    matched = {p[0] for p in pairs}
    return pairs, [m for m in base if m[0] not in matched], left


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--base", default=DEFAULT_BASE, help="the older revision (default %(default)s)")
    ap.add_argument("--new", default="HEAD", help="the newer revision (default %(default)s)")
    ap.add_argument("--case", type=Path, default=DEFAULT_CASE)
    ap.add_argument("--rounds", type=int, default=1, help="timed runs per revision (default 1)")
    ap.add_argument("--keep", type=Path, default=None, help="keep the checkouts and results here")
    ap.add_argument("--no-fields", action="store_true", help="time the first pass only")
    args = ap.parse_args(argv)
    case = args.case.resolve()
    scratch = Path(args.keep or tempfile.mkdtemp(prefix="ringprint-turnaround-"))
    scratch.mkdir(parents=True, exist_ok=True)
    trees = {"base": checkout(args.base, scratch), "new": checkout(args.new, scratch)}
    try:
        for name, tree in trees.items():
            print(f"{name}: {args.base if name == 'base' else args.new} in {tree}; warming up on cases/tag",
                  flush=True)
            run_case(tree, tree / "cases" / "tag" / "case.toml", scratch / f"warm_{name}", fields=True)
        best = {"base": float("inf"), "new": float("inf")}
        for r in range(args.rounds):
            for name, tree in trees.items():
                out = scratch / f"{name}_{r}"
                s = run_case(tree, case, out, fields=not args.no_fields)
                best[name] = min(best[name], s)
                modes, run = modes_of(out)
                print(f"round {r + 1}, {name}: {s:8.1f} s, {run.get('steps')} steps, stopped on "
                      f"{run.get('stop_reason')}, {len(modes)} modes", flush=True)
        base_modes, _ = modes_of(scratch / "base_0")
        new_modes, _ = modes_of(scratch / "new_0")
        pairs, only_base, only_new = compare(base_modes, new_modes)
        print(f"\ncase {case}")
        print(f"best wall-clock: base {best['base']:.1f} s, new {best['new']:.1f} s, "
              f"speed-up {best['base'] / best['new']:.2f} x")
        print(f"{'f base (GHz)':>13} {'Q base':>8} {'f new (GHz)':>13} {'Q new':>8} {'df/f':>9} {'dQ/Q':>7}")
        for f, q, fn, qn, same in pairs:
            print(f"{f / 1e9:13.6f} {q:8.2f} {fn / 1e9:13.6f} {qn:8.2f} {(fn - f) / f:9.2e} "
                  f"{(qn - q) / q:7.2%}{'' if same else '  differs'}")
        for side, rest in (("base", only_base), ("new", only_new)):
            for f, q in rest:
                print(f"only in {side}: {f / 1e9:.6f} GHz, Q {q:.2f}")
        same = all(p[4] for p in pairs) and not only_base and not only_new
        print("mode lists: " + ("the same" if same else "differ (see above)"))
        return 0
    finally:
        if args.keep is None:
            for tree in trees.values():
                remove_checkout(tree)


if __name__ == "__main__":
    sys.exit(main())
