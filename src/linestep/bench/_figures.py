"""The report's figures: performance and data profiles, convergence plots, solver styles
(`linestep.bench.report` re-exports the public names)."""

from __future__ import annotations

import hashlib
import io
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from linestep import _validate
from linestep.bench._ranking import _cut, solver_order
from linestep.bench._results import Results
from linestep.bench.profiles import (
    DEFAULT_LOG2_TAU_MAX,
    data_profile,
    performance_profile,
    performance_ratios,
)

# Moré–Wild tolerances τ of the data profiles in reports (a loose and a tight one).
DATA_PROFILE_TOLERANCES = (1e-3, 1e-7)
# At most this many convergence plots go into an HTML report (one per problem instance).
MAX_CONVERGENCE_PLOTS = 40
# Figure resolution (dots per inch) for PNG output: small files, readable text.
PNG_DPI = 90
# Inches on the right of each figure for the legend (labels up to 52 characters).
LEGEND_WIDTH = 3.8
# Longest figure file name stem (file systems allow 255 bytes).
SLUG_LIMIT = 120
# Floor of the plotted gap f − f_ref, relative to max(1, |f_ref|), so log axes work.
GAP_FLOOR = 1e-16


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
