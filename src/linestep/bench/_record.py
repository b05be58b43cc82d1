"""The record of one finished run, and the JSON form of its history.

`RunRecord` is what a study returns per run and what the results file stores
(`RunRecord.to_row` / `RunRecord.from_row`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from linestep._descend import History

# Final points with more entries than this are not stored (they would bloat the file).
STORED_POINT_LIMIT = 10_000

# --- records ------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True, kw_only=True)
class RunRecord:
    """One finished run.

    Attributes
    ----------
    key : str
        The run key (see `linestep.bench.storage.run_key`).
    problem, dimension
        The problem's name and n.
    controller : str
        Its label (groups runs in reports); `controller_repr` rebuilds it exactly.
    direction : str
        The direction's label.
    start : str
        The start's label ("standard", "x10", "perturbed(0.1)", ...).
    seed : int or None
        The seed of a random start; None for deterministic starts.
    stop : str
        The stopping rule's repr.
    kind, reason : str
        The verdict: ``converged``, ``budget`` or ``failed``, and why. A run that
        raised, or whose worker died, is ``failed`` and has `error` set.
    value, initial_value : float or None
        f at the end and at the start (None when the run raised before).
    optimum : float or None
        The known optimal value the gap is measured from (None when unknown).
    gap : float or None
        ``value − optimum`` (may be slightly negative: published optima are rounded).
        For problems without a known optimum, `Results.gap` measures from the
        best value any run reached.
    solved : bool or None
        |value − optimum| <= solve_rtol·max(1, |optimum|); None when no optimum is
        known (see `Results.is_solved`).
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
    optimum: float | None
    gap: float | None
    solved: bool | None
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
    def instance(self) -> tuple[str, int, str, int | None]:
        """(problem, dimension, start, seed): the problem instance the run solved."""
        return (self.problem, self.dimension, self.start, self.seed)

    def to_row(self, *, history: bool = True) -> dict[str, Any]:
        """A plain dict: numbers, strings, lists (the storage and export form)."""
        row = {field.name: getattr(self, field.name) for field in dataclasses.fields(self)}
        row["x"] = None if self.x is None else self.x.tolist()
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
        names = {field.name for field in dataclasses.fields(cls)}
        return cls(**{name: values.get(name) for name in names})


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
