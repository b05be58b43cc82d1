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
import hashlib
import html
import io
import json
import math
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from linestep import _validate
from linestep.bench._results import OUTCOMES, Results
from linestep.bench.profiles import (
    DEFAULT_LOG2_TAU_MAX,
    data_profile,
    performance_profile,
    performance_ratios,
    robustness_score,
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
# Longest figure file name stem (file systems allow 255 bytes).
SLUG_LIMIT = 120
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
    ``median`` (the median cost over solved runs, None if none solved), ``score`` and
    ``wins`` (instances on which the solver is the `winners` entry).
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
            "failed": sum(results.outcome(r) == "failed" for r in records),
            "median": float(np.median(solved)) if solved.size else None,
            "score": float(scores[j]),
            "column": j,
        })
    rows.sort(key=lambda row: (-row["score"], -row["solved"],
                               math.inf if row["median"] is None else row["median"]))
    ranked = costs[:, [row["column"] for row in rows]] if rows else costs
    wins = [0] * len(rows)
    for column in _winner_columns(ranked):
        if column is not None:
            wins[column] += 1
    for rank, row in enumerate(rows, start=1):
        row["rank"] = rank
        row["wins"] = wins[rank - 1]
        del row["column"]
    return rows


def solver_order(results: Results, *, measure: str = "evaluations") -> list[str]:
    """Solver labels in ranking order: the one order of every legend and table."""
    return [row["solver"] for row in ranking(results, measure=measure)]


def _winner_columns(costs: np.ndarray) -> list[int | None]:
    """Per instance (row), the column with the fewest solved cost; None if none solved.

    Ties go to the first column, so pass columns in ranking order.
    """
    return [int(np.argmin(row)) if np.isfinite(row).any() else None for row in costs]


def winners(results: Results, *, measure: str = "evaluations") -> list[dict[str, Any]]:
    """The winner of each problem instance: fewest `measure` among the solvers that solved it.

    Returns one dict per instance, in the results' order, with keys ``instance``,
    ``winner`` (None when no solver solved it), ``cost`` (the winner's cost),
    ``solved_by`` (solvers that solved it) and ``solvers`` (solvers that ran on it).
    Ties go to the better-ranked solver.
    """
    instances, solvers, costs = results.cost_matrix(measure)
    order = solver_order(results, measure=measure)
    columns = [solvers.index(solver) for solver in order]
    ranked = costs[:, columns] if costs.size else costs
    ran: dict[tuple, set[str]] = {}
    for record in results:
        ran.setdefault(record.instance, set()).add(results.solver(record))
    table = []
    for i, (instance, column) in enumerate(zip(instances, _winner_columns(ranked),
                                               strict=True)):
        table.append({
            "instance": instance,
            "winner": None if column is None else order[column],
            "cost": None if column is None else float(ranked[i, column]),
            "solved_by": int(np.isfinite(ranked[i]).sum()),
            "solvers": len(ran.get(instance, ())),
        })
    return table


def recommend(rows: Sequence[dict[str, Any]]) -> dict[str, Any] | None:
    """The ranking row to recommend: robustness first, then cost.

    The highest fraction of runs solved; among those, the fewest median evaluations
    (solved runs), then the better rank. None when no solver solved anything.
    This is the rule the advice module states; a later change can point here at it.
    """
    candidates = [row for row in rows if row["solved"] > 0]
    if not candidates:
        return None
    return min(candidates, key=lambda row: (-row["solved"] / row["runs"],
                                            math.inf if row["median"] is None
                                            else row["median"], row["rank"]))


def headline(rows: Sequence[dict[str, Any]],
             winners_table: Sequence[dict[str, Any]] | None = None) -> str:
    """One or two sentences saying which set-up is best for what in these results."""
    best = recommend(rows)
    if best is None:
        return "No solver solved any problem instance in these results."
    text = (f"Best set-up here (robustness first, then cost): {best['solver']}, which "
            f"solved {best['solved']} of {best['runs']} runs with a median of "
            f"{_number(best['median'])} evaluations.")
    decided = [w for w in winners_table or () if w["winner"] is not None]
    if decided:
        counts: dict[str, int] = {}
        for entry in decided:
            counts[entry["winner"]] = counts.get(entry["winner"], 0) + 1
        cheapest, count = max(counts.items(), key=lambda item: item[1])
        if cheapest != best["solver"]:
            text += (f" Cheapest on the most instances: {cheapest} (fewest evaluations on "
                     f"{count} of {len(winners_table)}).")
        else:
            text += (f" It is also the cheapest on the most instances ({count} of "
                     f"{len(winners_table)}).")
    return text


