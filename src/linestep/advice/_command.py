"""``linestep advise MODULE:FUNCTION``: the advisor on the command line.

`add_parser` adds the subcommand to the ``linestep`` parser; `run` runs it.
"""

from __future__ import annotations

import argparse
import html
import json
import os
import sys
from pathlib import Path
from typing import Any

from linestep._validate import option_positive_int as _positive_int

__all__ = ["add_parser", "run"]

DEFAULT_OUT = "linestep-advice"

DESCRIPTION = """\
Recommend a step-size controller for your objective: estimate its smoothness at
the start, run a short study of every set-up that fits your loop (from the
start and from seeded perturbed starts), and pick the set-up that solves from
the most starts, then with the fewest evaluations. Prints the line to paste
first, then the evidence and what to avoid, and writes OUT/report.html with a
Recommendation section at the top. Runs are saved in OUT/results.sqlite:
running the same command again resumes.
"""

EPILOG = """\
your objective (MODULE:FUNCTION or path/to/file.py:FUNCTION): the function takes no
  arguments and returns a dict with 'value' and 'gradient' (or 'value_and_gradient'),
  'start', and optionally 'optimal_value' (adds the Polyak step). See
  docs/choosing-a-step-size.md.

examples:
  linestep advise my_model:make_problem
  linestep advise my_model:make_problem --loop steepest --budget 20000 --starts 3
  linestep advise my_model:make_problem --json > advice.json
"""


def add_parser(commands: Any) -> argparse.ArgumentParser:
    """Add the ``advise`` subcommand to `commands` (an argparse subparsers object)."""
    from linestep.advice._advise import DEFAULT_BUDGET

    parser = commands.add_parser(
        "advise", help="recommend a step-size controller for your objective",
        description=DESCRIPTION, epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("objective", metavar="MODULE:FUNCTION", help="your objective")
    parser.add_argument("--loop", choices=("any", "steepest", "quasi_newton"), default="any",
                        help="what your loop can do: only the negative gradient (steepest), "
                             "an L-BFGS direction (quasi_newton), or anything (default)")
    parser.add_argument("--budget", metavar="N", type=_positive_int, default=None,
                        help=f"total evaluations for the study (default: {DEFAULT_BUDGET})")
    parser.add_argument("--starts", metavar="K", type=_positive_int, default=5,
                        help="the start plus K-1 perturbed starts (default: 5)")
    parser.add_argument("--seeds", metavar="S[,S]",
                        help="seeds of the perturbed starts (replaces --starts), e.g. 0,1,2")
    parser.add_argument("--out", metavar="DIR", default=DEFAULT_OUT,
                        help=f"folder for results.sqlite and report.html (default: "
                             f"{DEFAULT_OUT})")
    parser.add_argument("--workers", metavar="N", type=_positive_int, default=1,
                        help="local worker processes (default: 1, in this process)")
    parser.add_argument("--json", action="store_true",
                        help="print the advice as JSON (no progress, no report text)")
    parser.add_argument("--no-report", action="store_true", help="skip report.html")
    return parser


def _seeds(text: str | None) -> Any:
    if text is None:
        return 0
    try:
        seeds = [int(part) for part in text.split(",") if part.strip()]
    except ValueError:
        raise ValueError(f"--seeds must be comma-separated integers; got {text!r}.") from None
    if not seeds or min(seeds) < 0:
        raise ValueError(f"--seeds must be non-negative integers; got {text!r}.")
    return seeds


def run(args: argparse.Namespace) -> int:
    """Run ``linestep advise``; returns the exit status (2 for bad input)."""
    from linestep.advice._advise import advise
    from linestep.bench import ObjectiveSpecError, load_objective

    try:
        if os.getcwd() not in sys.path and "" not in sys.path:
            sys.path.insert(0, os.getcwd())  # like `python -m`: the current folder first
        problems = load_objective(args.objective)
        if len(problems) != 1:
            raise ValueError(f"{args.objective} describes {len(problems)} problems; advise "
                             "takes one.")
        out = Path(args.out)
        advice = advise(problems[0], loop=args.loop, budget=args.budget, starts=args.starts,
                        seed=_seeds(args.seeds), workers=args.workers, out=out,
                        progress=False if args.json else True)
    except (ObjectiveSpecError, ValueError, TypeError, ImportError) as exc:
        print(f"linestep advise: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"\nInterrupted. Finished runs are saved in {args.out}; run the same command "
              "again to resume.", file=sys.stderr)
        return 130
    report = None if args.no_report else write_report(advice, out)
    if args.json:
        document = advice.to_dict()
        document["report"] = None if report is None else str(report)
        print(json.dumps(document, indent=1, default=_plain))
        return 0 if advice.found else 1
    print(advice)
    if report is not None:
        print(f"Report: {report}")
    return 0 if advice.found else 1


def _plain(value: Any) -> Any:
    return None if value != value else float(value)  # NaN → null; numpy numbers → float


def recommendation_html(advice: Any) -> str:
    """The report's Recommendation section: the line to paste, the reasons, what to avoid."""
    code = (f"<pre><code>{html.escape(advice.code)}</code></pre>" if advice.found
            else "<p><b>No set-up solved the problem from any start.</b></p>")
    if advice.tentative:
        code += (f"<p>Closest (unconfirmed):</p><pre><code>{html.escape(advice.code)}"
                 "</code></pre>")
    reasons = "".join(f"<li>{html.escape(text)}</li>" for text in advice.reasons)
    avoid = "".join(f"<li>{html.escape(text)}</li>" for text in advice.avoid)
    return ("<h2>Recommendation</h2>" + code + f"<ul>{reasons}</ul>"
            + (f"<h3>Avoid</h3><ul>{avoid}</ul>" if avoid else ""))


def write_report(advice: Any, out: Path) -> Path:
    """OUT/report.html: the Recommendation section first, then the study's usual report."""
    from linestep.bench.report import write_html

    out.mkdir(parents=True, exist_ok=True)
    path = out / "report.html"
    try:
        return write_html(advice.study, path, title="linestep advice",
                          preface=recommendation_html(advice))
    except ImportError:  # no matplotlib: the recommendation alone
        path.write_text("<!DOCTYPE html><html><head><meta charset='utf-8'><title>linestep "
                        "advice</title></head><body><h1>linestep advice</h1>"
                        + recommendation_html(advice) + "</body></html>", encoding="utf-8")
        return path
