"""Solver throughput vs. memory bandwidth and vs. the bare Yee kernel, as ``ringprint bench``
reports it.

Usage: python benchmarks/bench_solver.py [--size N] [--steps S] [--rounds R]
       [--padded-share F] [--json]

Prints the full step's rate (the whole ``Simulation.run``: sweeps, CPML, media,
conformal hook, sources, pickups, sparse energy), the bare two-sweep kernel's rate
timed interleaved with it (full, bare, padded full, bare; best of R rounds), their
ratio and the roofline ratio, for the bench case (10-cell layer) and for the same
case padded so its layer holds about F (default 0.4) of the cells.
Targets: ratio >= 0.8 at N = 160 on 2 cores (issue 2); full >= 0.9 x bare on both
rows (issue 10). Run it with NUMBA_NUM_THREADS=2 and note ``uptime`` beside the figures.
"""

from __future__ import annotations

import argparse
import os
import sys

from ringprint.analysis import cmd_bench

if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=cmd_bench.__doc__)
    cmd_bench.add_arguments(parser)
    print(f"load average {' '.join(f'{v:.2f}' for v in os.getloadavg())}", file=sys.stderr)
    sys.exit(cmd_bench.run(parser.parse_args()))
