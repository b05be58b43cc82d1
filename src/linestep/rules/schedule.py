"""A step size that depends on the iteration counter: decays, cosine annealing, a ramp."""

from __future__ import annotations

import math
import numbers
import sys
from collections.abc import Callable
from typing import Any

from linestep import _validate
from linestep._controller import Outcome, StepController
from linestep._ray import Ray
from linestep._rebuild import Rebuilds
from linestep._step import Status

__all__ = ["Schedule"]

# Smallest positive normal float64: a decaying size is floored here instead of underflowing
# to 0, so a named schedule always returns a positive size (a zero step never moves x).
SMALLEST_SIZE = sys.float_info.min


class Schedule(StepController):
    """Step size from the iteration counter: x + size(k)·d, with k = 0, 1, 2, ...

    `k` is the number of calls since construction or `reset()`. It advances on
    every call that reaches the rule, *including* calls where the guard fails
    (status ``non_finite``), so the schedule follows the iterations of the
    caller's loop, not the successful steps. The only calls that leave `k`
    alone are those the base answers before the rule runs, which needs a
    caller-supplied gradient: ``not_descent`` (and a zero gradient, answered
    with size 0). Inside `Fallback`, `k` advances once per `Fallback` call.

    Like `Fixed`, the new point is evaluated once as a guard: a non-finite value
    leaves `x` unchanged with status ``non_finite``; an increase in f is
    accepted (wrap the schedule in `Fallback` to recover instead).

    Build one from any callable ``k -> size`` or with a named constructor
    (all sizes are functions of the integer k >= 0):

    ========================  ==================================================
    `step_decay`              initial·factor^⌊k/every⌋
    `exponential`             initial·rate^k
    `robbins_monro`           initial/(1 + rate·k)^power
    `taper`                   (initial − final)·(1 − min(k, steps)/steps)^power
                              + final
    `cosine`                  final + (initial − final)·(1 + cos(π·k/period))/2,
                              then `final`; optionally with warm restarts
    `with_ramp`               a linear ramp-up before any schedule
    ========================  ==================================================

    Every size is positive: named constructors check their arguments, and the
    decays that approach 0 (`step_decay`, `exponential`, `robbins_monro`) are
    floored at the smallest normal float instead of underflowing to 0.

    Parameters
    ----------
    function : callable
        ``function(k) -> size`` for integer k >= 0. Its result is checked at each
        call: a size that is not a finite positive number raises ValueError
        naming the schedule and k (that is a programming error, not numeric
        trouble along the ray).

    Attributes
    ----------
    iteration : int
        The k that the next call will use.

    Returns
    -------
    Step
        ``accepted``: `x` = x + size(k)·d, `value` its f (which may be larger).
        ``non_finite``: f was not finite there; `x` unchanged, size 0 (k still
        advances).
        ``not_descent``: a gradient was given and φ'(0) >= 0; `x` unchanged,
        nothing evaluated, k unchanged.

    See Also
    --------
    Fixed : the constant step.
    Fallback : recover with a search when a scheduled step raises f.

    References
    ----------
    H. Robbins and S. Monro, "A stochastic approximation method", Ann. Math.
    Statist. 22(3):400–407, 1951 (step sizes with Σ t_k = ∞, Σ t_k² < ∞, such as
    t₀/(1 + r·k)).
    I. Loshchilov and F. Hutter, "SGDR: Stochastic gradient descent with warm
    restarts", ICLR 2017, eq. (5) (cosine annealing and warm restarts).
    P. Goyal et al., "Accurate, large minibatch SGD: training ImageNet in 1
    hour", arXiv:1706.02677, 2017 (a linear ramp-up of the step size).
    Step decay, exponential decay and tapering to a final size are common practice.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep.rules.schedule import Schedule
    >>> schedule = Schedule.step_decay(0.5, factor=0.1, every=2)
    >>> schedule
    Schedule.step_decay(0.5, factor=0.1, every=2)
    >>> f = lambda x: float(x @ x)
    >>> x = np.array([1.0])
    >>> for _ in range(3):
    ...     step = schedule(f, x, -x)
    ...     x = step.x
    ...     print(step.size, x)
    0.5 [0.5]
    0.5 [0.25]
    0.05 [0.2375]
    >>> schedule.iteration
    3
    >>> [round(schedule.size_at(k), 6) for k in range(5)]
    [0.5, 0.5, 0.05, 0.05, 0.005]
    """

    needs_gradient = False
    needs_value = False

    def __init__(self, function: Callable[[int], Any]) -> None:
        super().__init__()
        if not callable(function):
            raise TypeError(
                f"`function` must be a callable k -> size, such as `lambda k: 0.1 / (1 + k)`; "
                f"got {function!r}."
            )
        self._sizes = function if isinstance(function, _Formula) else _UserFunction(function)
        self.max_evaluations = 1
        self._k = 0

    # -- named constructors ------------------------------------------------------
    @classmethod
    def step_decay(cls, initial: float, *, factor: float, every: int) -> Schedule:
        """initial·factor^⌊k/every⌋: multiply the size by `factor` every `every` calls.

        Parameters
        ----------
        initial : float
            The size for k < every, > 0.
        factor : float
            0 < factor <= 1.
        every : int
            Calls between two reductions, >= 1.

        Returns
        -------
        Schedule
            A new schedule with its counter at k = 0.
        """
        return cls(_StepDecay(_validate.positive("initial", initial),
                              _unit_factor("factor", factor), _validate.integer("every", every)))

    @classmethod
    def exponential(cls, initial: float, *, rate: float) -> Schedule:
        """initial·rate^k: multiply the size by `rate` at every call.

        Parameters
        ----------
        initial : float
            The size at k = 0, > 0.
        rate : float
            0 < rate <= 1.

        Returns
        -------
        Schedule
            A new schedule with its counter at k = 0.
        """
        return cls(_Exponential(_validate.positive("initial", initial), _unit_factor("rate", rate)))

    @classmethod
    def robbins_monro(cls, initial: float, *, rate: float, power: float = 1.0) -> Schedule:
        """initial/(1 + rate·k)^power: the stochastic-approximation family.

        With 1/2 < power <= 1 the sizes satisfy Robbins and Monro's conditions
        Σ size(k) = ∞ and Σ size(k)² < ∞.

        Parameters
        ----------
        initial : float
            The size at k = 0, > 0.
        rate : float
            Finite, >= 0 (0 gives a constant size).
        power : float
            Finite, > 0; 1 gives the classic 1/k decay, 1/2 the 1/√k decay.

        Returns
        -------
        Schedule
            A new schedule with its counter at k = 0.
        """
        return cls(_RobbinsMonro(_validate.positive("initial", initial),
                                 _validate.nonnegative("rate", rate),
                                 _validate.positive("power", power)))

    @classmethod
    def taper(cls, initial: float, *, final: float, steps: int,
              power: float = 1.0) -> Schedule:
        """(initial − final)·(1 − min(k, steps)/steps)^power + final.

        Tapers from `initial` to `final` over `steps` calls and stays there; power 1
        is a straight line, a larger power drops faster at first.

        Parameters
        ----------
        initial : float
            The size at k = 0, > 0.
        final : float
            The size from k = steps on, 0 < final <= initial.
        steps : int
            Calls to go from `initial` to `final`, >= 1.
        power : float
            Finite, > 0.

        Returns
        -------
        Schedule
            A new schedule with its counter at k = 0.
        """
        initial = _validate.positive("initial", initial)
        return cls(_Taper(initial, _final_size(final, initial),
                          _validate.integer("steps", steps),
                          _validate.positive("power", power)))

    @classmethod
    def cosine(cls, initial: float, *, final: float, period: int,
               restart_growth: int | None = None) -> Schedule:
        """Cosine annealing from `initial` to `final` over `period` calls.

        size(k) = final + (initial − final)·(1 + cos(π·k/period))/2 for k <= period
        (Loshchilov & Hutter 2017, eq. 5, with η_max = initial, η_min = final,
        T_cur = k, T_i = period). Without restarts the size stays at `final`
        after the period. With ``restart_growth = m`` the annealing restarts from
        `initial` at the end of each period, and each period is m times longer
        than the one before (their T_mult): restarts at k = period,
        period·(1 + m), period·(1 + m + m²), .... Within a restarted cycle the
        size approaches but never equals `final`, as in the paper.

        Parameters
        ----------
        initial : float
            The size at k = 0 and at each restart, > 0.
        final : float
            The lowest size, 0 < final <= initial. It must be positive: a zero
            size would take zero steps.
        period : int
            Length of the first (or only) annealing period, >= 1.
        restart_growth : int or None
            None: no restarts. An integer m >= 1: warm restarts with period
            lengths period·m^i (1 keeps every period equal).

        Returns
        -------
        Schedule
            A new schedule with its counter at k = 0.

        References
        ----------
        I. Loshchilov and F. Hutter, "SGDR: Stochastic gradient descent with warm
        restarts", ICLR 2017, eq. (5).

        Examples
        --------
        >>> from linestep.rules.schedule import Schedule
        >>> cosine = Schedule.cosine(1.0, final=0.5, period=2, restart_growth=2)
        >>> [cosine.size_at(k) for k in range(8)]  # restarts at k = 2 and 2·(1 + 2) = 6
        [1.0, 0.75, 1.0, 0.9267766952966369, 0.75, 0.5732233047033631, 1.0, 0.9809698831278217]
        """
        initial = _validate.positive("initial", initial)
        if restart_growth is not None:
            restart_growth = _validate.integer("restart_growth", restart_growth)
        return cls(_Cosine(initial, _final_size(final, initial),
                           _validate.integer("period", period), restart_growth))

    def with_ramp(self, n: int, *, start: float = 0.1) -> Schedule:
        """A new schedule: a linear ramp over `n` calls, then this schedule from its k = 0.

        size(k) = size₀·(start + (1 − start)·k/n) for k < n, where size₀ is this
        schedule's size at k = 0; then size(k) = this schedule's size(k − n). The
        wrapped schedule is *shifted*: it starts from its own k = 0 once the ramp
        ends (Goyal et al. 2017: ramp up linearly, then run the decay as if from
        the start). `start` is a fraction of size₀, not an absolute size, so the
        ramp scales with the schedule. The new schedule has its own counter,
        starting at 0.

        Parameters
        ----------
        n : int
            Length of the ramp in calls, >= 1.
        start : float
            The first size as a fraction of size₀, 0 < start <= 1.

        Returns
        -------
        Schedule
            A new schedule with its counter at k = 0; this one is unchanged.

        Examples
        --------
        >>> from linestep.rules.schedule import Schedule
        >>> ramped = Schedule.exponential(1.0, rate=0.5).with_ramp(4, start=0.25)
        >>> [round(ramped.size_at(k), 4) for k in range(7)]
        [0.25, 0.4375, 0.625, 0.8125, 1.0, 0.5, 0.25]
        >>> ramped
        Schedule.exponential(1.0, rate=0.5).with_ramp(4, start=0.25)
        """
        n = _validate.integer("n", n)
        # `start` is a fraction of the wrapped schedule's first size.
        return type(self)(_Ramp(self._sizes, n, _unit_factor("start", start)))

    # -- public helpers ------------------------------------------------------------
    @property
    def iteration(self) -> int:
        """The k that the next call will use (calls since construction or `reset()`)."""
        return self._k

    def size_at(self, k: int) -> float:
        """The size this schedule gives at iteration `k` (no side effects).

        Parameters
        ----------
        k : int
            Iteration, >= 0.

        Returns
        -------
        float
            A finite positive size.
        """
        return self._sizes(_validate.integer("k", k, minimum=0))

    # The repr is the formula's: the named constructor and its arguments.
    def _constructor(self) -> str:
        return self._sizes._constructor()

    def _arguments(self) -> list[tuple[str | None, Any]]:
        return self._sizes._arguments()

    # -- the rule ------------------------------------------------------------------
    def _search(self, ray: Ray, first: float) -> Outcome:
        k = self._k
        size = self._sizes(k)
        # Count the call before evaluating: a guarded failure is still an iteration.
        self._k = k + 1
        point = ray.value(size)
        if not point.finite:
            return Outcome(None, Status.non_finite, (
                f"The scheduled step of size {size:.3g} (k={k}) gave a non-finite value; x "
                "is unchanged. Lower the schedule or wrap it in Fallback(schedule, Armijo())."
            ))
        return Outcome(point)

    def _reset_state(self) -> None:
        self._k = 0


