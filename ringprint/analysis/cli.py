"""The ``ringprint`` command line.

Each subcommand lives in its own module ``ringprint.analysis.cmd_<name>`` that
provides ``add_arguments(parser)`` and ``run(args) -> int``. Exit codes: 0 success,
1 a user error (bad input, one line on stderr), 2 a usage error (argparse) or an
internal failure. ``--debug`` shows the traceback of any error.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from ringprint import __version__
from ringprint.errors import RingprintError

# (name, one-line help). The module ringprint.analysis.cmd_<name> does the work.
COMMANDS: list[tuple[str, str]] = [
    ("bench", "measure solver throughput against this machine's memory bandwidth"),
    ("match", "pair the resonances of a measured S11 file with a finished run's modes"),
    ("mesh", "mesh a case and show the grid, memory and run time, without running it"),
    ("run", "find every resonance of a case with its Q and judge it against the bands"),
    ("show", "show one mode of a finished run in 3-D (parts, field, probe), or write a picture"),
]


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="ringprint",
        description="Natural resonances (frequency, Q) of the parts around an antenna.",
    )
    parser.add_argument("--version", action="version", version=f"ringprint {__version__}")
    parser.add_argument("--debug", action="store_true", help="show a full traceback on errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True
    for name, help_text in COMMANDS:
        module = importlib.import_module(f"ringprint.analysis.cmd_{name}")
        p = sub.add_parser(name, help=help_text, description=module.__doc__)
        p.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                       help="show a full traceback on errors")
        module.add_arguments(p)
        p.set_defaults(_module=module)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    debug = getattr(args, "debug", False)
    try:
        return int(args._module.run(args) or 0)
    except RingprintError as exc:
        if debug:
            raise
        print(f"ringprint: error: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("ringprint: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # an internal failure: say so in one line
        if debug:
            raise
        print(f"ringprint: internal error: {type(exc).__name__}: {exc} "
              "(run again with --debug for the traceback and report it)", file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
