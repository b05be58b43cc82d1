"""A battery of hostile inputs and faults for the benchmark harness and its command line.

Each case builds a bad or damaged input (results files and folders, odd names,
colliding identities, concurrent writers, stale problems, interrupted and killed
processes, bad command-line values), runs the harness on it, checks what came
out, and lands in one category:

* clear error: the command or call refused, in one sentence (a few lines at most)
  naming what is wrong, exit status 2 on the command line, no traceback;
* documented status: it went on, as documented (a damaged row skipped with a
  warning, a stale run run again, a failed run recorded with its reason, ...),
  and the check of the data passed;
* generic crash: a traceback, an exception escaping, or an error that does not
  name what is wrong;
* silently wrong: it went on and the result is wrong (runs merged, stale rows
  reused, a formula left in a CSV cell, ...);
* lost/duplicated data: rows missing or stored twice, or duplicate sequence numbers.

The goal is zero in the last three. Run: ``python benchmarks/hostile_studies.py``
(about a minute; ``-v`` prints every case). The invented objectives below are
bowls and shifted bowls; no published data is involved.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import os
import signal
import sqlite3
import subprocess
import sys
import tempfile
import textwrap
import threading
import time
from collections import Counter
from collections.abc import Callable
from pathlib import Path

import numpy as np

from linestep import Armijo, stopping
from linestep.bench import Results, Start, Study, as_problems, run_study
from linestep.bench.storage import ResultStore
from linestep.cli import main
from linestep.rules.fixed import Fixed
from linestep.rules.schedule import Schedule

CLEAR, STATUS, CRASH, WRONG, LOST = ("clear error", "documented status", "generic crash",
                                     "silently wrong result", "lost/duplicated data")
CATEGORIES = (CLEAR, STATUS, CRASH, WRONG, LOST)
SHORT = stopping.default(max_iterations=40)
SOURCE = Path(__file__).resolve().parents[1] / "src"
# Ctrl-C must end the command within this many seconds (issue 10 item 4).
INTERRUPT_LIMIT = 2.0

CASES: list[tuple[str, Callable[[Path], tuple[str, str]]]] = []


def case(name: str) -> Callable:
    def register(function: Callable[[Path], tuple[str, str]]) -> Callable:
        CASES.append((name, function))
        return function
    return register


# --- helpers ------------------------------------------------------------------------------


def bowl_value(x: np.ndarray) -> float:
    return float(x @ x)


def bowl_gradient(x: np.ndarray) -> np.ndarray:
    return 2 * x


def shifted_value(x: np.ndarray) -> float:
    return float((x - 1) @ (x - 1))


def shifted_gradient(x: np.ndarray) -> np.ndarray:
    return 2 * (x - 1)


def bowls(count: int = 2, name: str = "bowl", value=bowl_value, gradient=bowl_gradient,
          start=(3.0, -4.0)) -> list:
    return [as_problems({"name": f"{name}{i}" if count > 1 else name, "value": value,
                         "gradient": gradient, "start": [start[0] + i, start[1]],
                         "optimal_value": 0.0})[0] for i in range(count)]


def study(**changes) -> Study:
    return Study(**{"problems": bowls(), "controllers": [Armijo(), Fixed(0.1), Fixed(0.3)],
                    "stop": SHORT, **changes})


def stored(folder: Path) -> Path:
    """A results folder holding six finished runs."""
    folder.mkdir(parents=True, exist_ok=True)
    run_study(study(), folder, workers=1)
    return folder


def sql(folder: Path, *statements: str) -> None:
    with sqlite3.connect(folder / "results.sqlite") as connection:
        for statement in statements:
            connection.execute(statement)


def cli(*arguments: str) -> tuple[int | None, str, str, BaseException | None]:
    out, err = io.StringIO(), io.StringIO()
    status, escaped = None, None
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            status = main(list(arguments))
        except SystemExit as exc:  # argparse
            status = exc.code if isinstance(exc.code, int) else 2
        except BaseException as exc:  # noqa: BLE001 - an escaping exception is a crash
            escaped = exc
    return status, out.getvalue(), err.getvalue(), escaped


def judge_error(status, err: str, escaped, *needles: str) -> tuple[str, str]:
    """A refusal: clear when exit 2, no traceback, a short message holding the needles."""
    if escaped is not None:
        return CRASH, f"{type(escaped).__name__}: {escaped}"
    lines = [line for line in err.splitlines() if line.strip()]
    errors = [i for i, line in enumerate(lines) if ": error:" in line]
    if errors:  # argparse prints its usage first: the message starts at "error:"
        lines = lines[errors[0]:]
    if status != 2:
        return WRONG, f"exit {status}, expected a refusal; stderr: {err[-200:]!r}"
    if "Traceback" in err or not lines or len(lines) > 3:
        return CRASH, err[-300:]
    missing = [n for n in needles if n.lower() not in err.lower()]
    if missing:
        return CRASH, f"message does not name {missing}: {lines[-1]}"
    return CLEAR, lines[-1][:160]


def judge_raise(build: Callable[[], object], kinds: tuple, *needles: str) -> tuple[str, str]:
    try:
        build()
    except kinds as exc:
        text = str(exc)
        missing = [n for n in needles if n.lower() not in text.lower()]
        if missing:
            return CRASH, f"{type(exc).__name__} does not name {missing}: {text[:160]}"
        return CLEAR, f"{type(exc).__name__}: {text[:140]}"
    except Exception as exc:  # noqa: BLE001
        return CRASH, f"{type(exc).__name__}: {exc}"
    return WRONG, "accepted without a word"


def rows_of(folder: Path, where: str = "") -> list[tuple]:
    with sqlite3.connect(folder / "results.sqlite") as connection:
        return connection.execute(f"SELECT key, sequence FROM runs {where}").fetchall()


def integrity(folder: Path, expected: int) -> tuple[str, str] | None:
    """LOST when rows are missing or doubled or sequence numbers repeat; else None."""
    rows = rows_of(folder, "WHERE superseded_by IS NULL")
    every = rows_of(folder)
    if len({k for k, _ in every}) != len(every) or len({s for _, s in every}) != len(every):
        return LOST, f"{len(every)} rows, {len({s for _, s in every})} distinct sequences"
    if len(rows) != expected:
        return LOST, f"{len(rows)} current rows, expected {expected}"
    return None


# --- damaged results files ----------------------------------------------------------------


def _damaged_report(folder: Path, *needles: str) -> tuple[str, str]:
    status, _, err, escaped = cli("report", str(folder))
    return judge_error(status, err, escaped, *needles)


@case("garbage over the last page")
def _(tmp: Path):
    folder = stored(tmp)
    path = folder / "results.sqlite"
    data = bytearray(path.read_bytes())
    data[-4096:] = b"\x5a" * 4096
    path.write_bytes(bytes(data))
    return _damaged_report(folder, "results.sqlite")


@case("file truncated mid-page")
def _(tmp: Path):
    folder = stored(tmp)
    path = folder / "results.sqlite"
    path.write_bytes(path.read_bytes()[:3000])
    return _damaged_report(folder, "results.sqlite")


@case("random bytes instead of a database")
def _(tmp: Path):
    tmp.mkdir()
    (tmp / "results.sqlite").write_bytes(np.random.default_rng(1).bytes(9000))
    return _damaged_report(tmp, "results.sqlite")


@case("a text file named results.sqlite")
def _(tmp: Path):
    tmp.mkdir()
    (tmp / "results.sqlite").write_text("my notes\n" * 100)
    return _damaged_report(tmp, "results.sqlite")


@case("a foreign SQLite database")
def _(tmp: Path):
    tmp.mkdir()
    with sqlite3.connect(tmp / "results.sqlite") as connection:
        connection.execute("CREATE TABLE readings (t REAL)")
    return _damaged_report(tmp, "did not write")


@case("schema version 99")
def _(tmp: Path):
    folder = stored(tmp)
    sql(folder, "UPDATE metadata SET value = '99' WHERE name = 'schema_version'")
    return _damaged_report(folder, "99")


@case("schema version 1 (older linestep)")
def _(tmp: Path):
    folder = stored(tmp)
    sql(folder, "UPDATE metadata SET value = '1' WHERE name = 'schema_version'")
    return _damaged_report(folder, "schema version 1")


@case("schema version unreadable")
def _(tmp: Path):
    folder = stored(tmp)
    sql(folder, "UPDATE metadata SET value = 'two' WHERE name = 'schema_version'")
    return _damaged_report(folder, "schema version")


@case("a dropped column")
def _(tmp: Path):
    folder = stored(tmp)
    sql(folder, "ALTER TABLE runs DROP COLUMN reason")
    return _damaged_report(folder, "reason")


@case("the runs table renamed")
def _(tmp: Path):
    folder = stored(tmp)
    sql(folder, "ALTER TABLE runs RENAME TO old_runs")
    status, _, err, escaped = cli("report", str(folder))
    return judge_error(status, err, escaped, "runs")


def _one_bad_row(tmp: Path, statement: str, needle: str) -> tuple[str, str]:
    """One damaged row: reported with its number, skipped; the rest reports and resumes."""
    folder = stored(tmp)
    sql(folder, statement)
    status, out, err, escaped = cli("report", str(folder))
    if escaped is not None or "Traceback" in err:
        return CRASH, repr(escaped) or err[-200:]
    if status != 0:
        return CRASH, f"exit {status}: {err[-200:]}"
    if "row 2" not in err or needle not in err:
        return WRONG, f"damage not reported: {err[-200:]!r}"
    if len(Results.load(folder)) != 5:
        return WRONG, "the other rows did not report"
    ran: list = []
    run_study(study(), folder, workers=1, progress=lambda d, t, r: ran.append(r))
    if len(ran) != 1:
        return WRONG, f"resume ran {len(ran)} runs, expected the damaged one"
    return integrity(folder, 6) or (STATUS, "row 2 skipped with a warning, run again on resume")


@case("flipped bytes in a text column")
def _(tmp: Path):
    return _one_bad_row(tmp, "UPDATE runs SET reason = CAST(X'FFFE41' AS TEXT) "
                        "WHERE sequence = 2", "UTF-8")


@case("flipped bytes in the problem name")
def _(tmp: Path):
    return _one_bad_row(tmp, "UPDATE runs SET problem = CAST(X'62C3' AS TEXT) "
                        "WHERE sequence = 2", "UTF-8")


@case("cut-off history JSON")
def _(tmp: Path):
    return _one_bad_row(tmp, "UPDATE runs SET history = substr(history, 1, 40) "
                        "WHERE sequence = 2", "JSON")


@case("history arrays of different lengths")
def _(tmp: Path):
    return _one_bad_row(tmp, """UPDATE runs SET history = json_set(history, '$.value',
                        json('[1.0]')) WHERE sequence = 2""", "lengths")


@case("history without its arrays")
def _(tmp: Path):
    return _one_bad_row(tmp, "UPDATE runs SET history = '{}' WHERE sequence = 2", "history")


@case("an unknown verdict kind")
def _(tmp: Path):
    return _one_bad_row(tmp, "UPDATE runs SET kind = 'bogus' WHERE sequence = 2", "kind")


@case("text in the value column")
def _(tmp: Path):
    return _one_bad_row(tmp, "UPDATE runs SET value = 'abc' WHERE sequence = 2", "value")


@case("broken JSON in the final point")
def _(tmp: Path):
    return _one_bad_row(tmp, "UPDATE runs SET x = '[1.0, ' WHERE sequence = 2", "JSON")


@case("broken JSON in the optimal values")
def _(tmp: Path):
    return _one_bad_row(tmp, "UPDATE runs SET optimal_values = 'nan]' WHERE sequence = 2",
                        "JSON")


@case("a float iteration count")
def _(tmp: Path):
    return _one_bad_row(tmp, "UPDATE runs SET iterations = 2.5 WHERE sequence = 2",
                        "iterations")


@case("an empty (0-byte) results file")
def _(tmp: Path):
    tmp.mkdir()
    (tmp / "results.sqlite").write_bytes(b"")
    run_study(study(), tmp, workers=1)
    return integrity(tmp, 6) or (STATUS, "an empty file is a new results file")


@case("half-made file: metadata table only, empty")
def _(tmp: Path):
    tmp.mkdir()
    with sqlite3.connect(tmp / "results.sqlite") as connection:
        connection.execute("CREATE TABLE metadata (name TEXT PRIMARY KEY, value TEXT)")
    run_study(study(), tmp, workers=1)
    return integrity(tmp, 6) or (STATUS, "rebuilt")


@case("half-made file: metadata written, no runs table")
def _(tmp: Path):
    folder = stored(tmp)
    sql(folder, "DROP TABLE runs")
    run_study(study(), folder, workers=1)
    return integrity(folder, 6) or (STATUS, "runs table created")


@case("report of a half-made file (read-only)")
def _(tmp: Path):
    folder = stored(tmp)
    sql(folder, "DROP TABLE runs")
    status, _, err, escaped = cli("report", str(folder))
    return judge_error(status, err, escaped, "runs")


@case("an extra table of the user's in our file")
def _(tmp: Path):
    folder = stored(tmp)
    sql(folder, "CREATE TABLE notes (text TEXT)")
    status, out, err, escaped = cli("report", str(folder))
    if status == 0 and "Armijo()" in out:
        return STATUS, "reports as usual"
    return judge_error(status, err, escaped)


# --- unusable folders and report targets ----------------------------------------------------


@case("--out is an existing file")
def _(tmp: Path):
    tmp.mkdir()
    (tmp / "f").write_text("mine")
    status, _, err, escaped = cli("bench", "quadratics", "--controllers", "armijo",
                                  "--workers", "1", "--no-report", "--out", str(tmp / "f"))
    result = judge_error(status, err, escaped, "not a folder")
    return result if (tmp / "f").read_text() == "mine" else (LOST, "the file was changed")


@case("--out cannot be created")
def _(tmp: Path):
    status, _, err, escaped = cli("bench", "quadratics", "--controllers", "armijo",
                                  "--workers", "1", "--no-report",
                                  "--out", "/proc/linestep-no/out")
    return judge_error(status, err, escaped, "linestep-no")


@case("results.sqlite is a folder")
def _(tmp: Path):
    (tmp / "results.sqlite").mkdir(parents=True)
    status, _, err, escaped = cli("bench", "quadratics", "--controllers", "armijo",
                                  "--workers", "1", "--no-report", "--out", str(tmp))
    return judge_error(status, err, escaped, "results.sqlite")


@case("report of a folder that does not exist")
def _(tmp: Path):
    status, _, err, escaped = cli("report", str(tmp / "nothing"))
    return judge_error(status, err, escaped, f"--out {tmp / 'nothing'}")


@case("report of an empty folder")
def _(tmp: Path):
    tmp.mkdir()
    status, _, err, escaped = cli("report", str(tmp))
    return judge_error(status, err, escaped, "results")


@case("report.html is a folder (bench)")
def _(tmp: Path):
    tmp.mkdir()
    (tmp / "report.html").mkdir()
    status, _, err, escaped = cli("bench", "quadratics", "--controllers", "armijo",
                                  "--workers", "1", "--out", str(tmp))
    result = judge_error(status, err, escaped, "report", "saved")
    return integrity(tmp, len(Results.load(tmp))) or result if len(Results.load(tmp)) \
        else (LOST, "no runs saved")


@case("report.html is a folder (report --html)")
def _(tmp: Path):
    folder = stored(tmp)
    (folder / "report.html").mkdir()
    status, _, err, escaped = cli("report", str(folder), "--html")
    return integrity(folder, 6) or judge_error(status, err, escaped, "report")


@case("results.csv is a folder (report --csv)")
def _(tmp: Path):
    folder = stored(tmp)
    (folder / "results.csv").mkdir()
    status, _, err, escaped = cli("report", str(folder), "--csv")
    return integrity(folder, 6) or judge_error(status, err, escaped, "results.csv")


@case("figures is a file (report --figures png)")
def _(tmp: Path):
    folder = stored(tmp)
    (folder / "figures").write_text("x")
    status, _, err, escaped = cli("report", str(folder), "--figures", "png")
    return integrity(folder, 6) or judge_error(status, err, escaped, "figures")


# --- odd names --------------------------------------------------------------------------------


def _named(tmp: Path, name: str, check: Callable[[Path], str | None]) -> tuple[str, str]:
    problems = as_problems({"name": name, "value": bowl_value, "gradient": bowl_gradient,
                            "start": [1.0, 2.0], "optimal_value": 0.0})
    tmp.mkdir()
    run_study(Study(problems=problems, controllers=[Armijo(), Fixed(0.2)], stop=SHORT), tmp,
              workers=1)
    status, _, err, escaped = cli("report", str(tmp), "--html", "--csv", "--json",
                                  "--figures", "png")
    if escaped is not None or status != 0:
        return CRASH, f"exit {status} {escaped!r} {err[-200:]}"
    problem = check(tmp)
    return (WRONG, problem) if problem else (STATUS, "reported as plain text")


def _csv_cell_safe(folder: Path) -> str | None:
    import csv

    with (folder / "results.csv").open(newline="", encoding="utf-8") as handle:
        for row in csv.DictReader(handle):
            for column, cell in row.items():
                if cell[:1] in ("=", "+", "@") or (cell[:1] == "-" and not _number(cell)):
                    return f"CSV cell {column}={cell!r} would run as a formula"
    return None


def _number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


for _name in ("$x^{2$ and $\\nosuch$", "=HYPERLINK(\"x\")", "+1+1", "-cmd", "@SUM(A1)",
              "<script>alert(1)</script>", "line\nbreak\tand tab", "ünïcode ∇f 🙂",
              "a/b\\c:d", "x" * 300, "  spaces  ", "%s %d {0}"):
    def _check(folder: Path, name=_name) -> str | None:
        trouble = _csv_cell_safe(folder)
        text = (folder / "report.html").read_text(encoding="utf-8")
        if "<script>alert" in text:
            return "raw HTML from a name"
        return trouble
    case(f"problem named {_name[:30]!r}")(
        lambda tmp, name=_name, check=_check: _named(tmp, name, check))


@case("controller labels with $ and =")
def _(tmp: Path):
    tmp.mkdir()
    run_study(Study(problems=bowls(1), controllers={"=rate $5$": Fixed(0.1), "@x": Armijo()},
                    stop=SHORT), tmp, workers=1)
    status, _, err, escaped = cli("report", str(tmp), "--html", "--csv")
    if status != 0:
        return CRASH, err[-200:]
    trouble = _csv_cell_safe(tmp)
    return (WRONG, trouble) if trouble else (STATUS, "plain text")


@case("an empty problem name (documented: named 'objective')")
def _(tmp: Path):
    [problem] = as_problems({"name": "", "value": bowl_value, "gradient": bowl_gradient,
                             "start": [1.0]})
    return (STATUS, "named 'objective'") if problem.name == "objective" else \
        (WRONG, repr(problem.name))


@case("two problems with one name and dimension")
def _(tmp: Path):
    return judge_raise(lambda: Study(problems=bowls(1) + bowls(1), controllers=[Armijo()]),
                       (ValueError,), "same name")


# --- colliding identities ---------------------------------------------------------------------


def _distinct_runs(tmp: Path, controllers, expected: int) -> tuple[str, str]:
    results = run_study(Study(problems=bowls(1), controllers=controllers, stop=SHORT), tmp,
                        workers=1)
    if len({r.key for r in results}) != expected or len(results.solvers()) != expected:
        return WRONG, f"{len({r.key for r in results})} keys, {len(results.solvers())} solvers"
    return integrity(tmp, expected) or (STATUS, f"{expected} runs, {expected} solver labels")


@case("two lambda schedules that print alike")
def _(tmp: Path):
    return _distinct_runs(tmp, [Schedule(lambda k: 0.01), Schedule(lambda k: 0.2)], 2)


@case("one label for two controllers across two studies in one folder")
def _(tmp: Path):
    run_study(Study(problems=bowls(1), controllers={"fast": Fixed(0.1)}, stop=SHORT), tmp,
              workers=1)
    run_study(Study(problems=bowls(1), controllers={"fast": Fixed(0.2)}, stop=SHORT), tmp,
              workers=1)
    results = Results.load(tmp)
    if len(results.solvers()) != 2:
        return WRONG, f"solvers {results.solvers()}"
    return integrity(tmp, 2) or (STATUS, f"two solvers: {results.solvers()}")


@case("a report read while a study writes")
def _(tmp: Path):
    folder = stored(tmp)
    errors: list = []

    def read() -> None:
        for _ in range(20):
            try:
                Results.load(folder)
            except Exception as exc:  # noqa: BLE001
                errors.append(exc)

    reader = threading.Thread(target=read)
    reader.start()
    run_study(study(problems=bowls(6, name="more")), folder, workers=1)
    reader.join()
    if errors:
        return CRASH, repr(errors[0])
    return integrity(folder, 6 + 18) or (STATUS, "reads and writes interleave")


@case("exponential schedules with other rates")
def _(tmp: Path):
    return _distinct_runs(tmp, [Schedule.exponential(0.1, rate=0.9),
                                Schedule.exponential(0.1, rate=0.99)], 2)


@case("closures over different data")
def _(tmp: Path):
    def make(size):
        return Schedule(lambda k: size)
    return _distinct_runs(tmp, [make(0.1), make(0.2)], 2)


@case("Fixed sizes that print alike at 6 digits")
def _(tmp: Path):
    return _distinct_runs(tmp, [Fixed(0.1), Fixed(0.1000000001)], 2)


@case("the same configuration listed twice")
def _(tmp: Path):
    return judge_raise(lambda: run_study(Study(problems=bowls(1),
                                               controllers={"a": Armijo(), "b": Armijo()},
                                               stop=SHORT), workers=1),
                       (ValueError,), "same computation")


@case("a class and an instance of one controller")
def _(tmp: Path):
    return judge_raise(lambda: Study(problems=bowls(1), controllers=[Armijo, Armijo()],
                                     stop=SHORT).tasks(), (ValueError,), "same computation")


@case("--controllers armijo,armijo")
def _(tmp: Path):
    status, _, err, escaped = cli("bench", "quadratics", "--controllers", "armijo,armijo",
                                  "--workers", "1", "--out", str(tmp), "--no-report")
    return judge_error(status, err, escaped, "same computation")


@case("--starts x10,x10.0000001")
def _(tmp: Path):
    status, _, err, escaped = cli("bench", "mgh", "--controllers", "armijo", "--starts",
                                  "x10,x10.0000001", "--workers", "1", "--out", str(tmp),
                                  "--no-report", "--quiet", "--max-iterations", "20")
    if status != 0:
        return CRASH, err[-200:]
    results = Results.load(tmp)
    starts = {r.start for r in results}
    if len(starts) != 2 or len({r.key for r in results}) != len(results):
        return WRONG, f"starts {starts}"
    return integrity(tmp, len(results)) or (STATUS, "two starts, two instances")


@case("--starts x10,x10")
def _(tmp: Path):
    status, _, err, escaped = cli("bench", "mgh", "--controllers", "armijo", "--starts",
                                  "x10,x10", "--workers", "1", "--out", str(tmp), "--no-report")
    return judge_error(status, err, escaped, "more than once")


def plain_stop(progress):
    if progress.iteration < 5:
        return None
    return stopping.Verdict(kind=stopping.Kind.budget, reason="five", criterion="plain_stop")


@case("a plain-function stop re-run twice")
def _(tmp: Path):
    for _ in range(2):
        run_study(Study(problems=bowls(1), controllers=[Armijo()], stop=plain_stop), tmp,
                  workers=1)
    return integrity(tmp, 1) or (STATUS, "one row: the identity holds no address")


class Opaque:
    __slots__ = ()

    def __call__(self, progress):
        return None

    def __deepcopy__(self, memo):
        return Opaque()

    def __reduce__(self):
        raise TypeError("no pickling")


@case("an unidentifiable stopping rule")
def _(tmp: Path):
    return judge_raise(lambda: Study(problems=bowls(1), controllers=[Armijo()],
                                     stop=Opaque()).tasks(), (TypeError,), "linestep_identity")


@case("a stopping rule holding a lock")
def _(tmp: Path):
    class Locked:
        def __init__(self):
            self.lock = threading.Lock()

        def __call__(self, progress):
            return None

    return judge_raise(lambda: Study(problems=bowls(1), controllers=[Armijo()],
                                     stop=Locked()).tasks(), (TypeError,), "stopping rule")


@case("a repeated Start object")
def _(tmp: Path):
    return judge_raise(lambda: Study(problems=bowls(1), controllers=[Armijo()],
                                     starts=[Start.perturbed(0.1)] * 2), (ValueError,),
                       "more than once")


# --- stale problems ---------------------------------------------------------------------------


def _rerun(tmp: Path, first: Study, second: Study, expect_runs: int, check=None):
    run_study(first, tmp, workers=1)
    ran: list = []
    results = run_study(second, tmp, workers=1, progress=lambda d, t, r: ran.append(r))
    if len(ran) != expect_runs:
        return WRONG, f"{len(ran)} runs re-run, expected {expect_runs}"
    if check is not None and (trouble := check(results)):
        return WRONG, trouble
    with ResultStore(tmp, read_only=True) as store:
        superseded = store.superseded()
    if superseded != expect_runs:
        return LOST, f"{superseded} old rows kept as superseded, expected {expect_runs}"
    return integrity(tmp, len(results)) or (
        STATUS, "re-run; old rows kept, superseded" if expect_runs else "nothing re-run")


@case("objective edited under the same name")
def _(tmp: Path):
    return _rerun(tmp, study(), study(problems=bowls(2, value=shifted_value,
                                                     gradient=shifted_gradient)), 6,
                  lambda results: None if all(abs(r.x - 1).max() < 0.1 for r in results
                                              if r.controller == "Armijo()") else "stale x")


@case("a new start under the same name")
def _(tmp: Path):
    return _rerun(tmp, study(), study(problems=bowls(2, start=(3.0, -4.5))), 6)


@case("another solve_rtol")
def _(tmp: Path):
    return _rerun(tmp, study(), study(solve_rtol=1e-9), 6)


@case("the same study again")
def _(tmp: Path):
    return _rerun(tmp, study(), study(), 0)


@case("stored optimum changed: solved follows at read time")
def _(tmp: Path):
    folder = stored(tmp)
    sql(folder, "UPDATE runs SET optimal_values = '[7.0]'")
    results = Results.load(folder)
    if any(r.solved for r in results):
        return WRONG, "solved frozen at write time"
    return STATUS, "solved derived from stored raw data"


# --- runs that fail ---------------------------------------------------------------------------


def raising_value(x):
    if not np.array_equal(x, [3.0, -4.0]):
        raise RuntimeError("the simulator crashed")
    return float(x @ x)


def nan_value(x):
    return float("nan")


@case("an objective that raises mid-run")
def _(tmp: Path):
    results = run_study(Study(problems=bowls(1, value=raising_value), controllers=[Armijo()],
                              stop=SHORT), workers=1)
    [record] = results
    if results.outcome(record) == "failed" and "simulator crashed" in record.reason:
        return STATUS, "failed with the reason"
    return WRONG, record.reason


@case("NaN at the start")
def _(tmp: Path):
    results = run_study(Study(problems=bowls(1, value=nan_value), controllers=[Armijo()],
                              stop=SHORT), workers=1)
    return (STATUS, results[0].reason[:80]) if results.outcome(results[0]) == "failed" \
        else (WRONG, results[0].reason)


@case("a Stall at the optimum is solved, not failed")
def _(tmp: Path):
    problems = as_problems({"name": "flat", "value": lambda x: 0.0,
                            "gradient": lambda x: np.zeros_like(x) + 1e-30,
                            "start": [1.0], "optimal_value": 0.0})
    results = run_study(Study(problems=problems, controllers=[Fixed(0.1)],
                              stop=stopping.Stall(iterations=3) | stopping.MaxIterations(99)),
                        workers=1)
    return (STATUS, "solved") if results.outcome(results[0]) == "solved" \
        else (WRONG, results.outcome(results[0]))


# --- bad command-line values ------------------------------------------------------------------


for _arguments, _needle in [
    (("--seeds", "0"), "--seeds"),
    (("--workers", "-1"), "--workers"),
    (("--max-iterations", "0"), "--max-iterations"),
    (("--max-evaluations", "x"), "--max-evaluations"),
    (("--gradient-atol", "nan"), "--gradient-atol"),
    (("--gradient-atol", "-1"), "--gradient-atol"),
    (("--gradient-tol", "1e-6"), "--gradient-tol"),
    (("--starts", "x0"), "x0"),
    (("--starts", "perturbed:-1"), "perturbed:-1"),
    (("--starts", "nowhere"), "nowhere"),
    (("--controllers", "fixed:abc"), "fixed:abc"),
    (("--controllers", "fixed:-1"), "size"),
    (("--controllers", "nosuch"), "nosuch"),
    (("--controllers", ","), "--controllers"),
    (("--directions", "lbfgs:0"), "memory"),
    (("--directions", "nosuch"), "nosuch"),
    (("--objective", "nosuchmodule_xyz:make"), "nosuchmodule_xyz"),
    (("--objective", "os:path"), "os:path"),
    (("--objective", "no_colon"), "no_colon"),
]:
    case(f"bench {' '.join(_arguments)}")(
        lambda tmp, arguments=_arguments, needle=_needle: judge_error(
            *_bench_args(tmp, arguments), needle))


def _bench_args(tmp: Path, arguments: tuple) -> tuple:
    status, _, err, escaped = cli("bench", "quadratics", "--workers", "1", "--no-report",
                                  "--out", str(tmp), *arguments)
    return status, err, escaped


@case("bench nosuchsuite")
def _(tmp: Path):
    status, _, err, escaped = cli("bench", "nosuchsuite", "--out", str(tmp))
    return judge_error(status, err, escaped, "nosuchsuite")


# --- real processes ---------------------------------------------------------------------------

OBJECTIVE = """
import os, time
PIDS = os.path.join(os.path.dirname(os.path.abspath(__file__)), "pids")