# -- argument checks -------------------------------------------------------------------
def _unit_factor(name: str, value: Any) -> float:
    return _validate.within(name, value, 0.0, 1.0, include_high=True)


def _final_size(final: Any, initial: float) -> float:
    final = _validate.real("final", final)
    if not 0.0 < final <= initial:
        raise ValueError(
            f"`final` must satisfy 0 < final <= initial (a zero size would never move x); "
            f"got final={final!r}, initial={initial!r}."
        )
    return final


def _floor(size: float) -> float:
    return size if size >= SMALLEST_SIZE else SMALLEST_SIZE


# -- formulas: pure functions of k whose repr rebuilds the schedule -------------------------
class _Formula(Rebuilds):
    """A map k -> size; its repr is the `Schedule` class method that builds it."""

    __slots__ = ()
    #: The class method of `Schedule` that builds this formula.
    _method = ""
    _positional = ("initial",)

    def __call__(self, k: int) -> float:
        raise NotImplementedError

    def _constructor(self) -> str:
        return f"Schedule.{self._method}"


class _UserFunction(_Formula):
    __slots__ = ("function",)
    _positional = ("function",)

    def __init__(self, function: Callable[[int], Any]) -> None:
        self.function = function

    def _constructor(self) -> str:
        return "Schedule"

    def __call__(self, k: int) -> float:
        size = self.function(k)
        # Plain reals and 0-d arrays (numpy, JAX) are sizes; anything else is a bug.
        if isinstance(size, bool) or not (
            isinstance(size, numbers.Real) or getattr(size, "ndim", None) == 0
        ):
            raise TypeError(
                f"{self!r} returned {size!r} at k={k}; a schedule must return a real "
                "number."
            )
        size = float(size)
        if not (size > 0.0 and math.isfinite(size)):
            raise ValueError(
                f"{self!r} returned size={size!r} at k={k}; a schedule must return a "
                "finite positive size."
            )
        return size


