"""Reports of a study: ranking table, CSV/JSON export, profile and convergence plots, HTML.

Every figure is defined in ``docs/bench/figures.md``. In short:

* **ranking**: one row per solver (controller, plus direction when several were
  run): runs, runs solved, runs failed, the median evaluations over its solved
  runs, and the robustness score (area under the performance profile on a log₂
  τ axis up to τ = 2¹⁰, divided by 10; see `linestep.bench.profiles`). Rows are
  sorted by score, then solved count, then median evaluations.
* **performance profile** (Dolan and Moré 2002), cost = value + gradient
  evaluations of solved runs.
* **data profiles** (Moré and Wild 2009) at τ = 1e-3 and 1e-7.
* **convergence plots**: per problem instance, f − f_ref and ‖∇f‖∞ against
  evaluations, one line per solver.

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
import io
import json
import math
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from linestep import _validate
from linestep.bench.harness import Results
from linestep.bench.profiles import (
    DEFAULT_LOG2_TAU_MAX,
    data_profile,
    performance_profile,
    performance_ratios,
    robustness_score,
)

__all__ = [
    "convergence_figure",
    "data_figure",
    "format_ranking",
    "performance_figure",
    "ranking",
    "write_csv",
    "write_html",
    "write_json",
    "write_report",
]

# Moré–Wild tolerances τ of the data profiles in reports (a loose and a tight one).
DATA_PROFILE_TOLERANCES = (1e-3, 1e-7)
# At most this many convergence plots go into an HTML report (one per problem instance).
MAX_CONVERGENCE_PLOTS = 40
# Terminal table: longer solver labels are cut with an ellipsis.
LABEL_WIDTH = 64
# Figure resolution (dots per inch) for PNG output: small files, readable text.
PNG_DPI = 90
# Inches on the right of each figure for the legend (labels up to 52 characters).
LEGEND_WIDTH = 3.8
# Floor of the plotted gap f − f_ref, relative to max(1, |f_ref|), so log axes work.
GAP_FLOOR = 1e-16

CSV_COLUMNS = ("solver", "problem", "dimension", "start", "seed", "controller", "direction",
               "kind", "reason", "value", "initial_value", "optimum", "gap", "solved",
               "iterations", "value_evaluations", "gradient_evaluations", "evaluations",
               "seconds", "objective_seconds", "error", "controller_repr", "stop", "key")


# --- ranking ------------------------------------------------------------------------------


def ranking(results: Results, *, measure: str = "evaluations",
            log2_tau_max: float = DEFAULT_LOG2_TAU_MAX) -> list[dict[str, Any]]:
    """One row per solver, best first (see the module docstring for the columns).

    Returns dicts with keys ``rank``, ``solver``, ``runs``, ``solved``, ``failed``,
    ``median`` (the median cost over solved runs, None if none solved) and ``score``.
    """
    _, solvers, costs = results.cost_matrix(measure)
    scores = robustness_score(costs, log2_tau_max=log2_tau_max)
    by_solver: dict[str, list] = {solver: [] for solver in solvers}
    for record in results:
        by_solver[results.solver(record)].append(record)
    rows = []
    for j, (solver, records) in enumerate(by_solver.items()):
        solved = costs[:, j][np.isfinite(costs[:, j])]
        rows.append({
            "solver": solver,
            "runs": len(records),
            "solved": sum(results.is_solved(r) for r in records),
            "failed": sum(r.kind == "failed" for r in records),
            "median": float(np.median(solved)) if solved.size else None,
            "score": float(scores[j]),
        })
    rows.sort(key=lambda row: (-row["score"], -row["solved"],
                               math.inf if row["median"] is None else row["median"]))
    for rank, row in enumerate(rows, start=1):
        row["rank"] = rank
    return rows


def _cut(text: str, width: int = LABEL_WIDTH) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


def _number(value: float | None) -> str:
    if value is None:
        return "-"
    return f"{value:.0f}" if value == int(value) else f"{value:.1f}"


def format_ranking(rows: Sequence[dict[str, Any]], *, measure: str = "evaluations") -> str:
    """The ranking as a fixed-width text table."""
    header = ("#", "controller", "runs", "solved", "failed", f"median {_cost_name(measure)} "
              "(solved)", "score")
    body = [(str(row["rank"]), _cut(row["solver"]), str(row["runs"]), str(row["solved"]),
             str(row["failed"]), _number(row["median"]), f"{row['score']:.3f}")
            for row in rows]
    widths = [max(len(line[i]) for line in [header, *body]) for i in range(len(header))]
    lines = []
    for line in [header, *body]:
        cells = [cell.ljust(width) if i == 1 else cell.rjust(width)
                 for i, (cell, width) in enumerate(zip(line, widths, strict=True))]
        lines.append("  ".join(cells).rstrip())
    return "\n".join(lines)


def _cost_name(measure: str) -> str:
    return {"evaluations": "evals"}.get(measure, measure)


# --- export -------------------------------------------------------------------------------


def write_csv(results: Results, path: str | Path) -> Path:
    """One row per run (no history, no final point), columns `CSV_COLUMNS`."""
    path = Path(path)
    with path.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=CSV_COLUMNS, extrasaction="ignore")
        writer.writeheader()
        for row in results.to_rows():
            writer.writerow({key: "" if row.get(key) is None else row[key]
                             for key in CSV_COLUMNS})
    return path


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


# --- figures ------------------------------------------------------------------------------


def _new_figure(width: float, height: float) -> Any:
    """A figure of plot area `width` × `height` inches plus a legend column on the right."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    total = width + LEGEND_WIDTH
    figure = Figure(figsize=(total, height))
    # fixed margins: a layout engine would double the drawing time of each figure
    figure.subplots_adjust(left=0.7 / total, right=(width - 0.15) / total,
                           bottom=0.55 / height, top=1 - 0.35 / height, wspace=2.2 / width)
    FigureCanvasAgg(figure)
    return figure


