"""Search for a step satisfying the Goldstein conditions."""

from __future__ import annotations

import math
from typing import Any

from linestep import _initial, _validate
from linestep._controller import Outcome, StepController
from linestep._interpolate import clip, quadratic_from_slope
from linestep._ray import Ray
from linestep._step import Status

__all__ = ["Goldstein"]

# Growth factor while the step is too short and no upper bound is known yet.
EXPAND = 4.0
# Interpolated trials keep this fraction of the bracket away from each end.
MARGIN = 0.1


class Goldstein(StepController):
    """Find t with φ(0) + (1−c)·t·φ'(0) ≤ φ(t) ≤ φ(0) + c·t·φ'(0).

    The upper inequality is sufficient decrease; the lower one keeps the step
    from being too short without evaluating gradients along the ray. Trials
    grow by a factor until the upper inequality fails, then the bracket
    [too short, too long] is narrowed with safeguarded quadratic interpolation.

    Parameters
    ----------
    c : float
        0 < c < 1/2.
    initial : float or trial strategy
    max_size : float
        Largest step tried; reaching it gives ``step_too_large``.
    max_evaluations : int
    record_trials : bool

    Returns
    -------
    Step
        ``accepted``: both inequalities hold at `size`.
        ``step_too_large``: the lower inequality still failed at `max_size` (f may
        be unbounded below); `x` is the best sufficient-decrease point.
        ``interval_too_small``: the bracket shrank to rounding level; `x` is the best
        sufficient-decrease point found, else unchanged.
        ``max_evaluations``: as above, best sufficient-decrease point or `x` unchanged.
        ``non_finite``, ``not_descent``: `x` unchanged.

    Raises
    ------
    ValueError
        A supplied `value` is clearly above f(x): checked with one extra evaluation
        when the trials keep reading "too short" while φ rises, or at `max_size`,
        the two cases where a wrong φ(0) would move x uphill.

    References
    ----------
    A. A. Goldstein, "On steepest descent", SIAM J. Control 3(1):147–151, 1965.
    J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., 2006, eq. 3.11.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import Goldstein
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> step = Goldstein()((f, g), np.array([1.0, 1.0]), np.array([-2.0, -2.0]))
    >>> step.ok
    True
    """

    _fields = ("c", "initial", "max_size", "max_evaluations", "record_trials")

    def __init__(self, *, c: float = 0.25, initial: Any = 1.0, max_size: float = 1e10,
                 max_evaluations: int = 40, record_trials: bool = False) -> None:
        super().__init__()
        self.c = _validate.real("c", c)
        if not 0.0 < self.c < 0.5:
            raise ValueError(f"`c` must satisfy 0 < c < 1/2; got c={c!r}.")
        self.c1 = self.c
        self.initial = _initial.resolve(initial)
        self.max_size = _validate.positive("max_size", max_size)
        self.max_evaluations = _validate.integer("max_evaluations", max_evaluations)
        self.record_trials = bool(record_trials)

    def _search(self, ray: Ray, first: float) -> Outcome:
        origin = ray.origin
        f0, d0, c = origin.value, origin.slope, self.c
        short, long = 0.0, math.inf
        size = min(first, self.max_size)
        lowest, checked = math.inf, False
        while True:
            point = ray.value(size)
            value = point.value
            change = value - f0  # non-finite reads as +inf: too long
            if change > c * size * d0:  # too long
                long = size
            elif change < (1.0 - c) * size * d0:  # too short
                if value > lowest and not checked:
                    # Still "too short" while φ rises: plausible only if φ(0) is right.
                    # A `value` far above f(x) would walk x uphill, so check it once.
                    ray.check_origin_value()
                    checked = True
                short = size
            else:
                return Outcome(point)
            lowest = min(lowest, value)
            if long == math.inf:
                if size >= self.max_size:
                    if not checked:
                        ray.check_origin_value()
                    return Outcome(ray.best, Status.step_too_large)
                size = min(EXPAND * size, self.max_size)
                continue
            width = long - short
            if width <= ray.rounding_size():
                return Outcome(ray.best, Status.interval_too_small)
            model = quadratic_from_slope(0.0, f0, d0, size, value) if point.finite else None
            size = clip(model, short + MARGIN * width, long - MARGIN * width)
