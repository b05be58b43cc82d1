"""The report: ranking order everywhere, winners, headline, figures' scales and styles, HTML."""

from __future__ import annotations

from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest

from linestep import Armijo, BarzilaiBorwein, Wolfe, stopping
from linestep.bench import (
    Results,
    RunRecord,
    Study,
    get_problem,
    polyak_at_optimum,
    report,
    run_study,
)
from linestep.bench.profiles import DEFAULT_LOG2_TAU_MAX
from linestep.directions import LBFGS, SteepestDescent
from linestep.rules.fixed import Fixed


@pytest.fixture(scope="module")
def results() -> Results:
    study = Study(problems=[get_problem(name) for name in ("beale", "rosenbrock",
                                                            "brown_dennis")],
                  controllers=[Armijo(), Wolfe(), BarzilaiBorwein(), polyak_at_optimum(),
                               Fixed(1e-3)],
                  directions=[SteepestDescent(), LBFGS()],
                  stop=stopping.default(max_iterations=300))
    return run_study(study, workers=1)


def _record(problem: str, controller: str, evaluations: int, solved: bool,
            kind: str = "converged", seed: int | None = None) -> RunRecord:
    """An invented record: only the fields the ranking reads are meaningful."""
    return RunRecord(key=f"{problem}-{controller}-{seed}", problem=problem, dimension=2,
                     controller=controller, controller_repr=controller,
                     direction="SteepestDescent()", start="standard", seed=seed, stop="stop",
                     kind=kind, reason="invented", value=0.0 if solved else 1.0,
                     initial_value=2.0, optimal_values=(0.0,), iterations=1,
                     value_evaluations=evaluations,
                     gradient_evaluations=0, seconds=0.0, objective_seconds=0.0, error=None,
                     x=None, history=None)


# --- ranking, winners, headline --------------------------------------------------------------


def test_winners_are_the_cheapest_solver_that_solved_each_instance() -> None:
    invented = Results([
        _record("p", "A()", 10, True), _record("p", "B()", 5, False, "failed"),
        _record("p", "C()", 20, True),
        _record("q", "A()", 30, True), _record("q", "B()", 7, True),
        _record("q", "C()", 8, True),
        _record("r", "A()", 1, False), _record("r", "B()", 1, False),
        _record("r", "C()", 1, False),
    ])
    rows = report.ranking(invented)
    table = report.winners(invented)
    assert [w["winner"] for w in table] == ["A()", "B()", None]  # B's 5 on p was not solved
    assert [w["solved_by"] for w in table] == [2, 3, 0]
    assert {row["solver"]: row["wins"] for row in rows} == {"A()": 1, "B()": 1, "C()": 0}
    # robustness first (A and C solved 2 of 3, B 1 of 3), then cost:
    # A's solved costs are 10 and 30 (median 20), C's 20 and 8 (median 14): C is recommended.
    assert report.recommend(rows)["solver"] == "C()"
    sentence = report.headline(rows, table)
    assert sentence.startswith("Best set-up here (robustness first, then cost): C()")
    assert "solved 2 of 3 runs" in sentence


def test_a_tie_for_the_win_goes_to_the_better_ranked_solver() -> None:
    invented = Results([_record("p", "A()", 10, True), _record("p", "B()", 10, True),
                        _record("q", "A()", 5, True), _record("q", "B()", 9, True)])
    assert [w["winner"] for w in report.winners(invented)] == ["A()", "A()"]


def test_nothing_solved_says_so() -> None:
    invented = Results([_record("p", "A()", 10, False)])
    assert report.headline(report.ranking(invented), report.winners(invented)) == (
        "No solver solved any problem instance in these results.")


def test_a_single_instance_study_is_told_profiles_are_single_steps() -> None:
    single = Results([_record("p", "A()", 10, True), _record("p", "B()", 12, True)])
    note = report.single_instance_note(single)
    assert note is not None and "single step" in note
    assert "--starts perturbed:" in note and "--seeds" in note
    several = Results([_record("p", "A()", 10, True), _record("p", "A()", 10, True, seed=1)])
    assert report.single_instance_note(several) is None


def test_the_legend_defines_each_word_on_one_line() -> None:
    lines = report.format_legend().splitlines()
    assert [line.split(":")[0] for line in lines] == ["solved", "not solved", "failed",
                                                      "evaluations", "score"]
    assert f"2^{DEFAULT_LOG2_TAU_MAX:g}" in lines[-1]


# --- figures ---------------------------------------------------------------------------------


def _lines(axes) -> dict[str, object]:
    return {line.get_label(): line for line in axes.get_lines()
            if not line.get_label().startswith("_")}


def test_every_solver_has_its_own_style_and_the_direction_shows_in_it(results: Results) -> None:
    pytest.importorskip("matplotlib", reason="plots need matplotlib (linestep[bench])")
    styles = report.solver_styles(results)
    assert set(styles) == set(results.solvers())
    keys = [(style["color"], str(style["linestyle"]), style.get("marker")) for style
            in styles.values()]
    assert len(set(keys)) == len(keys)
    for solver, style in styles.items():
        assert style["linestyle"] == ("--" if "LBFGS" in solver else "-")
    # one controller keeps its colour across directions
    assert styles["Armijo() + SteepestDescent()"]["color"] == \
        styles["Armijo() + LBFGS()"]["color"]


