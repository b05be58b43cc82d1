"""Bracketing-and-zoom search for a step satisfying the strong or weak Wolfe conditions."""

from __future__ import annotations

import math
from typing import Any

from linestep import _initial, _validate
from linestep._constants import BISECT_UNLESS_SHRUNK, NON_FINITE_SHRINK
from linestep._controller import Outcome, StepController
from linestep._interpolate import cubic_from_slopes, quadratic_from_slope
from linestep._ray import Point, Ray
from linestep._step import Status

__all__ = ["Wolfe"]

INF = math.inf

# Bracketing: the next increment is at least this multiple of the last (Moré–Thuente 1994 use 1.1).
EXTRAPOLATE_MIN = 1.1
# Bracketing: the cubic's minimiser ahead is taken up to this multiple of `expand`
# increments; a blind step (no minimiser ahead) grows by `expand` increments only. Our
# rule: with L-BFGS it saves 2-4% of the evaluations on the MGH set from five starts per
# problem (standard, 10x and three perturbed), as the step lands nearer the minimiser.
MODEL_REACH = 4.0
# Zoom: the cubic is trusted near an end only if the quadratic (slope at t_lo only) agrees
# with it to this fraction of the bracket; both are exact on a quadratic φ.
AGREE = 1e-3
# Zoom: a trusted trial keeps this fraction of the bracket away from either end ...
TRUSTED_MARGIN = 1e-6
# ... an untrusted one this fraction (Nocedal & Wright §3.5 advise such a safeguard).
MARGIN = 0.1
# Zoom: a value this many units of rounding above φ(t_lo) is a tie, decided by the slope.
VALUE_TIE = 10.0


