"""The ``linestep`` command (also ``python -m linestep``).

Controller and direction *names* are mapped to classes here and only here; the
library itself composes built objects.
"""

from __future__ import annotations

import argparse
import html
import os
import sys
import time
from collections.abc import Callable, Sequence
from functools import partial
from pathlib import Path
from typing import Any, TextIO

from linestep import directions, stopping
from linestep.rules.barzilai_borwein import BarzilaiBorwein
from linestep.rules.fallback import Fallback
from linestep.rules.fixed import Fixed
from linestep.rules.polyak import Polyak
from linestep.searches.armijo import Armijo
from linestep.searches.goldstein import Goldstein
from linestep.searches.hager_zhang import HagerZhang
from linestep.searches.more_thuente import MoreThuente
from linestep.searches.nonmonotone import NonmonotoneArmijo
from linestep.searches.wolfe import Wolfe

EXAMPLES = """examples:
  linestep demo                 compare step controllers on an invented fit
  linestep bench                short default study; writes linestep-results/report.html
  linestep bench mgh --controllers armijo,wolfe,bb --directions steepest,lbfgs
  linestep bench --objective my_model:make_problem --controllers armijo,fixed:0.01
  linestep bench quadratics --starts standard,perturbed:0.1 --seeds 5 --workers 2
  linestep bench mgh --scheduler tcp://10.0.0.5:8786      (a Dask cluster)
  linestep report linestep-results --html --csv --json
  linestep advise my_model:make_problem --loop steepest   recommend a controller
"""

BENCH_DESCRIPTION = """\
Run a benchmark study: every problem × controller × direction × start, with
linestep's descent loop. Each finished run is saved at once in OUT/results.sqlite;
running the same command again resumes, skipping finished runs. At the end a
ranking table is printed and OUT/report.html is written (profiles and
convergence plots need matplotlib).
"""

BENCH_EPILOG = """\
controllers (--controllers, comma-separated):
  armijo, goldstein, wolfe, weak-wolfe, more-thuente, hager-zhang, nonmonotone,
  nonmonotone-average, bb, bb-long, bb-short, polyak (Polyak with each problem's
  known f*; problems without one are skipped), polyak-adaptive,
  fixed:SIZE (e.g. fixed:0.01), fallback:SIZE (the fixed step, backtracking
  with Armijo when f rises).
  Default: armijo, goldstein, wolfe, more-thuente, hager-zhang, nonmonotone, bb,
  polyak.
directions (--directions): steepest, lbfgs, lbfgs:MEMORY, cg (Hager-Zhang beta),
  cg-pr (Polak-Ribiere+). Default: steepest,lbfgs. bb and polyak are defined for
  the steepest-descent direction only and are paired with it alone.
starts (--starts): standard, x10, x100 (Moré-Garbow-Hillstrom's scaled starts),
  perturbed:NOISE (seeded; one run per seed), drawn (the objective's own start
  function; one run per seed).

your objective (--objective module:function or path/to/file.py:function): the
  function takes no arguments and returns a dict with 'value' and 'gradient' (or
  'value_and_gradient') and 'start' (plus optional 'name', 'optimal_value'), a
  linestep.bench.Problem, or a list of those. The current folder is searched
  first. See docs/bench/your_objective.md.
"""



def _polyak_at_optimum() -> Any:
    from linestep.bench.harness import polyak_at_optimum  # the harness loads on demand

    return polyak_at_optimum()


# name -> factory: the CLI's vocabulary of controllers.
CONTROLLERS: dict[str, Callable[[], Any]] = {
    "armijo": Armijo,
    "goldstein": Goldstein,
    "wolfe": Wolfe,
    "weak-wolfe": partial(Wolfe, strong=False),
    "more-thuente": MoreThuente,
    "hager-zhang": HagerZhang,
    "nonmonotone": NonmonotoneArmijo,
    "nonmonotone-average": partial(NonmonotoneArmijo, reference="average"),
    "bb": BarzilaiBorwein,
    "bb-long": partial(BarzilaiBorwein, variant="long"),
    "bb-short": partial(BarzilaiBorwein, variant="short"),
    "polyak": _polyak_at_optimum,  # Polyak with each problem's known f*
    "polyak-adaptive": Polyak,
}
# Names that take a step size after a colon: the fixed step, or it with Armijo as fallback.
SIZED_CONTROLLERS: dict[str, Callable[[float], Any]] = {
    "fixed": Fixed,
    "fallback": lambda size: Fallback(Fixed(size), Armijo()),
}
DEFAULT_CONTROLLERS = ("armijo", "goldstein", "wolfe", "more-thuente", "hager-zhang",
                       "nonmonotone", "bb", "polyak")
