"""Solver throughput vs. memory bandwidth, as ``ringprint bench`` reports it.

Usage: python benchmarks/bench_solver.py [--size N] [--steps S] [--json]
Target (issue 2): ratio >= 0.8 at N = 160 on 2 cores.
"""

from __future__ import annotations

import argparse
import sys

from ringprint.analysis import cmd_bench

if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=cmd_bench.__doc__)
    cmd_bench.add_arguments(parser)
    sys.exit(cmd_bench.run(parser.parse_args()))
