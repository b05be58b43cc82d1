"""Take a rule's step; recover with a search when it raises f or turns non-finite."""

from __future__ import annotations

from linestep._controller import Outcome, StepController
from linestep._ray import Ray
from linestep._step import Status

__all__ = ["Fallback"]


class Fallback(StepController):
    """Use `rule`'s step while it decreases f; otherwise let `search` find one.

    This is the drop-in fix for a fixed or scheduled rate that diverges: the
    rule's step is tried first (one evaluation); when f rises or is not finite
    there, `search` starts from that same evaluated point (no evaluation is
    repeated), with its first trial capped at the rule's size.

    Parameters
    ----------
    rule : controller
        Proposes the step, e.g. ``Fixed(0.1)`` or a ``Schedule``.
    search : controller
        Recovers when the rule's step fails, e.g. ``Armijo()``.

    Returns
    -------
    Step
        ``accepted``: the rule's step decreased f, or the search accepted a step
        (the message says which).
        Otherwise the search's status, with `x` its best sufficient-decrease point
        or unchanged.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import Armijo, Fallback, Fixed
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([1.0, -1.0])
    >>> Fixed(5.0)((f, g), x, -g(x)).value  # the fixed rate overshoots: f grows
    162.0
    >>> step = Fallback(Fixed(5.0), Armijo())((f, g), x, -g(x))
    >>> step.ok, step.value < f(x)
    (True, True)
    """

    _fields = ("rule", "search")

    def __init__(self, rule: StepController, search: StepController) -> None:
        super().__init__()
        for name, part in (("rule", rule), ("search", search)):
            if not isinstance(part, StepController):
                raise TypeError(
                    f"`{name}` must be a linestep controller such as Fixed(0.1) or Armijo(); "
                    f"got {part!r}."
                )
        if rule is search:
            raise ValueError("`rule` and `search` must be different objects.")
        self.rule = rule
        self.search = search
        self.c1 = search.c1
        self.max_evaluations = rule.max_evaluations + search.max_evaluations
        self.record_trials = rule.record_trials or search.record_trials

    def _search(self, ray: Ray, first: float) -> Outcome:
        proposed = self._delegate(self.rule, ray)
        point = proposed.point
        if (proposed.status is Status.accepted and point is not None
                and point.value <= ray.origin.value):
            return proposed
        rejected = point.size if point is not None else ray.last.size
        outcome = self._delegate(self.search, ray, at_most=rejected)
        if outcome.status is Status.accepted:
            reason = "was not finite" if not ray.last.finite or point is None else "raised f"
            return Outcome(outcome.point, outcome.status, (
                f"The rule's step of size {rejected:.3g} {reason}; "
                f"{type(self.search).__name__} accepted a step of size "
                f"{outcome.point.size:.3g} instead."))
        return outcome

    def _reset_state(self) -> None:
        self.rule.reset()
        self.search.reset()