DIRECTIONS: dict[str, Callable[[], Any]] = {
    "steepest": directions.SteepestDescent,
    "lbfgs": directions.LBFGS,
    "cg": directions.NonlinearCG,
    "cg-pr": partial(directions.NonlinearCG, beta="pr+"),
}
DEFAULT_DIRECTIONS = "steepest,lbfgs"
DEFAULT_OUT = "linestep-results"
# The command line's iteration budget: the default study must stay short.
DEFAULT_MAX_ITERATIONS = 2000
DEFAULT_GRADIENT_TOL = stopping.DEFAULT_GRADIENT_ATOL


class UsageError(Exception):
    """A bad command-line value; printed without a traceback, exit status 2."""


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
    _add_bench(commands)
    _add_report(commands)
    from linestep.advice._command import add_parser as add_advise

    add_advise(commands)
    return parser


def _add_bench(commands: Any) -> None:
    bench = commands.add_parser(
        "bench", help="run a benchmark study and write a report",
        description=BENCH_DESCRIPTION, epilog=BENCH_EPILOG + "\n" + EXAMPLES,
        formatter_class=argparse.RawDescriptionHelpFormatter)
    bench.add_argument("suite", nargs="?", metavar="SUITE",
                       help="built-in problems: default (a short mix; used when neither "
                            "SUITE nor --objective is given), mgh, quadratics, logistic")
    bench.add_argument("--controllers", metavar="NAME[,NAME]",
                       help="controllers to compare (see below)")
    bench.add_argument("--directions", metavar="NAME[,NAME]", default=DEFAULT_DIRECTIONS,
                       help=f"search directions (default: {DEFAULT_DIRECTIONS})")
    bench.add_argument("--objective", metavar="MODULE:FUNCTION", action="append",
                       help="your own objective (repeatable)")
    bench.add_argument("--starts", metavar="NAME[,NAME]", default="standard",
                       help="starting points (default: standard)")
    bench.add_argument("--seeds", metavar="N", type=_positive_int, default=1,
                       help="seeds 0..N-1 for random starts (default: 1)")
    bench.add_argument("--workers", metavar="N", type=_positive_int, default=None,
                       help="local worker processes (default: all CPUs; 1 runs in this "
                            "process)")
    bench.add_argument("--scheduler", metavar="ADDRESS",
                       help="run on the Dask cluster at ADDRESS (needs linestep[dask])")
    bench.add_argument("--out", metavar="DIR", default=DEFAULT_OUT,
                       help=f"folder for results.sqlite and report.html (default: "
                            f"{DEFAULT_OUT})")
    bench.add_argument("--max-iterations", metavar="N", type=_positive_int,
                       default=DEFAULT_MAX_ITERATIONS,
                       help=f"iteration budget per run (default: {DEFAULT_MAX_ITERATIONS})")
    bench.add_argument("--max-evaluations", metavar="N", type=_positive_int, default=None,
                       help="value + gradient evaluation budget per run (default: none)")
    bench.add_argument("--gradient-tol", metavar="X", type=_positive_float,
                       default=DEFAULT_GRADIENT_TOL,
                       help=f"stop when max|∇f| <= X (default: {DEFAULT_GRADIENT_TOL:g})")
    bench.add_argument("--no-report", action="store_true", help="skip report.html")
    bench.add_argument("--quiet", action="store_true",
                       help="no progress bar and no table; print only the report's path")


def _add_report(commands: Any) -> None:
    report = commands.add_parser(
        "report", help="print the ranking of a finished study and export it",
        description="Print the ranking table of the results in DIR and write the files "
                    "asked for (into DIR).",
        epilog="figures are defined in docs/bench/figures.md\n\n" + EXAMPLES,
        formatter_class=argparse.RawDescriptionHelpFormatter)
    report.add_argument("folder", metavar="DIR", help="folder holding results.sqlite")
    report.add_argument("--html", action="store_true", help="write DIR/report.html")
    report.add_argument("--csv", action="store_true", help="write DIR/results.csv")
    report.add_argument("--json", action="store_true",
                        help="write DIR/results.json (with histories)")
    report.add_argument("--figures", choices=("png", "svg"),
                        help="write each figure to DIR/figures/")


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {text!r}")
    return value


