"""Measure solver throughput against this machine's memory bandwidth.

Runs the full Yee update (CPML on all faces, a dielectric block, a PEC block, a
loop source and a few pickups) on an N^3 grid and compares cell-steps per second
with the roofline ``bandwidth / 48 bytes`` measured in the same process.
"""

from __future__ import annotations

import json

from ringprint.errors import RingprintError


def add_arguments(parser) -> None:
    parser.add_argument("--size", type=int, default=160, metavar="N",
                        help="cells along each axis (default 160)")
    parser.add_argument("--steps", type=int, default=100, metavar="S",
                        help="time steps to time (default 100)")
    parser.add_argument("--json", action="store_true", help="print one JSON object")


def run(args) -> int:
    if args.size < 32:
        raise RingprintError(f"--size {args.size} is too small: the grid needs room for 10-cell "
                             "absorbing layers on each side and the parts between them; use --size 32 or more")
    if args.steps < 1:
        raise RingprintError(f"--steps {args.steps} must be >= 1")
    from ringprint.fdtd.bench import run_benchmark
    res = run_benchmark(args.size, args.steps)
    if args.json:
        print(json.dumps(res))
        return 0
    print(f"grid            {args.size}^3 = {res['cells']} cells, {res['steps']} steps")
    print(f"time            {res['seconds']:.3f} s")
    print(f"throughput      {res['mcells_per_s']:.1f} Mcells/s")
    print(f"bandwidth       {res['bandwidth_gb_s']:.2f} GB/s (parallel triad, 12 bytes/element)")
    print(f"roofline        {res['roofline_mcells_per_s']:.1f} Mcells/s (48 bytes per cell-step)")
    print(f"ratio           {res['ratio']:.2f}")
    return 0
