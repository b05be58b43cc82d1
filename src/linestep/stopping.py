"""Stopping rules: when a descent loop should end, and why.

A criterion is a small object called once per iteration with a `Progress`
snapshot. It returns None (go on) or a `Verdict` whose `kind` says how the run
ended (`Kind.converged`, `Kind.budget` or `Kind.failed`) and whose `reason` is
one sentence, with the numbers, that a person can act on.

Criteria combine with ``|``: ``a | b`` stops as soon as either stops, and when
both would stop at the same iteration the one written first wins. Any callable
taking a `Progress` and returning a `Verdict` or None is a criterion, so user
rules mix freely with the ones here.

Criteria that compare with earlier iterations (`ValueChange`, `StepLength`,
`Stall`) keep state. A driver calls ``reset()`` before each run; as a safety
net, an iteration number lower than the last one seen also starts afresh, and a
repeated snapshot of the same iteration is not counted twice.

=================  =========  ===================================================
Criterion          Kind       Stops when
=================  =========  ===================================================
`GradientNorm`     converged  ||g_k|| <= max(atol, rtol * ||g_0||)
`ValueChange`      converged  |f_k - f_{k-w}| <= max(atol, rtol * scale)
`StepLength`       converged  ||x_k - x_{k-1}|| <= max(atol, rtol * ||x_k||)
`MaxIterations`    budget     k >= n
`MaxEvaluations`   budget     values + gradients >= n
`TimeLimit`        budget     elapsed seconds >= limit
`Divergence`       failed     x, f or g non-finite, |f| > bound, or f grew
`Stall`            failed     the best f has not improved for N iterations
=================  =========  ===================================================

`default()` returns a fresh combination suited to most runs.

Examples
--------
>>> import numpy as np
>>> from types import SimpleNamespace
>>> from linestep.stopping import GradientNorm, MaxIterations, Progress
>>> stop = GradientNorm(atol=1e-6, rtol=0.0) | MaxIterations(50)
>>> stop
GradientNorm(atol=1e-06, rtol=0.0, norm=inf) | MaxIterations(50)
>>> snapshot = Progress(
...     iteration=7, evaluations=SimpleNamespace(values=8, gradients=8),
...     x=np.array([1.0, 2.0]), value=0.5, gradient=np.array([4e-7, -2e-7]),
...     start_value=3.0, start_gradient=np.array([2.0, 1.0]))
>>> verdict = stop(snapshot)
>>> verdict.kind
Kind.converged
>>> verdict.reason
'Gradient max-norm 4e-07 is at or below the tolerance 1e-06 (atol=1e-06).'
"""

from __future__ import annotations

import enum
import math
import numbers
from collections import deque
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from linestep import _array, _validate

__all__ = [
    "AnyOf",
    "Criterion",
    "Divergence",
    "GradientNorm",
    "Kind",
    "MaxEvaluations",
    "MaxIterations",
    "Progress",
    "Stall",
    "StepLength",
    "TimeLimit",
    "ValueChange",
    "Verdict",
    "default",
]

# Floor for the scale of a relative value test, so that it stays defined when
# both values are exactly zero (smallest normal double).
TINY = float(np.finfo(float).tiny)

# Readable names for the accepted vector norms, used in reasons.
NORM_NAMES = {math.inf: "max-norm", 2: "2-norm", 1: "1-norm"}

# Defaults of `default()`, named so the docs and the code cannot drift apart.
DEFAULT_GRADIENT_ATOL = 1e-6  # common practice for double precision
DEFAULT_GRADIENT_RTOL = 1e-8  # eight orders of reduction from the start
DEFAULT_VALUE_RTOL = 1e-12  # a few thousand eps: below this, changes are rounding
DEFAULT_VALUE_WINDOW = 5  # one short line-search step must not end the run
DEFAULT_MAX_ITERATIONS = 10_000
DEFAULT_STALL_ITERATIONS = 100  # leaves room for nonmonotone methods' climbs
DEFAULT_BOUND = 1e100  # far above any sane objective, far below overflow
# In default(): a value 1e8·max(1, |f0|) above the start is a blow-up, not a nonmonotone climb.
DEFAULT_GROWTH = 1e8


# --------------------------------------------------------------------------- records