def test_many_solvers_still_get_distinct_styles() -> None:
    pytest.importorskip("matplotlib", reason="plots need matplotlib (linestep[bench])")
    many = Results([_record("p", f"Solver{i}()", 10 + i, True) for i in range(25)])
    keys = [(s["color"], str(s["linestyle"]), s.get("marker"))
            for s in report.solver_styles(many).values()]
    assert len(keys) == 25 and len(set(keys)) == 25


def test_convergence_plots_use_log_axes_and_the_ranking_order(results: Results) -> None:
    pytest.importorskip("matplotlib", reason="plots need matplotlib (linestep[bench])")
    figure = report.convergence_figure(results, results.instances()[0])
    gap_axes, gradient_axes = figure.axes
    for axes in (gap_axes, gradient_axes):
        assert (axes.get_xscale(), axes.get_yscale()) == ("log", "log")
    order = report.solver_order(results)
    legend = figure.legends[0]
    assert [text.get_text() for text in legend.get_texts()] == order
    styles = report.solver_styles(results)
    for label, line in _lines(gradient_axes).items():
        assert line.get_color() == styles[label]["color"]
        assert np.all(np.diff(line.get_ydata()) <= 0)  # the running minimum never rises


def test_the_performance_profile_axis_ends_where_the_score_integrates(results: Results) -> None:
    pytest.importorskip("matplotlib", reason="plots need matplotlib (linestep[bench])")
    figure = report.performance_figure(results)
    axes = figure.axes[0]
    assert axes.get_xscale() == "log"
    assert axes.get_xlim() == pytest.approx((1.0, 2.0 ** DEFAULT_LOG2_TAU_MAX))
    assert [t.get_text() for t in figure.legends[0].get_texts()] == report.solver_order(results)
    data = report.data_figure(results)
    assert [t.get_text() for t in data.legends[0].get_texts()] == report.solver_order(results)


# --- HTML ------------------------------------------------------------------------------------


class _Page(HTMLParser):
    """Checks nesting, collects images and the text of each table's cells."""

    VOID = {"meta", "img", "br", "hr", "link", "input"}

    def __init__(self) -> None:
        super().__init__()
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.images: list[dict[str, str | None]] = []
        self.tables: list[list[list[str]]] = []
        self.headings: list[str] = []
        self._cell: list[str] | None = None
        self._heading: list[str] | None = None

    def handle_starttag(self, tag: str, attrs: list) -> None:
        if tag == "img":
            self.images.append(dict(attrs))
        if tag in self.VOID:
            return
        self.stack.append(tag)
        if tag == "table":
            self.tables.append([])
        elif tag == "tr":
            self.tables[-1].append([])
        elif tag in ("td", "th"):
            self._cell = []
        elif tag == "h2":
            self._heading = []

    def handle_endtag(self, tag: str) -> None:
        if tag in self.VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes <{self.stack[-1] if self.stack else None}>")
            return
        self.stack.pop()
        if tag in ("td", "th"):
            self.tables[-1][-1].append("".join(self._cell))
            self._cell = None
        elif tag == "h2":
            self.headings.append("".join(self._heading))
            self._heading = None

    def handle_data(self, data: str) -> None:
        if self._cell is not None:
            self._cell.append(data)
        if self._heading is not None:
            self._heading.append(data)


def test_the_html_report_is_well_formed_and_in_ranking_order(results: Results,
                                                              tmp_path: Path) -> None:
    pytest.importorskip("matplotlib", reason="plots need matplotlib (linestep[bench])")
    path = report.write_html(results, tmp_path / "report.html")
    page = _Page()
    page.feed(path.read_text(encoding="utf-8"))
    page.close()
    assert page.errors == [] and page.stack == []
    assert len(page.images) == 2 + len(results.instances())
    for image in page.images:
        alt = image.get("alt") or ""
        assert len(alt) > 40 and alt.lower() != "figure", alt
        assert image["src"].startswith("data:image/png;base64,")
    order = report.solver_order(results)
    ranking_table, winners_table, solvers_table, runs_table = page.tables
    assert [row[1] for row in ranking_table[1:]] == order
    assert [row[1] for row in solvers_table[1:]] == order
    assert len(winners_table) == 1 + len(results.instances())
    # the run table: per instance, solvers in ranking order
    first_instance = [row[1] for row in runs_table[1:] if row[0] == "beale"]
    assert first_instance == [s for s in order if s in first_instance]
    text = path.read_text(encoding="utf-8")
    assert "Best set-up here (robustness first, then cost)" in text
    # Polyak is built per problem: the solver table says so instead of one problem's f*
    polyak = [row for row in solvers_table if row[1].startswith("Polyak")][0]
    assert polyak[2].startswith("built per problem (2 settings)")


def test_reasons_can_be_worded_for_the_reader(results: Results, tmp_path: Path) -> None:
    pytest.importorskip("matplotlib", reason="plots need matplotlib (linestep[bench])")
    path = report.write_html(results, tmp_path / "report.html",
                             reason_wording=lambda text: text.replace("raise `n`", "RAISE"))
    text = path.read_text(encoding="utf-8")
    assert "RAISE" in text and "raise `n`" not in text
