"""The base class every controller derives from (template method).

`StepController.__call__` owns the bookkeeping shared by all controllers; a
controller implements one private hook, `_search`. The contract for
implementers:

1. `_search(ray, first)` receives a `Ray` whose origin holds x, f(x), ∇f(x)
   and φ'(0) < 0 (∇f and φ'(0) may be None for rules that set
   ``needs_gradient = False`` when the caller gave no gradient), and `first`,
   the initial trial step from the controller's ``initial`` strategy.
2. It evaluates only through the ray (``ray.value(t)``,
   ``ray.value_and_slope(t)``, ``ray.complete(point)``) and never counts
   evaluations itself.
3. It returns an `Outcome`: ``Outcome(point)`` when it accepts `point`, else
   ``Outcome(point, status)``, with the ray `Point` to move to (None to leave x
   unchanged) and a `Status`; ``message=`` gives a sentence replacing the
   status's default message.
4. It never builds a `Step` and never raises for numeric trouble; the ray
   raises `BudgetSpent` when the budget is gone and the base returns the best
   sufficient-decrease point found (or x unchanged) with `max_evaluations`.
5. State carried between calls lives on the instance and `_reset_state()`
   clears it; the base keeps a `Memory` of the last accepted step for the
   initial-step strategies.
6. A composite controller (one built from other controllers, such as
   `Fallback` or `BarzilaiBorwein`) runs a member on its own ray with
   ``self._delegate(member, ray)``, which does for the member what `__call__`
   does for a top-level controller: the member's first trial, its hook and its
   memory. It never calls a member's private methods itself, and it sums the
   members' `max_evaluations` into its own (the ray enforces one budget).
7. The constructor validates every argument with `linestep._validate` and
   lists the constructor's arguments in ``_fields`` (keywords) or
   ``_positional`` so that `repr` rebuilds the object (`linestep._rebuild`).

One instance serves one loop: when a call brings another problem (the code of
the objective's callables, or x's shape or dtype, differs from the first call
since the last reset) the base resets the state with a RuntimeWarning.
Instances are not thread-safe; each thread needs its own.
"""

from __future__ import annotations

import math
import warnings
from math import isfinite
from typing import Any

import numpy as np

from linestep import _array, _initial, _validate
from linestep._objective import Objective, as_objective
from linestep._ray import BudgetSpent, Point, Ray
from linestep._rebuild import Rebuilds
from linestep._step import ACCEPTED, ACCEPTED_MESSAGE, MESSAGES, Status, Step, step_from

__all__ = ["Outcome", "StepController"]


class Outcome:
    """What a controller's `_search` hook returns: where to move, why, and in what words.

    Parameters
    ----------
    point : Point or None
        The ray point to move to; None leaves x unchanged.
    status : Status
        Why the search stopped; ``Outcome(point)`` accepts `point`.
    message : str or None
        A sentence replacing the status's default message, or None for the default.
    """

    __slots__ = ("point", "status", "message")

    def __init__(self, point: Point | None, status: Status = ACCEPTED,
                 message: str | None = None):
        self.point = point
        self.status = status
        self.message = message

    def __repr__(self) -> str:
        return f"Outcome({self.point!r}, {self.status!r}, {self.message!r})"


# Likewise measured: reading `np.ndarray` and `_initial.ConstantTrial` at each call costs
# ~670 instructions per call more than these module globals (numpy's module __getattr__).
_NDARRAY = np.ndarray
_CONSTANT = _initial.ConstantTrial

_SLOPE_OVERFLOW = (
    "The slope gradient·direction overflows the float range; x is unchanged. The "
    "gradient or the direction is far too large: rescale the problem or use a smaller step."
)
_STATIONARY = "The gradient at x is zero, so x is stationary; the step is 0."
_SLOPE_UNDERFLOW = (
    "The slope gradient·direction underflows to 0 although the direction descends; x is "
    "unchanged. The gradient or the direction is at the bottom of the float range: x is "
    "stationary to working precision, or the direction is far too short (rescale it)."
)