def value(x):
    path = os.path.join(PIDS, str(os.getpid()))
    if not os.path.exists(path):
        open(path, "w").close()
    time.sleep({delay})
    return float(x @ x)


def gradient(x):
    return 2 * x


def make():
    return [{{"name": f"bowl{{i}}", "value": value, "gradient": gradient,
              "start": [3.0 + i, -4.0], "optimal_value": 0.0}} for i in range({count})]
"""


def _spawn(folder: Path, *arguments: str, delay: float = 0.0, count: int = 6,
           session: bool = False) -> subprocess.Popen:
    if not (folder / "slow_bowl.py").exists():
        folder.mkdir(parents=True, exist_ok=True)
        (folder / "pids").mkdir()
        (folder / "slow_bowl.py").write_text(textwrap.dedent(
            OBJECTIVE.format(delay=delay, count=count)))
    environment = {**os.environ, "PYTHONPATH": os.pathsep.join([str(SOURCE), str(folder)])}
    return subprocess.Popen(
        [sys.executable, "-m", "linestep", "bench", "--objective", "slow_bowl:make",
         "--directions", "steepest", "--no-report", "--quiet", *arguments],
        cwd=folder, env=environment, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
        start_new_session=session)


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state not in ("Z", "X")


def _workers(folder: Path, process: subprocess.Popen, count: int) -> set[int]:
    """The pids evaluating the objective once `count` of them do (with workers=1, the
    parent itself)."""
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        pids = {int(p.name) for p in (folder / "pids").iterdir()}
        if len(pids) >= count or process.poll() is not None:
            return pids
        time.sleep(0.05)
    return set()


def _survivors(pids: set[int], wait: float) -> set[int]:
    deadline = time.monotonic() + wait
    while time.monotonic() < deadline:
        if not any(_alive(pid) for pid in pids):
            return set()
        time.sleep(0.05)
    return {pid for pid in pids if _alive(pid)}


@case("two writers on one folder")
def _(tmp: Path):
    arguments = ("--controllers", "armijo,wolfe,fixed:0.1,fixed:0.2", "--workers", "1",
                 "--out", "shared")
    writers = [_spawn(tmp, *arguments) for _ in range(2)]
    for writer in writers:
        _, err = writer.communicate(timeout=300)
        if writer.returncode != 0:
            return CRASH, err.decode()[-300:]
    return integrity(tmp / "shared", 24) or (STATUS, "each run once, unique sequences")


@case("four processes open one fresh folder")
def _(tmp: Path):
    writers = [_spawn(tmp, "--controllers", "armijo", "--workers", "1", "--out", "fresh")
               for _ in range(4)]
    for writer in writers:
        _, err = writer.communicate(timeout=300)
        if writer.returncode != 0:
            return CRASH, err.decode()[-300:]
    return integrity(tmp / "fresh", 6) or (STATUS, "all four opened it")


def _interrupt(tmp: Path, workers: str, presses: int) -> tuple[str, str]:
    process = _spawn(tmp, "--controllers", "armijo,wolfe", "--workers", workers,
                     "--max-iterations", "100000", "--out", "out", delay=0.02, count=8,
                     session=True)
    pids = _workers(tmp, process, int(workers))
    if process.poll() is not None:
        return CRASH, "the command ended before it could be interrupted"
    started = time.monotonic()
    for _ in range(presses):
        try:
            os.killpg(process.pid, signal.SIGINT)
        except ProcessLookupError:
            break  # already ended
        time.sleep(0.1)
    try:
        _, err = process.communicate(timeout=30)
    except subprocess.TimeoutExpired:
        os.killpg(process.pid, signal.SIGKILL)
        return CRASH, "hung after Ctrl-C"
    took = time.monotonic() - started
    left = _survivors(pids - {process.pid}, 2.0)
    if b"Traceback" in err:
        return CRASH, err.decode()[-300:]
    if left:
        return WRONG, f"workers {sorted(left)} still alive"
    if process.returncode != 130:
        return WRONG, f"exit {process.returncode} after Ctrl-C"
    if took > INTERRUPT_LIMIT:
        return WRONG, f"took {took:.1f} s to end"
    return STATUS, f"exit {process.returncode} in {took:.2f} s, no process left"


@case("Ctrl-C once, workers=2")
def _(tmp: Path):
    return _interrupt(tmp, "2", 1)


@case("Ctrl-C twice, workers=2")
def _(tmp: Path):
    return _interrupt(tmp, "2", 2)


@case("Ctrl-C five times, workers=2")
def _(tmp: Path):
    return _interrupt(tmp, "2", 5)


@case("Ctrl-C twice, workers=1")
def _(tmp: Path):
    return _interrupt(tmp, "1", 2)


@case("kill -9 of the parent")
def _(tmp: Path):
    process = _spawn(tmp, "--controllers", "armijo,wolfe", "--workers", "2",
                     "--max-iterations", "100000", "--out", "out", delay=0.02, count=8,
                     session=True)
    pids = _workers(tmp, process, 2)
    process.kill()
    try:
        process.communicate(timeout=30)  # the pipe closes: no worker holds it
    except subprocess.TimeoutExpired:
        return WRONG, "a worker holds the output pipe"
    left = _survivors(pids - {process.pid}, 5.0)
    return (WRONG, f"workers {sorted(left)} alive") if left else \
        (STATUS, "workers exited by themselves")


@case("resume after kill -9 loses nothing")
def _(tmp: Path):
    process = _spawn(tmp, "--controllers", "armijo,wolfe", "--workers", "2", "--out", "out",
                     delay=0.002, count=8, session=True)
    time.sleep(3.0)
    process.kill()
    process.communicate(timeout=30)
    again = _spawn(tmp, "--controllers", "armijo,wolfe", "--workers", "2", "--out", "out")
    _, err = again.communicate(timeout=300)
    if again.returncode != 0:
        return CRASH, err.decode()[-300:]
    return integrity(tmp / "out", 16) or (STATUS, "every run stored once after resuming")


# --- the battery ------------------------------------------------------------------------------


def main_battery(verbose: bool) -> Counter:
    counts: Counter = Counter()
    with tempfile.TemporaryDirectory() as root:
        for index, (name, function) in enumerate(CASES):
            tmp = Path(root) / f"case{index}"
            try:
                category, detail = function(tmp)
            except Exception as exc:  # noqa: BLE001 - an exception the case did not expect
                category, detail = CRASH, f"{type(exc).__name__}: {exc}"
            counts[category] += 1
            if verbose or category in (CRASH, WRONG, LOST):
                print(f"[{category}] {name}: {detail}")
    return counts


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("-v", "--verbose", action="store_true", help="print every case")
    options = parser.parse_args()
    started = time.perf_counter()
    counts = main_battery(options.verbose)
    print(f"\n{len(CASES)} cases in {time.perf_counter() - started:.0f} s")
    for category in CATEGORIES:
        print(f"  {category:<24} {counts[category]:>4}")
