"""The Hager–Zhang line search: approximate Wolfe conditions and secant² steps."""

from __future__ import annotations

import math
from typing import Any

from linestep import _array, _initial, _validate
from linestep._constants import NON_FINITE_SHRINK
from linestep._controller import Outcome, StepController
from linestep._interpolate import cubic_from_slopes, quadratic_from_slopes
from linestep._ray import EPS, Point, Ray
from linestep._rebuild import Rebuilds
from linestep._step import ACCEPTED, Status

__all__ = ["HagerZhang", "HagerZhangStart"]

INF = math.inf

# Trials come from the cubic rather than the secant of φ' while the bracket's end values
# differ by more than this many ε_k (they then carry information; our rule).
VALUES_INFORM = 10.0
# A bracket narrower than this many float64 spacings of its upper end has no interior
# point left to try (the midpoint rounds to an end), whatever the rounding level in x.
SIZE_SPACINGS = 4.0

# `Outcome(point, ACCEPTED, message)`, positional: a keyword to a class call builds a
# dict (~1,000 instructions per call, benchmarks/call_instructions.py).
_WOLFE = (
    "The step satisfies the Wolfe conditions: sufficient decrease with `c1` and "
    "curvature with `c2`."
)
_APPROXIMATE = (
    "The step satisfies the approximate Wolfe conditions (2·c1 − 1)·φ'(0) ≥ φ'(t) ≥ "
    "c2·φ'(0) with φ(t) ≤ φ(0) + ε_k, while the Wolfe decrease test failed, as happens "
    "near a minimiser where changes in f are at rounding level."
)


class _Stop(Exception):
    """Ends the search from any depth: carries the `Outcome` for `_search`."""

    def __init__(self, outcome: Outcome) -> None:
        super().__init__()
        self.outcome = outcome


