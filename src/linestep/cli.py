"""The ``linestep`` command (also ``python -m linestep``).

Controller and direction *names* are mapped to classes here and only here; the
library itself composes built objects.
"""

from __future__ import annotations

import argparse
import contextlib
import html
import math
import os
import re
import shlex
import signal
import sys
import time
import warnings
from collections.abc import Callable, Iterator, Sequence
from functools import partial
from pathlib import Path
from typing import Any, TextIO

from linestep import __version__, directions, stopping
from linestep._validate import option_positive_float as _positive_float
from linestep._validate import option_positive_int as _positive_int
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
  with Armijo when f rises); SIZE "auto" sets the rate per problem to 1/L, with
  L the largest curvature at the problem's standard start, estimated from 31
  gradients (docs/bench/figures.md).
  Default: armijo, goldstein, wolfe, more-thuente, hager-zhang, nonmonotone, bb,
  polyak, fixed:auto, fallback:auto.
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
    from linestep.bench import polyak_at_optimum  # the harness loads on demand

    return polyak_at_optimum()


def _fixed_at_smoothness(*, fallback: bool) -> Any:
    from linestep.bench.rates import fallback_at_smoothness, fixed_at_smoothness

    return fallback_at_smoothness() if fallback else fixed_at_smoothness()


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
# Per-problem rates for the sized names ("fixed:auto"): 1/L̂ (linestep.bench.rates).
AUTO_SIZED_CONTROLLERS: dict[str, Callable[[], Any]] = {
    "fixed": partial(_fixed_at_smoothness, fallback=False),
    "fallback": partial(_fixed_at_smoothness, fallback=True),
}
# One of every family: searches, Barzilai–Borwein, Polyak, a fixed rate and its fallback.
DEFAULT_CONTROLLERS = ("armijo", "goldstein", "wolfe", "more-thuente", "hager-zhang",
                       "nonmonotone", "bb", "polyak", "fixed:auto", "fallback:auto")
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
DEFAULT_GRADIENT_ATOL = stopping.DEFAULT_GRADIENT_ATOL


class UsageError(Exception):
    """A bad command-line value; printed without a traceback, exit status 2."""


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="linestep",
        description="Step-size controllers for gradient-based fitting: demo and benchmarks.",
        epilog=EXAMPLES,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"linestep {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")
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
    bench.add_argument("--gradient-atol", metavar="X", type=_positive_float,
                       default=DEFAULT_GRADIENT_ATOL,
                       help=f"stop when max|∇f| <= X (default: {DEFAULT_GRADIENT_ATOL:g})")
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


# --- names to objects ---------------------------------------------------------------------


def available_controllers() -> list[str]:
    """Every controller name the command line accepts."""
    return [*CONTROLLERS, *(f"{name}:SIZE" for name in SIZED_CONTROLLERS),
            *(f"{name}:auto" for name in AUTO_SIZED_CONTROLLERS)]


def _split(text: str) -> list[str]:
    return [part.strip() for part in text.split(",") if part.strip()]


def build_controller(name: str) -> Any:
    """The controller (or per-problem entry) for a command-line name."""
    base, _, argument = name.partition(":")
    if base in SIZED_CONTROLLERS and argument == "auto":
        return AUTO_SIZED_CONTROLLERS[base]()
    if base in SIZED_CONTROLLERS:
        try:
            size = float(argument)
        except ValueError:
            raise UsageError(
                f"{name!r}: give the step size after the colon, e.g. {base}:0.01, or "
                f"{base}:auto for 1/L per problem."
            ) from None
        if not (math.isfinite(size) and size > 0):
            raise UsageError(f"{name!r}: the step size must be a positive number, e.g. "
                             f"{base}:0.01.")
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
        except ValueError:
            raise UsageError(f"{name!r}: the memory after the colon must be a positive "
                             "integer, e.g. lbfgs:5.") from None
    if name not in DIRECTIONS:
        raise UsageError(
            f"Unknown direction {name!r}. Valid names: {', '.join(DIRECTIONS)}, lbfgs:MEMORY."
        )
    return DIRECTIONS[name]()


def build_start(name: str) -> Any:
    """The `Start` for a command-line name."""
    from linestep.bench import Start

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
    from linestep.bench import Study

    names = _split(args.controllers) if args.controllers else DEFAULT_CONTROLLERS
    if not names:
        raise UsageError("--controllers is empty.")
    controllers = [build_controller(name) for name in names]
    directions = [build_direction(name) for name in _split(args.directions)]
    if not directions:
        raise UsageError("--directions is empty.")
    starts = [build_start(name) for name in _split(args.starts)]
    stop = stopping.default(gradient_atol=args.gradient_atol, max_iterations=args.max_iterations,
                            max_evaluations=args.max_evaluations)
    return Study(problems=_problems(args, say), controllers=controllers, directions=directions,
                 starts=starts, seeds=range(args.seeds), stop=stop)


