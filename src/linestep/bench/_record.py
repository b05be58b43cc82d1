"""The record of one finished run, and the JSON form of its history.

`RunRecord` is what a study returns per run and what the results file stores
(`RunRecord.to_row` / `RunRecord.from_row`).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from linestep._descend import History
from linestep.bench.problems import SOLVE_RTOL, close_to_optimum, optimum_below

# Final points with more entries than this are not stored (they would bloat the file).
STORED_POINT_LIMIT = 10_000

# --- records ------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True, kw_only=True)
class RunRecord:
    """One finished run.

    Attributes
    ----------
    key : str
        The run's identity: a digest of its content (see `linestep.bench._identity`).
    slot, problem_fingerprint : str
        The configuration on the named problem instance, and the problem's data
        (name, dimension, start bytes, f and ∇f there, optima, solve_rtol); the key
        digests both.
    controller_id, direction_id, stop_id : str
        Digests of the controller's, direction's and stopping rule's content: runs
        are grouped into solvers by these, never by labels alone.
    problem, dimension
        The problem's name and n.
    controller : str
        Its short label (see `linestep.bench._label`); `controller_repr` is the full
        configuration.
    direction : str
        The direction's label.
    start : str
        The start's label ("standard", "x10", "perturbed(0.1)", ...).
    seed : int or None
        The seed of a random start; None for deterministic starts.
    stop : str
        The stopping rule's label.
    kind, reason : str
        The verdict: ``converged``, ``budget`` or ``failed``, and why. A run that
        raised, or whose worker died, is ``failed`` and has `error` set.
    value, initial_value : float or None
        f at the end and at the start (None when the run raised before).
    optimal_values : tuple of float
        The problem's known optimal values when the run was made (raw data).
    solve_rtol : float
        The solved tolerance in force when the run was made.
    optimum, gap, solved
        Derived when read, never stored (properties): the known optimal value the
        gap is measured from (None when unknown); ``value − optimum`` (may be
        slightly negative: published optima are rounded); whether
        |value − optimum| <= solve_rtol·max(1, |optimum|) (None when no optimum is
        known: see `Results.is_solved`, which judges against the best run).
    iterations, value_evaluations, gradient_evaluations : int
    seconds : float
        Wall time of the run inside the worker.
    objective_seconds : float
        The part of `seconds` spent inside the objective's callables.
    error : str or None
        The traceback when the run raised or its worker died.
    x : ndarray or None
        The final point (None above `STORED_POINT_LIMIT` entries or on error).
    history : linestep.History or None
        Per-iteration value, gradient norm, step size and cumulative evaluations.
    """

    key: str
    slot: str = ""
    problem_fingerprint: str = ""
    controller_id: str = ""
    direction_id: str = ""
    stop_id: str = ""
    problem: str
    dimension: int
    controller: str
    controller_repr: str
    direction: str
    start: str
    seed: int | None
    stop: str
    kind: str
    reason: str
    value: float | None
    initial_value: float | None
    optimal_values: tuple[float, ...] = ()
    solve_rtol: float = SOLVE_RTOL
    iterations: int
    value_evaluations: int
    gradient_evaluations: int
    seconds: float
    objective_seconds: float
    error: str | None
    x: np.ndarray | None
    history: History | None

    @property
    def evaluations(self) -> int:
        """Value plus gradient evaluations (a fused call counts one of each)."""
        return self.value_evaluations + self.gradient_evaluations

    @property
    def optimum(self) -> float | None:
        """The known optimal value the gap is measured from (None when unknown or when
        the run ended without a finite value)."""
        if self.value is None or not math.isfinite(self.value):
            return None
        return optimum_below(tuple(self.optimal_values), self.value)

    @property
    def gap(self) -> float | None:
        """``value − optimum`` (None without a known optimum)."""
        optimum = self.optimum
        return None if optimum is None else self.value - optimum

    @property
    def solved(self) -> bool | None:
        """Whether `value` is within `solve_rtol` of a known optimum (None when none is
        known; False when the run ended without a finite value)."""
        if not self.optimal_values:
            return None
        if self.value is None or not math.isfinite(self.value):
            return False
        return any(close_to_optimum(self.value, v, self.solve_rtol)
                   for v in self.optimal_values)

    @property
    def instance(self) -> tuple[str, int, str, int | None]:
        """(problem, dimension, start, seed): the problem instance the run solved."""
        return (self.problem, self.dimension, self.start, self.seed)

    def to_row(self, *, history: bool = True) -> dict[str, Any]:
        """A plain dict: numbers, strings, lists (the storage and export form)."""
        row = {field.name: getattr(self, field.name) for field in dataclasses.fields(self)}
        row["x"] = None if self.x is None else self.x.tolist()
        row["optimal_values"] = [float(v) for v in self.optimal_values]
        row["optimum"], row["gap"], row["solved"] = self.optimum, self.gap, self.solved
        if history:
            row["history"] = _history_to_json(self.history)
        else:
            del row["history"]
        return row

    @classmethod
    def from_row(cls, row: Mapping[str, Any]) -> RunRecord:
        """Rebuild a record from `to_row`'s form (or a stored row)."""
        values = dict(row)
        values["x"] = None if values.get("x") is None else np.asarray(values["x"], dtype=float)
        values["history"] = _history_from_json(values.get("history"))
        values["optimal_values"] = tuple(float(v) for v in values.get("optimal_values") or ())
        if values.get("solve_rtol") is None:
            values["solve_rtol"] = SOLVE_RTOL
        names = {field.name for field in dataclasses.fields(cls)}
        return cls(**{name: values[name] for name in names if name in values})


def _history_to_json(history: History | None) -> dict[str, list] | None:
    if history is None:
        return None
    return {
        "value": np.asarray(history.value, dtype=float).tolist(),
        "gradient_norm": np.asarray(history.gradient_norm, dtype=float).tolist(),
        "size": np.asarray(history.size, dtype=float).tolist(),
        "values": np.asarray(history.values, dtype=int).tolist(),
        "gradients": np.asarray(history.gradients, dtype=int).tolist(),
        "restarted": np.asarray(history.restarted, dtype=bool).tolist(),
        "status": list(history.status),
    }


def _history_from_json(data: Any) -> History | None:
    if data is None:
        return None
    if isinstance(data, History):
        return data
    return History(value=np.asarray(data["value"], dtype=float),
                   gradient_norm=np.asarray(data["gradient_norm"], dtype=float),
                   size=np.asarray(data["size"], dtype=float),
                   values=np.asarray(data["values"], dtype=int),
                   gradients=np.asarray(data["gradients"], dtype=int),
                   restarted=np.asarray(data["restarted"], dtype=bool),
                   status=tuple(data["status"]))