class Kind(str, enum.Enum):
    """How a run ended.

    The `str` mixin makes members compare equal to their names, so
    ``verdict.kind == "converged"`` works in tables and JSON.
    """

    converged = "converged"
    budget = "budget"
    failed = "failed"

    def __str__(self) -> str:
        return self.value

    def __repr__(self) -> str:
        return f"Kind.{self.name}"


@dataclass(frozen=True, slots=True, kw_only=True)
class Progress:
    """The snapshot a criterion sees after each iteration.

    Attributes
    ----------
    iteration : int
        Completed iterations; 0 at the start point.
    evaluations : object
        Cumulative counts with int attributes ``values`` and ``gradients``
        (the driver passes an ``Evaluations`` record).
    x : array
        The current point, of any shape.
    value : float
        f(x).
    gradient : array or None
        The gradient at `x`; None if it was not evaluated.
    step : object or None
        The last controller result (``size``, ``x``, ``ok``, ``status``,
        ``message``); None at iteration 0.
    start_value : float
        f at the start point.
    start_gradient : array or None
        The gradient at the start point.
    elapsed : float
        Seconds since the run started.
    """

    iteration: int
    evaluations: Any
    x: Any
    value: float
    gradient: Any
    step: Any = None
    start_value: float
    start_gradient: Any
    elapsed: float = 0.0


@dataclass(frozen=True, slots=True, kw_only=True)
class Verdict:
    """Why a run stopped.

    Attributes
    ----------
    kind : Kind
        converged, budget or failed.
    reason : str
        One sentence, with the numbers, that a person can act on.
    criterion : str
        The repr of the criterion that fired.
    """

    kind: Kind
    reason: str
    criterion: str


# ----------------------------------------------------------------- argument checks
# Each raises with the argument named in backticks, the bad value and the fix.


def _positive_seconds(name: str, value: Any) -> float:
    return _validate.positive(name, value, allow_inf=True)


def _relative(name: str, value: Any) -> float:
    # rtol >= 1 would make the test pass trivially (at once, for the gradient).
    return _validate.within(name, value, 0.0, 1.0, include_low=True)


def _norm_order(value: Any) -> float | int:
    if not isinstance(value, bool) and isinstance(value, numbers.Real):
        for order in NORM_NAMES:
            if value == order:
                return order
    raise ValueError(f"`norm` must be one of inf (np.inf), 2 or 1; got norm={value!r}.")


# ------------------------------------------------------------------ array helpers


def _scalar(value: Any) -> float:
    # .item() accepts 0-d and size-1 arrays of numpy, JAX and plain floats alike.
    return float(np.asarray(value).item())


def _vector_norm(array: Any, order: float | int) -> float:
    flat = np.ravel(np.asarray(array))
    if flat.size == 0:
        return 0.0
    # Overflow to inf is an answer here (Divergence reports it), not a warning.
    with np.errstate(over="ignore", invalid="ignore"):
        return float(np.linalg.norm(flat, order))


# -------------------------------------------------------------------- base class


class Criterion:
    """Base class of the criteria here; gives ``|``, ``reset()`` and a repr.

    Subclasses either implement the private hook ``_test(progress)``, which
    returns None or a ``(kind, reason)`` pair and leaves building the
    `Verdict` to this class, or override ``__call__`` outright. Stateful
    subclasses override ``reset()``. Subclassing is optional: any callable
    returning a `Verdict` or None works as a criterion.
    """

    __slots__ = ()

    def __call__(self, progress: Progress) -> Verdict | None:
        found = self._test(progress)
        if found is None:
            return None
        kind, reason = found
        return Verdict(kind=kind, reason=reason, criterion=repr(self))

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        raise NotImplementedError(f"{type(self).__name__} must implement `__call__` or `_test`.")

    def reset(self) -> None:
        """Forget state kept between iterations (nothing, for stateless criteria)."""

    def _arguments(self) -> list[tuple[str | None, Any]]:
        # (keyword or None for positional, value) pairs for the repr.
        return []

    def __repr__(self) -> str:
        parts = [
            repr(value) if name is None else f"{name}={value!r}"
            for name, value in self._arguments()
        ]
        return f"{type(self).__name__}({', '.join(parts)})"

    def __or__(self, other: Any) -> AnyOf:
        if not callable(other):
            return NotImplemented
        return AnyOf(self, other)

    def __ror__(self, other: Any) -> AnyOf:
        if not callable(other):
            return NotImplemented
        return AnyOf(other, self)