# --- progress -----------------------------------------------------------------------------


def progress_bar(total: int, done: int, *, stream: TextIO | None = None) -> Any:
    """A tqdm progress bar over the runs (rate and ETA), or None without tqdm.

    On a terminal it redraws in place; elsewhere (a log file, CI) tqdm writes a
    plain update at most every `LOG_INTERVAL` seconds.
    """
    try:
        from tqdm import tqdm
    except ImportError:
        return None
    stream = stream if stream is not None else sys.stderr
    interactive = bool(getattr(stream, "isatty", lambda: False)())
    return tqdm(total=total, initial=done, unit="run", file=stream, dynamic_ncols=True,
                mininterval=0.2 if interactive else LOG_INTERVAL, ascii=not interactive,
                leave=True, smoothing=0.1)


# Seconds between progress updates when stderr is not a terminal.
LOG_INTERVAL = 10.0


def _advance(bar: Any, done: int, total: int, record: Any = None) -> None:
    """`run_study`'s progress callback: move the bar to `done`."""
    bar.update(done - bar.n)


# Modules whose numpy RuntimeWarnings are handled where they arise (non-finite
# values become a status or a failed run): silenced in worker processes too.
HANDLED_WARNING_MODULES = ("linestep._ray", "linestep._array", "linestep.stopping")


@contextlib.contextmanager
def _quiet_workers() -> Iterator[None]:
    """Pass the warning filter to worker processes started fresh (spawn, forkserver)."""
    previous = os.environ.get("PYTHONWARNINGS")
    quiet = [f"ignore::RuntimeWarning:{module}" for module in HANDLED_WARNING_MODULES]
    os.environ["PYTHONWARNINGS"] = ",".join(filter(None, [previous, *quiet]))
    try:
        yield
    finally:
        if previous is None:
            del os.environ["PYTHONWARNINGS"]
        else:
            os.environ["PYTHONWARNINGS"] = previous


# --- wording for the command line ----------------------------------------------------------

# The library's advice names its arguments; on the command line the options are named.
_COMMAND_LINE_WORDS = (
    (re.compile(r"(iterations, the budget of \d+; )raise `n`"), r"\1raise --max-iterations"),
    (re.compile(r"(evaluations.*?the budget of \d+; )raise `n`"), r"\1raise --max-evaluations"),
    (re.compile(r"loosen the convergence tolerances"), "loosen --gradient-atol"),
)


def command_line_wording(text: str) -> str:
    """Rewrite a library message for the command line (``raise `n``` → ``raise --max-...``)."""
    for pattern, replacement in _COMMAND_LINE_WORDS:
        text = pattern.sub(replacement, text)
    return text


def _budget_note(results: Any, args: argparse.Namespace) -> str | None:
    """A hint naming the option to raise when runs stopped at their budget unsolved."""
    stopped = [r for r in results if r.kind == "budget" and not results.is_solved(r)]
    if not stopped:
        return None
    iterations = sum("iterations" in r.reason for r in stopped)
    option = ("--max-iterations", args.max_iterations) if iterations >= len(stopped) / 2 else (
        "--max-evaluations", args.max_evaluations)
    return (f"note: {len(stopped)} run(s) stopped at their budget before solving; raise "
            f"{option[0]} (now {option[1]}) to give them more.")


# --- commands -----------------------------------------------------------------------------


def _print_ranking(results: Any) -> None:
    from linestep.bench.report import (
        format_legend,
        format_ranking,
        headline,
        ranking,
        single_instance_note,
        winners,
    )

    rows = ranking(results)
    print(format_ranking(rows))
    print()
    print(format_legend())
    print()
    print(headline(rows, winners(results)))
    note = single_instance_note(results)
    if note is not None:
        print(note)


