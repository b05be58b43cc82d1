"""`descend`: the reference descent loop, and its result record `Run`."""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from linestep import _array, stopping
from linestep._objective import as_objective
from linestep._step import Evaluations, Step
from linestep.directions import SteepestDescent
from linestep.searches.armijo import Armijo
from linestep.stopping import Kind, Progress, Verdict

__all__ = ["History", "Run", "descend"]


@dataclass(frozen=True, slots=True, kw_only=True)
class History:
    """Per-iteration records of a run; entry 0 is the start point.

    Attributes
    ----------
    value : ndarray
        f after each iteration.
    gradient_norm : ndarray
        ‖∇f‖∞ after each iteration.
    size : ndarray
        The step size taken (0 at the start and when x did not move).
    values, gradients : ndarray of int
        Cumulative evaluations after each iteration.
    restarted : ndarray of bool
        The direction fell back to steepest descent in that iteration.
    status : tuple of str
        The controller's status name per iteration ("start" for entry 0).

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import descend
    >>> history = descend((lambda x: float(x @ x), lambda x: 2 * x),
    ...                   np.array([3.0, -4.0])).history
    >>> history.value, history.size, history.status
    (array([25.,  0.]), array([0. , 0.5]), ('start', 'accepted'))
    >>> history.values, history.gradients   # cumulative evaluations
    (array([1, 3]), array([1, 2]))
    """

    value: np.ndarray
    gradient_norm: np.ndarray
    size: np.ndarray
    values: np.ndarray
    gradients: np.ndarray
    restarted: np.ndarray
    status: tuple[str, ...]


@dataclass(frozen=True, slots=True, kw_only=True)
class Run:
    """The result of `descend`.

    Attributes
    ----------
    x, value, gradient
        The final point, f and ∇f there.
    verdict : stopping.Verdict
        Why the run stopped: ``verdict.kind`` is converged, budget or failed, and
        ``verdict.reason`` says why in one sentence.
    iterations : int
    evaluations : Evaluations
        Totals over the run, the start point included.
    history : History

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import descend
    >>> run = descend((lambda x: float(x @ x), lambda x: 2 * x), np.array([3.0, -4.0]))
    >>> run.converged, run.iterations, run.value, run.x
    (True, 1, 0.0, array([0., 0.]))
    >>> run.evaluations
    Evaluations(values=3, gradients=2)
    >>> run.verdict.kind
    Kind.converged
    """

    x: Any
    value: float
    gradient: Any
    verdict: Verdict
    iterations: int
    evaluations: Evaluations
    history: History

    @property
    def converged(self) -> bool:
        """True when the stopping rule judged the run converged."""
        return self.verdict.kind is Kind.converged