def single_instance_note(results: Results) -> str | None:
    """A warning when every run shares one problem instance (profiles are single steps)."""
    if len(results.instances()) != 1:
        return None
    return ("All runs share one problem instance, so each profile is a single step: a solver "
            "either solved it or did not. For profiles that tell solvers apart, run several "
            "starts: `--starts perturbed:0.1 --seeds 10` on the command line, or "
            "`starts=[Start.perturbed(0.1)], seeds=range(10)` in a Study.")


def _cut(text: str, width: int = LABEL_WIDTH) -> str:
    """`text` within `width` characters; a cut label ends with a tag of the whole one, so
    two labels that share their first characters never look alike."""
    if len(text) <= width:
        return text
    tag = hashlib.sha256(text.encode("utf-8")).hexdigest()[:6]
    return f"{text[: width - 9]}…[{tag}]"


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


# What the ranking's columns mean, one line each (the terminal legend and the HTML note).
LEGEND = (
    *OUTCOMES,
    ("evaluations", "values + gradients evaluated; the median counts solved runs only"),
    ("score", f"area under the performance profile up to τ = 2^{DEFAULT_LOG2_TAU_MAX:g}, "
              f"over {DEFAULT_LOG2_TAU_MAX:g}: 1 = cheapest everywhere, 0 = nothing solved"),
)


def format_legend() -> str:
    """The terminal legend printed under the ranking table: one line per word."""
    width = max(len(word) for word, _ in LEGEND)
    return "\n".join(f"{word + ':':<{width + 1}} {text}." for word, text in LEGEND)


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


# Line style per search direction, the same in every figure: the direction is
# visible at a glance (solid: steepest descent, dashed: L-BFGS, dotted: nonlinear CG).
DIRECTION_LINESTYLES = (("SteepestDescent", "-"), ("LBFGS", "--"), ("NonlinearCG", ":"))
# Line styles for other directions, in order of appearance.
OTHER_LINESTYLES = ("-.", (0, (5, 1, 1, 1, 1, 1)), (0, (1, 3)), (0, (8, 3)))
# Markers that tell apart solvers left with the same colour and line style.
MARKERS = ("o", "s", "^", "v", "D", "P", "X", "*", "<", ">")


def _palette(count: int) -> list[tuple]:
    """`count` colours: tab10 while it suffices, else tab20's dark shades, then its light."""
    from matplotlib import colormaps

    if count <= 10:
        return list(colormaps["tab10"].colors)
    colors = colormaps["tab20"].colors
    return list(colors[0::2]) + list(colors[1::2])