class AnyOf(Criterion):
    """Stop when any member stops; the first member in order that fires wins.

    ``a | b`` builds one. Nested combinations are flattened, so
    ``(a | b) | c`` and ``a | (b | c)`` both hold ``(a, b, c)``. The members
    are the objects given, not copies, and ``reset()`` resets each member
    that has a ``reset`` method.

    Parameters
    ----------
    *criteria : callable
        Criteria, in order of precedence.
    """

    __slots__ = ("criteria",)

    def __init__(self, *criteria: Callable[[Progress], Verdict | None]) -> None:
        if not criteria:
            raise ValueError("`criteria` must hold at least one criterion; got none.")
        flat: list[Callable[[Progress], Verdict | None]] = []
        for criterion in criteria:
            if isinstance(criterion, AnyOf):
                flat.extend(criterion.criteria)
            elif callable(criterion):
                flat.append(criterion)
            else:
                raise TypeError(
                    "`criteria` must be callables taking a Progress and returning a "
                    f"Verdict or None; got {criterion!r} ({type(criterion).__name__})."
                )
        self.criteria: tuple[Callable[[Progress], Verdict | None], ...] = tuple(flat)

    def __call__(self, progress: Progress) -> Verdict | None:
        # Every member sees every snapshot, so stateful members stay in step
        # even when an earlier member fires.
        first = None
        for criterion in self.criteria:
            verdict = criterion(progress)
            if verdict is None:
                continue
            if not isinstance(verdict, Verdict):
                raise TypeError(
                    f"The criterion {criterion!r} returned {verdict!r}; a criterion "
                    "must return a Verdict or None."
                )
            if first is None:
                first = verdict
        return first

    def reset(self) -> None:
        """Reset every member that has a ``reset`` method."""
        for criterion in self.criteria:
            reset = getattr(criterion, "reset", None)
            if callable(reset):
                reset()

    def __repr__(self) -> str:
        if len(self.criteria) == 1:
            return f"AnyOf({self.criteria[0]!r})"
        return " | ".join(repr(criterion) for criterion in self.criteria)


class _History(Criterion):
    """Shared bookkeeping for criteria that look back at earlier iterations."""

    __slots__ = ("_last_iteration",)

    def __init__(self) -> None:
        self._last_iteration: int | None = None

    def reset(self) -> None:
        """Forget every earlier iteration."""
        self._last_iteration = None

    def _advance(self, iteration: int) -> bool:
        """Return True for a new iteration, False for a repeat of the last one."""
        if self._last_iteration is not None and iteration < self._last_iteration:
            self.reset()  # iteration numbers went back: a new run
        repeated = self._last_iteration == iteration
        self._last_iteration = iteration
        return not repeated


# ------------------------------------------------------------- convergence tests


class GradientNorm(Criterion):
    """Converged when the gradient is small, absolutely or relative to the start.

    Fires when ``||g_k|| <= max(atol, rtol * ||g_0||)``.

    Parameters
    ----------
    atol : float, default 1e-6
        Absolute tolerance, >= 0.
    rtol : float, default 1e-8
        Tolerance relative to the gradient norm at the start, in [0, 1);
        0 switches the relative test off.
    norm : {inf, 2, 1}, default inf
        The vector norm; the max-norm by default, which does not grow with
        the number of variables.
    """

    __slots__ = ("atol", "rtol", "norm")

    def __init__(
        self,
        *,
        atol: float = DEFAULT_GRADIENT_ATOL,
        rtol: float = DEFAULT_GRADIENT_RTOL,
        norm: float = math.inf,
    ) -> None:
        self.atol = _validate.nonnegative("atol", atol)
        self.rtol = _relative("rtol", rtol)
        self.norm = _norm_order(norm)

    def _arguments(self) -> list[tuple[str | None, Any]]:
        return [("atol", self.atol), ("rtol", self.rtol), ("norm", self.norm)]

    def _relative_part(self, start_gradient: Any) -> float:
        if self.rtol == 0.0 or start_gradient is None:
            return 0.0
        start = _vector_norm(start_gradient, self.norm)
        # A non-finite start gradient gives no usable scale.
        return self.rtol * start if math.isfinite(start) else 0.0

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        if progress.gradient is None:
            return None
        size = _vector_norm(progress.gradient, self.norm)
        relative = self._relative_part(progress.start_gradient)
        tolerance = max(self.atol, relative)
        if not size <= tolerance:  # also False for NaN
            return None
        detail = f"atol={self.atol:.3g}"
        if relative > 0.0:
            detail += f", rtol*|g0|={relative:.3g}"
        reason = (
            f"Gradient {NORM_NAMES[self.norm]} {size:.3g} is at or below the tolerance "
            f"{tolerance:.3g} ({detail})."
        )
        return Kind.converged, reason


