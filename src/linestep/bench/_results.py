"""`Results`: the records of a study, with the analysis that needs all runs at once.

Every run has exactly one *outcome* (`Results.outcome`), defined in
`OUTCOME_DEFINITIONS`, which the terminal table and the report print as they are.
"""

from __future__ import annotations

import functools
import hashlib
import math
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from linestep import _validate
from linestep.bench import storage
from linestep.bench._label import distinct_labels
from linestep.bench._record import RunRecord
from linestep.bench.problems import SOLVE_RTOL, close_to_optimum

# The three outcomes of a run: every run is in exactly one.
OUTCOMES = ("solved", "not solved", "failed")
# Their definitions, printed under the ranking table and in the report.
# Each run has exactly one of these outcomes (`Results.outcome`): (word, definition).
OUTCOMES = (
    ("solved", "the final f is within solve_rtol·max(1, |f*|) of the known optimal value f* "
               "(or of the best value any run reached, when f* is unknown), whatever stopped "
               "the run"),
    ("not solved", "the run stopped (converged by its own test, or out of budget) away from "
                   "the optimum"),
    ("failed", "the run was not solved and its stopping rule called it failed (divergence, "
               "non-finite values, no progress), or it raised or its worker process died"),
)
OUTCOME_DEFINITIONS = "\n".join(f"{word}: {text}." for word, text in OUTCOMES)

# --- results ------------------------------------------------------------------------------


