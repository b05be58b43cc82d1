"""The Moré–Thuente search: strong Wolfe conditions with guaranteed sufficient decrease."""

from __future__ import annotations

import math
from typing import Any

from linestep import _initial, _validate
from linestep._constants import BISECT_UNLESS_SHRUNK, NON_FINITE_SHRINK
from linestep._controller import Outcome, StepController
from linestep._interpolate import (
    cubic_beyond,
    cubic_from_slopes,
    quadratic_from_slope,
    quadratic_from_slopes,
)
from linestep._ray import Ray
from linestep._step import Status

__all__ = ["MoreThuente"]


# Before a bracket exists the next trial lies in [t + LOW·(t − t_l), t + HIGH·(t − t_l)]
# (the extrapolation bounds of the authors' implementation, MINPACK-2 dcsrch).
EXTRAPOLATE_LOW = 1.1
EXTRAPOLATE_HIGH = 4.0
# Case 3 inside a bracket: the trial goes at most this fraction of the way to t_u (paper §4).
CASE3_REACH = 0.66


class MoreThuente(StepController):
    """Moré–Thuente search for a step satisfying the strong Wolfe conditions.

    With φ(t) = f(x + t·d), the step t is accepted when

    * sufficient decrease: φ(t) ≤ φ(0) + c1·t·φ'(0) (the paper's μ), and
    * strong curvature: |φ'(t)| ≤ c2·|φ'(0)| (the paper's η).

    Every trial evaluates the value and the gradient. How the trials are chosen
    is described under Notes.

    Parameters
    ----------
    c1 : float
        Sufficient-decrease constant, 0 < c1 < 1. Default 1e-4 (common practice
        for quasi-Newton methods, Nocedal & Wright §3.1; the paper's tests use
        1e-3 and 0.1).
    c2 : float
        Curvature constant, c1 <= c2 < 1. Default 0.9 (Nocedal & Wright §3.1 for
        Newton and quasi-Newton directions; use 0.1 for nonlinear conjugate
        gradients). c1 = c2 is legal, as in the paper's Tables 4–6.
    width_rtol : float
        The relative width of the interval of uncertainty below which it counts
        as collapsed (``interval_too_small``), 0 <= width_rtol < 1. Default 1e-10,
        our choice: the paper leaves it to the caller.
    initial : float or trial strategy
        The first trial step (`UnitTrial`, `PreviousTrial`, `QuadraticTrial`,
        `ScaledTrial`, or a number).
    min_size, max_size : float
        Bounds on the trials, 0 <= min_size < max_size (the paper's α_min and
        α_max).
    max_evaluations : int
        Most trial points per call (each is one value and one gradient).
    record_trials : bool
        Keep every trial on ``Step.trials``.

    Returns
    -------
    Step
        ``accepted``: `size` satisfies both strong Wolfe conditions and
        `x` = x + size·d, with its value and gradient.
        ``step_too_large``: the trial reached `max_size` with sufficient decrease
        and ψ'(t) <= 0 (f may be unbounded below along d); `x` is the best point
        with sufficient decrease, `size` its step.
        ``step_too_small``: the trial reached `min_size` without sufficient
        decrease or with φ'(t) >= c1·φ'(0); `x` is the best point with sufficient
        decrease found, else unchanged with size 0.
        ``interval_too_small``: the interval shrank below `width_rtol` (relative)
        or to rounding level; as for ``step_too_small``.
        ``max_evaluations``: the budget ran out; as for ``step_too_small``.
        ``non_finite``: no trial had a finite value; `x` unchanged, size 0.
        ``not_descent``: φ'(0) >= 0; `x` unchanged, nothing evaluated.

    References
    ----------
    J. J. Moré and D. J. Thuente, "Line search algorithms with guaranteed
    sufficient decrease", ACM Transactions on Mathematical Software
    20(3):286–307, 1994.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep.searches.more_thuente import MoreThuente
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([3.0, -4.0])
    >>> step = MoreThuente()((f, g), x, -g(x))
    >>> step.status, round(step.size, 3)
    (Status.accepted, 0.5)
    >>> step.evaluations  # at x, then at the trials t = 1 (too long) and t ≈ 0.5
    Evaluations(values=3, gradients=3)

    The first stage minimises ψ, whose minimiser lies a little short of φ's:

    >>> step.size < 0.5 and abs(float(step.gradient @ -g(x))) <= 0.9 * float(g(x) @ g(x))
    True

    Notes
    -----
    The search keeps an interval [t_l, t_u] (either order) and a trial t. t_l
    is the end with the least value of the working function, and its slope
    points into the interval. Each trial replaces an end of the interval
    (updating algorithm, paper §2). Until a trial meets ψ(t) ≤ 0 and
    φ'(t) ≥ 0 (the first stage, paper §3) the working function is the auxiliary
    ψ(t) = φ(t) − φ(0) − c1·t·φ'(0), whose minimisers satisfy sufficient
    decrease, whenever the trial lowered φ below φ(t_l) but missed sufficient
    decrease; otherwise, and in the second stage, it is φ itself. (That is how
    the authors' implementation applies ψ; with it this class reproduces the
    evaluation counts of the paper's Tables 1–6, which the tests also confirm
    against scipy's port of that implementation.) The next trial comes from the
    four cases of §4:

    1. higher value than at t_l: the cubic minimiser if it is closer to t_l than
       the quadratic one (values at both ends, slope at t_l), else their mean;
       the minimiser is now bracketed;
    2. lower value and slopes of opposite sign: the cubic or the secant step,
       whichever is farther from t; bracketed;
    3. lower value, same slope sign, slope shrinking in magnitude: the cubic
       minimiser beyond t (the bound when the cubic does not rise there) or the
       secant step; inside a bracket the nearer of the two to t, at most 66% of
       the way from t to t_u; outside, the farther, within the extrapolation
       bounds;
    4. lower value, same sign, slope not shrinking: the cubic through t and
       t_u inside a bracket, else the extrapolation bound.

    Before a bracket exists the next trial lies in [t + 1.1·(t − t_l),
    t + 4·(t − t_l)]. Once bracketed, the midpoint is used whenever two trials
    shrank the interval by less than a factor 0.66. A non-finite value (NaN or
    ±inf in f or ∇f) makes that trial t_u and the next trial moves 90% of the
    way back towards t_l.
    """

    _fields = ("c1", "c2", "width_rtol", "initial", "min_size", "max_size", "max_evaluations",
               "record_trials")

    def __init__(self, *, c1: float = 1e-4, c2: float = 0.9, width_rtol: float = 1e-10,
                 initial: Any = 1.0, min_size: float = 0.0, max_size: float = 1e10,
                 max_evaluations: int = 40, record_trials: bool = False) -> None:
        super().__init__()
        self.c1, self.c2 = _validate.curvature_pair(c1, c2)
        self.width_rtol = _validate.nonnegative("width_rtol", width_rtol)
        if not self.width_rtol < 1.0:
            raise ValueError(
                f"`width_rtol` must satisfy 0 <= width_rtol < 1; got width_rtol={width_rtol!r}."
            )
        self.initial = _initial.resolve(initial)
        self.min_size = _validate.nonnegative("min_size", min_size)
        self.max_size = _validate.positive("max_size", max_size)
        if not self.min_size < self.max_size:
            raise ValueError(
                "`min_size` must be smaller than `max_size`; got "
                f"min_size={min_size!r}, max_size={max_size!r}."
            )
        self.max_evaluations = _validate.integer("max_evaluations", max_evaluations)
        self.record_trials = bool(record_trials)

    def _search(self, ray: Ray, first: float) -> Outcome:
        origin = ray.origin
        f0, g0 = origin.value, origin.slope
        decrease = self.c1 * g0  # ψ(t) = φ(t) − (f0 + t·decrease), ψ'(t) = φ'(t) − decrease
        curvature_bound = -self.c2 * g0  # > 0: strong curvature is |φ'(t)| <= this
        width_rtol, min_size, max_size = self.width_rtol, self.min_size, self.max_size
        size = first if first > min_size else min_size  # clipped to [min_size, max_size]
        if size > max_size:
            size = max_size
        evaluate = ray.value_and_slope
        # The common case, an accepted first trial, returns before the setup below (the
        # loop's own test); otherwise the loop gets this point again from the ray's cache.
        point = evaluate(size)
        if (point.value <= f0 + size * decrease
                and -curvature_bound <= point.slope <= curvature_bound):
            return Outcome(point)
        # The interval ends in φ terms: t_l (least working value) and t_u.
        lt, lf, lg = 0.0, f0, g0
        ut, uf, ug = 0.0, f0, g0
        bracketed = False
        auxiliary = True  # first stage: the working function is ψ
        width = max_size - min_size
        width_before = 2.0 * width
        lower, upper = 0.0, size + EXTRAPOLATE_HIGH * size
        while True:
            point = evaluate(size)
            f = point.value
            # Sufficient decrease in the paper's sum form (see the note in wolfe.py: the
            # curvature test keeps a rounding-level acceptance from stalling).
            sufficient = f0 + size * decrease
            if f < math.inf:
                g = point.slope
                if f <= sufficient:
                    if -curvature_bound <= g <= curvature_bound:
                        return Outcome(point)
                    if g >= 0.0:
                        auxiliary = False
                    elif size >= max_size and g <= decrease:
                        return Outcome(ray.best, Status.step_too_large)
                if size <= min_size and (f > sufficient or g >= decrease):
                    return Outcome(ray.best, Status.step_too_small)
                if auxiliary and sufficient < f <= lf:
                    # ψ differs from φ by a linear function: shift values and slopes.
                    wl, wt = lf - lt * decrease, f - size * decrease
                    wu = uf - ut * decrease
                    next_size, bracketed = _next_trial(
                        lt, wl, lg - decrease, size, wt, g - decrease,
                        ut, wu, ug - decrease, bracketed, lower, upper)
                    higher, opposite = wt > wl, (g - decrease) * (lg - decrease) < 0.0
                else:
                    next_size, bracketed = _next_trial(
                        lt, lf, lg, size, f, g, ut, uf, ug, bracketed, lower, upper)
                    higher, opposite = f > lf, g * lg < 0.0
                # Updating algorithm (paper §2): t replaces t_u, or becomes t_l.
                if higher:
                    ut, uf, ug = size, f, g
                else:
                    if opposite:
                        ut, uf, ug = lt, lf, lg
                    lt, lf, lg = size, f, g
            else:
                if size <= min_size:
                    return Outcome(ray.best, Status.step_too_small)
                next_size = lt + NON_FINITE_SHRINK * (size - lt)
                ut, uf, ug = size, math.inf, 0.0
                bracketed = True
            if bracketed:
                span = abs(ut - lt)
                if span >= BISECT_UNLESS_SHRUNK * width_before:
                    next_size = lt + 0.5 * (ut - lt)
                width_before, width = width, span
                lower, upper = (lt, ut) if lt < ut else (ut, lt)
            else:
                lower = next_size + EXTRAPOLATE_LOW * (next_size - lt)
                upper = next_size + EXTRAPOLATE_HIGH * (next_size - lt)
            if next_size > max_size:
                next_size = max_size
            elif next_size < min_size:
                next_size = min_size
            if bracketed and (
                not lower < next_size < upper
                or upper - lower <= width_rtol * upper
                or upper - lower <= ray.rounding_size()
            ):
                return Outcome(ray.best, Status.interval_too_small)
            size = next_size


