"""Nonmonotone backtracking: Armijo's test against a reference value at or above φ(0)."""

from __future__ import annotations

from collections import deque
from typing import Any

from linestep import _validate
from linestep._controller import Outcome, StepController
from linestep._ray import Ray
from linestep.searches._backtrack import backtrack
from linestep.searches.armijo import Armijo

__all__ = ["NonmonotoneArmijo"]

_REFERENCES = ("max", "average")


class NonmonotoneArmijo(StepController):
    """Backtracking until φ(t) ≤ R_k + c1·t·φ'(0), with a reference R_k ≥ φ(0).

    Two references from the literature:

    * ``reference="max"`` (Grippo, Lampariello and Lucidi 1986):
      R_k = max_{0 ≤ j < min(k+1, memory)} f_{k−j}, the largest of the last
      `memory` values at the start of a call, the current one included.
    * ``reference="average"`` (Zhang and Hager 2004): R_k = C_k with
      Q_0 = 1, C_0 = f_0 and, for k ≥ 0,
      Q_{k+1} = eta·Q_k + 1, C_{k+1} = (eta·Q_k·C_k + f_{k+1}) / Q_{k+1}.

    f_k is the value at `x` when call k starts (calls ending in ``not_descent``
    or at a stationary point are not counted). Reading f_k from each call's own
    `x`, rather than from the step returned before, keeps the rule right when the
    caller moves `x` by other means. As a safeguard R_k is never taken below
    f_k (the published recursions already guarantee C_k ≥ f_k, Zhang and Hager
    2004, Lemma 1.1, whenever the previous call's step was taken), so every point
    with Armijo's monotone decrease is also acceptable here.

    The trials are those of `Armijo` (quadratic, then cubic, safeguarded
    interpolation of φ itself, or shrinking by `shrink`); only the acceptance
    test differs. With ``memory=1`` or ``eta=0`` the search is Armijo's.

    Parameters
    ----------
    memory : int
        Number of past values in the max reference, >= 1 (GLL use 10).
    reference : {"max", "average"}
        Which reference to test against.
    eta : float
        Averaging weight of the average reference, 0 <= eta <= 1: 0 gives
        monotone Armijo, 1 the plain mean of all values so far (Zhang and Hager
        use 0.85).
    c1, shrink, interpolation, shrink_limits, initial, max_evaluations, record_trials
        As for `Armijo` (the same checks apply).

    Returns
    -------
    Step
        ``accepted``: φ(size) ≤ R_k + c1·size·φ'(0) and `x` = x + size·d. The value
        may be *above* f(x): that is the point of a nonmonotone search; the message
        says so when it happens.
        ``step_too_small``: the trials fell below rounding level; `x` unchanged, size 0.
        ``max_evaluations``: budget spent; `x` unchanged, size 0. Every point with
        monotone sufficient decrease also passes the nonmonotone test and would have
        been accepted at once, so no acceptable point exists to return.
        ``non_finite``: every trial was non-finite; `x` unchanged.
        ``not_descent``: φ'(0) >= 0; `x` unchanged, nothing evaluated, state kept.

    Notes
    -----
    The reference values are state carried between calls; `reset()` clears them.
    Use one instance per optimisation run.

    References
    ----------
    L. Grippo, F. Lampariello and S. Lucidi, "A nonmonotone line search technique
    for Newton's method", SIAM J. Numer. Anal. 23(4):707–716, 1986.
    H. Zhang and W. W. Hager, "A nonmonotone line search technique and its
    application to unconstrained optimization", SIAM J. Optim. 14(4):1043–1056, 2004.

    Examples
    --------
    A step that raises f is accepted because an earlier value was higher:

    >>> import numpy as np
    >>> from linestep.searches.nonmonotone import NonmonotoneArmijo
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> search = NonmonotoneArmijo(memory=5, initial=1.0)
    >>> first = search((f, g), np.array([3.0]), np.array([-3.0]))   # f: 9 -> 0
    >>> first.value
    0.0
    >>> step = search((f, g), np.array([1.0]), np.array([-3.5]))    # R = max(9, 1)
    >>> step.status, step.value, step.value > f(np.array([1.0]))
    (Status.accepted, 6.25, True)
    """

    _fields = ("memory", "reference", "eta", "c1", "shrink", "interpolation",
               "shrink_limits", "initial", "max_evaluations", "record_trials")

    def __init__(self, *, memory: int = 10, reference: str = "max", eta: float = 0.85,
                 c1: float = 1e-4, shrink: float = 0.5, interpolation: str | None = "cubic",
                 shrink_limits: tuple[float, float] = (0.1, 0.5), initial: Any = 1.0,
                 max_evaluations: int = 40, record_trials: bool = False) -> None:
        super().__init__()
        self.memory = _validate.integer("memory", memory)
        self.reference = _validate.choice("reference", reference, _REFERENCES)
        self.eta = _validate.within("eta", eta, 0.0, 1.0, include_low=True, include_high=True)
        # Armijo checks the shared options, so both classes accept and reject the same values.
        options = Armijo(c1=c1, shrink=shrink, interpolation=interpolation,
                         shrink_limits=shrink_limits, initial=initial,
                         max_evaluations=max_evaluations, record_trials=record_trials)
        self.c1 = options.c1
        self.shrink = options.shrink
        self.interpolation = options.interpolation
        self.shrink_limits = options.shrink_limits
        self.initial = options.initial
        self.max_evaluations = options.max_evaluations
        self.record_trials = options.record_trials
        self._reset_state()

    def _reset_state(self) -> None:
        self._values: deque[float] = deque(maxlen=self.memory)  # f_{k-j}, newest last
        self._weight: float | None = None  # Q_k
        self._average: float | None = None  # C_k

    def _search(self, ray: Ray, first: float) -> Outcome:
        origin = ray.origin
        reference = self._next_reference(origin.value)
        outcome = backtrack(ray, first, reference, self.c1, self.shrink, self.interpolation,
                            self.shrink_limits)
        point = outcome.point
        if point is not None and point.value > origin.value:
            return Outcome(point, outcome.status, (
                f"The step raised f from {origin.value:.6g} to {point.value:.6g}, within "
                f"the nonmonotone reference {reference:.6g}."))
        return outcome

    def _next_reference(self, value: float) -> float:
        """Record f_k = `value` and return R_k (never below f_k)."""
        if self.reference == "max":
            self._values.append(value)
            return max(self._values)
        if self._weight is None:
            weight, average = 1.0, value
        else:
            weight = self.eta * self._weight + 1.0
            average = (self.eta * self._weight * self._average + value) / weight
        self._weight, self._average = weight, average
        return max(average, value)


