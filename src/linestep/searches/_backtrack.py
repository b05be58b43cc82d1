"""The backtracking loop shared by `Armijo` and `NonmonotoneArmijo`."""

from __future__ import annotations

from linestep._constants import NON_FINITE_SHRINK
from linestep._controller import Outcome
from linestep._interpolate import clip, cubic_backtrack, quadratic_from_slope
from linestep._ray import Point, Ray
from linestep._step import Status


def backtrack(ray: Ray, first: float, reference: float, c1: float, shrink: float,
              interpolation: str | None, shrink_limits: tuple[float, float]) -> Outcome:
    """Backtrack from `first` until φ(t) ≤ reference + c1·t·φ'(0).

    The trial sequence is Armijo's: the model always interpolates φ itself
    (φ(0), φ'(0) and the failed trials), whatever the reference. With
    ``reference = φ(0)`` it is `Armijo`'s search; `NonmonotoneArmijo` passes its
    nonmonotone reference value.
    Returns ``Outcome(point)`` or ``Outcome(None, Status.step_too_small)``;
    the ray raises `BudgetSpent` when the budget runs out.
    """
    origin = ray.origin
    f0, d0 = origin.value, origin.slope
    low, high = shrink_limits
    size = first
    older_size = older_value = None
    while True:
        point: Point = ray.value(size)
        value = point.value
        if value - reference <= c1 * size * d0:  # as a difference, like Armijo's test
            return Outcome(point)
        if size <= ray.rounding_size():
            return Outcome(None, Status.step_too_small)
        if not point.finite:
            next_size = size * min(shrink, NON_FINITE_SHRINK)
            older_size = None
        elif interpolation is None:
            next_size = size * shrink
        else:
            if older_size is None or interpolation == "quadratic":
                model = quadratic_from_slope(0.0, f0, d0, size, value)
            else:
                model = cubic_backtrack(f0, d0, older_size, older_value, size, value)
            next_size = clip(model, low * size, high * size)
            older_size, older_value = size, value
        size = next_size
