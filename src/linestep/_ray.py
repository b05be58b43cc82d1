"""The ray φ(t) = f(x + t·d), φ'(t) = ∇f(x + t·d)·d that every search walks along.

Searches never call the user's functions: they ask the `Ray` for points. The ray

* evaluates through the counting `Objective` (algorithms never count);
* caches the last point, so asking for φ'(t) after φ(t) costs one gradient
  (`complete`);
* reads a non-finite value or gradient as φ(t) = +inf, so every search
  shrinks the step the same way and never returns a non-finite point;
* keeps the best point that satisfies sufficient decrease, for the budget and
  failure cases;
* enforces the evaluation budget by raising `BudgetSpent`, which the base
  controller catches.
"""

from __future__ import annotations

import math
from math import isfinite
from typing import Any

import numpy as np

from linestep import _array
from linestep._objective import Objective
from linestep._step import Trial

# Relative spacing of float64; a step below ~EPS·‖x‖/‖d‖ no longer moves x.
EPS = 2.220446049250313e-16
INF = math.inf
# A supplied f(x) may differ from a fresh evaluation by this much, relative to
# max(1, |f(x)|), before `check_origin_value` calls it wrong (sums reordered, BLAS).
VALUE_RTOL = 1e-6
_NDARRAY = np.ndarray
_FLOAT64, _FLOAT32 = np.float64, np.float32


class BudgetSpent(Exception):
    """Raised by the ray when a search asks for more points than its budget allows."""


class Point:
    """One point on the ray: size t, x + t·d, φ(t), ∇f there (or None) and φ'(t) (or None)."""

    __slots__ = ("size", "x", "value", "gradient", "slope")

    def __init__(self, size: float, x: Any, value: float, gradient: Any, slope: float | None):
        self.size = size
        self.x = x
        self.value = value
        self.gradient = gradient
        self.slope = slope

    def __repr__(self) -> str:
        return f"Point(size={self.size!r}, value={self.value!r}, slope={self.slope!r})"

    @property
    def finite(self) -> bool:
        return self.value < INF


