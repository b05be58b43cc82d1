"""Budgets: `MaxIterations`, `MaxEvaluations`, `TimeLimit`."""

from __future__ import annotations

from linestep import _validate
from linestep.stopping._base import Criterion, Kind, Progress, _positive_seconds

# ------------------------------------------------------------------------ budgets


class MaxIterations(Criterion):
    """Budget spent when ``iteration >= n``.

    Parameters
    ----------
    n : int
        Iterations allowed, >= 0 (0 stops at the start point).
    """

    __slots__ = ("n",)

    def __init__(self, n: int) -> None:
        self.n = _validate.integer("n", n, minimum=0)

    _positional = ("n",)

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        if progress.iteration < self.n:
            return None
        reason = (
            f"Stopped after {progress.iteration} iterations, the budget of {self.n}; "
            "raise `n` or loosen the convergence tolerances."
        )
        return Kind.budget, reason


class MaxEvaluations(Criterion):
    """Budget spent when value plus gradient evaluations reach `n`.

    Checked once per iteration, so the total can overshoot `n` by the
    evaluations of one iteration; cap the controller's ``max_evaluations``
    for a hard limit.

    Parameters
    ----------
    n : int
        Evaluations allowed (values + gradients), >= 0.
    """

    __slots__ = ("n",)

    def __init__(self, n: int) -> None:
        self.n = _validate.integer("n", n, minimum=0)

    _positional = ("n",)

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        values = int(progress.evaluations.values)
        gradients = int(progress.evaluations.gradients)
        if values + gradients < self.n:
            return None
        reason = (
            f"Used {values + gradients} evaluations ({values} values + {gradients} "
            f"gradients), reaching the budget of {self.n}; raise `n` to allow more."
        )
        return Kind.budget, reason


class TimeLimit(Criterion):
    """Budget spent when ``elapsed >= seconds``.

    Checked once per iteration, so a run can overshoot by one iteration's time.

    Parameters
    ----------
    seconds : float
        Wall-clock seconds allowed, > 0.
    """

    __slots__ = ("seconds",)

    def __init__(self, seconds: float) -> None:
        self.seconds = _positive_seconds("seconds", seconds)

    _positional = ("seconds",)

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        elapsed = float(progress.elapsed)
        if elapsed < self.seconds:
            return None
        reason = (
            f"Ran for {elapsed:.3g} s, reaching the time limit of {self.seconds:.3g} s; "
            "raise `seconds` to allow more."
        )
        return Kind.budget, reason