def descend(objective: Any, x0: Any, *, controller: Any = None, direction: Any = None,
            stop: Any = None, callback: Callable[[Progress], Any] | None = None) -> Run:
    """Minimise f from `x0` with a step-size controller and a search direction.

    Each iteration asks `direction` for d, asks `controller` for a step along
    it, moves, and asks `stop` whether to stop. The controller, the direction
    and the stopping rule are reset at the start, so a run never inherits
    state from an earlier one.

    Parameters
    ----------
    objective : Objective, callable or (fun, grad)
        Needs a gradient.
    x0 : array_like
        Starting point (any shape); its floating dtype is kept.
    controller : controller, optional
        Default: a fresh ``Armijo()``.
    direction : direction object, optional
        Default: a fresh ``SteepestDescent()``.
    stop : criterion, optional
        Default: a fresh ``stopping.default()``.
    callback : callable, optional
        Called with the `stopping.Progress` after each iteration; returning True
        stops the run with a ``budget`` verdict ("The callback asked to stop.").

    Returns
    -------
    Run
        The final point and why the run stopped. When the controller cannot move
        (even after restarting the direction as steepest descent), the run stops
        with a ``failed`` verdict that quotes the controller's message; x is then
        the last point reached, never a worse one.

    Raises
    ------
    ValueError
        `x0` is not finite, or f or ∇f is not finite at `x0`.
    TypeError
        The objective has no gradient.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import descend
    >>> f = lambda x: float((x[0] - 1) ** 2 + 10 * (x[1] + 2) ** 2)
    >>> g = lambda x: np.array([2 * (x[0] - 1), 20 * (x[1] + 2)])
    >>> run = descend((f, g), np.zeros(2))
    >>> run.verdict.kind.value, np.round(run.x, 6)
    ('converged', array([ 1., -2.]))
    """
    objective = as_objective(objective)
    controller = Armijo() if controller is None else controller
    direction = SteepestDescent() if direction is None else direction
    stop = stopping.default() if stop is None else stop
    if not callable(getattr(controller, "reset", None)) or not callable(controller):
        raise TypeError(f"`controller` must be a linestep controller; got {controller!r}.")
    if not callable(direction):
        raise TypeError(f"`direction` must be a direction object; got {direction!r}.")
    for part in (controller, direction, stop):
        reset = getattr(part, "reset", None)
        if callable(reset):
            reset()

    x = _array.as_point("x0", x0)
    if not _array.all_finite(x):
        raise ValueError("`x0` must be finite; it contains NaN or infinity.")
    start_evaluations = objective.evaluations
    value, gradient = objective.value_and_gradient(x)
    if not math.isfinite(value):
        raise ValueError(f"The objective's value at `x0` must be finite; got {value!r}.")
    gradient = _array.as_point("gradient", gradient)
    if gradient.shape != x.shape:
        raise ValueError(
            f"The objective's gradient at `x0` has shape {tuple(gradient.shape)}; it must "
            f"have the shape of `x0`, {tuple(x.shape)}."
        )
    if not _array.all_finite(gradient):
        raise ValueError("The objective's gradient at `x0` must be finite.")

    started = time.perf_counter()
    record = _Recorder()
    record.add(value, gradient, 0.0, objective.evaluations - start_evaluations, False, "start")
    progress = Progress(iteration=0, evaluations=record.last_evaluations, x=x, value=value,
                        gradient=gradient, step=None, start_value=value,
                        start_gradient=gradient, elapsed=0.0)
    verdict = stop(progress)
    iteration = 0
    while verdict is None:
        if not (math.isfinite(value) and _array.all_finite(gradient)):
            # Whatever the stopping rule, a non-finite point ends the run (never a crash).
            verdict = Verdict(kind=Kind.failed, criterion="descend", reason=(
                f"The value or gradient became non-finite at iteration {iteration} "
                f"(f = {value!r}); the step is probably too large, so use a line search "
                "or a smaller step."))
            break
        d = direction(x, gradient)
        restarted = bool(getattr(direction, "restarted", False))
        step = controller(objective, x, d, value=value, gradient=gradient)
        if step.size == 0.0 and not step.ok and not isinstance(direction, SteepestDescent):
            # The direction may be poor (stale curvature pairs): retry once along −∇f.
            reset = getattr(direction, "reset", None)
            if callable(reset):
                reset()
            restarted = True
            retry = controller(objective, x, -gradient, value=value, gradient=gradient)
            step = _merge(step, retry)
        moved = step.size > 0.0
        if moved:
            x = step.x
            value = step.value
            gradient = step.gradient if step.gradient is not None else objective.gradient(x)
        iteration += 1
        evaluations = objective.evaluations - start_evaluations
        record.add(value, gradient, step.size, evaluations, restarted, step.status.value)
        progress = Progress(iteration=iteration, evaluations=evaluations, x=x, value=value,
                            gradient=gradient, step=step, start_value=progress.start_value,
                            start_gradient=progress.start_gradient,
                            elapsed=time.perf_counter() - started)
        verdict = stop(progress)
        if verdict is None and not moved:
            kind = Kind.converged if step.ok else Kind.failed
            reason = step.message if step.ok else (
                f"The step-size controller could not move from x "
                f"(status {step.status.value}): {step.message}")
            verdict = Verdict(kind=kind, reason=reason, criterion=repr(controller))
        if verdict is None and callback is not None and callback(progress) is True:
            verdict = Verdict(kind=Kind.budget, reason="The callback asked to stop.",
                              criterion="callback")
    return Run(x=x, value=value, gradient=gradient, verdict=verdict, iterations=iteration,
               evaluations=objective.evaluations - start_evaluations, history=record.freeze())


def _merge(first: Step, second: Step) -> Step:
    """The retry's step, with the evaluations of both attempts."""
    return replace(second, evaluations=first.evaluations + second.evaluations)


class _Recorder:
    __slots__ = ("value", "gradient_norm", "size", "values", "gradients", "restarted",
                 "status", "last_evaluations")

    def __init__(self) -> None:
        self.value: list[float] = []
        self.gradient_norm: list[float] = []
        self.size: list[float] = []
        self.values: list[int] = []
        self.gradients: list[int] = []
        self.restarted: list[bool] = []
        self.status: list[str] = []
        self.last_evaluations = Evaluations()

    def add(self, value: float, gradient: Any, size: float, evaluations: Evaluations,
            restarted: bool, status: str) -> None:
        self.value.append(value)
        self.gradient_norm.append(_array.max_abs(gradient))
        self.size.append(size)
        self.values.append(evaluations.values)
        self.gradients.append(evaluations.gradients)
        self.restarted.append(restarted)
        self.status.append(status)
        self.last_evaluations = evaluations

    def freeze(self) -> History:
        return History(value=np.array(self.value, dtype=float),
                       gradient_norm=np.array(self.gradient_norm, dtype=float),
                       size=np.array(self.size, dtype=float),
                       values=np.array(self.values, dtype=int),
                       gradients=np.array(self.gradients, dtype=int),
                       restarted=np.array(self.restarted, dtype=bool),
                       status=tuple(self.status))
