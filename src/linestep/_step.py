"""Records returned by every controller: `Step`, `Status`, `Evaluations`, `Trial`.

Also the one hot-path trick of the package, kept beside the record it builds:
`step_from` makes a frozen `Step` without the frozen dataclass's ``__init__``
(see `_StepDraft`), guarded at import time.
"""

from __future__ import annotations

import dataclasses
import enum
from dataclasses import dataclass
from typing import Any, Protocol, runtime_checkable

__all__ = ["Controller", "Evaluations", "Status", "Step", "Trial"]


class Status(enum.Enum):
    """Why a controller returned the step it returned.

    Only `accepted` is success. In every other case the `Step` still holds a
    usable point: the best point satisfying the controller's decrease test, or
    the starting point unchanged.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import Armijo, Status
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([1.0])
    >>> Armijo()((f, g), x, g(x)).status   # uphill: nothing is evaluated
    Status.not_descent
    >>> Armijo()((f, g), x, -g(x)).status is Status.accepted
    True
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

# Read once, measured (benchmarks/call_instructions.py): on Python 3.11 reading an enum
# member from its class (`Status.accepted`) goes through EnumType's __getattr__ hook, and
# an enum's __hash__ (a `MESSAGES[...]` lookup) is Python code; on the accepted path that
# is ~2,000 instructions per call (the base) and ~900 more in a search that names the
# status. The hot paths read these instead.
ACCEPTED = Status.accepted
ACCEPTED_MESSAGE = MESSAGES[Status.accepted]


@dataclass(frozen=True, slots=True, kw_only=True)
class Evaluations:
    """Counts of objective evaluations.

    A fused value-and-gradient call counts one of each.

    Examples
    --------
    >>> from linestep import Evaluations
    >>> spent = Evaluations(values=3, gradients=2)
    >>> spent.total
    5
    >>> spent + Evaluations(values=1)
    Evaluations(values=4, gradients=2)
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

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import Wolfe
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([3.0, -4.0])
    >>> step = Wolfe(record_trials=True)((f, g), x, -g(x))
    >>> step.ok, step.size, step.x, step.value
    (True, 0.5, array([0., 0.]), 0.0)
    >>> [trial.size for trial in step.trials]
    [1.0, 0.5]
    >>> step.message
    "The step satisfies the controller's conditions."
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


# -- building a Step on the hot path ------------------------------------------------------
# Evaluations records are immutable, so the common small counts are shared
# (SHARED_EVALUATIONS[values][gradients]).
_SHARED = 32
_SHARED_EVALUATIONS = [[Evaluations(values=v, gradients=g) for g in range(_SHARED)]
                       for v in range(_SHARED)]


class _StepDraft:
    """A mutable twin of the frozen `Step`, with the same slots, used only by `step_from`.

    `Step` is a frozen slots dataclass; its generated ``__init__`` writes each field
    through ``object.__setattr__``, which costs more than a whole accepted unit-step
    search spends in its own logic. `step_from` fills a draft with plain attribute
    writes and then makes it a `Step`: Python allows assigning ``__class__`` between
    classes whose instances have the same slot layout. The result is an ordinary,
    frozen `Step`. This is sound only while `Step` runs no code in construction,
    which the guard below checks when the module is imported.
    """

    __slots__ = Step.__slots__


def step_from(point: Any, values: int, gradients: int, status: Status, message: str,
              trials: tuple[Trial, ...] | None) -> Step:
    """The `Step` moving to `point` (anything with ``size, x, value, gradient``)."""
    if values < _SHARED and gradients < _SHARED:
        evaluations = _SHARED_EVALUATIONS[values][gradients]
    else:
        evaluations = Evaluations(values=values, gradients=gradients)
    step = _StepDraft()
    step.size = point.size
    step.x = point.x
    step.value = point.value
    step.gradient = point.gradient
    step.evaluations = evaluations
    step.status = status
    step.message = message
    step.trials = trials
    step.__class__ = Step
    return step


def _check_draft() -> None:
    """Refuse to import if `step_from` could build a `Step` its constructor would not."""
    names = tuple(field.name for field in dataclasses.fields(Step))
    if _StepDraft.__slots__ != names or set(Step.__slots__) != set(names):
        raise ImportError("Step's slots no longer match its fields; update _StepDraft.")
    if hasattr(Step, "__post_init__"):
        raise ImportError("Step has a __post_init__, which step_from would skip.")
    built = step_from(_Probe(), 1, 2, Status.accepted, "m", None)
    expected = Step(size=0.5, x=None, value=1.0, gradient=None,
                    evaluations=Evaluations(values=1, gradients=2),
                    status=Status.accepted, message="m", trials=None)
    if type(built) is not Step or built != expected:
        raise ImportError("step_from no longer builds the Step that Step(...) builds.")


class _Probe:
    """Stands in for a ray point in the import-time check."""

    size, x, value, gradient = 0.5, None, 1.0, None


_check_draft()