class Results(Sequence):
    """The records of a study, with the analysis that needs all runs at once.

    Problem instances without a known optimum are judged against the best value
    any run reached on them (`reference`).

    Parameters
    ----------
    records : iterable of RunRecord
    solve_rtol : float
        Tolerance of the solved test for instances without a known optimum.
    """

    def __init__(self, records: Sequence[RunRecord] | Iterator[RunRecord], *,
                 solve_rtol: float = SOLVE_RTOL, damaged: Sequence[str] = ()) -> None:
        self.records = tuple(records)
        self.solve_rtol = solve_rtol
        self.damaged = tuple(damaged)
        self._directions_vary = len({_direction_of(r) for r in self.records}) > 1
        self._stops = {stop: i for i, stop in
                       enumerate(dict.fromkeys(_stop_of(r) for r in self.records), start=1)}
        self._labels = self._solver_labels()

    def _solver_labels(self) -> dict[tuple, str]:
        """One label per solver identity; identities whose labels agree get a tag."""
        solvers = list(dict.fromkeys(_solver_of(r) for r in self.records))
        labels = []
        for solver in solvers:
            record = next(r for r in self.records if _solver_of(r) == solver)
            parts = [record.controller]
            if self._directions_vary:
                parts.append(record.direction)
            if len(self._stops) > 1:
                parts.append(f"stop #{self._stops[_stop_of(record)]}")
            labels.append(" + ".join(parts))
        tags = [hashlib.sha256("\n".join(solver).encode("utf-8")).hexdigest()
                for solver in solvers]
        return dict(zip(solvers, distinct_labels(list(zip(labels, tags, strict=True))),
                        strict=True))

    @classmethod
    def load(cls, path: str | Path, *, solve_rtol: float = SOLVE_RTOL) -> Results:
        """Read a results file (or the folder holding ``results.sqlite``), read-only."""
        with storage.ResultStore(path, read_only=True) as store:
            records = [RunRecord.from_row(row) for row in store.rows()]
            return cls(records, solve_rtol=solve_rtol, damaged=store.damaged)

    def __len__(self) -> int:
        return len(self.records)

    def __getitem__(self, index: Any) -> Any:
        return self.records[index]

    def __repr__(self) -> str:
        return f"Results({len(self.records)} runs)"

    # -- grouping -----------------------------------------------------------------------
    def instances(self) -> list[tuple[str, int, str, int | None]]:
        """Problem instances (problem, dimension, start, seed), in first-seen order."""
        return list(dict.fromkeys(record.instance for record in self.records))

    def solver(self, record: RunRecord) -> str:
        """The solver label of a record: the controller, plus the direction and stopping
        rule when the results hold several of those. Runs are grouped by the content
        of these (their identities), so two different solvers never share a label."""
        return self._labels[_solver_of(record)]

    def solvers(self) -> list[str]:
        """Solver labels in first-seen order."""
        return list(dict.fromkeys(self.solver(record) for record in self.records))

    # -- judging -------------------------------------------------------------------------
    def reference(self, instance: tuple) -> float | None:
        """The value runs on `instance` are judged against: the known optimum when there
        is one, else the lowest final value of any run (None if no run ended finite)."""
        return self._references.get(instance)

    @functools.cached_property
    def _references(self) -> dict[tuple, float]:
        optima: dict[tuple, float] = {}
        best: dict[tuple, float] = {}
        for record in self.records:
            if record.optimum is not None:
                optima[record.instance] = min(optima.get(record.instance, math.inf),
                                              record.optimum)
            if record.value is not None and math.isfinite(record.value):
                best[record.instance] = min(best.get(record.instance, math.inf), record.value)
        return {**best, **optima}

    def is_solved(self, record: RunRecord) -> bool:
        """The record's solved flag; for unknown optima, within `solve_rtol` of the best."""
        if record.solved is not None:
            return bool(record.solved)
        reference = self.reference(record.instance)
        return (reference is not None and record.value is not None
                and math.isfinite(record.value)
                and close_to_optimum(record.value, reference, self.solve_rtol))

    def outcome(self, record: RunRecord) -> str:
        """``"solved"``, ``"not solved"`` or ``"failed"``: exactly one per run (see
        `OUTCOME_DEFINITIONS`). Solved wins over the verdict: a run stopped by `Stall`
        at the optimum is solved, not failed."""
        if self.is_solved(record):
            return "solved"
        return "failed" if record.kind == "failed" else "not solved"

    def gap(self, record: RunRecord) -> float | None:
        """value − optimum, or value − best value found for unknown optima."""
        if record.gap is not None:
            return record.gap
        reference = self.reference(record.instance)
        if record.value is None or reference is None:
            return None
        return record.value - reference

    def lowest_value(self, instance: tuple) -> float | None:
        """The lowest f in any run's history on `instance`: Moré and Wild's f_L."""
        return self._lowest.get(instance)

    @functools.cached_property
    def _lowest(self) -> dict[tuple, float]:
        lowest: dict[tuple, float] = {}
        for record in self.records:
            if record.history is not None:
                finite = record.history.value[np.isfinite(record.history.value)]
                if finite.size:
                    lowest[record.instance] = min(lowest.get(record.instance, math.inf),
                                                  float(finite.min()))
        return lowest

    # -- matrices for profiles --------------------------------------------------------------
    def cost_matrix(self, measure: str = "evaluations"
                    ) -> tuple[list[tuple], list[str], np.ndarray]:
        """Costs t_{p,s} of solved runs (inf otherwise, or when the run is missing).

        `measure` is ``"evaluations"`` (values + gradients), ``"values"``,
        ``"gradients"``, ``"iterations"`` or ``"seconds"``. Several records of one
        solver on one instance (random starts are separate instances) keep the last.
        """
        cost = _measure(measure)
        tiny = np.finfo(float).tiny
        return self._matrix(lambda record: max(cost(record), tiny)
                            if self.is_solved(record) else None)

    def first_success_matrix(self, tolerance: float
                             ) -> tuple[list[tuple], list[str], np.ndarray, np.ndarray]:
        """Evaluations at which each run first passed Moré and Wild's test with `tolerance`.

        Returns instances, solvers, the matrix (inf when never) and the dimensions.
        """
        from linestep.bench.profiles import first_success

        def cell(record: RunRecord) -> float | None:
            history, f_low = record.history, self.lowest_value(record.instance)
            if history is None or f_low is None:
                return None
            return first_success(history.values + history.gradients, history.value,
                                 f_low=f_low, tolerance=tolerance)

        instances, solvers, matrix = self._matrix(cell)
        dimensions = np.array([instance[1] for instance in instances], dtype=float)
        return instances, solvers, matrix, dimensions

    def _matrix(self, cell: Callable[[RunRecord], float | None]
                ) -> tuple[list[tuple], list[str], np.ndarray]:
        """Instances × solvers of ``cell(record)``; inf where it is None or no run exists."""
        instances, solvers = self.instances(), self.solvers()
        rows = {instance: i for i, instance in enumerate(instances)}
        columns = {solver: j for j, solver in enumerate(solvers)}
        matrix = np.full((len(instances), len(solvers)), np.inf)
        for record in self.records:
            value = cell(record)
            if value is not None:
                matrix[rows[record.instance], columns[self.solver(record)]] = value
        return instances, solvers, matrix

    def to_rows(self, *, history: bool = False) -> list[dict[str, Any]]:
        """One dict per run (tidy form), with `gap` and `solved` filled in for unknown
        optima and the `solver` label added."""
        rows = []
        for record in self.records:
            row = record.to_row(history=history)
            row["gap"] = self.gap(record)
            row["solved"] = self.is_solved(record)
            row["outcome"] = self.outcome(record)
            row["evaluations"] = record.evaluations
            row["solver"] = self.solver(record)
            rows.append(row)
        return rows


# Costs a profile can measure runs by (`Results.cost_matrix`).
_MEASURES: dict[str, Callable[[RunRecord], float]] = {
    "evaluations": lambda r: r.evaluations,
    "values": lambda r: r.value_evaluations,
    "gradients": lambda r: r.gradient_evaluations,
    "iterations": lambda r: max(r.iterations, 1),
    "seconds": lambda r: r.seconds,
}


def _measure(name: str) -> Callable[[RunRecord], float]:
    return _MEASURES[_validate.choice("measure", name, tuple(_MEASURES))]


def _direction_of(record: RunRecord) -> str:
    return record.direction_id or record.direction


def _stop_of(record: RunRecord) -> str:
    return record.stop_id or record.stop


def _solver_of(record: RunRecord) -> tuple[str, str, str]:
    """The identity of a record's solver (labels for records built without identities)."""
    return (record.controller_id or record.controller, _direction_of(record), _stop_of(record))