class Wolfe(StepController):
    """Find t with sufficient decrease and a flattened slope (the Wolfe conditions).

    With φ(t) = f(x + t·d), the step t is accepted when

    * sufficient decrease: φ(t) ≤ φ(0) + c1·t·φ'(0), and
    * curvature, strong form (``strong=True``): |φ'(t)| ≤ c2·|φ'(0)|;
      weak form (``strong=False``): φ'(t) ≥ c2·φ'(0).

    The search brackets an acceptable step by growing the trial, then narrows the
    bracket by safeguarded cubic interpolation (Nocedal & Wright 2006, Alg. 3.5 and
    3.6); a trial with a non-finite value or gradient counts as too long. The
    details are in Notes.

    Parameters
    ----------
    c1 : float
        Sufficient-decrease constant, 0 < c1 < 1 (1e-4 is common practice,
        Nocedal & Wright §3.1).
    c2 : float
        Curvature constant, c1 <= c2 < 1. 0.9 suits Newton and quasi-Newton
        directions; 0.1 suits nonlinear conjugate gradients, which need a nearly
        exact search (Nocedal & Wright §3.1, common practice).
    strong : bool
        Use the strong curvature condition (two-sided) rather than the weak one.
    initial : float or trial strategy
        The first trial step (`UnitTrial`, `PreviousTrial`, `QuadraticTrial`,
        `ScaledTrial`, or a number).
    expand : float
        Growth of the bracketing phase, > 1: without a model minimiser ahead the
        next trial is ``t + expand·(t − t_prev)`` (so 5 times the first trial); the
        cubic's minimiser is taken up to ``t + 4·expand·(t − t_prev)``.
    max_size : float
        Largest step tried; a trial there that is still too short gives
        ``step_too_large``.
    max_evaluations : int
        Most trial points per call (each is one value and one gradient).
    record_trials : bool
        Keep every trial on ``Step.trials``.

    Returns
    -------
    Step
        ``accepted``: `size` satisfies both conditions (strong or weak form) and
        `x` = x + size·d, with its value and gradient.
        ``step_too_large``: the trial reached `max_size` and was still too short
        (f may be unbounded below along d); `x` is the best point with sufficient
        decrease (that trial or a lower one), `size` its step.
        ``interval_too_small``: the bracket shrank to rounding level before both
        conditions held; `x` is the best point with sufficient decrease found,
        else unchanged with size 0.
        ``max_evaluations``: the budget ran out; as for ``interval_too_small``.
        ``non_finite``: no trial had a finite value; `x` unchanged, size 0.
        ``not_descent``: φ'(0) >= 0; `x` unchanged, nothing evaluated.

    Notes
    -----
    The search has two phases (Nocedal & Wright 2006, Alg. 3.5 and 3.6). The
    bracketing phase grows the trial until it either satisfies both conditions
    or brackets an acceptable step: the trial fails sufficient decrease, does
    not improve on the previous trial, or has φ' ≥ 0. Each new bracketing trial
    is the minimiser of the cubic through the last two trials, kept in
    ``[t + 1.1·(t − t_prev), t + 4·expand·(t − t_prev)]``, or
    ``t + expand·(t − t_prev)`` when that minimiser does not lie beyond t (Moré &
    Thuente's rule, who clip a minimiser to the latter bound too). The zoom phase
    then narrows the bracket [t_lo, t_hi], where t_lo is the trial with sufficient
    decrease and the least value so far, with trials at the minimiser of the
    cubic that matches φ and φ' at both ends. The trial stays a tenth of the
    bracket away from either end unless the quadratic through φ(t_lo),
    φ'(t_lo), φ(t_hi) agrees with the cubic (then the model is trusted almost up
    to the ends: on a quadratic φ the exact minimiser is the next trial however
    close to an end it lies). The midpoint is used when two trials shrank the
    bracket by less than a factor 0.66 (the safeguard of Moré & Thuente 1994),
    and values within rounding of φ(t_lo) count as ties, decided by the slope.
    Each trial evaluates the value, and the gradient only when the trial passes
    the decrease tests (as Alg. 3.5–3.6 do); a rejected end of the bracket without
    a slope is modelled by the quadratic, and its slope is evaluated only when
    that quadratic points within the margin of an end twice running. A non-finite
    value (NaN or ±inf in f or ∇f) makes that trial the too-long end of the
    bracket, and the next trial moves 90% of the way back towards the good end.

    References
    ----------
    P. Wolfe, "Convergence conditions for ascent methods", SIAM Review
    11(2):226–235, 1969.
    J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., Springer,
    2006, §3.1 (eqs. 3.6, 3.7) and §3.5 (Alg. 3.5, 3.6, eq. 3.59).
    J. J. Moré and D. J. Thuente, "Line search algorithms with guaranteed
    sufficient decrease", ACM TOMS 20(3):286–307, 1994 (bisection safeguard).

    Examples
    --------
    >>> import numpy as np
    >>> from linestep.searches.wolfe import Wolfe
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([3.0, -4.0])
    >>> step = Wolfe()((f, g), x, -g(x))
    >>> step.status, step.size, step.value
    (Status.accepted, 0.5, 0.0)
    >>> step.evaluations  # at x; at t = 1 (too long: value only) and at t = 0.5
    Evaluations(values=3, gradients=2)
    """

    _fields = ("c1", "c2", "strong", "initial", "expand", "max_size", "max_evaluations",
               "record_trials")

    def __init__(self, *, c1: float = 1e-4, c2: float = 0.9, strong: bool = True,
                 initial: Any = 1.0, expand: float = 4.0, max_size: float = 1e10,
                 max_evaluations: int = 40, record_trials: bool = False) -> None:
        super().__init__()
        self.c1, self.c2 = _validate.curvature_pair(c1, c2)
        self.strong = _validate.flag("strong", strong)
        self.initial = _initial.resolve(initial)
        self.expand = _validate.within("expand", expand, 1.0, INF)  # > 1: trials grow
        self.max_size = _validate.positive("max_size", max_size)
        self.max_evaluations = _validate.integer("max_evaluations", max_evaluations)
        self.record_trials = bool(record_trials)

    def _search(self, ray: Ray, first: float) -> Outcome:
        previous = origin = ray.origin
        f0 = origin.value
        decrease = self.c1 * origin.slope  # < 0: φ(t) must lie below f0 + t·decrease
        curvature_bound = -self.c2 * origin.slope  # > 0: the bound c2·|φ'(0)| on φ'(t)
        max_size = self.max_size
        size = first if first < max_size else max_size
        while True:
            # Alg. 3.5 evaluates φ first and φ' only where the decrease tests pass: a
            # rejected trial costs no gradient (the ray completes a cached point).
            point = ray.value(size)
            value = point.value
            # Sufficient decrease in the papers' sum form. Near a minimiser c1·t·φ'(0) can
            # fall below the rounding of φ(0); the curvature test, which a point with x
            # unchanged cannot pass, then carries the progress (Armijo, with no curvature
            # test, uses the difference form instead).
            if value > f0 + size * decrease or value >= previous.value:
                return self._zoom(ray, previous, point)
            slope = point.slope
            if slope is None:
                point = ray.complete(point)
                slope = point.slope
                if slope is None:  # a non-finite gradient: the trial counts as too long
                    return self._zoom(ray, previous, point)
            if slope >= -curvature_bound and (slope <= curvature_bound or not self.strong):
                return Outcome(point)
            if slope >= 0.0:
                return self._zoom(ray, point, previous)
            if size >= max_size:
                return Outcome(ray.best, Status.step_too_large)
            size = self._extrapolate(previous, point)
            previous = point

    def _extrapolate(self, previous: Point, point: Point) -> float:
        """The next bracketing trial beyond `point` (cubic model, clipped)."""
        size = point.size
        increment = size - previous.size
        expand = self.expand
        low = size + min(EXTRAPOLATE_MIN, expand) * increment
        model = cubic_from_slopes(previous.size, previous.value, previous.slope,
                                  size, point.value, point.slope)
        # A model step not beyond t (a cubic that falls without bound ahead) takes the
        # blind step, as in Moré–Thuente's case 3; clipping it to the lower bound would
        # crawl. A minimiser beyond the reach (also a cubic degenerate at rounding level
        # on a concave stretch) takes the reach.
        if model is None or model <= size:
            model = size + expand * increment
        elif model < low:
            model = low
        else:
            model = min(model, size + MODEL_REACH * expand * increment)
        return model if model < self.max_size else self.max_size

    def _zoom(self, ray: Ray, lo: Point, hi: Point) -> Outcome:
        """Alg. 3.6: shrink [lo, hi] (either order) until a trial satisfies both conditions.

        Invariants: `lo` has sufficient decrease and the lowest value so far; the
        bracket contains an acceptable step because φ'(lo)·(hi − lo) < 0.
        """
        origin = ray.origin
        f0 = origin.value
        decrease = self.c1 * origin.slope
        curvature_bound = -self.c2 * origin.slope
        strong = self.strong
        evaluate, complete = ray.value, ray.complete
        floor = ray.rounding_size()
        eps = ray.precision()
        tie = VALUE_TIE * eps
        width_older = width_old = INF
        pressed = False  # the last trial's quadratic pointed within the margin of an end
        while True:
            a, b = lo.size, hi.size
            width = abs(b - a)
            if width <= floor or width <= eps * max(a, b):
                return Outcome(ray.best, Status.interval_too_small)
            if width >= BISECT_UNLESS_SHRUNK * width_older:
                size = 0.5 * (a + b)
            else:
                if hi.slope is None and hi.value < INF:
                    near_end = _quadratic_near_an_end(a, lo.value, lo.slope, b, hi.value)
                    if near_end and pressed and hi is ray.last:
                        # The quadratic alone was clipped to the margin twice running:
                        # φ'(b), one gradient at the cached point, lets the cubic
                        # confirm a minimiser close to an end instead of creeping.
                        hi = complete(hi)
                    pressed = near_end
                if hi.value < INF:  # hi.slope is None where φ' was not needed
                    size = _zoom_trial(a, lo.value, lo.slope, b, hi.value, hi.slope)
                else:
                    size = a + NON_FINITE_SHRINK * (b - a)
            width_older, width_old = width_old, width
            point = evaluate(size)  # φ' only where the decrease tests pass (Alg. 3.6)
            value = point.value
            if value > f0 + size * decrease or value - lo.value > tie * abs(value):
                hi = point
                continue
            slope = point.slope
            if slope is None:
                point = complete(point)
                slope = point.slope
                if slope is None:  # a non-finite gradient: too long
                    hi = point
                    continue
            if slope >= -curvature_bound and (slope <= curvature_bound or not strong):
                return Outcome(point)
            if slope * (b - a) >= 0.0:
                hi = lo
            lo = point