def _positive_float(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive number, got {text!r}") from None
    if not value > 0:
        raise argparse.ArgumentTypeError(f"expected a positive number, got {text!r}")
    return value


# --- names to objects ---------------------------------------------------------------------


def available_controllers() -> list[str]:
    """Every controller name the command line accepts."""
    return [*CONTROLLERS, *(f"{name}:SIZE" for name in SIZED_CONTROLLERS)]


def _split(text: str) -> list[str]:
    return [part.strip() for part in text.split(",") if part.strip()]


def build_controller(name: str) -> Any:
    """The controller (or per-problem entry) for a command-line name."""
    base, _, argument = name.partition(":")
    if base in SIZED_CONTROLLERS:
        try:
            size = float(argument)
        except ValueError:
            raise UsageError(
                f"{name!r}: give the step size after the colon, e.g. {base}:0.01."
            ) from None
        return SIZED_CONTROLLERS[base](size)
    if name not in CONTROLLERS:
        raise UsageError(
            f"Unknown controller {name!r}. Valid names: {', '.join(available_controllers())}."
        )
    return CONTROLLERS[name]()


def build_direction(name: str) -> Any:
    """The direction object for a command-line name."""
    base, _, argument = name.partition(":")
    if base == "lbfgs" and argument:
        try:
            return directions.LBFGS(memory=int(argument))
        except ValueError as exc:
            raise UsageError(f"{name!r}: {exc}") from None
    if name not in DIRECTIONS:
        raise UsageError(
            f"Unknown direction {name!r}. Valid names: {', '.join(DIRECTIONS)}, lbfgs:MEMORY."
        )
    return DIRECTIONS[name]()


def build_start(name: str) -> Any:
    """The `Start` for a command-line name."""
    from linestep.bench.harness import Start

    base, _, argument = name.partition(":")
    try:
        if name == "standard":
            return Start.standard()
        if name == "drawn":
            return Start.drawn()
        if base.startswith("x") and not argument:
            return Start.scaled(float(base[1:]))
        if base == "perturbed":
            return Start.perturbed(float(argument or "0.1"))
    except ValueError:
        pass
    raise UsageError(
        f"Unknown start {name!r}. Valid: standard, x10, x100 (any xFACTOR), "
        "perturbed:NOISE, drawn."
    )


def _problems(args: argparse.Namespace, say: Callable[[str], None]) -> list[Any]:
    from linestep.bench import suites
    from linestep.bench.user import load_objective

    problems: list[Any] = []
    suite = args.suite or (None if args.objective else "default")
    if suite is not None:
        if suite not in suites.suite_names():
            raise UsageError(
                f"Unknown suite {suite!r}. Valid: {', '.join(suites.suite_names())}."
            )
        if suite == "default" and not suites.has_logistic_data():
            say("note: scikit-learn is not installed, so the default suite leaves out the "
                'logistic-regression problem (pip install "linestep[bench]").')
        try:
            problems += suites.suite(suite)
        except ImportError as exc:
            raise UsageError(str(exc)) from None
    for spec in args.objective or ():
        if os.getcwd() not in sys.path and "" not in sys.path:
            sys.path.insert(0, os.getcwd())  # like `python -m`: the current folder first
        problems += load_objective(spec)
    return problems


def build_study(args: argparse.Namespace, say: Callable[[str], None]) -> Any:
    """The `Study` described by the `bench` arguments."""
    from linestep.bench.harness import Study

    names = _split(args.controllers) if args.controllers else DEFAULT_CONTROLLERS
    if not names:
        raise UsageError("--controllers is empty.")
    controllers = [build_controller(name) for name in names]
    directions = [build_direction(name) for name in _split(args.directions)]
    if not directions:
        raise UsageError("--directions is empty.")
    starts = [build_start(name) for name in _split(args.starts)]
    stop = stopping.default(gradient_atol=args.gradient_tol, max_iterations=args.max_iterations,
                            max_evaluations=args.max_evaluations)
    return Study(problems=_problems(args, say), controllers=controllers, directions=directions,
                 starts=starts, seeds=range(args.seeds), stop=stop)


# --- progress -----------------------------------------------------------------------------


class ProgressBar:
    """A plain text progress bar on a stream (stderr): redrawn in place on a terminal,
    a line per tenth otherwise."""

    WIDTH = 30

    def __init__(self, total: int, *, stream: TextIO | None = None) -> None:
        self.total = total
        self.stream = stream if stream is not None else sys.stderr
        self.started = time.perf_counter()
        self.interactive = bool(getattr(self.stream, "isatty", lambda: False)())
        self.last_tenth = -1

    def __call__(self, done: int, total: int, record: Any = None) -> None:
        fraction = done / total if total else 1.0
        filled = int(self.WIDTH * fraction)
        elapsed = time.perf_counter() - self.started
        text = (f"[{'#' * filled}{'.' * (self.WIDTH - filled)}] {done}/{total} runs "
                f"{elapsed:6.1f} s")
        if self.interactive:
            self.stream.write("\r" + text)
            if done == total:
                self.stream.write("\n")
        elif int(10 * fraction) > self.last_tenth:
            self.last_tenth = int(10 * fraction)
            self.stream.write(text + "\n")
        self.stream.flush()


# --- commands -----------------------------------------------------------------------------


def _bench(args: argparse.Namespace) -> int:
    from linestep.bench import storage
    from linestep.bench.harness import Results, run_study
    from linestep.bench.report import format_ranking, ranking, write_html

    def say(text: str) -> None:
        if not args.quiet:
            print(text, file=sys.stderr)

    study = build_study(args, say)
    out = Path(args.out)
    tasks = study.tasks()
    results_file = out / storage.FILE_NAME
    already = 0
    if results_file.exists():
        with storage.ResultStore(results_file) as store:
            already = len(store.keys() & {task.key for task in tasks})
    where = (f"the Dask cluster at {args.scheduler}" if args.scheduler else
             f"{args.workers or os.cpu_count()} worker process(es)")
    count = len(study.problems)
    say(f"linestep bench: {len(tasks)} runs ({count} problem{'s' if count > 1 else ''}); "
        f"{already} already in {results_file}; running the rest on {where}.")
    bar = None if args.quiet or already == len(tasks) else ProgressBar(len(tasks))
    try:
        results = run_study(study, out, workers=args.workers, scheduler=args.scheduler,
                            progress=bar)
    except KeyboardInterrupt:
        print(f"\nInterrupted. Finished runs are saved in {results_file}; run the same "
              "command again to resume.", file=sys.stderr)
        return 130
    if not args.quiet:
        print(format_ranking(ranking(results)))
    if args.no_report:
        say(f"Results: {results_file}")
        return 0
    all_results = Results.load(results_file)
    if len(all_results) > len(results):
        say(f"note: {results_file} also holds {len(all_results) - len(results)} runs of other "
            "studies; the report covers them all.")
    try:
        report = write_html(all_results, out / "report.html", source=str(results_file))
    except ImportError:
        say("note: matplotlib is not installed; the report has tables only "
            '(pip install "linestep[bench]").')
        report = _tables_only_report(all_results, out)
    print(f"Report: {report}")
    return 0


def _tables_only_report(results: Any, out: Path) -> Path:
    from linestep.bench.report import format_ranking, ranking

    path = out / "report.html"
    path.write_text("<!DOCTYPE html><html><head><meta charset='utf-8'><title>linestep "
                    "benchmark report</title></head><body><pre>"
                    + html.escape(format_ranking(ranking(results)))
                    + "</pre></body></html>", encoding="utf-8")
    return path


def _report(args: argparse.Namespace) -> int:
    from linestep.bench.harness import Results
    from linestep.bench.report import format_ranking, ranking, write_report

    folder = Path(args.folder)
    results = Results.load(folder)
    print(format_ranking(ranking(results)))
    if args.html or args.csv or args.json or args.figures:
        written = write_report(results, folder if folder.is_dir() else folder.parent,
                               html=args.html, csv=args.csv, json=args.json,
                               figures=args.figures)
        for kind, path in written.items():
            print(f"{kind}: {path}")
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        if args.command == "demo":
            from linestep._demo import run_demo

            run_demo()
            return 0
        if args.command in ("bench", "report"):
            return _run_guarded(args)
        if args.command == "advise":
            from linestep.advice._command import run as run_advise

            return run_advise(args)
    except BrokenPipeError:  # output piped into `head` and closed early
        sys.stderr.close()
        return 0
    return 2  # pragma: no cover - argparse rejects unknown commands


def _run_guarded(args: argparse.Namespace) -> int:
    from linestep.bench.storage import ResultsFileError
    from linestep.bench.user import ObjectiveSpecError

    try:
        return _bench(args) if args.command == "bench" else _report(args)
    except (UsageError, ObjectiveSpecError, ResultsFileError, FileNotFoundError,
            ValueError, TypeError, ImportError) as exc:
        print(f"linestep {args.command}: error: {exc}", file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
