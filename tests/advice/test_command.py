"""`linestep advise MODULE:FUNCTION`: the line to paste first, JSON, the report, errors."""

from __future__ import annotations

import json
from pathlib import Path

from linestep import cli

SPEC = str(Path(__file__).with_name("scenario.py")) + ":make_problem"


def test_prints_the_line_to_paste_first_and_writes_the_report(tmp_path, capsys):
    status = cli.main(["advise", SPEC, "--loop", "steepest", "--starts", "2", "--budget",
                       "8000", "--out", str(tmp_path)])
    out = capsys.readouterr().out
    assert status == 0
    first = out.splitlines()[0]
    assert first.endswith(", SteepestDescent()")
    assert "solved from 2 of 2 starts" in out
    report = (tmp_path / "report.html").read_text(encoding="utf-8")
    assert report.index("<h2>Recommendation</h2>") < report.index("<h2>Ranking</h2>")
    assert first in report
    assert (tmp_path / "results.sqlite").exists()


def test_json_for_machines(tmp_path, capsys):
    status = cli.main(["advise", SPEC, "--loop", "quasi_newton", "--seeds", "3,4", "--budget",
                       "4000", "--out", str(tmp_path), "--json", "--no-report"])
    document = json.loads(capsys.readouterr().out)
    assert status == 0
    assert document["code"].endswith(", LBFGS()")
    assert document["report"] is None
    assert document["smoothness"]["status"] == "converged"
    assert {row["direction"] for row in document["standings"]} == {"LBFGS()"}
    assert all(row["runs"] == 3 for row in document["standings"])


def test_bad_spec_and_bad_budget_exit_2(tmp_path, capsys):
    assert cli.main(["advise", "no_such_module_here:make", "--out", str(tmp_path)]) == 2
    assert "linestep advise: error:" in capsys.readouterr().err
    assert cli.main(["advise", SPEC, "--budget", "50", "--out", str(tmp_path)]) == 2
    assert "too small" in capsys.readouterr().err
    two = str(Path(__file__).with_name("scenario.py")) + ":make_two"
    assert cli.main(["advise", two, "--out", str(tmp_path)]) == 2
    assert "advise takes one" in capsys.readouterr().err


def test_any_study_report_opens_with_one_sentence_per_direction(tmp_path):
    from linestep import LBFGS, Armijo, SteepestDescent, Wolfe
    from linestep.bench import Study, get_problem, run_study
    from linestep.bench.report import write_html

    results = run_study(Study(problems=[get_problem("beale")], controllers=[Armijo(), Wolfe()],
                              directions=[SteepestDescent(), LBFGS()]), workers=1)
    text = write_html(results, tmp_path / "report.html").read_text(encoding="utf-8")
    head = text[: text.index("<h2>Ranking</h2>")]
    assert head.count("<p><b>With ") == 2
    assert "With SteepestDescent(), use" in head and "With LBFGS(), use" in head


def test_demo_shows_the_diagnosis_of_its_diverging_fixed_rate():
    from linestep._demo import TOO_LARGE_RATE, run_demo

    lines: list[str] = []
    run_demo(lines.append)
    [line] = [text for text in lines if "diagnose(run)" in text]
    assert f"Fixed({TOO_LARGE_RATE})" in line and "too_large" in line
    assert "below your rate 1" in line