class HagerZhang(StepController):
    """Line search of Hager and Zhang: Wolfe or approximate Wolfe, secant² updates.

    A trial t is accepted as soon as either the Wolfe conditions hold,

    * φ(t) − φ(0) ≤ c1·t·φ'(0) and φ'(t) ≥ c2·φ'(0) ("T1"–"T2"),

    or, once the values have settled (see `approximate_switch`), the approximate
    Wolfe conditions hold together with a bound on the rise,

    * (2·c1 − 1)·φ'(0) ≥ φ'(t) ≥ c2·φ'(0) ("AW") and φ(t) ≤ φ(0) + ε_k,

    where ε_k = `epsilon`·C_k and C_k is a running average of |f| over the calls.
    The approximate conditions test φ' instead of differences of φ, which stay
    meaningful where those differences are lost to rounding. The search keeps state
    between calls, meant as successive iterations x_k of one descent (C_k and the
    switch); `reset()` clears it. How a trial is found is in Notes.

    Parameters
    ----------
    c1 : float
        δ, 0 < c1 < 1/2: the sufficient-decrease constant. Default 0.1 (2005, §4).
    c2 : float
        σ, c1 <= c2 < 1: the curvature constant. Default 0.9 (2005, §4).
    epsilon : float
        ε >= 0, the relative rise allowed by the approximate Wolfe test.
        Default 1e-6 (2005, §4).
    theta : float
        θ, 0 < theta < 1, where the U3 step bisects a bracket whose interior point
        lies above φ(0) + ε_k. Default 0.5 (2005, §4).
    bisect_threshold : float
        γ, 0 < bisect_threshold < 1: bisect the bracket when a secant² pass keeps
        more than this fraction of its width. Default 0.66 (2005, §4).
    expand : float
        ρ > 1, growth factor of the bracketing phase. Default 5 (2006, parameter
        list of CG_DESCENT).
    memory_weight : float
        Δ, 0 <= memory_weight <= 1, the weight of earlier |f(x_j)| in C_k (see
        Notes). Default 0.7 (2006); 0 gives C_k = |f(x_k)|, the 2005 rule.
    approximate_switch : float
        ω >= 0: the approximate Wolfe conditions apply from the first call with
        |f(x_k) − f(x_{k−1})| ≤ ω·C_k on, until `reset()`. Default 1e-3 (2006, §3);
        ``inf`` applies them from the first call, as the 2005 paper does.
    initial : float or trial strategy
        The first trial (`UnitTrial`, `PreviousTrial`, `QuadraticTrial`,
        `ScaledTrial`, `HagerZhangStart` for the paper's I0 and I2, or a number).
    max_size : float
        Largest step tried; the bracketing phase stops there (our safeguard).
    max_evaluations : int
        Most trial points per call (each a value and a gradient).
    record_trials : bool
        Keep every trial on ``Step.trials``.

    Returns
    -------
    Step
        ``accepted``: the Wolfe or the approximate Wolfe conditions hold at `size`;
        the message says which; `x` = x + size·d.
        ``step_too_large``: φ still decreased at `max_size` (f may be unbounded
        below); `x` is the best point with φ(t) ≤ φ(0) + c1·t·φ'(0).
        ``interval_too_small``: the bracket collapsed to rounding level; `x` is the
        best such point found, else unchanged (size 0).
        ``max_evaluations``: budget spent; `x` as for ``interval_too_small``.
        ``non_finite``: no trial had a finite value; `x` unchanged.
        ``not_descent``: φ'(0) >= 0; `x` unchanged, nothing evaluated.

    Notes
    -----
    Every trial evaluates φ and φ'. The first trial grows by `expand` until it
    brackets a point with φ' ≥ 0 or with φ above φ(0) + ε_k (procedure *bracket*,
    B0–B3); the bracket [a, b] then keeps φ'(a) < 0, φ(a) ≤ φ(0) + ε_k and
    φ'(b) ≥ 0 and shrinks by secant² steps (S1–S4): a secant step on φ', and a
    second secant step from the end it replaced. Where the values at the bracket's
    ends differ by more than 10·ε_k, each of the two steps is instead the minimiser
    of the cubic matching φ and φ' at both ends when it lies inside (our choice: it
    uses the values, which the secant ignores, and needs fewer trials while they are
    above rounding level), until a pass ends in the L2 bisection. Each new point
    updates the bracket by U0–U3; U3 (a point with φ' < 0 above φ(0) + ε_k)
    bisects with weight `theta` (U3a–c). When a secant² pass keeps more than
    `bisect_threshold` of the width, the bracket is bisected (L2). Non-finite values
    count as "too long": the next trial moves to a tenth of the way from the lower
    end.

    A test on values locates a minimiser of φ to about √ε_mach, one on slopes to
    about ε_mach (2005, §4); hence the approximate conditions near a minimiser.

    The scale of ε_k is the running average of the 2006 paper (§3),
    Q_k = 1 + Δ·Q_{k−1}, C_k = C_{k−1} + (|f(x_k)| − C_{k−1})/Q_k with Q_{−1} = 0
    and Δ = `memory_weight`.

    The approximate Wolfe conditions are switched on for good at the first call
    with |f(x_k) − f(x_{k−1})| ≤ ω·C_k (2006, §3), where f(x_{k−1}) is φ(0) of the
    previous call. Until then a step must meet (T1)–(T2), and the value tests of the
    bracket rules (B2, U2, U3b) compare φ(t) − δ·t·φ'(0) with φ(0) + ε_k, so that
    the bracket cannot grow past every step with sufficient decrease. A fresh or
    reset search starts with the standard Wolfe conditions.

    References
    ----------
    W. W. Hager and H. Zhang, "A new conjugate gradient method with guaranteed
    descent and an efficient line search", SIAM J. Optim. 16(1):170–192, 2005, §4.
    W. W. Hager and H. Zhang, "Algorithm 851: CG_DESCENT, a conjugate gradient
    method with guaranteed descent", ACM TOMS 32(1):113–137, 2006.
    The step labels (T1, T2, AW, B, U, S, L), the default values and the section
    numbers cited above are recalled from memory of these two papers.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep.searches.hager_zhang import HagerZhang
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([3.0, -4.0])
    >>> step = HagerZhang()((f, g), x, -g(x))   # t = 1 overshoots; one secant step
    >>> step.status, step.size, step.value, step.evaluations
    (Status.accepted, 0.5, 0.0, Evaluations(values=3, gradients=3))
    """

    _fields = ("c1", "c2", "epsilon", "theta", "bisect_threshold", "expand", "memory_weight",
               "approximate_switch", "initial", "max_size", "max_evaluations",
               "record_trials")

    def __init__(self, *, c1: float = 0.1, c2: float = 0.9, epsilon: float = 1e-6,
                 theta: float = 0.5, bisect_threshold: float = 0.66, expand: float = 5.0,
                 memory_weight: float = 0.7, approximate_switch: float = 1e-3,
                 initial: Any = 1.0, max_size: float = 1e10, max_evaluations: int = 40,
                 record_trials: bool = False) -> None:
        super().__init__()
        self.c1, self.c2 = _validate.curvature_pair(c1, c2)
        if not self.c1 < 0.5:
            raise ValueError(
                f"`c1` must satisfy 0 < c1 < 1/2 for the approximate Wolfe conditions; "
                f"got c1={self.c1!r}."
            )
        self.epsilon = _validate.nonnegative("epsilon", epsilon)
        self.theta = _validate.open_unit("theta", theta)
        self.bisect_threshold = _validate.open_unit("bisect_threshold", bisect_threshold)
        self.expand = _validate.within("expand", expand, 1.0, math.inf)  # > 1: trials grow
        self.memory_weight = _validate.within("memory_weight", memory_weight, 0.0, 1.0,
                                              include_low=True, include_high=True)
        self.approximate_switch = _validate.within(  # ω; inf: from the first call
            "approximate_switch", approximate_switch, 0.0, INF, include_low=True,
            include_high=True)
        self.initial = _initial.resolve(initial)
        self.max_size = _validate.positive("max_size", max_size)
        self.max_evaluations = _validate.integer("max_evaluations", max_evaluations)
        self.record_trials = bool(record_trials)
        self._reset_state()

    def _reset_state(self) -> None:
        self._weight = 0.0  # Q_{k-1} of the running average
        self._scale = 0.0  # C_{k-1}
        self._previous_value: float | None = None  # f(x_{k-1}), the previous call's φ(0)
        self._approximate = False  # the approximate Wolfe conditions are switched on

    def _search(self, ray: Ray, first: float) -> Outcome:
        origin = ray.origin
        f0, d0, c1 = origin.value, origin.slope, self.c1
        # ε_k = ε·C_k after folding |f(x_k)| into the running average C_k (2006, §3).
        weight = 1.0 + self.memory_weight * self._weight
        scale = self._scale + (abs(f0) - self._scale) / weight
        self._weight, self._scale = weight, scale
        epsilon_k = self.epsilon * scale
        # The approximate conditions are switched on for good once
        # |f(x_k) − f(x_{k−1})| ≤ ω·C_k (Hager & Zhang 2006, §3, as we recall it).
        approximate = self._approximate
        if not approximate:
            previous, switch = self._previous_value, self.approximate_switch
            approximate = self._approximate = switch == INF or (
                previous is not None and abs(f0 - previous) <= switch * scale)
        self._previous_value = f0
        size = first if first < self.max_size else self.max_size
        # The first trial is tested here, so that the common case of an accepted
        # first trial skips building the bracket search (same tests as `_BracketSearch.probe`).
        point = ray.value_and_slope(size)
        slope = point.slope
        if slope is not None and slope >= self.c2 * d0:
            if point.value - f0 <= c1 * size * d0:
                return Outcome(point, ACCEPTED, _WOLFE)
            if (approximate and slope <= (2.0 * c1 - 1.0) * d0
                    and point.value <= f0 + epsilon_k):
                return Outcome(point, ACCEPTED, _APPROXIMATE)
        bracketing = _BracketSearch(self, ray, epsilon_k, approximate)
        try:
            # The ray returns the cached first trial: nothing is evaluated twice.
            low, high = bracketing.bracket(size)
            bisect_threshold = self.bisect_threshold
            width = high.size - low.size
            while True:  # L1–L3
                low, high = bracketing.secant2(low, high)
                if high.size - low.size > bisect_threshold * width:
                    bracketing.informative = INF  # the cubic did not pay: secants from now on
                    low, high = bracketing.update(low, high, 0.5 * (low.size + high.size))
                # From the second pass on: a fresh bracket is rarely at rounding level,
                # and skipping the first check saves two array norms per call.
                width = bracketing.check_width(low, high)
        except _Stop as stop:
            return stop.outcome