def solver_styles(results: Results, order: Sequence[str] | None = None
                  ) -> dict[str, dict[str, Any]]:
    """Line style of each solver, the same in every figure of a report.

    The colour follows the controller (in ranking order, so the best get the first
    colours of the palette), the line style the direction (`DIRECTION_LINESTYLES`),
    and a marker is added when two solvers would otherwise look alike (more
    controllers than colours, or several stopping rules). Every solver gets a
    distinct (colour, line style, marker) triple.
    """
    order = solver_order(results) if order is None else list(order)
    parts = {results.solver(r): (r.controller, r.direction) for r in results}
    controllers = list(dict.fromkeys(parts[s][0] for s in order if s in parts))
    directions = list(dict.fromkeys(parts[s][1] for s in order if s in parts))
    colors = _palette(len(controllers))
    linestyles: dict[str, Any] = {}
    others = iter(OTHER_LINESTYLES * (1 + len(directions) // len(OTHER_LINESTYLES)))
    for direction in directions:
        known = [style for prefix, style in DIRECTION_LINESTYLES
                 if direction.startswith(prefix)]
        linestyles[direction] = known[0] if known else next(others)
    styles: dict[str, dict[str, Any]] = {}
    seen: dict[tuple, int] = {}
    for solver in order:
        controller, direction = parts.get(solver, (solver, ""))
        index = controllers.index(controller) if controller in controllers else 0
        color = colors[index % len(colors)]
        linestyle = linestyles.get(direction, "-")
        base = (color, str(linestyle))
        repeat = seen.get(base, 0)  # solvers already drawn in this colour and line style
        seen[base] = repeat + 1
        style: dict[str, Any] = {"color": color, "linestyle": linestyle}
        if repeat:
            style["marker"] = MARKERS[(repeat - 1) % len(MARKERS)]
            style["markevery"] = 0.2
            style["markersize"] = 4
        styles[solver] = style
    return styles


def _legend(figure: Any, axes: Any, order: Sequence[str] | None = None) -> None:
    handles, labels = axes.get_legend_handles_labels()
    if order is not None:  # legend entries in ranking order, one per solver
        by_label = dict(zip(labels, handles, strict=True))
        labels = [label for label in order if label in by_label]
        handles = [by_label[label] for label in labels]
    if handles:
        width, height = figure.get_size_inches()
        figure.legend(handles, [_cut(label, 52) for label in labels], fontsize="small",
                      loc="upper left", frameon=False, handlelength=3.0,
                      bbox_to_anchor=(1 - (LEGEND_WIDTH - 0.1) / width, 1 - 0.3 / height))


def performance_figure(results: Results, *, measure: str = "evaluations",
                       log2_tau_max: float = DEFAULT_LOG2_TAU_MAX) -> Any:
    """Dolan–Moré performance profiles ρ_s(τ) on a log₂ τ axis (a matplotlib Figure).

    The axis runs from τ = 1 to 2^`log2_tau_max`: the range the robustness score
    integrates over. Ratios beyond it are left off the plot, as they are off the score.
    """
    _, solvers, costs = results.cost_matrix(measure)
    order = solver_order(results, measure=measure)
    styles = solver_styles(results, order)
    figure = _new_figure(5.6, 3.6)
    axes = figure.add_subplot()
    ratios = performance_ratios(costs)
    top = 2.0 ** log2_tau_max
    finite = ratios[np.isfinite(ratios) & (ratios <= top)]
    taus = np.unique(np.concatenate([[1.0, top], finite]))
    profile = performance_profile(costs, taus)
    for solver in order:
        j = solvers.index(solver)
        axes.step(taus, profile[:, j], where="post", label=solver, **styles[solver])
    axes.set_xscale("log", base=2)
    axes.set_xlim(1.0, top)
    axes.set_ylim(-0.02, 1.02)
    axes.set_xlabel(f"τ (within a factor τ of the fewest {measure})")
    axes.set_ylabel("fraction of problems ρ(τ)")
    axes.set_title("Performance profile (Dolan–Moré)", fontsize="medium")
    axes.grid(alpha=0.3)
    _legend(figure, axes, order)
    return figure


def data_figure(results: Results, *,
                tolerances: Sequence[float] = DATA_PROFILE_TOLERANCES) -> Any:
    """Moré–Wild data profiles d_s(κ), one panel per tolerance τ (a matplotlib Figure)."""
    order = solver_order(results)
    styles = solver_styles(results, order)
    figure = _new_figure(4.0 * len(tolerances), 3.6)
    panels = figure.subplots(1, len(tolerances), squeeze=False)[0]
    for axes, tolerance in zip(panels, tolerances, strict=True):
        _, solvers, first, dimensions = results.first_success_matrix(tolerance)
        scaled = first / (dimensions[:, np.newaxis] + 1.0) if first.size else first
        finite = scaled[np.isfinite(scaled)]
        top = max(1.0, float(finite.max()) * 1.05) if finite.size else 1.0
        kappas = np.unique(np.concatenate([[0.0, top], finite]))
        profile = data_profile(first, dimensions, kappas)
        for solver in order:
            j = solvers.index(solver)
            axes.step(kappas, profile[:, j], where="post", label=solver, **styles[solver])
        axes.set_xscale("symlog", linthresh=1.0)
        axes.set_xlim(0.0, top)
        axes.set_ylim(-0.02, 1.02)
        axes.set_xlabel("κ (evaluations / (n + 1))")
        axes.set_ylabel("fraction of problems d(κ)")
        axes.set_title(f"Data profile, τ = {tolerance:g}", fontsize="medium")
        axes.grid(alpha=0.3)
    _legend(figure, panels[0], order)
    return figure


# Raw gradient-norm curves under their running minima: thin and faint.
RAW_CURVE_ALPHA = 0.25
RAW_CURVE_WIDTH = 0.6


def _running_minimum(axes: Any, evaluations: np.ndarray, curve: np.ndarray, solver: str,
                     style: dict[str, Any]) -> None:
    """The best-so-far of `curve` in the solver's style; the raw curve faint beneath it."""
    with np.errstate(invalid="ignore"):
        best = np.fmin.accumulate(curve)
    if not np.array_equal(best, curve, equal_nan=True):
        axes.plot(evaluations, curve, alpha=RAW_CURVE_ALPHA, linewidth=RAW_CURVE_WIDTH,
                  color=style["color"])
    axes.plot(evaluations, best, label=solver, linewidth=1.2, **style)


def convergence_figure(results: Results, instance: tuple) -> Any:
    """f − f_ref and ‖∇f‖∞ against evaluations on one problem instance, one line per solver.

    f_ref is the lower of the known optimum and the lowest value any run reached,
    so every plotted gap is >= 0 (floored at GAP_FLOOR·max(1, |f_ref|) for the log
    axis). Both axes are logarithmic, so runs of 50 and of 10 000 evaluations both
    show their whole curve. Each panel draws each run's running minimum (the best
    gap or ‖∇f‖∞ so far) with the raw curve thin and faint beneath it: nonmonotone,
    Barzilai–Borwein and Polyak runs oscillate and would hide the others.
    """
    records = [r for r in results if r.instance == instance and r.history is not None]
    reference = results.reference(instance)
    lowest = results.lowest_value(instance)
    candidates = [v for v in (reference, lowest) if v is not None]
    f_ref = min(candidates) if candidates else 0.0
    floor = GAP_FLOOR * max(1.0, abs(f_ref))
    figure = _new_figure(8.0, 3.4)
    gap_axes, gradient_axes = figure.subplots(1, 2)
    order = solver_order(results)
    styles = solver_styles(results, order)
    rank = {solver: i for i, solver in enumerate(order)}
    records.sort(key=lambda record: -rank[results.solver(record)])  # the best drawn on top
    for record in records:
        history = record.history
        evaluations = np.maximum(history.values + history.gradients, 1)
        solver = results.solver(record)
        style = styles[solver]
        with np.errstate(invalid="ignore"):
            gaps = np.maximum(history.value - f_ref, floor)
        _running_minimum(gap_axes, evaluations, gaps, solver, style)
        _running_minimum(gradient_axes, evaluations,
                         np.maximum(history.gradient_norm, 1e-300), solver, style)
    problem, dimension, start, seed = instance
    title = f"{problem} (n={dimension}, start {start}" + (
        f", seed {seed})" if seed is not None else ")")
    for axes, label in ((gap_axes, "f − f_ref (best so far; raw faint)"),
                        (gradient_axes, "‖∇f‖∞ (best so far; raw faint)")):
        axes.set_xscale("log")
        axes.set_yscale("log")
        axes.set_xlabel("evaluations (values + gradients, log scale)")
        axes.set_ylabel(label)
        axes.grid(alpha=0.3)
    gap_axes.set_title(f"{title}: value gap", fontsize="medium")
    gradient_axes.set_title("gradient norm", fontsize="medium")
    _legend(figure, gap_axes, order)
    return figure


def _encode(figure: Any, form: str = "png") -> bytes:
    from matplotlib.text import Text

    for text in figure.findobj(Text):  # names are plain text: `$` is not math
        text.set_parse_math(False)
    buffer = io.BytesIO()
    figure.savefig(buffer, format=form, dpi=PNG_DPI)
    return buffer.getvalue()


def _slug(instance: tuple) -> str:
    problem, dimension, start, seed = instance
    text = f"{problem}_n{dimension}_{start}" + ("" if seed is None else f"_seed{seed}")
    slug = "".join(c if c.isalnum() or c in "-_." else "_" for c in text)
    if len(slug) > SLUG_LIMIT:  # file names have a length limit; keep them distinct
        slug = slug[:SLUG_LIMIT - 9] + "_" + hashlib.sha256(text.encode()).hexdigest()[:8]
    return slug


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
    from linestep.advice import recommendation_sentences

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