class ValueChange(_History):
    """Converged when the value has stopped changing over a window of iterations.

    Fires at iteration k >= window when
    ``|f_k - f_{k-w}| <= max(atol, rtol * max(|f_k|, |f_{k-w}|, tiny))``
    with w = `window` and tiny the smallest normal double.

    Parameters
    ----------
    atol : float, default 0.0
        Absolute tolerance, >= 0.
    rtol : float, default 1e-12
        Relative tolerance in [0, 1).
    window : int, default 1
        Compare with the value this many iterations back; a window above 1
        keeps one short step from ending the run.
    """

    __slots__ = ("atol", "rtol", "window", "_values")

    def __init__(
        self, *, atol: float = 0.0, rtol: float = DEFAULT_VALUE_RTOL, window: int = 1
    ) -> None:
        super().__init__()
        self.atol = _validate.nonnegative("atol", atol)
        self.rtol = _relative("rtol", rtol)
        self.window = _validate.integer("window", window, minimum=1)
        self._values: deque[float] = deque(maxlen=self.window + 1)

    def _arguments(self) -> list[tuple[str | None, Any]]:
        return [("atol", self.atol), ("rtol", self.rtol), ("window", self.window)]

    def reset(self) -> None:
        """Forget the stored values."""
        super().reset()
        self._values.clear()

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        value = _scalar(progress.value)
        if self._advance(progress.iteration) or not self._values:
            self._values.append(value)
        else:
            self._values[-1] = value
        if len(self._values) <= self.window:
            return None
        old = self._values[0]
        change = abs(value - old)
        scale = max(abs(value), abs(old), TINY)
        tolerance = max(self.atol, self.rtol * scale)
        if not change <= tolerance:
            return None
        span = "iteration" if self.window == 1 else f"{self.window} iterations"
        reason = (
            f"The value changed by {change:.3g} over the last {span}, at or below the "
            f"tolerance {tolerance:.3g}."
        )
        return Kind.converged, reason


class StepLength(_History):
    """Converged when the last step was short.

    Fires when ``||x_k - x_{k-1}|| <= max(atol, rtol * ||x_k||)``, with x_{k-1}
    the point stored at the previous iteration; never at the first snapshot.

    Parameters
    ----------
    atol : float, default 1e-12
        Absolute tolerance, >= 0; needed when the solution is at or near 0.
    rtol : float, default 1e-10
        Tolerance relative to the size of x, in [0, 1).
    norm : {inf, 2, 1}, default inf
        The vector norm, as for `GradientNorm`.
    """

    __slots__ = ("atol", "rtol", "norm", "_previous", "_current")

    def __init__(self, *, atol: float = 1e-12, rtol: float = 1e-10, norm: float = math.inf) -> None:
        super().__init__()
        self.atol = _validate.nonnegative("atol", atol)
        self.rtol = _relative("rtol", rtol)
        self.norm = _norm_order(norm)
        self._previous: np.ndarray | None = None
        self._current: np.ndarray | None = None

    def _arguments(self) -> list[tuple[str | None, Any]]:
        return [("atol", self.atol), ("rtol", self.rtol), ("norm", self.norm)]

    def reset(self) -> None:
        """Forget the stored points."""
        super().reset()
        self._previous = None
        self._current = None

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        # A copy: the caller may update x in place.
        x = np.array(np.ravel(np.asarray(progress.x)), dtype=float)
        if self._advance(progress.iteration):
            self._previous = self._current
        self._current = x
        if self._previous is None or self._previous.shape != x.shape:
            return None
        with np.errstate(over="ignore", invalid="ignore"):
            length = _vector_norm(x - self._previous, self.norm)
        tolerance = max(self.atol, self.rtol * _vector_norm(x, self.norm))
        if not length <= tolerance:
            return None
        reason = (
            f"The last step's length ({NORM_NAMES[self.norm]}) {length:.3g} is at or "
            f"below the tolerance {tolerance:.3g}."
        )
        return Kind.converged, reason


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

    def _arguments(self) -> list[tuple[str | None, Any]]:
        return [(None, self.n)]

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

    def _arguments(self) -> list[tuple[str | None, Any]]:
        return [(None, self.n)]

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

    def _arguments(self) -> list[tuple[str | None, Any]]:
        return [(None, self.seconds)]

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        elapsed = float(progress.elapsed)
        if elapsed < self.seconds:
            return None
        reason = (
            f"Ran for {elapsed:.3g} s, reaching the time limit of {self.seconds:.3g} s; "
            "raise `seconds` to allow more."
        )
        return Kind.budget, reason


