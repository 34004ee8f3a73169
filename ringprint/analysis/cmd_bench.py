"""Measure solver throughput against this machine's memory bandwidth.

Runs the full Yee update (CPML on all faces, a dielectric block, a PEC block, a
loop source and a few pickups) on an N^3 grid and compares cell-steps per second
with the roofline ``bandwidth / 48 bytes`` measured in the same process, and with
a bare two-sweep Yee kernel (vacuum, no absorbing layer, no energy sums) timed
in the same minute on a grid of the same size. A second row times the same case
padded with an absorbing layer that holds about ``--padded-share`` of the cells.
"""

from __future__ import annotations

import json

from ringprint.errors import RingprintError


def add_arguments(parser) -> None:
    parser.add_argument("--size", type=int, default=160, metavar="N",
                        help="cells along each axis (default 160)")
    parser.add_argument("--steps", type=int, default=100, metavar="S",
                        help="time steps per timed run (default 100)")
    parser.add_argument("--rounds", type=int, default=3, metavar="R",
                        help="interleaved rounds (full, bare, padded, bare); best is kept (default 3)")
    parser.add_argument("--padded-share", type=float, default=0.4, metavar="F",
                        help="share of the cells in the absorbing layer of the second row (default 0.4)")
    parser.add_argument("--json", action="store_true", help="print one JSON object")


def run(args) -> int:
    if args.size < 32:
        raise RingprintError(f"--size {args.size} is too small: the grid needs room for 10-cell "
                             "absorbing layers on each side and the parts between them; use --size 32 or more")
    if args.steps < 1:
        raise RingprintError(f"--steps {args.steps} must be >= 1")
    if args.rounds < 1:
        raise RingprintError(f"--rounds {args.rounds} must be >= 1")
    if not 0.0 < args.padded_share < 0.8:
        raise RingprintError(f"--padded-share {args.padded_share:g} must lie between 0 and 0.8 "
                             "(the parts need the middle of the grid)")
    from ringprint.fdtd.bench import run_benchmark
    res = run_benchmark(args.size, args.steps, rounds=args.rounds, padded_share=args.padded_share)
    if args.json:
        print(json.dumps(res))
        return 0
    pad = res["padded"]
    print(f"grid            {args.size}^3 = {res['cells']} cells, {res['steps']} steps, "
          f"best of {res['rounds']} interleaved rounds")
    print(f"time            {res['seconds']:.3f} s")
    print(f"throughput      {res['mcells_per_s']:.1f} Mcells/s")
    print(f"bandwidth       {res['bandwidth_gb_s']:.2f} GB/s (parallel triad, 12 bytes/element)")
    print(f"roofline        {res['roofline_mcells_per_s']:.1f} Mcells/s (48 bytes per cell-step)")
    print(f"ratio           {res['ratio']:.2f}")
    print(f"bare kernel     {res['bare_mcells_per_s']:.1f} Mcells/s (two sweeps, vacuum, no layer)")
    print()
    print(f"{'case':<22}{'layer':>7}{'share':>8}{'full Mcells/s':>15}{'bare Mcells/s':>15}"
          f"{'full/bare':>11}{'full/roofline':>15}")
    for name, row in (("bench", {**res, "cpml_cells": res["cpml_cells"]}), ("padded", pad)):
        print(f"{name:<22}{row['cpml_cells']:>7d}{row['cpml_share']:>8.2f}{row['mcells_per_s']:>15.1f}"
              f"{res['bare_mcells_per_s']:>15.1f}{row['full_over_bare']:>11.2f}{row['ratio']:>15.2f}")
    return 0