def _bench(args: argparse.Namespace) -> int:
    from linestep.bench import Results, run_study, storage
    from linestep.bench.report import MAX_CONVERGENCE_PLOTS

    def say(text: str) -> None:
        if not args.quiet:
            print(text, file=sys.stderr)

    study = build_study(args, say)
    out = Path(args.out)
    results_file = out / storage.FILE_NAME
    if out.exists() and not out.is_dir():
        raise UsageError(f"--out {args.out!r} is a file, not a folder; name a folder "
                         "(it is created if needed).")
    count = len(study.problems)
    bar = None

    def announce(total: int, already: int) -> None:
        nonlocal bar
        runs = f"linestep bench: {total} runs ({count} problem{'s' if count > 1 else ''})"
        if already == total:
            say(f"{runs}, all already in {results_file}: nothing left to run.")
            return
        where = (f"the Dask cluster at {args.scheduler}" if args.scheduler else
                 "this process" if args.workers == 1 else
                 f"{args.workers or os.cpu_count()} worker processes")
        say(f"{runs}; {already} already in {results_file}; running {total - already} "
            f"on {where}.")
        if args.quiet:
            return
        bar = progress_bar(total, already)
        if bar is None:
            say('note: tqdm is not installed, so there is no progress bar (pip install '
                '"linestep[bench]").')

    try:
        with warnings.catch_warnings(), _quiet_workers():
            # numpy's overflow warnings inside linestep are handled (a diverging fixed
            # rate ends as a failed run with its reason); the user's own code still warns
            warnings.filterwarnings("ignore", category=RuntimeWarning, module=r"linestep\.")
            results = run_study(study, out, workers=args.workers, scheduler=args.scheduler,
                                progress=lambda *a: _advance(bar, *a) if bar is not None
                                else None, announce=announce)
    except KeyboardInterrupt:
        # The workers are already ended and every finished run is saved: further
        # Ctrl-C's must not turn this clean exit into a traceback.
        signal.signal(signal.SIGINT, signal.SIG_IGN)
        if bar is not None:
            bar.close()
        print(f"\nInterrupted. Finished runs are saved in {results_file}; run the same "
              "command again to resume.", file=sys.stderr)
        return 130
    if bar is not None:
        bar.close()
    for sentence in results.damaged:
        say(f"warning: {sentence}")
    if not args.quiet:
        _print_ranking(results)
        note = _budget_note(results, args)
        if note is not None:
            print(note)
    if args.no_report:
        say(f"Results: {results_file}")
        return 0
    all_results = Results.load(results_file)
    with storage.ResultStore.in_folder(out, read_only=True) as store:
        superseded = store.superseded()
    if superseded:
        say(f"note: {results_file} keeps {superseded} older run(s) of problems that have "
            "changed since; they are marked superseded and left out of the report.")
    if len(all_results) > len(results):
        say(f"note: {results_file} also holds {len(all_results) - len(results)} runs of other "
            "studies; the report covers them all.")
    plots = min(len(all_results.instances()), MAX_CONVERGENCE_PLOTS)
    say(f"Writing the report ({plots} convergence plot{'s' if plots != 1 else ''})…")
    started = time.perf_counter()
    try:
        report = _write_report(all_results, out, results_file, say)
    except Exception as exc:  # noqa: BLE001 - the runs are saved whatever went wrong here
        print(f"linestep bench: error: the report could not be written to "
              f"{out / 'report.html'} ({type(exc).__name__}: {exc}). The "
              f"{len(all_results)} runs are saved in {results_file}; write the report "
              f"later with `linestep report {shlex.quote(str(out))} --html`.", file=sys.stderr)
        return 2
    say(f"Report written in {time.perf_counter() - started:.1f} s.")
    print(f"Report: {report}")
    return 0


def _write_report(results: Any, out: Path, results_file: Path,
                  say: Callable[[str], None]) -> Path:
    from linestep.bench.report import write_html

    try:
        return write_html(results, out / "report.html", source=str(results_file),
                          reason_wording=command_line_wording)
    except ImportError:
        say("note: matplotlib is not installed; the report has tables only "
            '(pip install "linestep[bench]").')
        return _tables_only_report(results, out)


def _tables_only_report(results: Any, out: Path) -> Path:
    from linestep.bench.report import format_legend, format_ranking, ranking

    path = out / "report.html"
    path.write_text("<!DOCTYPE html><html><head><meta charset='utf-8'><title>linestep "
                    "benchmark report</title></head><body><pre>"
                    + html.escape(format_ranking(ranking(results)) + "\n\n" + format_legend())
                    + "</pre></body></html>", encoding="utf-8")
    return path


def _report(args: argparse.Namespace) -> int:
    from linestep.bench import Results, storage
    from linestep.bench.report import write_report

    folder = Path(args.folder)
    results_file = folder / storage.FILE_NAME if folder.is_dir() or not folder.suffix \
        else folder
    if not results_file.exists():
        raise UsageError(
            f"No results file in {args.folder!r} (no {storage.FILE_NAME} there). Run "
            f"`linestep bench --out {shlex.quote(args.folder)}` first, or name the folder "
            f"that holds {storage.FILE_NAME}."
        )
    results = Results.load(results_file)
    for sentence in results.damaged:
        print(f"warning: {sentence}", file=sys.stderr)
    _print_ranking(results)
    if args.html or args.csv or args.json or args.figures:
        target = results_file.parent
        if args.html or args.figures:
            print("Writing the report…", file=sys.stderr)
        try:
            written = write_report(results, target, html=args.html, csv=args.csv,
                                   json=args.json, figures=args.figures,
                                   reason_wording=command_line_wording)
        except OSError as exc:
            raise UsageError(f"could not write the report into {str(target)!r} ({exc}); "
                             "the stored runs are unchanged.") from None
        for kind, path in written.items():
            print(f"{kind}: {path}")
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        if args.command is None:  # a bare `linestep`: the help, not an error
            parser.print_help()
            return 0
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
        print(f"linestep {args.command}: error: {command_line_wording(str(exc))}",
              file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
