"""`descend`: the reference descent loop, and its result record `Run`."""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from linestep import _array, stopping
from linestep._controller import _check_gradient
from linestep._objective import as_objective
from linestep._step import Evaluations, Status, Step
from linestep.directions import SteepestDescent
from linestep.searches.armijo import Armijo
from linestep.stopping import Kind, Progress, Verdict
from linestep.stopping._base import _as_verdict

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
    >>> from linestep import Armijo, descend
    >>> history = descend((lambda x: float(x @ x), lambda x: 2 * x),
    ...                   np.array([3.0, -4.0]), controller=Armijo()).history
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
    >>> from linestep import Armijo, descend
    >>> run = descend((lambda x: float(x @ x), lambda x: 2 * x), np.array([3.0, -4.0]),
    ...               controller=Armijo())  # unit first trial: one cubic step here
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

    def __str__(self) -> str:
        """A short summary (``repr`` keeps every field, histories included).

        Examples
        --------
        >>> import numpy as np
        >>> from linestep import Armijo, descend
        >>> run = descend((lambda x: float(x @ x), lambda x: 2 * x), np.array([3.0, -4.0]),
        ...               controller=Armijo(initial=0.5))
        >>> print(run)  # doctest: +ELLIPSIS
        Run converged after 1 iteration, 4 evaluations (2 values + 2 gradients)
          f = 0, max|∇f| = 0
          reason: ...
        """
        iterations = f"{self.iterations} iteration{'' if self.iterations == 1 else 's'}"
        counts = self.evaluations
        return (f"Run {self.verdict.kind.value} after {iterations}, {counts.total} evaluations "
                f"({counts.values} values + {counts.gradients} gradients)\n"
                f"  f = {self.value:.6g}, max|∇f| = {_array.max_abs(self.gradient):.3g}\n"
                f"  reason: {self.verdict.reason}")

    def plot(self, *, optimum: float | None = None) -> Any:
        """Draw f (or f − `optimum`) and ‖∇f‖∞ against evaluations; return the Figure.

        Both panels use log axes (f on a symmetric-log axis when it is not positive
        throughout and no `optimum` is given). The figure is a plain
        ``matplotlib.figure.Figure`` on the Agg canvas: no pyplot state is touched;
        ``figure.savefig("run.png")`` writes it and notebooks display it.

        Parameters
        ----------
        optimum : float, optional
            The known minimum f*: the left panel then shows the gap f − f*.

        Raises
        ------
        ImportError
            matplotlib is not installed (``pip install "linestep[bench]"``).
        """
        try:
            from matplotlib.backends.backend_agg import FigureCanvasAgg
            from matplotlib.figure import Figure
        except ImportError as exc:
            raise ImportError(
                'Run.plot() needs matplotlib: pip install "linestep[bench]" (or pip '
                "install matplotlib). The numbers are in run.history without it."
            ) from exc
        history = self.history
        evaluations = np.maximum(history.values + history.gradients, 1)
        figure = Figure(figsize=(9.0, 3.4), layout="constrained")
        FigureCanvasAgg(figure)
        value_axes, gradient_axes = figure.subplots(1, 2)
        if optimum is not None:
            with np.errstate(invalid="ignore"):
                gap = np.maximum(history.value - optimum, 1e-16 * max(1.0, abs(optimum)))
            value_axes.plot(evaluations, gap)
            value_axes.set_yscale("log")
            value_axes.set_ylabel("f − f*")
        else:
            value_axes.plot(evaluations, history.value)
            positive = bool(np.all(history.value[np.isfinite(history.value)] > 0))
            value_axes.set_yscale("log" if positive else "symlog")
            value_axes.set_ylabel("f")
        gradient_axes.plot(evaluations, np.maximum(history.gradient_norm, 1e-300))
        gradient_axes.set_yscale("log")
        gradient_axes.set_ylabel("‖∇f‖∞")
        for axes in (value_axes, gradient_axes):
            axes.set_xscale("log")
            axes.set_xlabel("evaluations (values + gradients)")
            axes.grid(alpha=0.3)
        figure.suptitle(f"{self.verdict.kind.value} after {self.iterations} iterations",
                        fontsize="medium")
        return figure


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
        Default: a fresh `Armijo` search (`default_controller`): along steepest
        descent its first trial is scaled, 1/‖∇f(x₀)‖₂ on the first iteration and
        then twice the previous accepted step; along other directions it is the
        unit step.
    direction : direction object, optional
        Default: a fresh ``SteepestDescent()``.
    stop : criterion, optional
        Default: a fresh ``stopping.default(dtype=x0.dtype)``, whose tolerances
        follow the precision of x0.
    callback : callable, optional
        Called with the `stopping.Progress` after each iteration; returning True
        (a numpy boolean too) stops the run with a ``budget`` verdict ("The callback
        asked to stop."); None or False goes on. Any other return value raises
        TypeError.

    Returns
    -------
    Run
        The final point and why the run stopped. When the controller cannot move
        (even after restarting the direction as steepest descent), the run stops
        with a ``failed`` verdict that quotes the controller's message; x is then
        the last point reached, never a worse one. When it cannot move because its
        trial step fell below rounding (``step_too_small``, ``interval_too_small``)
        at a gradient with ‖∇f‖∞ <= eps^(1/3)·(1 + |f|), eps the machine epsilon of
        x's dtype, the verdict is ``converged`` "at working precision"
        (docs/stopping.md, "Precision").

    Raises
    ------
    ValueError
        `x0` is not finite, or f or ∇f is not finite at `x0`.
    TypeError
        The objective has no gradient; `controller`, `direction`, `stop` or
        `callback` is a class instead of an instance, or not callable; the stopping
        rule returns something other than a Verdict, None or a bool, or the callback
        something other than None or a bool.

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
    _check_parts(controller, direction, stop, callback)
    direction = SteepestDescent() if direction is None else direction
    controller = default_controller(direction) if controller is None else controller
    for part in (controller, direction):
        reset = getattr(part, "reset", None)
        if callable(reset):
            reset()

    x = _array.as_point("x0", x0)
    if not _array.all_finite(x):
        raise ValueError("`x0` must be finite; it contains NaN or infinity.")
    stop = stopping.default(dtype=getattr(x, "dtype", None)) if stop is None else stop
    reset = getattr(stop, "reset", None)
    if callable(reset):
        reset()
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
    verdict = _as_verdict(stop(progress), stop, "The stopping rule `stop`")
    iteration = 0
    while verdict is None:
        # The recorded ‖∇f‖∞ is finite exactly when every entry of ∇f is.
        if not (math.isfinite(value) and math.isfinite(record.last_gradient_norm)):
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
            gradient = (step.gradient if step.gradient is not None
                        else _check_gradient(objective.gradient(x), x, supplied=False))
        iteration += 1
        evaluations = Evaluations(values=objective.values - start_evaluations.values,
                                  gradients=objective.gradients - start_evaluations.gradients)
        record.add(value, gradient, step.size, evaluations, restarted, step.status.value)
        progress = Progress(iteration=iteration, evaluations=evaluations, x=x, value=value,
                            gradient=gradient, step=step, start_value=progress.start_value,
                            start_gradient=progress.start_gradient,
                            elapsed=time.perf_counter() - started)
        verdict = stop(progress)
        if verdict is not None and verdict.__class__ is not Verdict:  # bools, wrong types
            verdict = _as_verdict(verdict, stop, "The stopping rule `stop`")
        if verdict is None and not moved:
            kind = Kind.converged if step.ok else Kind.failed
            reason = step.message if step.ok else (
                f"The step-size controller could not move from x "
                f"(status {step.status.value}): {step.message}")
            if not step.ok and step.status in _ROUNDING_STATUSES:
                precise = _at_working_precision(x, value, gradient)
                if precise is not None:
                    kind, reason = Kind.converged, precise
            verdict = Verdict(kind=kind, reason=reason, criterion=repr(controller))
        if verdict is None and callback is not None and _asks_to_stop(callback(progress),
                                                                      callback):
            verdict = Verdict(kind=Kind.budget, reason="The callback asked to stop.",
                              criterion="callback")
    return Run(x=x, value=value, gradient=gradient, verdict=verdict, iterations=iteration,
               evaluations=objective.evaluations - start_evaluations, history=record.freeze())


# Growth of the previous accepted step in the default steepest-descent first trial:
# one doubling lets the step recover from a backtrack at the cost of ~1 extra trial.
DEFAULT_TRIAL_GROWTH = 2.0


def default_controller(direction: Any) -> Any:
    """The controller `descend` uses when none is given, for `direction`.

    ``SteepestDescent``: ``Armijo(initial=PreviousTrial(growth=2, first=ScaledTrial()))``.
    −∇f carries the gradient's units, so the unit first trial moves x by ‖∇f‖:
    far too far on a steep start, too short on a flat one (Nocedal & Wright 2006,
    §3.5, "Initial step length"). The first trial moves x by 1 (t = 1/‖∇f(x₀)‖₂);
    later ones start from twice the previous accepted step. On the bench suites (MGH,
    quadratics, logistic) and an invented tanh network it solved 29 of 54 runs where
    the unit trial solved 26, with 188 026 evaluations in total against 415 645
    (`benchmarks/first_trial.py`; docs/getting-started.md has the table).
    Other directions (L-BFGS, nonlinear CG, yours): ``Armijo()``, whose unit first
    trial is the natural scale of quasi-Newton directions.
    """
    from linestep._initial import PreviousTrial, ScaledTrial

    if isinstance(direction, SteepestDescent):
        return Armijo(initial=PreviousTrial(growth=DEFAULT_TRIAL_GROWTH, first=ScaledTrial()))
    return Armijo()


_ROUNDING_STATUSES = (Status.step_too_small, Status.interval_too_small)


def _at_working_precision(x: Any, value: float, gradient: Any) -> str | None:
    """The converged reason when ∇f is as small as rounding in f allows, else None.

    A search that cannot move because its trial step fell below rounding has met
    the limit of the dtype, not a failure, when ‖∇f‖∞ <= ε^(1/3)·(1 + |f|), ε the
    machine epsilon of x's dtype: the gradient test of Gill, Murray & Wright,
    *Practical Optimization* (1981, §8.2.3.2, recalled from memory), with the
    accuracy of f taken as ε.
    """
    dtype = getattr(x, "dtype", None)
    try:
        epsilon = float(np.finfo(dtype).eps) if dtype is not None else _EPS64
        name = np.dtype(dtype).name if dtype is not None else "float64"
    except (TypeError, ValueError):
        epsilon, name = _EPS64, str(dtype)
    size = _array.max_abs(gradient)
    level = epsilon ** (1.0 / 3.0) * (1.0 + abs(value))
    if not size <= level:
        return None
    return (f"Converged at working precision ({name}): the trial step fell below "
            f"rounding level with the gradient max-norm {size:.3g} at or below "
            f"eps^(1/3)*(1 + |f|) = {level:.3g}, the smallest gradient rounding in f "
            f"lets a search resolve (eps = {epsilon:.3g}).")


_EPS64 = float(np.finfo(np.float64).eps)


def _check_parts(controller: Any, direction: Any, stop: Any, callback: Any) -> None:
    """Refuse a class where an instance is due, and anything that cannot be called."""
    for name, part, example in (("controller", controller, "Armijo()"),
                                ("direction", direction, "SteepestDescent()"),
                                ("stop", stop, "stopping.default()"),
                                ("callback", callback, "a function of the Progress")):
        if part is None:
            continue
        if isinstance(part, type):
            raise TypeError(f"`{name}` must be an instance, not the class {part.__name__}; "
                            f"write {part.__name__}() (for example `{name}={example}`).")
        if not callable(part):
            raise TypeError(f"`{name}` must be callable, such as {example}; got {part!r}.")
    if controller is not None and not callable(getattr(controller, "reset", None)):
        raise TypeError(f"`controller` must be a linestep controller, such as Armijo(); got "
                        f"{controller!r}, which has no reset() method.")


def _asks_to_stop(result: Any, callback: Any) -> bool:
    """A callback's answer: None or False goes on, True stops; anything else is an error."""
    if result is None:
        return False
    if isinstance(result, (bool, np.bool_)):
        return bool(result)
    raise TypeError(f"The `callback` {callback!r} returned {result!r} of type "
                    f"{type(result).__name__}; it must return None or False to go on, "
                    "True to stop.")


def _merge(first: Step, second: Step) -> Step:
    """The retry's step, with the evaluations of both attempts."""
    return replace(second, evaluations=first.evaluations + second.evaluations)


class _Recorder:
    __slots__ = ("value", "gradient_norm", "size", "values", "gradients", "restarted",
                 "status", "last_evaluations", "last_gradient_norm")

    def __init__(self) -> None:
        self.value: list[float] = []
        self.gradient_norm: list[float] = []
        self.size: list[float] = []
        self.values: list[int] = []
        self.gradients: list[int] = []
        self.restarted: list[bool] = []
        self.status: list[str] = []
        self.last_evaluations = Evaluations()
        self.last_gradient_norm = 0.0

    def add(self, value: float, gradient: Any, size: float, evaluations: Evaluations,
            restarted: bool, status: str) -> None:
        self.value.append(value)
        norm = self.last_gradient_norm = _array.max_abs(gradient)
        self.gradient_norm.append(norm)
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
