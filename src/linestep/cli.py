"""The ``linestep`` command (also ``python -m linestep``)."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

EXAMPLES = """examples:
  linestep demo                 compare step controllers on an invented fit
"""


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="linestep",
        description="Step-size controllers for gradient-based fitting: demo and benchmarks.",
        epilog=EXAMPLES,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")
    commands.required = True
    commands.add_parser("demo", help="show a diverging fixed rate, its fix, and a comparison")
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        if args.command == "demo":
            from linestep._demo import run_demo

            run_demo()
            return 0
    except BrokenPipeError:  # output piped into `head` and closed early
        sys.stderr.close()
        return 0
    return 2  # pragma: no cover - argparse rejects unknown commands


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