def _slope_underflows(gradient: Any, direction: Any) -> bool:
    """True when g·d rounds to 0 but the scaled product (g/‖g‖∞)·(d/‖d‖∞) is negative."""
    g_scale, d_scale = _array.max_abs(gradient), _array.max_abs(direction)
    if not (g_scale > 0.0 and d_scale > 0.0):
        return False
    return _array.dot(gradient / g_scale, direction / d_scale) < 0.0


class StepController(Rebuilds):
    """Base class of all linestep controllers; see the module docstring for the contract."""

    #: Whether φ'(0) is required (searches) or optional (rules).
    needs_gradient = True
    #: Whether f(x) is required before the hook runs.
    needs_value = True
    #: Default sufficient-decrease constant used to track the best point.
    c1 = 0.0
    #: Most points evaluated along the ray per call.
    max_evaluations = 40
    #: Keep every trial on the returned Step.
    record_trials = False
    #: The rule is defined only for d = c·(−∇f), c > 0 (Barzilai–Borwein, Polyak):
    #: an ascent direction with a nonzero gradient is a usage error, not a status.
    negative_gradient_only = False

    def __init__(self) -> None:
        self._memory = _initial.Memory()
        self.initial: Any = _initial.UnitTrial()

    # -- public protocol ---------------------------------------------------------
    def __call__(self, objective: Any, x: Any, direction: Any, *, value: Any = None,
                 gradient: Any = None) -> Step:
        if objective.__class__ is not Objective:
            objective = as_objective(objective)
        if objective is not self._objective:
            self._adopt(objective, x)
        start_values, start_gradients = objective.values, objective.gradients
        origin = None
        if (value is not None
                and x.__class__ is direction.__class__ is gradient.__class__ is _NDARRAY
                and x.ndim == direction.ndim == gradient.ndim == 1
                and x.dtype is direction.dtype is gradient.dtype and x.dtype.kind == "f"
                and len(x) == len(direction) == len(gradient)):
            # Fast path for the common call from a loop: 1-D float arrays, f and ∇f given,
            # a descent direction. A finite x·x, g·d and f prove x, g, d and f finite
            # (`_array.all_finite`'s test, inlined; `_check_slope`). (len, unlike shape,
            # builds no tuple.) Anything else takes the checked path below.
            slope = float(gradient.dot(direction))
            if value.__class__ is not float:  # never float(): it would parse "5.0"
                value = _validate.finite_scalar("value", value)
            if -math.inf < slope < 0.0 and isfinite(value) and isfinite(x.dot(x)):
                origin = Point(0.0, x, value, gradient, slope)
        if origin is None:
            x, direction = _check_point_and_direction(x, direction)
            origin = self._origin(objective, x, direction, value, gradient)
            slope = origin.slope
            if slope is not None and not -math.inf < slope < 0.0:
                return self._no_search(objective, origin, start_values, start_gradients,
                                       direction)
        ray = Ray(objective, origin, direction, self.max_evaluations, self.c1,
                  self.record_trials)
        try:
            initial = self.initial  # a constant first trial skips the strategy call
            outcome = self._search(ray, initial.size if initial.__class__ is _CONSTANT
                                   else self._first_trial(ray))
        except BudgetSpent:
            outcome = Outcome(ray.best, Status.max_evaluations)
        return self._finish(ray, outcome, start_values, start_gradients)

    def reset(self) -> None:
        """Forget everything carried between calls."""
        self._memory = _initial.Memory()
        self._objective = self._problem = None
        self._reset_state()

    #: The objective of the last call and the fingerprint of the problem being served.
    _objective: Objective | None = None
    _problem: tuple | None = None

    def _adopt(self, objective: Objective, x: Any) -> None:
        """Note the problem of a call with a new objective; reset on a different one.

        One instance serves one loop: state from another problem (a Polyak level, a
        Barzilai–Borwein pair, a previous step) would give wrong steps. The fingerprint
        is the code of the user's callables and the shape and dtype of x, so a loop that
        wraps each mini-batch's loss in a new closure of the same function keeps its
        state.
        """
        problem = (_code(objective._fun), _code(objective._grad), objective.fused,
                   getattr(x, "shape", None), str(getattr(x, "dtype", "")))
        if self._problem is not None and problem != self._problem:
            self.reset()
            warnings.warn(
                f"{type(self).__name__} was called on a different problem (another "
                "objective function or another shape of x) without reset(); its state "
                "was reset. One instance serves one loop: call reset() or build a new "
                "controller for each problem.", RuntimeWarning, stacklevel=3)
        self._objective, self._problem = objective, problem

    # -- hooks -------------------------------------------------------------------
    def _search(self, ray: Ray, first: float) -> Outcome:
        raise NotImplementedError

    def _reset_state(self) -> None:
        """Clear controller-specific state (override when there is any)."""

    def _first_trial(self, ray: Ray) -> float:
        initial = self.initial
        if initial.__class__ is _CONSTANT:  # validated positive and finite
            return initial.size
        guess = initial.guess(self._memory, ray)
        if 0.0 < guess < math.inf:
            return guess
        return 1.0

    def _remember(self, ray: Ray, point: Point) -> None:
        """Keep the accepted `point` for the initial-step strategies (`_finish` skips
        this for a constant first trial, which reads no memory)."""
        memory, origin = self._memory, ray.origin
        memory.size = point.size
        memory.start_value = origin.value
        memory.slope = origin.slope

    # -- composites ------------------------------------------------------------------
    def _delegate(self, member: StepController, ray: Ray, *, first: float | None = None,
                  at_most: float | None = None) -> Outcome:
        """Run `member`'s search on this call's `ray`, as `__call__` would run it alone.

        The member's first trial comes from its own ``initial`` strategy unless
        `first` is given, and is capped at `at_most` when that is given and
        positive; its memory of accepted steps is updated as after a call of its
        own. Evaluations count against the one ray budget, and `BudgetSpent`
        propagates to the base. Returns the member's `Outcome`.
        """
        if first is None:
            first = member._first_trial(ray)
        if at_most is not None and 0.0 < at_most < first:
            first = at_most
        outcome = member._search(ray, first)
        if outcome.status is ACCEPTED and outcome.point is not None:
            member._remember(ray, outcome.point)
        return outcome

    # -- bookkeeping ---------------------------------------------------------------
    def _origin(self, objective: Objective, x: Any, direction: Any, value: Any,
                gradient: Any) -> Point:
        supplied = gradient is not None
        if supplied:
            gradient = _check_gradient(gradient, x)
        elif self.needs_gradient:
            if not objective.has_gradient:
                raise TypeError(
                    f"{type(self).__name__} needs the gradient at x: pass `gradient=` or an "
                    "objective with a gradient, such as `(fun, grad)`, `Objective(fun, grad)` "
                    "or `Objective(fun_and_grad, fused=True)`; for a JAX function, "
                    "`linestep.jax.objective(fun)` adds the gradient by autodiff."
                )
            if value is None and objective.fused:
                value, gradient = objective.value_and_gradient(x)
            else:
                gradient = objective.gradient(x)
            gradient = _check_gradient(gradient, x, supplied=False)
        if gradient is None:
            slope = None
            if not _array.all_finite(direction):
                raise ValueError("`direction` must be finite; it contains NaN or infinity.")
        else:
            slope = _array.dot(gradient, direction)
            if not isfinite(slope):
                _check_slope(slope, gradient, direction, supplied)
        if value is not None:
            value = _check_value(value, supplied=True)
        elif self.needs_value and (slope is None or slope < 0.0):
            value = _check_value(objective.value(x), supplied=False)
        return Point(0.0, x, value, gradient, slope)

    def _no_search(self, objective: Objective, origin: Point, start_values: int,
                   start_gradients: int, direction: Any = None) -> Step:
        """x unchanged without evaluating along the ray: φ'(0) >= 0, or g·d over- or
        underflowed."""
        slope = origin.slope
        if slope == -math.inf or slope != slope:
            status, message = Status.non_finite, _SLOPE_OVERFLOW
        elif _array.max_abs(origin.gradient) == 0.0:
            status, message = Status.accepted, _STATIONARY
        elif (slope == 0.0 and direction is not None
              and _slope_underflows(origin.gradient, direction)):
            status, message = Status.step_too_small, _SLOPE_UNDERFLOW
        elif self.negative_gradient_only:
            raise _validate.not_negative_gradient(type(self).__name__)
        else:
            status, message = Status.not_descent, MESSAGES[Status.not_descent]
        return step_from(origin, objective.values - start_values,
                         objective.gradients - start_gradients, status, message,
                         () if self.record_trials else None)

    def _finish(self, ray: Ray, outcome: Outcome, start_values: int,
                start_gradients: int) -> Step:
        point, status, message = outcome.point, outcome.status, outcome.message
        if status is not ACCEPTED or point is None or not point.value < math.inf:
            point, status = settle(ray, point, status)
        if status is ACCEPTED:
            if self.initial.__class__ is not _CONSTANT:  # a constant reads no memory
                self._remember(ray, point)
            if message is None:
                message = ACCEPTED_MESSAGE
        elif message is None:
            message = MESSAGES[status]
        objective, trials = ray.objective, ray.trials
        return step_from(point, objective.values - start_values,
                         objective.gradients - start_gradients, status, message,
                         None if trials is None else tuple(trials))


