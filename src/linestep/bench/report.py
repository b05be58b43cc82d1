"""Reports of a study: ranking table, CSV/JSON export, profile and convergence plots, HTML.

Every figure is defined in ``docs/bench/figures.md``. In short:

* **ranking**: one row per solver (controller, plus direction when several were
  run): runs, runs solved, runs failed, the median evaluations over its solved
  runs, and the robustness score (area under the performance profile on a log₂
  τ axis up to τ = 2¹⁰, divided by 10; see `linestep.bench.profiles`). Rows are
  sorted by score, then solved count, then median evaluations. This order is
  the one order of every legend and table of a report.
* **winners**: per problem instance, the solver that solved it with the fewest
  evaluations; `headline` turns the ranking into the report's first sentence
  (`recommend`: robustness first, then cost).
* **performance profile** (Dolan and Moré 2002), cost = value + gradient
  evaluations of solved runs, on a τ axis ending where the score's integral ends.
* **data profiles** (Moré and Wild 2009) at τ = 1e-3 and 1e-7.
* **convergence plots**: per problem instance, f − f_ref and ‖∇f‖∞ (running
  minimum, raw curve faint) against evaluations on log-log axes, one line per
  solver: colour by controller, line style by direction (`solver_styles`).

Plots use matplotlib's Agg canvas directly (no pyplot, no global backend
change); matplotlib is imported only when a plot is drawn.

Examples
--------
>>> from linestep import Armijo, stopping
>>> from linestep.bench import Study, get_problem, run_study
>>> from linestep.bench.report import format_ranking, ranking
>>> results = run_study(Study(problems=[get_problem("beale")], controllers=[Armijo()],
...                           stop=stopping.default(max_iterations=2000)), workers=1)
>>> print(format_ranking(ranking(results)))  # doctest: +NORMALIZE_WHITESPACE +ELLIPSIS
#  controller  runs  solved  failed  median evals (solved)  score
1  Armijo()       1       1       0  ...  1.000
"""

from __future__ import annotations

import base64
import csv
import datetime
import html
import json
import math
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from linestep.bench._results import Results
from linestep.bench.profiles import (
    DEFAULT_LOG2_TAU_MAX,
)

__all__ = [
    "LEGEND",
    "convergence_figure",
    "data_figure",
    "format_legend",
    "format_ranking",
    "headline",
    "performance_figure",
    "ranking",
    "recommend",
    "single_instance_note",
    "solver_order",
    "solver_styles",
    "winners",
    "write_csv",
    "write_html",
    "write_json",
    "write_report",
]

from linestep.bench._figures import (
    MAX_CONVERGENCE_PLOTS,
    _encode,
    _slug,
    convergence_figure,
    data_figure,
    performance_figure,
    solver_styles,
    write_figures,
)
from linestep.bench._ranking import (
    LEGEND,
    _number,
    format_legend,
    format_ranking,
    headline,
    ranking,
    recommend,
    single_instance_note,
    solver_order,
    winners,
)
from linestep.bench._rule import recommendation_sentences

CSV_COLUMNS = ("solver", "problem", "dimension", "start", "seed", "controller", "direction",
               "kind", "reason", "value", "initial_value", "optimum", "gap", "solved",
               "iterations", "value_evaluations", "gradient_evaluations", "evaluations",
               "seconds", "objective_seconds", "error", "controller_repr", "stop", "key")


# --- export -------------------------------------------------------------------------------


def write_csv(results: Results, path: str | Path) -> Path:
    """One row per run (no history, no final point), columns `CSV_COLUMNS`."""
    path = Path(path)
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=CSV_COLUMNS, extrasaction="ignore")
        writer.writeheader()
        for row in results.to_rows():
            writer.writerow({key: "" if row.get(key) is None else _cell(row[key])
                             for key in CSV_COLUMNS})
    return path


def _cell(value: Any) -> Any:
    """A text cell a spreadsheet would run as a formula (= + - @, tab, CR) gets a quote."""
    if isinstance(value, str) and value[:1] in ("=", "+", "-", "@", "\t", "\r"):
        return "'" + value
    return value