# ----------------------------------------------------------------------- failures

_DIVERGING_FIX = "the step is probably too large, so use a line search or a smaller step."


class Divergence(Criterion):
    """Failed when the run has blown up.

    Fires, checking in this order, when x, the value or the gradient has a
    non-finite entry; when ``|f_k| > bound``; or, if `growth` is set, when
    ``f_k > f_0 + growth * max(1, |f_0|)``.

    Parameters
    ----------
    bound : float, default 1e100
        Largest acceptable ``|f|``, > 0 (inf switches the test off). Far
        below overflow, so a run that is blowing up stops while its numbers
        can still be printed.
    growth : float or None, default None
        Allowed rise of the value above the start, in units of
        ``max(1, |f_0|)``; None switches the test off. Leave it off for
        nonmonotone methods, whose values may climb for a while.
    """

    __slots__ = ("bound", "growth")

    def __init__(self, *, bound: float = DEFAULT_BOUND, growth: float | None = None) -> None:
        self.bound = _positive_seconds("bound", bound)
        self.growth = None if growth is None else _validate.nonnegative("growth", growth)

    def _arguments(self) -> list[tuple[str | None, Any]]:
        return [("bound", self.bound), ("growth", self.growth)]

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        k = progress.iteration
        value = _scalar(progress.value)
        if not math.isfinite(value):
            return Kind.failed, f"The value is {value} at iteration {k}; {_DIVERGING_FIX}"
        if progress.gradient is not None and not _array.all_finite(np.asarray(progress.gradient)):
            return Kind.failed, (
                f"The gradient has non-finite entries at iteration {k}; {_DIVERGING_FIX}"
            )
        if not _array.all_finite(np.asarray(progress.x)):
            return Kind.failed, f"x has non-finite entries at iteration {k}; {_DIVERGING_FIX}"
        if abs(value) > self.bound:
            return Kind.failed, (
                f"|value| = {abs(value):.3g} exceeds the bound {self.bound:.3g} at "
                f"iteration {k}; {_DIVERGING_FIX}"
            )
        if self.growth is not None:
            start = _scalar(progress.start_value)
            limit = start + self.growth * max(1.0, abs(start))
            if value > limit:
                return Kind.failed, (
                    f"The value {value:.3g} rose above the limit {limit:.3g} "
                    f"(start {start:.3g}, growth={self.growth:.3g}) at iteration {k}; "
                    f"{_DIVERGING_FIX}"
                )
        return None