def _styles(count: int) -> list[dict[str, Any]]:
    from matplotlib import colormaps

    colors = colormaps["tab10"].colors
    dashes = ["-", "--", ":", "-."]
    return [{"color": colors[i % 10], "linestyle": dashes[(i // 10) % 4]} for i in range(count)]


def _legend(figure: Any, axes: Any) -> None:
    handles, labels = axes.get_legend_handles_labels()
    if handles:
        width, height = figure.get_size_inches()
        figure.legend(handles, [_cut(label, 52) for label in labels], fontsize="small",
                      loc="upper left", frameon=False,
                      bbox_to_anchor=(1 - (LEGEND_WIDTH - 0.1) / width, 1 - 0.3 / height))


def performance_figure(results: Results, *, measure: str = "evaluations") -> Any:
    """Dolan–Moré performance profiles ρ_s(τ) on a log₂ τ axis (a matplotlib Figure)."""
    _, solvers, costs = results.cost_matrix(measure)
    figure = _new_figure(5.6, 3.6)
    axes = figure.add_subplot()
    ratios = performance_ratios(costs)
    finite = ratios[np.isfinite(ratios)]
    top = max(2.0, float(finite.max()) * 1.5) if finite.size else 2.0
    taus = np.unique(np.concatenate([[1.0, top], finite]))
    profile = performance_profile(costs, taus)
    for j, (solver, style) in enumerate(zip(solvers, _styles(len(solvers)), strict=True)):
        axes.step(taus, profile[:, j], where="post", label=solver, **style)
    axes.set_xscale("log", base=2)
    axes.set_xlim(1.0, top)
    axes.set_ylim(-0.02, 1.02)
    axes.set_xlabel(f"τ (within a factor τ of the fewest {measure})")
    axes.set_ylabel("fraction of problems ρ(τ)")
    axes.set_title("Performance profile (Dolan–Moré)", fontsize="medium")
    axes.grid(alpha=0.3)
    _legend(figure, axes)
    return figure


def data_figure(results: Results, *,
                tolerances: Sequence[float] = DATA_PROFILE_TOLERANCES) -> Any:
    """Moré–Wild data profiles d_s(κ), one panel per tolerance τ (a matplotlib Figure)."""
    figure = _new_figure(4.0 * len(tolerances), 3.6)
    panels = figure.subplots(1, len(tolerances), squeeze=False)[0]
    for axes, tolerance in zip(panels, tolerances, strict=True):
        _, solvers, first, dimensions = results.first_success_matrix(tolerance)
        scaled = first / (dimensions[:, np.newaxis] + 1.0) if first.size else first
        finite = scaled[np.isfinite(scaled)]
        top = max(1.0, float(finite.max()) * 1.05) if finite.size else 1.0
        kappas = np.unique(np.concatenate([[0.0, top], finite]))
        profile = data_profile(first, dimensions, kappas)
        for j, (solver, style) in enumerate(zip(solvers, _styles(len(solvers)), strict=True)):
            axes.step(kappas, profile[:, j], where="post", label=solver, **style)
        axes.set_xscale("symlog", linthresh=1.0)
        axes.set_xlim(0.0, top)
        axes.set_ylim(-0.02, 1.02)
        axes.set_xlabel("κ (evaluations / (n + 1))")
        axes.set_ylabel("fraction of problems d(κ)")
        axes.set_title(f"Data profile, τ = {tolerance:g}", fontsize="medium")
        axes.grid(alpha=0.3)
    _legend(figure, panels[0])
    return figure


def convergence_figure(results: Results, instance: tuple) -> Any:
    """f − f_ref and ‖∇f‖∞ against evaluations on one problem instance, one line per solver.

    f_ref is the lower of the known optimum and the lowest value any run reached,
    so every plotted gap is >= 0 (floored at GAP_FLOOR·max(1, |f_ref|) for the log axis).
    """
    records = [r for r in results if r.instance == instance and r.history is not None]
    reference = results.reference(instance)
    lowest = results.lowest_value(instance)
    candidates = [v for v in (reference, lowest) if v is not None]
    f_ref = min(candidates) if candidates else 0.0
    floor = GAP_FLOOR * max(1.0, abs(f_ref))
    figure = _new_figure(8.0, 3.4)
    gap_axes, gradient_axes = figure.subplots(1, 2)
    solvers = results.solvers()
    styles = dict(zip(solvers, _styles(len(solvers)), strict=True))
    for record in records:
        history = record.history
        evaluations = history.values + history.gradients
        solver = results.solver(record)
        with np.errstate(invalid="ignore"):
            gaps = np.maximum(history.value - f_ref, floor)
        gap_axes.plot(evaluations, gaps, label=solver, **styles[solver])
        gradient_axes.plot(evaluations, np.maximum(history.gradient_norm, 1e-300),
                           label=solver, **styles[solver])
    problem, dimension, start, seed = instance
    title = f"{problem} (n={dimension}, start {start}" + (
        f", seed {seed})" if seed is not None else ")")
    for axes, label in ((gap_axes, "f − f_ref"), (gradient_axes, "‖∇f‖∞")):
        axes.set_yscale("log")
        axes.set_xlabel("evaluations (values + gradients)")
        axes.set_ylabel(label)
        axes.grid(alpha=0.3)
    gap_axes.set_title(f"{title}: value gap", fontsize="medium")
    gradient_axes.set_title("gradient norm", fontsize="medium")
    _legend(figure, gap_axes)
    return figure


def _encode(figure: Any, form: str = "png") -> bytes:
    buffer = io.BytesIO()
    figure.savefig(buffer, format=form, dpi=PNG_DPI)
    return buffer.getvalue()


def _slug(instance: tuple) -> str:
    problem, dimension, start, seed = instance
    text = f"{problem}_n{dimension}_{start}" + ("" if seed is None else f"_seed{seed}")
    return "".join(c if c.isalnum() or c in "-_." else "_" for c in text)


def write_figures(results: Results, folder: str | Path, *, form: str = "png",
                  convergence_limit: int = MAX_CONVERGENCE_PLOTS) -> list[Path]:
    """Save every report figure as PNG or SVG files in `folder`; return their paths."""
    form = _validate.choice("form", form, ("png", "svg"))
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    figures = [("performance_profile", performance_figure(results)),
               ("data_profiles", data_figure(results))]
    for instance in results.instances()[:convergence_limit]:
        figures.append((f"convergence_{_slug(instance)}", convergence_figure(results, instance)))
    for name, figure in figures:
        path = folder / f"{name}.{form}"
        path.write_bytes(_encode(figure, form))
        written.append(path)
    return written


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
details { margin: 0.6em 0; }
"""


def _image(figure: Any) -> str:
    data = base64.b64encode(_encode(figure, "png")).decode("ascii")
    return f'<img alt="figure" src="data:image/png;base64,{data}">'


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


def write_html(results: Results, path: str | Path, *, title: str = "linestep benchmark report",
               source: str | None = None,
               convergence_limit: int = MAX_CONVERGENCE_PLOTS, preface: str | None = None) -> Path:
    """One self-contained HTML file: tables and base64-embedded PNG plots, no external files.

    It opens with `preface` (an HTML fragment, e.g. the Recommendation section of
    ``linestep advise``), if given, then one recommendation sentence per direction
    family (the rule of `linestep.advice`: robustness first, then cost).
    """
    from linestep.advice import recommendation_sentences
    rows = ranking(results)
    created = datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    instances = results.instances()
    parts = [
        f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        f"<title>{html.escape(title)}</title><style>{_STYLE}</style></head><body>",
        f"<h1>{html.escape(title)}</h1>",
        preface or "",
        "".join(f"<p><b>{html.escape(text)}</b></p>" for text in recommendation_sentences(results)),
        f"<p class='note'>{len(results)} runs on {len(instances)} problem instances, "
        f"{len(rows)} solvers. Written {created}"
        + (f" from <code>{html.escape(source)}</code>" if source else "") + ".</p>",
        "<h2>Ranking</h2>",
        _html_table(["#", "solver", "runs", "solved", "failed", "median evaluations (solved)",
                     "robustness score"],
                    [[r["rank"], r["solver"], r["runs"], r["solved"], r["failed"],
                      _number(r["median"]), f"{r['score']:.3f}"] for r in rows]),
        "<p class='note'><b>Solved</b>: final f within 1e-4·max(1, |f*|) of the known optimum "
        "(of the best value any run reached when f* is unknown). <b>Evaluations</b>: value "
        "plus gradient evaluations. <b>Robustness score</b>: area under the solver's "
        "performance profile on a log₂ τ axis from τ = 1 to 2¹⁰, divided by 10 (1 = cheapest "
        "on every problem, 0 = solves nothing within 1024 times the cheapest cost). "
        "Definitions: docs/bench/figures.md.</p>",
    ]
    if len(results):
        parts += ["<h2>Performance profile</h2>", _image(performance_figure(results)),
                  "<p class='note'>ρ(τ): fraction of problems a solver solves within τ times "
                  "the fewest evaluations of any solver (Dolan &amp; Moré 2002); failures never "
                  "count.</p>",
                  "<h2>Data profiles</h2>", _image(data_figure(results)),
                  "<p class='note'>d(κ): fraction of problems on which f(x₀) − f(x) ≥ (1 − τ)"
                  "(f(x₀) − f_L) within κ·(n + 1) evaluations; f_L is the lowest value any run "
                  "reached (Moré &amp; Wild 2009).</p>",
                  "<h2>Convergence per problem</h2>"]
        for index, instance in enumerate(instances[:convergence_limit]):
            state = " open" if index == 0 else ""
            parts.append(f"<details{state}><summary>{html.escape(_slug(instance))}</summary>"
                         f"{_image(convergence_figure(results, instance))}</details>")
        if len(instances) > convergence_limit:
            parts.append(f"<p class='note'>{len(instances) - convergence_limit} more "
                         "instances not plotted.</p>")
    solver_key = {results.solver(r): (r.controller_repr, r.direction) for r in results}
    parts += ["<h2>Solvers</h2>",
              _html_table(["solver", "controller (exact)", "direction"],
                          [[s, c, d] for s, (c, d) in solver_key.items()], (0, 1, 2))]
    stops = list(dict.fromkeys(r.stop for r in results))
    parts += ["<h2>Stopping rules</h2><ol>"
              + "".join(f"<li><code>{html.escape(s)}</code></li>" for s in stops) + "</ol>"]
    run_rows = [[r.problem, results.solver(r), r.start, _format(r.seed), r.kind,
                 "yes" if results.is_solved(r) else "no", _format(r.value),
                 _format(results.gap(r)), r.iterations, r.evaluations, f"{r.seconds:.3g}",
                 r.reason] for r in results]
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
                 figures: str | None = None) -> dict[str, Path]:
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
        written["html"] = write_html(results, out / "report.html", source=where)
    if csv:
        written["csv"] = write_csv(results, out / "results.csv")
    if json:
        written["json"] = write_json(results, out / "results.json")
    if figures is not None:
        write_figures(results, out / "figures", form=figures)
        written["figures"] = out / "figures"
    return written