class _BracketSearch:
    """One call's search: the thresholds as floats and the paper's procedures."""

    __slots__ = ("ray", "f0", "d0", "c1", "limit", "curvature", "approximate", "theta",
                 "expand", "max_size", "shift", "informative")

    def __init__(self, search: HagerZhang, ray: Ray, epsilon_k: float,
                 approximate: bool = True) -> None:
        origin = ray.origin
        f0, d0 = origin.value, origin.slope
        self.ray = ray
        self.f0, self.d0, self.c1 = f0, d0, search.c1
        self.limit = f0 + epsilon_k  # φ(0) + ε_k
        self.curvature = search.c2 * d0  # σ·φ'(0)
        # (2δ − 1)·φ'(0); −inf (no finite slope passes) while the switch is off.
        self.approximate = (2.0 * search.c1 - 1.0) * d0 if approximate else -INF
        self.theta = search.theta
        self.expand = search.expand
        self.max_size = search.max_size
        # Without the approximate conditions the value tests of B2, U2 and U3b compare
        # ψ(t) = φ(t) − δ·t·φ'(0) with φ(0) + ε_k (a trial above the sufficient-decrease
        # line is too long), so the bracket cannot run past every step meeting (T1);
        # slopes and secant steps stay those of φ.
        self.shift = 0.0 if approximate else search.c1 * d0
        self.informative = VALUES_INFORM * epsilon_k  # see `model`

    def probe(self, size: float) -> Point:
        """Evaluate φ and φ' at `size`; stop the search if the point is acceptable."""
        point = self.ray.value_and_slope(size)
        slope = point.slope  # None exactly when the point is not finite
        if slope is not None and slope >= self.curvature:
            # (T1) written as in the paper: φ(t) − φ(0) ≤ δ·t·φ'(0).
            if point.value - self.f0 <= self.c1 * size * self.d0:
                raise _Stop(Outcome(point, ACCEPTED, _WOLFE))
            if slope <= self.approximate and point.value <= self.limit:
                raise _Stop(Outcome(point, ACCEPTED, _APPROXIMATE))
        return point

    def check_width(self, low: Point, high: Point) -> float:
        """The bracket's width; stops with ``interval_too_small`` at rounding level."""
        width = high.size - low.size
        if width <= SIZE_SPACINGS * EPS * high.size or width <= self.ray.rounding_size():
            raise _Stop(Outcome(self.ray.best, Status.interval_too_small))
        return width

    def bracket(self, size: float) -> tuple[Point, Point]:
        """B0–B3: grow the trial until [a, b] holds a point with φ' ≥ 0."""
        low = self.ray.origin
        shift = self.shift
        while True:
            point = self.probe(size)
            slope = point.slope
            if slope is not None and slope >= 0.0:  # B1
                return low, point
            if slope is None or point.value - size * shift > self.limit:  # B2 (non-finite:
                return self.bisect(low, point)  # too long)
            if size >= self.max_size:
                raise _Stop(Outcome(self.ray.best, Status.step_too_large))
            low = point  # B3
            size = min(self.expand * size, self.max_size)

    def update(self, low: Point, high: Point, size: float) -> tuple[Point, Point]:
        """U0–U3: the bracket after evaluating a point at `size`."""
        if not low.size < size < high.size:  # U0
            return low, high
        point = self.probe(size)
        slope = point.slope
        if slope is not None:
            if slope >= 0.0:  # U1
                return low, point
            if point.value - size * self.shift <= self.limit:  # U2
                return point, high
        return self.bisect(low, point)  # U3 (non-finite: too long)

    def bisect(self, low: Point, high: Point) -> tuple[Point, Point]:
        """U3a–c: split [low, high] at weight θ until a point with φ' ≥ 0 turns up."""
        theta, limit, shift = self.theta, self.limit, self.shift
        while True:
            width = self.check_width(low, high)
            weight = theta if high.slope is not None else NON_FINITE_SHRINK
            size = low.size + weight * width
            if not low.size < size < high.size:  # θ near 0 or 1 meets float spacing
                raise _Stop(Outcome(self.ray.best, Status.interval_too_small))
            point = self.probe(size)
            slope = point.slope
            if slope is not None:
                if slope >= 0.0:  # U3a
                    return low, point
                if point.value - size * shift <= limit:  # U3b
                    low = point
                    continue
            high = point  # U3c

    def secant2(self, low: Point, high: Point) -> tuple[Point, Point]:
        """S1–S4: a secant step, then a second one from the end it replaced.

        Each step is the cubic's minimiser instead of the secant's when the values
        carry information (see `model`).
        """
        size = self.model(low, high, quadratic_from_slopes(low.size, low.slope, high.size,
                                                           high.slope))
        if size is None or not low.size < size < high.size:  # U0 leaves [a, b]
            return low, high
        new_low, new_high = self.update(low, high, size)
        if new_high.size == size:  # S2
            second = quadratic_from_slopes(high.size, high.slope, size, new_high.slope)
        elif new_low.size == size:  # S3
            second = quadratic_from_slopes(low.size, low.slope, size, new_low.slope)
        else:
            return new_low, new_high
        second = self.model(new_low, new_high, second)
        if second is None:
            return new_low, new_high
        return self.update(new_low, new_high, second)  # S4

    def model(self, low: Point, high: Point, secant: float | None) -> float | None:
        """The minimiser of the cubic matching φ and φ' at both ends of [low, high] when
        the end values differ by more than `VALUES_INFORM`·ε_k and it lies inside; else
        `secant`. After an L2 bisection the search sets the threshold to inf.

        The secant of φ' ignores the values, which is right where they are at rounding
        level (the regime of the approximate conditions); elsewhere the cubic, which
        uses them, needs fewer trials (our choice, measured on the MGH set with
        L-BFGS; not in the papers).
        """
        if not abs(high.value - low.value) > self.informative:  # also false for inf
            return secant
        cubic = cubic_from_slopes(low.size, low.value, low.slope, high.size, high.value,
                                  high.slope)
        if cubic is not None and low.size < cubic < high.size:
            return cubic
        return secant