def _json_safe(value: Any) -> Any:
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {key: _json_safe(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [_json_safe(item) for item in value]
    return value


def write_json(results: Results, path: str | Path) -> Path:
    """All runs with their histories and final points; non-finite numbers become null."""
    from linestep.bench.storage import FORMAT, SCHEMA_VERSION

    document = {"format": FORMAT, "schema_version": SCHEMA_VERSION,
                "runs": _json_safe(results.to_rows(history=True))}
    path = Path(path)
    path.write_text(json.dumps(document, indent=1), encoding="utf-8")
    return path


# --- HTML ---------------------------------------------------------------------------------

_STYLE = """
body { font-family: system-ui, sans-serif; margin: 2em auto; max-width: 70em; color: #222; }
table { border-collapse: collapse; font-size: 0.9em; }
th, td { border-bottom: 1px solid #ddd; padding: 0.25em 0.6em; text-align: right; }
th { background: #f4f4f4; }
td.text, th.text { text-align: left; }
code { font-size: 0.9em; }
img { max-width: 100%; }
.note { color: #555; font-size: 0.9em; }
.headline { font-size: 1.1em; }
.warning { background: #fff6dd; border-left: 4px solid #e0a800; padding: 0.4em 0.8em; }
details { margin: 0.6em 0; }
"""


def _image(figure: Any, alt: str) -> str:
    data = base64.b64encode(_encode(figure, "png")).decode("ascii")
    return f'<img alt="{html.escape(alt)}" src="data:image/png;base64,{data}">'


def _html_table(header: Sequence[str], rows: Sequence[Sequence[Any]],
                text_columns: Sequence[int] = (1,)) -> str:
    def cell(tag: str, i: int, value: Any) -> str:
        css = ' class="text"' if i in text_columns else ""
        return f"<{tag}{css}>{html.escape('' if value is None else str(value))}</{tag}>"

    head = "".join(cell("th", i, name) for i, name in enumerate(header))
    body = "".join("<tr>" + "".join(cell("td", i, v) for i, v in enumerate(row)) + "</tr>"
                   for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _format(value: Any) -> str:
    if value is None:
        return "-"
    if isinstance(value, float):
        return f"{value:.6g}"
    return str(value)


def _instance_text(instance: tuple) -> str:
    problem, dimension, start, seed = instance
    return f"{problem} (n={dimension}, {start}" + ("" if seed is None else f", seed {seed}") + ")"


def _controller_settings(results: Results, solver: str) -> str:
    """The exact controller of a solver, or how it varies when it is built per problem."""
    by_problem = dict.fromkeys((r.controller_repr, r.problem) for r in results
                               if results.solver(r) == solver)
    settings = list(dict.fromkeys(setting for setting, _ in by_problem))
    if len(settings) == 1:
        return settings[0]
    examples = {}
    for setting, problem in by_problem:
        examples.setdefault(setting, problem)
    shown = "; ".join(f"{setting} on {problem}" for setting, problem
                      in list(examples.items())[:3])
    return (f"built per problem ({len(settings)} settings), e.g. {shown}"
            + ("; …" if len(settings) > 3 else ""))


def _legend_html() -> str:
    return "".join(f"<b>{html.escape(word.capitalize())}</b>: {html.escape(text)}. "
                   for word, text in LEGEND)


def write_html(results: Results, path: str | Path, *, title: str = "linestep benchmark report",
               source: str | None = None,
               convergence_limit: int = MAX_CONVERGENCE_PLOTS,
               reason_wording: Callable[[str], str] | None = None,
               preface: str | None = None) -> Path:
    """One self-contained HTML file: tables and base64-embedded PNG plots, no external files.

    Every table and legend lists solvers in ranking order. `reason_wording`, if
    given, rewrites each run's reason for the reader (the command line passes one
    that names its options instead of the library's arguments). The report opens
    with `preface` (an HTML fragment, e.g. the Recommendation section of
    ``linestep advise``), if given, then one recommendation sentence per direction
    family (the rule of `linestep.advice`: robustness first, then cost).
    """

    rows = ranking(results)
    order = [row["solver"] for row in rows]
    rank = {solver: i for i, solver in enumerate(order)}
    best = winners(results)
    created = datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    instances = results.instances()
    word = reason_wording or (lambda text: text)
    parts = [
        f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        f"<title>{html.escape(title)}</title><style>{_STYLE}</style></head><body>",
        f"<h1>{html.escape(title)}</h1>",
        preface or "",
        "".join(f"<p><b>{html.escape(text)}</b></p>" for text in recommendation_sentences(results)),
        f"<p class='note'>{len(results)} runs on {len(instances)} problem instances, "
        f"{len(rows)} solvers. Written {created}"
        + (f" from <code>{html.escape(source)}</code>" if source else "") + ".</p>",
        f"<p class='headline'>{html.escape(headline(rows, best))}</p>",
    ]
    note = single_instance_note(results)
    if note is not None:
        parts.append(f"<p class='warning'>{html.escape(note)}</p>")
    parts += [
        "<h2>Ranking</h2>",
        _html_table(["#", "solver", "runs", "solved", "failed", "median evaluations (solved)",
                     "robustness score", "instances won"],
                    [[r["rank"], r["solver"], r["runs"], r["solved"], r["failed"],
                      _number(r["median"]), f"{r['score']:.3f}", r["wins"]] for r in rows]),
        f"<p class='note'>{_legend_html()}<b>Instances won</b>: instances on which the "
        "solver solved with the fewest evaluations (ties go to the better rank). "
        "Definitions: docs/bench/figures.md.</p>",
        "<h2>Winner per problem instance</h2>",
        _html_table(["problem instance", "winner (fewest evaluations among solvers that "
                     "solved it)", "evaluations", "solved by"],
                    [[_instance_text(w["instance"]), w["winner"] or "none solved it",
                      _number(w["cost"]), f"{w['solved_by']} of {w['solvers']}"]
                     for w in best], (0, 1)),
    ]
    if len(results):
        count = f"{len(rows)} solvers on {len(instances)} problem instances"
        parts += ["<h2>Performance profile</h2>",
                  _image(performance_figure(results),
                         f"Performance profiles of {count}: fraction of instances each solver "
                         f"solves within τ times the fewest evaluations, τ from 1 to "
                         f"2^{DEFAULT_LOG2_TAU_MAX:g}; legend in ranking order, best: "
                         f"{order[0]}"),
                  "<p class='note'>ρ(τ): fraction of problems a solver solves within τ times "
                  "the fewest evaluations of any solver (Dolan &amp; Moré 2002); failures never "
                  f"count. The axis ends at τ = 2<sup>{DEFAULT_LOG2_TAU_MAX:g}</sup>, where the "
                  "robustness score's integral ends.</p>",
                  "<h2>Data profiles</h2>",
                  _image(data_figure(results),
                         f"Data profiles of {count}: fraction of instances each solver brings "
                         "within τ = 1e-3 and τ = 1e-7 of the best value against the budget "
                         "in evaluations per (n + 1)"),
                  "<p class='note'>d(κ): fraction of problems on which f(x₀) − f(x) ≥ (1 − τ)"
                  "(f(x₀) − f_L) within κ·(n + 1) evaluations; f_L is the lowest value any run "
                  "reached (Moré &amp; Wild 2009).</p>",
                  "<h2>Convergence per problem</h2>",
                  "<p class='note'>Both axes are logarithmic. Line colour: the controller; "
                  "line style: the direction (solid: steepest descent, dashed: L-BFGS, "
                  "dotted: nonlinear CG). Each panel draws each run's best value so far, "
                  "with the raw curve faint beneath it where the run oscillates.</p>"]
        for index, instance in enumerate(instances[:convergence_limit]):
            state = " open" if index == 0 else ""
            winner = best[index]["winner"]
            alt = (f"Convergence on {_instance_text(instance)}: value gap and gradient norm "
                   "against evaluations for each solver, log-log; "
                   + (f"fewest evaluations: {winner}" if winner else "no solver solved it"))
            parts.append(f"<details{state}><summary>{html.escape(_slug(instance))}</summary>"
                         f"{_image(convergence_figure(results, instance), alt)}</details>")
        if len(instances) > convergence_limit:
            parts.append(f"<p class='note'>{len(instances) - convergence_limit} more "
                         "instances not plotted.</p>")
    first = {}
    for record in results:
        first.setdefault(results.solver(record), record)
    parts += ["<h2>Solvers</h2>",
              _html_table(["#", "solver", "controller (exact)", "direction"],
                          [[rank[s] + 1, s, _controller_settings(results, s),
                            first[s].direction] for s in order], (1, 2, 3))]
    stops = list(dict.fromkeys(r.stop for r in results))
    parts += ["<h2>Stopping rules</h2><ol>"
              + "".join(f"<li><code>{html.escape(s)}</code></li>" for s in stops) + "</ol>"]
    records = sorted(results, key=lambda r: (instances.index(r.instance),
                                             rank[results.solver(r)]))
    run_rows = [[r.problem, results.solver(r), r.start, _format(r.seed), r.kind,
                 "yes" if results.is_solved(r) else "no", _format(r.value),
                 _format(results.gap(r)), r.iterations, r.evaluations, f"{r.seconds:.3g}",
                 word(r.reason)] for r in records]
    parts += ["<details><summary>All runs</summary>",
              _html_table(["problem", "solver", "start", "seed", "verdict", "solved", "f",
                           "gap", "iterations", "evaluations", "seconds", "reason"],
                          run_rows, (0, 1, 2, 4, 11)),
              "</details>", "</body></html>"]
    path = Path(path)
    path.write_text("\n".join(parts), encoding="utf-8")
    return path


def write_report(source: str | Path | Results, out: str | Path | None = None, *,
                 html: bool = True, csv: bool = False, json: bool = False,
                 figures: str | None = None,
                 reason_wording: Callable[[str], str] | None = None) -> dict[str, Path]:
    """Write the chosen report files and return their paths by kind.

    Parameters
    ----------
    source : folder, results file, or Results
    out : folder, optional
        Where to write; default the folder of `source` (required for Results).
    html, csv, json : bool
        ``report.html``, ``results.csv``, ``results.json``.
    figures : {"png", "svg"}, optional
        Also save each figure as a file under ``out/figures/``.
    reason_wording : callable, optional
        Passed to `write_html`.
    """
    if isinstance(source, Results):
        results, where = source, None
        if out is None:
            raise ValueError("`out` is required when `source` is a Results object.")
    else:
        source = Path(source)
        results, where = Results.load(source), str(source)
        if out is None:
            out = source if source.is_dir() else source.parent
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    written: dict[str, Path] = {}
    if html:
        written["html"] = write_html(results, out / "report.html", source=where,
                                     reason_wording=reason_wording)
    if csv:
        written["csv"] = write_csv(results, out / "results.csv")
    if json:
        written["json"] = write_json(results, out / "results.json")
    if figures is not None:
        write_figures(results, out / "figures", form=figures)
        written["figures"] = out / "figures"
    return written

