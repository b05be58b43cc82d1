"""Records, the `Criterion` base class, `AnyOf` and shared checks of the stopping rules."""

from __future__ import annotations

import enum
import math
import numbers
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from linestep import _validate
from linestep._rebuild import Rebuilds

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
    if order == math.inf and array.__class__ is np.ndarray and array.size:
        return float(np.abs(array).max())  # the common case, without norm()'s checks
    flat = np.ravel(np.asarray(array))
    if flat.size == 0:
        return 0.0
    # Overflow to inf is an answer here (Divergence reports it), not a warning.
    with np.errstate(over="ignore", invalid="ignore"):
        return float(np.linalg.norm(flat, order))


# -------------------------------------------------------------------- base class


class Criterion(Rebuilds):
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
            verdict = _as_verdict(verdict, criterion, "The criterion")
            if verdict is not None and first is None:
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


def _as_verdict(result: Any, criterion: Any, who: str) -> Verdict | None:
    """A criterion's answer as a Verdict or None: None and False go on; True
    (numpy's too) stops with a ``budget`` verdict; anything else raises TypeError."""
    if result is None or isinstance(result, Verdict):
        return result
    if isinstance(result, (bool, np.bool_)):
        if not result:
            return None
        return Verdict(kind=Kind.budget, criterion=repr(criterion), reason=(
            f"{who} {criterion!r} returned True; return a stopping.Verdict instead to "
            "say whether the run converged or failed."))
    raise TypeError(
        f"{who} {criterion!r} returned {result!r} of type {type(result).__name__}; a "
        "criterion must return a Verdict, None (go on) or a bool."
    )


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