class HagerZhangStart(Rebuilds):
    """First trial by the rules I0, I1 and I2 of Hager & Zhang (2006, §3).

    I0 (no step accepted yet): t = fraction·‖x‖∞/‖g‖∞ when x ≠ 0, else
    t = fraction·|f(x)|/‖g‖₂² when f(x) ≠ 0, else t = 1. These scale a step along
    d = −g, as at the first iteration of CG_DESCENT. Afterwards, with t_prev the
    previous accepted step: I1 evaluates φ at `probe`·t_prev (one value, counted
    by the search's ray) and takes the minimiser of the quadratic through φ(0),
    φ'(0) and that value when the value is no higher than φ(0) and the quadratic
    is strictly convex; otherwise (or with ``probe=None``) I2 takes t = growth·t_prev.
    I1 makes the first trial nearly exact where φ is close to quadratic, which
    conjugate-gradient directions need to stay conjugate. The rules' names and
    defaults are recalled from memory of the 2006 paper.

    Parameters
    ----------
    fraction : float
        ψ0, default 0.01 (Hager & Zhang 2006, §3).
    growth : float
        ψ2, default 2 (same source).
    probe : float or None
        ψ1, 0 < probe < 1, where I1 probes φ; default 0.1 (same source). None
        switches I1 off (I2 only).

    Examples
    --------
    >>> import numpy as np
    >>> from linestep.searches.hager_zhang import HagerZhang, HagerZhangStart
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([3.0, -4.0])
    >>> search = HagerZhang(initial=HagerZhangStart(), record_trials=True)
    >>> step = search((f, g), x, -g(x))   # I0: t = 0.01·4/8, then grown by 5
    >>> [trial.size for trial in step.trials], step.status
    ([0.005, 0.025, 0.125], Status.accepted)
    >>> sizes = [trial.size for trial in search((f, g), step.x, -g(step.x)).trials]
    >>> sizes[0], round(sizes[1], 9)   # I1: φ at 0.1·0.125, then the quadratic's minimiser
    (0.0125, 0.5)
    >>> search = HagerZhang(initial=HagerZhangStart(probe=None), record_trials=True)
    >>> step = search((f, g), x, -g(x))
    >>> [trial.size for trial in search((f, g), step.x, -g(step.x)).trials]  # I2
    [0.25]
    """

    def __init__(self, *, fraction: float = 0.01, growth: float = 2.0,
                 probe: float | None = 0.1) -> None:
        self.fraction = _validate.positive("fraction", fraction)
        self.growth = _validate.positive("growth", growth)
        self.probe = None if probe is None else _validate.open_unit("probe", probe)

    _fields = ("fraction", "growth", "probe")

    def guess(self, memory: _initial.Memory, ray: Any) -> float:
        if memory.size is not None:
            if self.probe is not None:  # I1
                quadratic = self._quadratic(memory.size, ray)
                if quadratic is not None:
                    return quadratic
            return self.growth * memory.size  # I2
        origin = ray.origin
        gradient = origin.gradient
        if gradient is None:
            return 1.0
        largest = _array.max_abs(gradient)
        if largest == 0.0:
            return 1.0
        x_size = _array.max_abs(origin.x)
        if x_size > 0.0:  # I0(a)
            guess = self.fraction * x_size / largest
        elif origin.value:  # I0(b)
            guess = self.fraction * abs(origin.value) / _array.norm2(gradient) ** 2
        else:  # I0(c)
            guess = 1.0
        return guess if math.isfinite(guess) and guess > 0.0 else 1.0

    def _quadratic(self, previous: float, ray: Any) -> float | None:
        """I1: the minimiser of the quadratic through φ(0), φ'(0) and φ(ψ1·previous),
        when that value is no higher than φ(0) and the quadratic is strictly convex."""
        origin = ray.origin
        f0, d0 = origin.value, origin.slope
        if f0 is None or d0 is None:
            return None
        size = self.probe * previous
        value = ray.value(size).value  # one value (the ray counts it)
        if not value <= f0:
            return None
        curvature = (value - f0 - d0 * size) / (size * size)  # q(t) = f0 + d0·t + c·t²
        if not curvature > 0.0:
            return None
        guess = -d0 / (2.0 * curvature)
        return guess if math.isfinite(guess) and guess > 0.0 else None
