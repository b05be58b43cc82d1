"""`linestep bench` and `linestep report`: names, user objectives end to end, errors, progress."""

from __future__ import annotations

import io
import os
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

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
    assert "Armijo()" in bench.stdout and "Fixed(size=0.001)" in bench.stdout
    with sqlite3.connect(out / "results.sqlite") as connection:
        rows = connection.execute("SELECT problem, controller, kind FROM runs").fetchall()
    assert sorted(rows)[0][0] == "decay_fit" and len(rows) == 3

    again = _run("bench", "--objective", "decay_model:make_problem", "--controllers",
                 "armijo,wolfe,fixed:0.001", "--directions", "steepest", "--out", str(out),
                 cwd=tmp_path, env_path=modules)
    assert again.returncode == 0 and "3 already in" in again.stderr

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
    args = cli.build_parser().parse_args(["bench", "--directions", "steepest"])
    study = cli.build_study(args, lambda text: None)
    labels = {label or type(c).__name__ for label, c in study.controllers}
    present = [name for name in cli.DEFAULT_CONTROLLERS if name in cli.CONTROLLERS]
    assert len(study.controllers) == len(present) >= 2
    assert any(isinstance(c, PerProblem) for _, c in study.controllers) == ("polyak" in present)
    assert labels  # every entry built


def test_names_map_to_objects() -> None:
    from linestep.directions import LBFGS
    from linestep.rules.fallback import Fallback

    assert repr(cli.build_controller("fixed:0.5")) == "Fixed(size=0.5)"
    assert isinstance(cli.build_controller("fallback:0.5"), Fallback)
    assert cli.build_direction("lbfgs:3").memory == 3 and isinstance(
        cli.build_direction("lbfgs"), LBFGS)
    assert cli.build_start("x100").scale == 100 and cli.build_start("perturbed:0.2").noise == 0.2


def test_the_progress_bar_writes_plain_lines_off_a_terminal() -> None:
    stream = io.StringIO()
    bar = cli.ProgressBar(20, stream=stream)
    for done in range(1, 21):
        bar(done, 20)
    lines = stream.getvalue().splitlines()
    # a line at the first finished run, then one per further tenth
    assert len(lines) == 11 and lines[-1].startswith("[" + "#" * 30 + "] 20/20 runs")


@pytest.mark.slow
def test_the_default_study_runs_and_writes_a_report(tmp_path: Path) -> None:
    result = _run("bench", "--workers", "2", cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    assert "Report: linestep-results/report.html" in result.stdout
    assert (tmp_path / "linestep-results" / "results.sqlite").exists()
    assert (tmp_path / "linestep-results" / "report.html").exists()
    assert textwrap.dedent(result.stdout).splitlines()[0].split()[:2] == ["#", "controller"]
