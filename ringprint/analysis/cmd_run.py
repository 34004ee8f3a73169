"""Find every natural resonance of a case between f_min and f_max, with its Q, and judge
it against the operating bands.

Meshes the parts, rings them with a small loop probe in the FDTD solver, fits the
ring-down by filter diagonalization, runs the ring-down again to take every mode's
field (on request also on a coarser grid, for each mode's grid uncertainty), and writes
modes.json, modes.csv, spectrum.png, report.html, fields.h5,
mode_NN.vti, case.resolved.toml and run.log into the output directory (each file
appears only when complete). A long run leaves a checkpoint every few minutes;
--resume continues a killed run from it.
"""

from __future__ import annotations

import argparse

from ringprint.analysis.pipeline import run_case
from ringprint.errors import RingprintError


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("case", help="the case file (TOML)")
    parser.add_argument("--out", metavar="DIR",
                        help="results directory (default: <case name>_run beside the case file)")
    parser.add_argument("--resume", action="store_true",
                        help="continue the killed run whose checkpoint is in the results directory")
    parser.add_argument("--checkpoint-minutes", type=float, default=5.0, metavar="M",
                        help="minutes between checkpoints of a long run (default 5)")
    parser.add_argument("--quiet", action="store_true", help="no progress bar and no summary table")
    parser.add_argument("--no-fields", action="store_true",
                        help="skip the mode fields (the second pass, which part rings, touch maps, "
                             "fields.h5 and mode_NN.vti): about half the run time")
    parser.add_argument("--grid-check", nargs="?", type=int, const=2, choices=(2, 3), metavar="GRIDS",
                        help="run the case again on a grid 1.3 times coarser (GRIDS 3: also 1.3^2) "
                             "and give each mode's frequency and Q the grid uncertainty of the "
                             "Grid Convergence Index; overrides [analysis] grid_check")
    parser.add_argument("--ignore-memory-check", action="store_true",
                        help="run even when the memory estimate exceeds the memory available")


def run(args: argparse.Namespace) -> int:
    if not args.checkpoint_minutes > 0:
        raise RingprintError(f"--checkpoint-minutes {args.checkpoint_minutes:g}: give a positive number")
    run_case(args.case, out_dir=args.out, resume=args.resume,
             progress=False if args.quiet else None,
             checkpoint_every_s=60.0 * args.checkpoint_minutes,
             allow_memory=args.ignore_memory_check,
             echo=None if args.quiet else print,
             fields=False if args.no_fields else None, grid_check=args.grid_check)
    return 0
