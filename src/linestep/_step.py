"""Records returned by every controller: `Step`, `Status`, `Evaluations`, `Trial`."""

from __future__ import annotations

import enum
from dataclasses import dataclass
from typing import Any, Protocol, runtime_checkable

__all__ = ["Controller", "Evaluations", "Status", "Step", "Trial"]


class Status(enum.Enum):
    """Why a controller returned the step it returned.

    Only `accepted` is success. In every other case the `Step` still holds a
    usable point: the best point satisfying the controller's decrease test, or
    the starting point unchanged.
    """

    accepted = "accepted"
    max_evaluations = "max_evaluations"
    not_descent = "not_descent"
    non_finite = "non_finite"
    step_too_small = "step_too_small"
    interval_too_small = "interval_too_small"
    step_too_large = "step_too_large"
    target_met = "target_met"

    def __repr__(self) -> str:
        return f"Status.{self.name}"


# One default sentence per status; controllers may pass a more specific one.
MESSAGES = {
    Status.accepted: "The step satisfies the controller's conditions.",
    Status.max_evaluations: (
        "The evaluation budget ran out; the best point with sufficient decrease is "
        "returned if one was found, else x is unchanged. Raise `max_evaluations` or "
        "check the scaling of the direction."
    ),
    Status.not_descent: (
        "The direction is not a descent direction (direction . gradient >= 0); x is "
        "unchanged and nothing was evaluated. Pass a direction with a negative slope, "
        "such as the negative gradient."
    ),
    Status.non_finite: (
        "No point with a finite value was found along the direction; x is unchanged. "
        "Check the objective for overflow or a domain error near x."
    ),
    Status.step_too_small: (
        "The trial step fell below rounding level without meeting the conditions; x "
        "is the best point found. The gradient may be inaccurate or x already optimal."
    ),
    Status.interval_too_small: (
        "The bracketing interval collapsed to rounding level; x is the best point "
        "with sufficient decrease found, else unchanged."
    ),
    Status.step_too_large: (
        "The step reached its upper bound while the value kept decreasing; the "
        "objective may be unbounded below along this direction."
    ),
    Status.target_met: "The value is already at or below the target; x is unchanged.",
}


@dataclass(frozen=True, slots=True, kw_only=True)
class Evaluations:
    """Counts of objective evaluations.

    A fused value-and-gradient call counts one of each.
    """

    values: int = 0
    gradients: int = 0

    @property
    def total(self) -> int:
        """Values plus gradients."""
        return self.values + self.gradients

    def __sub__(self, other: Evaluations) -> Evaluations:
        if not isinstance(other, Evaluations):
            return NotImplemented
        return Evaluations(
            values=self.values - other.values, gradients=self.gradients - other.gradients
        )

    def __add__(self, other: Evaluations) -> Evaluations:
        if not isinstance(other, Evaluations):
            return NotImplemented
        return Evaluations(
            values=self.values + other.values, gradients=self.gradients + other.gradients
        )


@dataclass(frozen=True, slots=True, kw_only=True)
class Trial:
    """One point a search evaluated, recorded when the search records its trials.

    `slope` is φ'(t) = ∇f(x + t·d)·d, or None when the gradient was not evaluated.
    """

    size: float
    value: float
    slope: float | None


@dataclass(frozen=True, slots=True, kw_only=True)
class Step:
    """What a controller returns.

    Attributes
    ----------
    size : float
        The step length t; 0.0 when `x` is unchanged.
    x : array
        The new point x + t·d (the caller's own `x` object when unchanged).
    value : float or None
        f at the new point. None only when nothing was evaluated and the caller
        gave no ``value=``: a not_descent or stationary result, or a guarded rule
        (`Fixed`, `Schedule`) whose point was non-finite.
    gradient : array or None
        ∇f at the new point, or None when it was not evaluated.
    evaluations : Evaluations
        Evaluations spent in this call.
    status : Status
        Why this step was returned; see `Status`.
    message : str
        One sentence a person can act on.
    trials : tuple of Trial or None
        Every point tried, in order, when the controller records trials.
    """

    size: float
    x: Any
    value: float | None
    gradient: Any
    evaluations: Evaluations
    status: Status
    message: str
    trials: tuple[Trial, ...] | None = None

    @property
    def ok(self) -> bool:
        """True when the status is `Status.accepted`."""
        return self.status is Status.accepted


@runtime_checkable
class Controller(Protocol):
    """The protocol every step-size controller follows."""

    def __call__(
        self, objective: Any, x: Any, direction: Any, *, value: Any = None, gradient: Any = None
    ) -> Step: ...

    def reset(self) -> None: ...