def _code(fun: Any) -> Any:
    """What identifies a user callable across closures: its code, else its class."""
    for _ in range(8):  # bounded: a `func` attribute may point back to its owner
        inner = getattr(fun, "func", None) or getattr(fun, "__func__", None)  # partial, method
        if inner is None:
            break
        fun = inner
    code = getattr(fun, "__code__", None)
    return code if code is not None else (type(fun) if fun is not None else None)


def settle(ray: Ray, point: Point | None, status: Status) -> tuple[Point, Status]:
    """The point to return and its status when the search did not simply accept a point
    (a composite that words its own message calls it to name the final status)."""
    origin = ray.origin
    if point is not None and (
        not point.value < math.inf
        or (status is not Status.accepted and origin.value is not None
            and point.value > origin.value)
    ):
        # A failed search never moves the user's point to a worse or non-finite place.
        point = None
    if point is None:
        if status is not Status.accepted and ray.count and not ray.finite_seen:
            status = Status.non_finite
        point = origin
    return point, status


def _check_point_and_direction(x: Any, direction: Any) -> tuple[Any, Any]:
    x = _array.as_point("x", x)
    direction = _array.as_point("direction", direction)
    if x.shape != direction.shape:
        raise ValueError(
            f"`direction` must have the shape of `x`; got {tuple(direction.shape)} for "
            f"`direction` and {tuple(x.shape)} for `x`."
        )
    if not _array.all_finite(x):
        raise ValueError("`x` must be finite; it contains NaN or infinity.")
    return x, direction