def _quadratic_near_an_end(a: float, fa: float, da: float, b: float, fb: float) -> bool:
    """The quadratic's minimiser is missing or lies within `MARGIN` of an end of (a, b)."""
    quadratic = quadratic_from_slope(a, fa, da, b, fb)
    if quadratic is None:
        return True
    return not MARGIN <= (quadratic - a) / (b - a) <= 1.0 - MARGIN


def _zoom_trial(a: float, fa: float, da: float, b: float, fb: float,
                db: float | None) -> float:
    """A trial strictly inside the bracket (a, b): cubic, else quadratic, else the midpoint.

    Without φ'(b) (`db` None) the quadratic through fa, da, fb is the model.

    The trial is kept `MARGIN` of the bracket away from either end unless the cubic
    and the quadratic agree, in which case the model is trusted up to `TRUSTED_MARGIN`
    (a minimiser far closer to one end than the bracket is wide is then found in one
    trial, as on ill-conditioned quadratics).
    """
    cubic = None if db is None else cubic_from_slopes(a, fa, da, b, fb, db)
    quadratic = quadratic_from_slope(a, fa, da, b, fb)
    if cubic is None:
        if quadratic is None:
            return 0.5 * (a + b)
        size, margin = quadratic, MARGIN
    elif quadratic is not None and abs(cubic - quadratic) <= AGREE * abs(b - a):
        size, margin = cubic, TRUSTED_MARGIN
    else:
        size, margin = cubic, MARGIN
    margin *= b - a
    near, far = a + margin, b - margin
    if near > far:
        near, far = far, near
    if size < near:
        return near
    if size > far:
        return far
    return size

