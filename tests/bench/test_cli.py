"""`linestep bench` and `linestep report`: names, user objectives end to end, errors, progress."""

from __future__ import annotations

import io
import os
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from linestep import cli
from linestep.bench.harness import PerProblem

# An invented objective, as a user would write it: fit a rate constant k and an
# offset c of an exponential decay to five made-up readings (least squares).
USER_MODULE = """
import numpy as np

TIMES = np.array([0.0, 1.0, 2.0, 3.0, 4.0])
READINGS = np.array([5.1, 3.2, 2.1, 1.4, 1.0])   # invented numbers


def loss_and_gradient(theta):
    k, c = theta
    decay = np.exp(-k * TIMES)
    residual = 5.0 * decay + c - READINGS
    gradient = np.array([np.sum(2 * residual * (-5.0 * TIMES * decay)), np.sum(2 * residual)])
    return float(residual @ residual), gradient


def make_problem():
    return {"name": "decay_fit", "value_and_gradient": loss_and_gradient, "start": [0.1, 0.0]}
"""


def _run(*arguments: str, cwd: Path, env_path: Path | None = None) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    if env_path is not None:
        env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(env_path),
                                                          env.get("PYTHONPATH")]))
    return subprocess.run([sys.executable, "-m", "linestep", *arguments], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300)


def test_a_user_objective_end_to_end(tmp_path: Path) -> None:
    modules = tmp_path / "code"
    modules.mkdir()
    (modules / "decay_model.py").write_text(USER_MODULE)
    out = tmp_path / "results"
    bench = _run("bench", "--objective", "decay_model:make_problem", "--controllers",
                 "armijo,wolfe,fixed:0.001", "--directions", "steepest", "--workers", "2",
                 "--out", str(out), cwd=tmp_path, env_path=modules)
    assert bench.returncode == 0, bench.stderr
    assert "decay_fit" not in bench.stderr  # no error text
    assert f"Report: {out / 'report.html'}" in bench.stdout
    assert "Armijo()" in bench.stdout and "Fixed(0.001)" in bench.stdout
    with sqlite3.connect(out / "results.sqlite") as connection:
        rows = connection.execute("SELECT problem, controller, kind FROM runs").fetchall()
    assert sorted(rows)[0][0] == "decay_fit" and len(rows) == 3

    again = _run("bench", "--objective", "decay_model:make_problem", "--controllers",
                 "armijo,wolfe,fixed:0.001", "--directions", "steepest", "--out", str(out),
                 cwd=tmp_path, env_path=modules)
    assert again.returncode == 0
    assert "all already in" in again.stderr and "nothing left to run" in again.stderr
    assert "worker" not in again.stderr  # no workers announced for zero runs

    report = _run("report", str(out), "--csv", "--json", cwd=tmp_path)
    assert report.returncode == 0, report.stderr
    assert (out / "results.csv").read_text().count("decay_fit") == 3
    assert (out / "results.json").exists()


def test_a_file_path_objective_from_the_current_folder(tmp_path: Path, capsys) -> None:
    (tmp_path / "decay_script.py").write_text(USER_MODULE)
    status = cli.main(["bench", "--objective", f"{tmp_path / 'decay_script.py'}:make_problem",
                       "--controllers", "armijo", "--directions", "lbfgs", "--workers", "1",
                       "--out", str(tmp_path / "out"), "--no-report", "--quiet"])
    assert status == 0


def test_unknown_names_list_the_valid_ones(capsys) -> None:
    assert cli.main(["bench", "--controllers", "armijo,steepest-wolfe"]) == 2
    error = capsys.readouterr().err
    assert "Unknown controller 'steepest-wolfe'" in error
    assert "armijo" in error and "fixed:SIZE" in error
    assert cli.main(["bench", "--directions", "newton"]) == 2
    assert "Unknown direction 'newton'. Valid names: steepest, lbfgs" in capsys.readouterr().err
    assert cli.main(["bench", "--starts", "x"]) == 2
    assert "Unknown start 'x'" in capsys.readouterr().err
    assert cli.main(["bench", "nope"]) == 2
    assert "Unknown suite 'nope'" in capsys.readouterr().err
    assert cli.main(["bench", "--controllers", "fixed:big"]) == 2
    assert "fixed:0.01" in capsys.readouterr().err


