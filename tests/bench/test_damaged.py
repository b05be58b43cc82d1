"""Damaged or unusable files and folders (issue 10 item 5), report safety (item 6) and
outcomes (item 8).

Each bad case must end in one clear sentence naming the file (and the row), exit
status 2 where nothing can be done, or a warning and the rest of the results where
only one row is bad; runs already saved are never lost.
"""

from __future__ import annotations

import csv
import html
import os
import sqlite3
from pathlib import Path

import numpy as np
import pytest

from linestep import Armijo, stopping
from linestep.bench import Results, Study, as_problems, run_study
from linestep.bench._results import OUTCOME_DEFINITIONS, OUTCOMES
from linestep.bench.storage import ResultsFileError
from linestep.cli import main
from linestep.rules.fixed import Fixed

SHORT = stopping.default(max_iterations=60)


def _value(x: np.ndarray) -> float:
    return float(x @ x)


def _gradient(x: np.ndarray) -> np.ndarray:
    return 2 * x


def _study(name: str = "bowl") -> Study:
    """Invented bowls, three controllers: six runs."""
    problems = [as_problems({"name": f"{name}{i}", "value": _value, "gradient": _gradient,
                             "start": [3.0 + i, -4.0], "optimal_value": 0.0})[0]
                for i in range(2)]
    return Study(problems=problems, controllers=[Armijo(), Fixed(0.1), Fixed(0.3)], stop=SHORT)


@pytest.fixture()
def stored(tmp_path: Path) -> Path:
    run_study(_study(), tmp_path, workers=1)
    return tmp_path


def _report(folder: Path, capsys, *extra: str) -> tuple[int, str, str]:
    status = main(["report", str(folder), *extra])
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def _one_sentence_error(err: str, *needles: str) -> None:
    assert "Traceback" not in err
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1, err
    for needle in needles:
        assert needle in lines[0], err


# --- folders ------------------------------------------------------------------------------


def test_an_out_that_is_a_file_is_a_clear_error(tmp_path: Path, capsys) -> None:
    target = tmp_path / "notes.txt"
    target.write_text("mine")
    with pytest.raises(ResultsFileError, match="a file of that name is in the way"):
        run_study(_study(), target, workers=1)
    status = main(["bench", "quadratics", "--controllers", "armijo", "--out", str(target),
                   "--workers", "1", "--no-report"])
    _one_sentence_error(capsys.readouterr().err, "notes.txt", "not a folder")
    assert status == 2 and target.read_text() == "mine"


def test_a_folder_that_cannot_be_created_is_a_clear_error(capsys) -> None:
    status = main(["bench", "quadratics", "--controllers", "armijo", "--workers", "1",
                   "--out", "/proc/linestep-cannot-be-here/out", "--no-report"])
    assert status == 2
    _one_sentence_error(capsys.readouterr().err, "linestep-cannot-be-here")


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0,
                    reason="permissions do not bind the root user")
def test_a_read_only_folder_is_a_clear_error(tmp_path: Path, capsys) -> None:
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o500)
    try:
        status = main(["bench", "quadratics", "--controllers", "armijo", "--workers", "1",
                       "--out", str(folder), "--no-report"])
    finally:
        folder.chmod(0o700)
    assert status == 2
    _one_sentence_error(capsys.readouterr().err, "locked")


# --- damaged files ------------------------------------------------------------------------


def test_garbage_over_the_last_page_is_one_sentence_and_status_2(stored: Path, capsys) -> None:
    path = stored / "results.sqlite"
    data = bytearray(path.read_bytes())
    data[-4096:] = b"\x5a" * 4096
    path.write_bytes(bytes(data))
    status, _, err = _report(stored, capsys)
    assert status == 2
    _one_sentence_error(err, "results.sqlite")


def test_a_truncated_file_is_one_sentence_and_status_2(stored: Path, capsys) -> None:
    path = stored / "results.sqlite"
    path.write_bytes(path.read_bytes()[:3000])
    status, _, err = _report(stored, capsys)
    assert status == 2
    _one_sentence_error(err, "results.sqlite")


def test_flipped_bytes_in_a_text_column_skip_that_row_only(stored: Path, capsys) -> None:
    with sqlite3.connect(stored / "results.sqlite") as connection:
        connection.execute("UPDATE runs SET reason = CAST(X'FFFE41' AS TEXT) WHERE sequence = 2")
    status, out, err = _report(stored, capsys)
    assert status == 0
    assert "row 2" in err and "UTF-8" in err and "Traceback" not in err
    assert "Armijo()" in out
    assert len(Results.load(stored)) == 5


