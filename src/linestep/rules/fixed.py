"""A constant step size."""

from __future__ import annotations

from linestep import _validate
from linestep._controller import Outcome, StepController
from linestep._ray import Ray
from linestep._step import Status

__all__ = ["Fixed"]


class Fixed(StepController):
    """Always take the same step: x + size·d.

    The new point is evaluated once as a guard: a non-finite value leaves `x`
    unchanged with status ``non_finite``. An increase in f is *accepted* (that is
    what a fixed rate does); wrap it in `Fallback` to recover instead.

    Gradient descent with a fixed step on f(x) = L/2·‖x‖² converges iff
    0 < size < 2/L (the iteration x ← (1 − size·L)·x contracts iff
    |1 − size·L| < 1; Nocedal & Wright 2006, §3.3, discuss the L-smooth case).

    Parameters
    ----------
    size : float
        The step length, > 0.

    Returns
    -------
    Step
        ``accepted``: `x` = x + size·d, `value` its f.
        ``non_finite``: f was not finite there; `x` unchanged, size 0.
        ``not_descent``: the gradient was given and φ'(0) >= 0; `x` unchanged.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import Fixed
    >>> step = Fixed(0.25)(lambda x: float(x @ x), np.array([2.0]), np.array([-4.0]))
    >>> step.x, step.value
    (array([1.]), 1.0)
    """

    needs_gradient = False
    needs_value = False
    _fields = ("size",)

    def __init__(self, size: float) -> None:
        super().__init__()
        self.size = _validate.positive("size", size)
        self.max_evaluations = 1

    def _search(self, ray: Ray, first: float) -> Outcome:
        point = ray.value(self.size)
        if not point.finite:
            return Outcome(None, Status.non_finite)
        return Outcome(point)