def test_a_bad_objective_spec_is_named(tmp_path: Path, capsys) -> None:
    assert cli.main(["bench", "--objective", "no_such_module_here:make", "--out",
                     str(tmp_path)]) == 2
    error = capsys.readouterr().err
    assert "linestep bench: error: Cannot import 'no_such_module_here'" in error
    assert "'no_such_module_here:make'" in error
    assert not (tmp_path / "results.sqlite").exists()  # nothing started


def test_an_incompatible_results_file_is_a_clear_error(tmp_path: Path, capsys) -> None:
    pytest.importorskip("sklearn", reason="the default study's logistic problem needs "
                        "scikit-learn (linestep[bench])")
    (tmp_path / "results.sqlite").write_text("not a database\n" * 10)
    assert cli.main(["bench", "--controllers", "armijo", "--out", str(tmp_path)]) == 2
    assert "is not a linestep results file" in capsys.readouterr().err
    assert cli.main(["report", str(tmp_path)]) == 2
    assert "is not a linestep results file" in capsys.readouterr().err
    assert (tmp_path / "results.sqlite").read_text() == "not a database\n" * 10
    assert cli.main(["report", str(tmp_path / "missing")]) == 2
    assert "No results file" in capsys.readouterr().err


def test_help_has_examples(capsys) -> None:
    with pytest.raises(SystemExit):
        cli.main(["bench", "--help"])
    text = capsys.readouterr().out
    for piece in ("examples:", "--objective", "--scheduler", "fixed:SIZE", "linestep report"):
        assert piece in text


def test_the_default_controllers_cover_every_family() -> None:
    pytest.importorskip("sklearn", reason="the default study's logistic problem needs "
                        "scikit-learn (linestep[bench])")
    from linestep.bench.problems import get_problem
    from linestep.rules.fallback import Fallback
    from linestep.rules.fixed import Fixed

    args = cli.build_parser().parse_args(["bench", "--directions", "steepest"])
    study = cli.build_study(args, lambda text: None)
    assert len(study.controllers) == len(cli.DEFAULT_CONTROLLERS)
    per_problem = {c.label: c for _, c in study.controllers if isinstance(c, PerProblem)}
    assert set(per_problem) == {"Polyak(f_min=f*)", "Fixed(1/L)",
                                "Fallback(Fixed(1/L), Armijo())"}
    # the rate rule: 1/L with L the largest Hessian eigenvalue at the standard start; the
    # Rosenbrock Hessian at (-1.2, 1) is [[1330, 480], [480, 200]] (derived by hand),
    # whose largest eigenvalue numpy gives below
    rosenbrock = get_problem("rosenbrock")
    largest = np.linalg.eigvalsh(np.array([[1330.0, 480.0], [480.0, 200.0]])).max()
    fixed = per_problem["Fixed(1/L)"].build(rosenbrock)
    assert isinstance(fixed, Fixed) and fixed.size == pytest.approx(1 / largest, rel=1e-5)
    fallback = per_problem["Fallback(Fixed(1/L), Armijo())"].build(rosenbrock)
    assert isinstance(fallback, Fallback) and fallback.rule.size == fixed.size


def test_names_map_to_objects() -> None:
    from linestep.directions import LBFGS
    from linestep.rules.fallback import Fallback

    assert repr(cli.build_controller("fixed:0.5")) == "Fixed(size=0.5)"
    assert isinstance(cli.build_controller("fallback:0.5"), Fallback)
    assert cli.build_direction("lbfgs:3").memory == 3 and isinstance(
        cli.build_direction("lbfgs"), LBFGS)
    assert cli.build_start("x100").scale == 100 and cli.build_start("perturbed:0.2").noise == 0.2


def test_the_progress_bar_shows_rate_and_eta_off_a_terminal() -> None:
    pytest.importorskip("tqdm", reason="the progress bar needs tqdm (linestep[bench])")
    stream = io.StringIO()
    bar = cli.progress_bar(20, 5, stream=stream)
    for done in range(6, 21):
        cli._advance(bar, done, 20)
    bar.close()
    text = stream.getvalue()
    assert "20/20" in text and "run/s" in text and "\x1b" not in text