def test_cut_off_history_is_reported_skipped_and_run_again(stored: Path, capsys) -> None:
    with sqlite3.connect(stored / "results.sqlite") as connection:
        connection.execute("UPDATE runs SET history = substr(history, 1, 40) "
                           "WHERE sequence = 3")
    results = Results.load(stored)
    assert len(results) == 5 and "row 3" in results.damaged[0]
    status, _, err = _report(stored, capsys)
    assert status == 0 and "broken JSON" in err
    # Resuming runs the damaged run again and replaces the row.
    ran: list = []
    resumed = run_study(_study(), stored, workers=1, progress=lambda d, t, r: ran.append(r))
    assert len(ran) == 1 and len(resumed) == 6 and resumed.damaged
    again = Results.load(stored)
    assert len(again) == 6 and not again.damaged


def test_a_dropped_column_is_one_sentence_and_status_2(stored: Path, capsys) -> None:
    with sqlite3.connect(stored / "results.sqlite") as connection:
        connection.execute("ALTER TABLE runs DROP COLUMN reason")
    status, _, err = _report(stored, capsys)
    assert status == 2
    _one_sentence_error(err, "results.sqlite", "reason")


def test_a_report_that_cannot_be_written_keeps_the_runs(stored: Path, capsys) -> None:
    (stored / "report.html").mkdir()  # something in the way of the report
    status = main(["bench", "--objective", "none:none", "--out", str(stored)])
    capsys.readouterr()
    assert status == 2  # bad spec: nothing run, nothing lost
    before = len(Results.load(stored))
    status, _, err = _report(stored, capsys, "--html")
    assert status == 2 and "report" in err and "Traceback" not in err
    assert len(Results.load(stored)) == before == 6


# --- report safety (item 6) -----------------------------------------------------------------


def test_csv_cells_that_a_spreadsheet_would_run_are_neutralised(tmp_path: Path) -> None:
    from linestep.bench.report import write_csv

    study = Study(problems=as_problems({"name": "=HYPERLINK(1)", "value": _value,
                                        "gradient": _gradient, "start": [1.0, 2.0]}),
                  controllers={"+cmd": Armijo(), "@sum": Fixed(0.1), "-x": Fixed(0.2)},
                  stop=SHORT)
    path = write_csv(run_study(study, workers=1), tmp_path / "r.csv")
    with path.open(newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    for row in rows:
        for name, cell in row.items():
            assert cell[:1] not in ("=", "+", "@") or name in ("value", "gap"), (name, cell)
            if cell.startswith("-"):
                float(cell)  # only numbers may start with a minus sign
    assert {row["problem"] for row in rows} == {"'=HYPERLINK(1)"}


# A problem name that matplotlib's math text cannot parse (its parser raises on it).
NAME = "cost $x^{2$ in $\\nosuch$"


def test_dollar_signs_in_names_do_not_break_the_report(tmp_path: Path) -> None:
    pytest.importorskip("matplotlib", reason="plots need matplotlib (linestep[bench])")
    from linestep.bench.report import write_html

    study = Study(problems=as_problems({"name": NAME, "value": _value,
                                        "gradient": _gradient, "start": [1.0, 2.0]}),
                  controllers={"rate $5$": Fixed(0.1), "Armijo()": Armijo()}, stop=SHORT)
    path = write_html(run_study(study, workers=1), tmp_path / "report.html")
    assert html.escape(NAME) in path.read_text(encoding="utf-8")


# --- outcomes (item 8) ----------------------------------------------------------------------


def test_every_run_has_exactly_one_outcome_and_stall_at_the_optimum_is_solved() -> None:
    stall_at_optimum = stopping.Stall(iterations=3) | stopping.MaxIterations(10_000)
    problems = as_problems({"name": "flat", "value": lambda x: 0.0,
                            "gradient": lambda x: np.zeros_like(x) + 1e-30,
                            "start": [1.0], "optimal_value": 0.0})
    results = run_study(Study(problems=problems, controllers=[Fixed(0.1)],
                              stop=stall_at_optimum), workers=1)
    [record] = results
    assert results.outcome(record) == "solved"
    counts = {outcome: 0 for outcome, _ in OUTCOMES}
    for record in run_study(_study(), workers=1):
        counts[results.outcome(record)] += 1
    assert sum(counts.values()) == 6
    for outcome, _ in OUTCOMES:
        assert f"{outcome}:" in OUTCOME_DEFINITIONS


def test_the_ranking_counts_a_solved_stall_as_solved_only() -> None:
    from linestep.bench.report import ranking

    stall = stopping.Stall(iterations=2) | stopping.MaxIterations(10_000)
    problems = as_problems({"name": "flat", "value": lambda x: 0.0,
                            "gradient": lambda x: np.zeros_like(x) + 1e-30,
                            "start": [1.0], "optimal_value": 0.0})
    results = run_study(Study(problems=problems, controllers=[Fixed(0.1)], stop=stall),
                        workers=1)
    assert results[0].kind == "failed"
    [row] = ranking(results)
    assert row["solved"] == 1 and row["failed"] == 0