class _StepDecay(_Formula):
    __slots__ = ("initial", "factor", "every")
    _method = "step_decay"
    _fields = ("factor", "every")

    def __init__(self, initial: float, factor: float, every: int) -> None:
        self.initial, self.factor, self.every = initial, factor, every

    def __call__(self, k: int) -> float:
        return _floor(self.initial * self.factor ** (k // self.every))


class _Exponential(_Formula):
    __slots__ = ("initial", "rate")
    _method = "exponential"
    _fields = ("rate",)

    def __init__(self, initial: float, rate: float) -> None:
        self.initial, self.rate = initial, rate

    def __call__(self, k: int) -> float:
        return _floor(self.initial * self.rate**k)


class _RobbinsMonro(_Formula):
    __slots__ = ("initial", "rate", "power")
    _method = "robbins_monro"
    _fields = ("rate", "power")

    def __init__(self, initial: float, rate: float, power: float) -> None:
        self.initial, self.rate, self.power = initial, rate, power

    def __call__(self, k: int) -> float:
        try:
            denominator = (1.0 + self.rate * k) ** self.power
        except OverflowError:  # float ** float raises instead of giving inf
            return SMALLEST_SIZE
        return _floor(self.initial / denominator)


class _Taper(_Formula):
    __slots__ = ("initial", "final", "steps", "power")
    _method = "taper"
    _fields = ("final", "steps", "power")

    def __init__(self, initial: float, final: float, steps: int, power: float) -> None:
        self.initial, self.final, self.steps, self.power = initial, final, steps, power

    def __call__(self, k: int) -> float:
        remaining = 1.0 - min(k, self.steps) / self.steps
        return (self.initial - self.final) * remaining**self.power + self.final


class _Cosine(_Formula):
    __slots__ = ("initial", "final", "period", "restart_growth")
    _method = "cosine"
    _fields = ("final", "period", "restart_growth")

    def __init__(self, initial: float, final: float, period: int,
                 restart_growth: int | None) -> None:
        self.initial, self.final = initial, final
        self.period, self.restart_growth = period, restart_growth

    def __call__(self, k: int) -> float:
        elapsed, length = self._position(k)
        # SGDR eq. (5): η = η_min + (η_max − η_min)·(1 + cos(π·T_cur/T_i))/2.
        return self.final + 0.5 * (self.initial - self.final) * (
            1.0 + math.cos(math.pi * elapsed / length))

    def _position(self, k: int) -> tuple[int, int]:
        """(T_cur, T_i): calls since the last restart and the current period's length."""
        period, growth = self.period, self.restart_growth
        if growth is None:
            return min(k, period), period
        if growth == 1:
            return k % period, period
        start, length = 0, period
        while k >= start + length:  # O(log k) cycles: lengths grow geometrically
            start += length
            length *= growth
        return k - start, length

    def _arguments(self) -> list[tuple[str | None, Any]]:
        arguments = super()._arguments()
        # No restarts is the default; leaving it out keeps the common repr short.
        return arguments[:-1] if self.restart_growth is None else arguments


class _Ramp(_Formula):
    __slots__ = ("base", "n", "start")
    _positional = ("n",)
    _fields = ("start",)

    def __init__(self, base: _Formula, n: int, start: float) -> None:
        self.base, self.n, self.start = base, n, start

    def _constructor(self) -> str:
        return f"{self.base!r}.with_ramp"

    def __call__(self, k: int) -> float:
        if k >= self.n:
            return self.base(k - self.n)
        start = self.start
        return _floor(self.base(0) * (start + (1.0 - start) * k / self.n))