def test_version_and_a_bare_command_print_and_succeed(tmp_path: Path, capsys) -> None:
    from linestep import __version__

    with pytest.raises(SystemExit) as stop:
        cli.main(["--version"])
    assert stop.value.code == 0 and capsys.readouterr().out == f"linestep {__version__}\n"
    assert cli.main([]) == 0
    assert "usage: linestep" in capsys.readouterr().out
    bare = _run(cwd=tmp_path)
    assert bare.returncode == 0 and "usage: linestep" in bare.stdout and bare.stderr == ""


def test_messages_name_the_command_line_options(tmp_path: Path, capsys) -> None:
    assert cli.main(["report", "nosuchdir"]) == 2
    error = capsys.readouterr().err
    assert "`linestep bench --out nosuchdir`" in error and "'.'" not in error
    library = ("Stopped after 5 iterations, the budget of 5; raise `n` or loosen the "
               "convergence tolerances.")
    assert cli.command_line_wording(library) == (
        "Stopped after 5 iterations, the budget of 5; raise --max-iterations or loosen "
        "--gradient-atol.")
    evaluations = ("Used 12 evaluations (6 values + 6 gradients), reaching the budget of 10; "
                   "raise `n` to allow more.")
    assert "raise --max-evaluations to allow more" in cli.command_line_wording(evaluations)

    out = tmp_path / "short"
    assert cli.main(["bench", "--controllers", "armijo", "--directions", "steepest",
                     "--max-iterations", "3", "--workers", "1", "--out", str(out)]) == 0
    captured = capsys.readouterr()
    assert "raise --max-iterations (now 3)" in captured.out
    lines = captured.out.splitlines()
    table_end = lines.index("")
    assert [line.split(":")[0] for line in lines[table_end + 1:table_end + 6]] == [
        "solved", "not solved", "failed", "evaluations", "score"]
    assert "Writing the report" in captured.err
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "raise --max-iterations" in page and "raise `n`" not in page


@pytest.mark.slow
def test_the_default_study_runs_and_writes_a_report(tmp_path: Path) -> None:
    result = _run("bench", "--workers", "2", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    assert "Report: linestep-results/report.html" in result.stdout
    assert (tmp_path / "linestep-results" / "results.sqlite").exists()
    assert (tmp_path / "linestep-results" / "report.html").exists()
    assert textwrap.dedent(result.stdout).splitlines()[0].split()[:2] == ["#", "controller"]


def test_handled_overflow_warnings_do_not_reach_the_user(tmp_path: Path) -> None:
    # Wolfe + L-BFGS on Jennrich–Sampson overflows in the ray's slope (inf, handled as a
    # non-finite trial); numpy's RuntimeWarning used to reach stderr from the workers.
    (tmp_path / "overflowing.py").write_text(
        "from linestep.bench import get_problem\n\n"
        "def make():\n    return get_problem('jennrich_sampson')\n")
    result = _run("bench", "--objective", "overflowing:make", "--controllers", "wolfe",
                  "--directions", "lbfgs", "--workers", "2", "--no-report", "--out",
                  str(tmp_path / "out"), cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    assert "RuntimeWarning" not in result.stderr


def test_the_gradient_tolerance_option_is_named_like_the_library(capsys) -> None:
    # issue 12 item 9: --gradient-atol, as stopping.default(gradient_atol=...)
    args = cli.build_parser().parse_args(["bench", "--gradient-atol", "1e-3"])
    study = cli.build_study(args, lambda text: None)
    assert "atol=0.001" in repr(study.stop)
    with pytest.raises(SystemExit):
        cli.build_parser().parse_args(["bench", "--gradient-tol", "1e-3"])
    assert "--gradient-tol" in capsys.readouterr().err


def test_the_outcome_definitions_are_printed_under_the_table(tmp_path: Path, capsys) -> None:
    from linestep.bench._results import OUTCOMES

    status = cli.main(["bench", "quadratics", "--controllers", "armijo", "--workers", "1",
                       "--max-iterations", "50", "--out", str(tmp_path), "--no-report"])
    assert status == 0
    out = capsys.readouterr().out
    for word, text in OUTCOMES:  # one legend line per outcome, under the table
        line = next(line for line in out.splitlines() if line.startswith(word + ":"))
        assert text in line and out.index(line) > out.index("score")