def _check_slope(slope: float, gradient: Any, direction: Any, supplied: bool) -> None:
    """Raise for a non-finite direction or gradient; called only when φ'(0) is not finite.

    A finite g·d proves both finite (any NaN/inf entry makes the sum NaN or inf),
    so the exact element-wise tests run only in this rare case.
    """
    if not _array.all_finite(direction):
        raise ValueError("`direction` must be finite; it contains NaN or infinity.")
    if not _array.all_finite(gradient):
        where = "`gradient`" if supplied else "The objective's gradient at `x`"
        raise ValueError(f"{where} must be finite; it contains NaN or infinity.")
    # Both finite: the product overflowed. That is numeric trouble, reported by the
    # caller as a non_finite status, not a bad argument.


def _check_gradient(gradient: Any, x: Any, *, supplied: bool = True) -> Any:
    gradient = _array.as_point("gradient", gradient)
    where = "`gradient`" if supplied else "The objective's gradient at `x`"
    if gradient.shape != x.shape:
        raise ValueError(
            f"{where} must have the shape of `x`; got {tuple(gradient.shape)} and "
            f"{tuple(x.shape)}."
        )
    return gradient


def _check_value(value: Any, *, supplied: bool) -> float:
    if supplied:
        return _validate.finite_scalar("value", value)
    value = float(value)
    if not isfinite(value):
        raise ValueError(
            f"The objective's value at `x` must be finite; got {value!r}. Start from a "
            "point where f is defined."
        )
    return value
