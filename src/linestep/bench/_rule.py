"""The recommendation rule, defined once: robustness first, then cost.

A *set-up* is a controller paired with a direction. Over the runs of a study:

1. **robustness**: the set-up that solved the largest fraction of its runs
   (`Results.is_solved`: within the solve tolerance of the known optimum, or of
   the best value any run reached when none is known);
2. **cost**: among those, the fewest value + gradient evaluations, as the median
   over its solved runs;
3. ties: the set-up that comes first in the study.

A set-up that solved nothing is never recommended. `linestep.advise`, the HTML report
of every study and its headline (`linestep.bench.report.recommend`) use this rule
(`rule_key`).
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = ["Standing", "recommendation_sentences", "rule_key", "standings"]


def rule_key(solved: int, runs: int, median: float | None, order: int) -> tuple[float, float, int]:
    """The sort key of the rule: robustness first, then cost, then order (smaller is better)."""
    return (-(solved / runs if runs else 0.0), math.inf if median is None else median, order)


@dataclass(frozen=True, slots=True, kw_only=True)
class Standing:
    """How one set-up (controller + direction) did over a study's runs."""

    controller: str
    direction: str
    runs: int
    solved: int
    median: float | None
    failures: tuple[tuple[str, int], ...]  # (what went wrong, how many runs), most common first
    order: int

    @property
    def fraction(self) -> float:
        """Solved runs over runs."""
        return self.solved / self.runs if self.runs else 0.0

    @property
    def label(self) -> str:
        """``controller, direction``: the pair as one line of Python."""
        return f"{self.controller}, {self.direction}"

    def key(self) -> tuple[float, float, int]:
        """The sort key of the rule: robustness first, then cost, then study order."""
        return rule_key(self.solved, self.runs, self.median, self.order)


def failure_text(record: Any) -> str:
    """A short label of why an unsolved run did not solve."""
    if record.error:
        last = [line for line in record.error.strip().splitlines() if line.strip()]
        return f"raised {last[-1].strip() if last else 'an exception'}"
    if record.kind == "failed":
        reason = (record.reason or "").lower()
        if "non-finite" in reason or "rose above" in reason or "diverg" in reason:
            return "diverged"
        return "could not move"
    if record.kind == "budget":
        return "ran out of its evaluation budget"
    return "stopped at a worse point"


def standings(results: Any) -> list[Standing]:
    """Every set-up of `results`, best first by the rule (see the module docstring)."""
    groups: dict[tuple[str, str], list[Any]] = {}
    for record in results:
        groups.setdefault((record.controller, record.direction), []).append(record)
    rows = []
    for order, ((controller, direction), records) in enumerate(groups.items()):
        solved = [r for r in records if results.is_solved(r)]
        failures = Counter(failure_text(r) for r in records if not results.is_solved(r))
        rows.append(Standing(
            controller=controller, direction=direction, runs=len(records), solved=len(solved),
            median=float(np.median([r.evaluations for r in solved])) if solved else None,
            failures=tuple(failures.most_common()), order=order))
    rows.sort(key=Standing.key)
    return rows


def _family(direction: str) -> str:
    return direction.split("(")[0]


def recommendation_sentences(results: Any) -> list[str]:
    """One sentence per direction family: the set-up the rule picks there, with evidence."""
    by_family: dict[str, list[Standing]] = {}
    for standing in standings(results):
        by_family.setdefault(_family(standing.direction), []).append(standing)
    sentences = []
    for rows in by_family.values():
        best = rows[0]
        count = len(rows)
        if best.solved == 0:
            sentences.append(f"With {best.direction}, none of the {count} controller"
                             f"{'s' if count > 1 else ''} solved any run.")
            continue
        text = (f"With {best.direction}, use {best.controller}: it solved {best.solved} of "
                f"{best.runs} runs with a median of {best.median:.0f} evaluations")
        text += (f", the most robust, then cheapest, of {count} controllers."
                 if count > 1 else ".")
        sentences.append(text)
    return sentences