class Stall(_History):
    """Failed when the best value has not improved for `iterations` iterations.

    The value improves when ``f_k < best - rtol * max(1, |best|)``; `best` then
    becomes f_k. Fires when `iterations` consecutive iterations bring no
    improvement.

    Parameters
    ----------
    iterations : int, default 100
        Iterations without improvement allowed, >= 1.
    rtol : float, default 0.0
        Smallest improvement that counts, relative to ``max(1, |best|)``, in
        [0, 1). The default counts any decrease: a positive `rtol` is
        absolute when ``|best| < 1``, so on problems whose minimum value is 0
        it would call slow but sound convergence a stall.
    """

    __slots__ = ("iterations", "rtol", "_best", "_improved_at")

    def __init__(self, *, iterations: int = DEFAULT_STALL_ITERATIONS, rtol: float = 0.0) -> None:
        super().__init__()
        self.iterations = _validate.integer("iterations", iterations, minimum=1)
        self.rtol = _relative("rtol", rtol)
        self._best: float | None = None
        self._improved_at = 0

    def _arguments(self) -> list[tuple[str | None, Any]]:
        return [("iterations", self.iterations), ("rtol", self.rtol)]

    def reset(self) -> None:
        """Forget the best value."""
        super().reset()
        self._best = None
        self._improved_at = 0

    def _improves(self, value: float) -> bool:
        if self._best is None:
            return True  # the first value seen is the reference
        if not math.isfinite(value):
            return False
        if not math.isfinite(self._best):
            return True  # any finite value beats a non-finite start
        return value < self._best - self.rtol * max(1.0, abs(self._best))

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        value = _scalar(progress.value)
        k = progress.iteration
        self._advance(k)
        if self._improves(value):
            self._best = value
            self._improved_at = k
            return None
        idle = k - self._improved_at
        if idle < self.iterations:
            return None
        head = (
            f"The best value {self._best:.3g} (iteration {self._improved_at}) has not "
            f"improved for {idle} iterations"
        )
        if math.isfinite(value) and value > self._best:
            # A fixed rate that is too large often climbs slowly: say so.
            reason = (
                f"{head} and the value is now {value:.3g}; if the values keep rising, "
                f"{_DIVERGING_FIX}"
            )
        else:
            reason = (
                f"{head}; check the direction and step controller, or loosen the "
                "convergence tolerances to stop earlier."
            )
        return Kind.failed, reason


# ------------------------------------------------------------------------ default


def default(
    *,
    gradient_atol: float = DEFAULT_GRADIENT_ATOL,
    gradient_rtol: float = DEFAULT_GRADIENT_RTOL,
    value_rtol: float = DEFAULT_VALUE_RTOL,
    value_window: int = DEFAULT_VALUE_WINDOW,
    max_iterations: int = DEFAULT_MAX_ITERATIONS,
    max_evaluations: int | None = None,
    seconds: float | None = None,
    stall_iterations: int = DEFAULT_STALL_ITERATIONS,
    bound: float = DEFAULT_BOUND,
    growth: float | None = DEFAULT_GROWTH,
) -> AnyOf:
    """A fresh combination of stopping rules suited to most runs.

    In order of precedence::

        Divergence(bound=1e100, growth=1e8)
        | GradientNorm(atol=1e-06, rtol=1e-08, norm=inf)
        | ValueChange(atol=0.0, rtol=1e-12, window=5)
        | MaxIterations(10000)
        [| MaxEvaluations(max_evaluations)] [| TimeLimit(seconds)]
        | Stall(iterations=100, rtol=0.0)

    Divergence comes first, so a blown-up run ends as failed with a reason
    even when another rule would also fire; convergence comes before budgets,
    so a run that converges on its last allowed iteration says so.

    Parameters
    ----------
    gradient_atol, gradient_rtol : float
        `GradientNorm` tolerances.
    value_rtol : float
        `ValueChange` relative tolerance; its `atol` is 0.
    value_window : int
        `ValueChange` window.
    max_iterations : int
        `MaxIterations` budget.
    max_evaluations : int or None
        Adds `MaxEvaluations` when given.
    seconds : float or None
        Adds `TimeLimit` when given.
    stall_iterations : int
        `Stall` patience.
    bound : float
        `Divergence` bound on ``|f|``.
    growth : float or None
        `Divergence` growth limit: a value above f0 + growth·max(1, |f0|) fails the
        run, so a fixed rate that is too large stops within a few iterations of
        blowing up (None switches it off).

    Returns
    -------
    AnyOf
        New criterion objects on every call; none is shared between runs.
    """
    criteria: list[Criterion] = [
        Divergence(bound=bound, growth=growth),
        GradientNorm(atol=gradient_atol, rtol=gradient_rtol),
        ValueChange(atol=0.0, rtol=value_rtol, window=value_window),
        MaxIterations(max_iterations),
    ]
    if max_evaluations is not None:
        criteria.append(MaxEvaluations(max_evaluations))
    if seconds is not None:
        criteria.append(TimeLimit(seconds))
    criteria.append(Stall(iterations=stall_iterations))
    return AnyOf(*criteria)
