"""The ranking of a study's solvers, the winner of each instance, the headline and the
terminal legend (`linestep.bench.report` re-exports the public names)."""

from __future__ import annotations

import hashlib
import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from linestep.bench._results import OUTCOMES, Results
from linestep.bench._rule import rule_key
from linestep.bench.profiles import (
    DEFAULT_LOG2_TAU_MAX,
    robustness_score,
)

# Terminal table: longer solver labels are cut with an ellipsis.
LABEL_WIDTH = 64


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
    """The ranking row to recommend, by the one rule of `linestep.bench._rule`: robustness
    first (fraction of runs solved), then cost (median evaluations over solved runs), then
    the better rank. None when no solver solved anything."""
    candidates = [row for row in rows if row["solved"] > 0]
    if not candidates:
        return None
    return min(candidates, key=lambda row: rule_key(row["solved"], row["runs"], row["median"],
                                                    row["rank"]))


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
