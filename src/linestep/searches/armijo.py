"""Backtracking search with the Armijo sufficient-decrease condition."""

from __future__ import annotations

from typing import Any

from linestep import _initial, _validate
from linestep._controller import Outcome, StepController
from linestep._ray import Ray
from linestep.searches._backtrack import backtrack

__all__ = ["Armijo"]

_INTERPOLATIONS = ("cubic", "quadratic", None)


class Armijo(StepController):
    """Backtracking line search: shrink t until φ(t) ≤ φ(0) + c1·t·φ'(0).

    Starting from the initial trial, each failed trial is replaced by the
    minimiser of a quadratic (first backtrack) or cubic (later backtracks)
    model of φ, kept inside ``[shrink_limits[0]·t, shrink_limits[1]·t]``; with
    ``interpolation=None`` the step is multiplied by `shrink`. A non-finite
    value shrinks the step by at least a factor of 10.

    Parameters
    ----------
    c1 : float
        Sufficient-decrease constant, 0 < c1 < 1 (1e-4 is common practice, N&W §3.1).
    shrink : float
        Shrink factor when not interpolating, 0 < shrink < 1.
    interpolation : {"cubic", "quadratic", None}
        Model used to choose the next trial.
    shrink_limits : (float, float)
        Safeguard: the next trial lies in [low·t, high·t], 0 < low <= high < 1
        (N&W §3.5 suggest such bounds; (0.1, 0.5) is common practice).
    initial : float or trial strategy
        The first trial step (`UnitTrial`, `PreviousTrial`, `QuadraticTrial`,
        `ScaledTrial`, or a number).
    max_evaluations : int
        Most trial points per call.
    record_trials : bool
        Keep every trial on ``Step.trials``.

    Returns
    -------
    Step
        ``accepted``: `size` satisfies the Armijo condition and `x` = x + size·d.
        ``step_too_small``: trials fell below rounding level; `x` unchanged, size 0.
        ``max_evaluations``: budget spent; `x` unchanged, size 0 (backtracking stops
        at the first acceptable point, so there is no better one to return).
        ``non_finite``: every trial was non-finite; `x` unchanged.
        ``not_descent``: φ'(0) >= 0; `x` unchanged, nothing evaluated.

    References
    ----------
    L. Armijo, "Minimization of functions having Lipschitz continuous first partial
    derivatives", Pacific J. Math. 16(1):1–3, 1966.
    J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., 2006,
    Alg. 3.1 and §3.5.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import Armijo
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([3.0, -4.0])
    >>> step = Armijo()((f, g), x, -g(x))
    >>> step.status, step.size, step.value
    (Status.accepted, 0.5, 0.0)
    """

    _fields = ("c1", "shrink", "interpolation", "shrink_limits", "initial",
               "max_evaluations", "record_trials")

    def __init__(self, *, c1: float = 1e-4, shrink: float = 0.5,
                 interpolation: str | None = "cubic",
                 shrink_limits: tuple[float, float] = (0.1, 0.5), initial: Any = 1.0,
                 max_evaluations: int = 40, record_trials: bool = False) -> None:
        super().__init__()
        self.c1 = _validate.open_unit("c1", c1)
        self.shrink = _validate.open_unit("shrink", shrink)
        self.interpolation = _validate.choice("interpolation", interpolation, _INTERPOLATIONS)
        self.shrink_limits = _shrink_limits(shrink_limits)
        self.initial = _initial.resolve(initial)
        self.max_evaluations = _validate.integer("max_evaluations", max_evaluations)
        self.record_trials = bool(record_trials)

    def _search(self, ray: Ray, first: float) -> Outcome:
        return backtrack(ray, first, ray.origin.value, self.c1, self.shrink,
                         self.interpolation, self.shrink_limits)


def _shrink_limits(limits: Any) -> tuple[float, float]:
    try:
        low, high = limits
    except (TypeError, ValueError):
        raise TypeError(
            f"`shrink_limits` must be a pair (low, high); got {limits!r}."
        ) from None
    low = _validate.real("shrink_limits", low)
    high = _validate.real("shrink_limits", high)
    if not 0.0 < low <= high < 1.0:
        raise ValueError(
            f"`shrink_limits` must satisfy 0 < low <= high < 1; got {limits!r}."
        )
    return (low, high)