class Ray:
    """φ and φ' along ``x + t·d`` for one controller call.

    Parameters
    ----------
    objective : Objective
    origin : Point
        t = 0: x, f(x), ∇f(x) and φ'(0) (gradient and slope may be None for rules).
    direction : array
    max_evaluations : int
        Most points evaluated along the ray in this call.
    c1 : float
        Sufficient-decrease constant of the best point kept (`best`).
    record : bool
        Keep a `Trial` for each point.
    """

    __slots__ = (
        "objective", "origin", "direction", "max_evaluations", "count", "best",
        "trials", "non_finite", "_runner_up", "_last", "_rounding", "_precision", "_start",
        "_decrease",
    )

    def __init__(self, objective: Objective, origin: Point, direction: Any,
                 max_evaluations: int, c1: float = 0.0, record: bool = False) -> None:
        self.objective = objective
        self.origin = origin
        self.direction = direction
        self.max_evaluations = max_evaluations
        # The best point is the lowest one with φ(t) − start ≤ t·decrease:
        # * with φ'(0), Armijo's sufficient decrease φ(t) − φ(0) ≤ c1·t·φ'(0), written as
        #   a difference so that a decrease below the float spacing of φ(0) is not
        #   certified by rounding (φ(0) + tiny == φ(0));
        # * without φ'(0), plain decrease φ(t) < φ(0): start is the float just below φ(0);
        # * without φ(0), never (NaN compares false).
        value, slope = origin.value, origin.slope
        if value is None:
            self._start, self._decrease = math.nan, 0.0
        elif slope is None:
            self._start, self._decrease = math.nextafter(value, -INF), 0.0
        else:
            self._start, self._decrease = value, c1 * slope
        self.count = self.non_finite = 0  # points evaluated; of them read as non-finite
        self.best: Point | None = None
        self._runner_up: Point | None = None
        self._rounding: float | None = None
        self._precision: float | None = None
        self.trials: list[Trial] | None = [] if record else None
        self._last: Point = origin

    # -- evaluation -------------------------------------------------------------
    def value(self, size: float) -> Point:
        """φ(size); the gradient too when the objective is fused."""
        last = self._last
        if last.size == size:
            return last
        objective = self.objective
        if objective.fused:
            return self.value_and_slope(size)
        x_new = self._take(size)
        value = objective.value(x_new)
        # x + t·d can overflow for t > 1 while f stays finite there (a logistic loss is
        # 0 at +inf), so those trial points are checked too.
        if not isfinite(value) or (size > 1.0 and not _array.all_finite(x_new)):
            self.non_finite += 1
            value = INF
        return self._store(Point(size, x_new, value, None, None))

    def value_and_slope(self, size: float) -> Point:
        """φ(size) and φ'(size); reuses a cached value at the same size."""
        last = self._last
        objective = self.objective
        if last.size == size:
            if last.slope is not None or last.value == INF:
                return last
            return self.complete(last)  # the value is cached
        x_new = self._take(size)
        value, gradient = objective.value_and_gradient(x_new)
        if isfinite(value) and (size <= 1.0 or _array.all_finite(x_new)):
            gradient, slope = self._slope(gradient, size)
            if isfinite(slope):
                return self._store(Point(size, x_new, value, gradient, slope))
        self.non_finite += 1
        return self._store(Point(size, x_new, INF, gradient, None))

    def complete(self, point: Point) -> Point:
        """Add ∇f and φ' to `point`, the last point evaluated, which has a finite value
        and no gradient yet: one gradient evaluation (a search that asks for φ' only
        after φ passed its tests). Any other point is an implementer's error: it
        would be evaluated twice or recorded as the wrong trial."""
        if point is not self._last or point.slope is not None or point.value == INF:
            raise RuntimeError("Ray.complete takes the last point evaluated, with a finite "
                               "value and no gradient yet; use value_and_slope(size) for "
                               "any other point.")
        gradient, slope = self._slope(self.objective.gradient(point.x), point.size)
        point.gradient = gradient
        if isfinite(slope):
            point.slope = slope
        else:
            self.non_finite += 1  # the cached value was finite; the point no longer is
            point.value = INF
            if self.best is point:
                self.best = self._runner_up
        if self.trials is not None and self.trials:
            self.trials[-1] = Trial(size=point.size, value=point.value, slope=point.slope)
        return point

    def check_origin_value(self) -> None:
        """Evaluate f(x) afresh (one evaluation of the budget) and raise ValueError when
        it is clearly below the origin's value, which the caller supplied as `value`.

        For searches whose trials look plausible only if φ(0) is right (Goldstein
        expanding while φ rises): a `value` far above f(x) would make them accept a
        point worse than x. Differences within `VALUE_RTOL` (rounding, a recomputed
        sum) pass.
        """
        if self.count >= self.max_evaluations:
            raise BudgetSpent
        self.count += 1
        true = self.objective.value(self.origin.x)
        supplied = self.origin.value
        if true < supplied - VALUE_RTOL * max(1.0, abs(supplied)):
            raise ValueError(
                f"`value` must be f(x); got value={supplied!r}, but the objective gives "
                f"{true!r} at x. Pass value=f(x) at this x, or leave `value` out."
            )

    def _slope(self, gradient: Any, size: float) -> tuple[Any, float]:
        """The checked gradient at a trial point and φ' = ∇f·d there (never broadcast)."""
        product = None
        if gradient.__class__ is _NDARRAY and gradient.ndim == 1:
            try:
                product = gradient.dot(self.direction)
            except ValueError:  # 1-D of another length: numpy refuses the product
                raise self._wrong_gradient(gradient, size) from None
        # A real 1-D gradient against a 1-D direction gives a numpy float scalar; any
        # other result (an array, a complex scalar) means another shape or dtype.
        if product.__class__ is _FLOAT64 or product.__class__ is _FLOAT32:
            return gradient, float(product)
        gradient = self._checked(gradient, size)  # other shapes, dtypes and array types
        return gradient, _array.dot(gradient, self.direction)

    def _checked(self, gradient: Any, size: float) -> Any:
        """The gradient at a trial point as an array of x's shape, or a clear error.

        The 1-D numpy case of x's dtype is checked inline by `value_and_slope` (numpy
        refuses a product of two lengths); every other gradient comes here, so none is
        ever broadcast against the direction.
        """
        if gradient is None or isinstance(gradient, (str, bytes)):
            raise self._wrong_gradient(gradient, size)
        gradient = _array.as_point("grad", gradient)
        if _array.shape(gradient) != _array.shape(self.origin.x):
            raise self._wrong_gradient(gradient, size)
        if gradient.__class__ is _NDARRAY and self.direction.__class__ is _NDARRAY:
            return gradient
        return _array.same_kind(self.origin.x, gradient)

    def _wrong_gradient(self, gradient: Any, size: float) -> Exception:
        shape = getattr(gradient, "shape", None)
        got = f"shape {tuple(shape)}" if shape is not None else repr(gradient)
        source = "the fused `fun`" if self.objective.fused else "`grad`"
        return ValueError(
            f"The objective's gradient {source} returned {got} at the trial point "
            f"x + t·d (t = {size!r}); it must return an array of x's shape "
            f"{_array.shape(self.origin.x)}. Fix the gradient function: a gradient of "
            "another shape would be broadcast and give a wrong slope."
        )

    def _take(self, size: float) -> Any:
        """Spend one evaluation of the budget and return x + size·d."""
        if self.count >= self.max_evaluations:
            raise BudgetSpent
        self.count += 1
        # The unit step (Newton-like directions) needs no multiplication.
        return self.origin.x + (self.direction if size == 1.0 else size * self.direction)

    def _store(self, point: Point) -> Point:
        self._last = point
        if self.trials is not None:
            self.trials.append(Trial(size=point.size, value=point.value, slope=point.slope))
        value = point.value
        if value - self._start <= point.size * self._decrease:  # never true for INF
            best = self.best
            if best is None or value < best.value:
                # Kept in case the new best's gradient turns out non-finite.
                self._runner_up = best
                self.best = point
        return point

    @property
    def non_finite_seen(self) -> bool:
        """Some evaluated point was read as non-finite."""
        return self.non_finite > 0

    @property
    def finite_seen(self) -> bool:
        """Some evaluated point is finite."""
        return self.count > self.non_finite

    def precision(self) -> float:
        """Machine epsilon of x's dtype (float64's when x has none): the relative
        rounding of x and of values computed from it."""
        if self._precision is None:
            dtype = getattr(self.origin.x, "dtype", None)
            try:
                self._precision = EPS if dtype is None else float(np.finfo(dtype).eps)
            except (TypeError, ValueError):  # a dtype numpy cannot describe
                self._precision = EPS
        return self._precision

    def rounding_size(self) -> float:
        """The step below which x + t·d differs from x only at rounding level."""
        if self._rounding is None:
            scale = max(1.0, _array.max_abs(self.origin.x))
            length = _array.max_abs(self.direction)
            self._rounding = self.precision() * scale / length if length > 0 else INF
        return self._rounding

    @property
    def last(self) -> Point:
        """The most recently evaluated point (the origin before any evaluation)."""
        return self._last