def _next_trial(lt: float, lf: float, lg: float, t: float, f: float, g: float,
                ut: float, uf: float, ug: float, bracketed: bool, lower: float,
                upper: float) -> tuple[float, bool]:
    """The trial-value selection of Moré & Thuente 1994, §4 (cases 1–4).

    Arguments are the working function's values and slopes at t_l, t and t_u,
    whether the minimiser is bracketed, and the bounds [lower, upper] for an
    extrapolated trial. Returns the next trial and the new bracketed flag.
    """
    if f > lf:  # Case 1: the minimiser lies between t_l and t.
        cubic = cubic_from_slopes(lt, lf, lg, t, f, g)
        quadratic = quadratic_from_slope(lt, lf, lg, t, f)
        if cubic is None:
            cubic = quadratic if quadratic is not None else 0.5 * (lt + t)
        elif quadratic is not None and abs(cubic - lt) >= abs(quadratic - lt):
            cubic += 0.5 * (quadratic - cubic)
        return cubic, True
    secant = quadratic_from_slopes(lt, lg, t, g)
    if g * lg < 0.0:  # Case 2: the slope changed sign between t_l and t.
        cubic = cubic_from_slopes(lt, lf, lg, t, f, g)
        if cubic is None:
            return (secant if secant is not None else 0.5 * (lt + t)), True
        if secant is not None and abs(cubic - t) < abs(secant - t):
            return secant, True
        return cubic, True
    bound = upper if t > lt else lower
    if abs(g) < abs(lg):  # Case 3: the slope flattens; extrapolate past t.
        cubic = cubic_beyond(lt, lf, lg, t, f, g)
        if cubic is None:
            cubic = bound
        if secant is None:
            secant = cubic
        if bracketed:
            trial = cubic if abs(cubic - t) < abs(secant - t) else secant
            reach = t + CASE3_REACH * (ut - t)
            return (min(trial, reach) if t > lt else max(trial, reach)), True
        trial = cubic if abs(cubic - t) > abs(secant - t) else secant
        return min(max(trial, lower), upper), False
    # Case 4: the slope does not flatten.
    if not bracketed:
        return bound, False
    if uf < math.inf:
        cubic = cubic_from_slopes(ut, uf, ug, t, f, g)
        if cubic is not None:
            return cubic, True
    return 0.5 * (t + ut), True
