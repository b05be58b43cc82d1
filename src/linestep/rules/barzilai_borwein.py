"""Barzilai–Borwein step sizes for the negative gradient, globalised by a nonmonotone search."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from linestep import _array, _initial, _validate
from linestep._constants import DIRECTION_RTOL, NEGATIVE_CURVATURE_GROWTH
from linestep._controller import Outcome, StepController, settle
from linestep._ray import Point, Ray
from linestep._rebuild import call
from linestep._step import MESSAGES, Status
from linestep.searches.nonmonotone import NonmonotoneArmijo

__all__ = ["BarzilaiBorwein"]


_NAME = "BarzilaiBorwein"

_VARIANTS = ("long", "short", "alternate")


class _DefaultGlobalization:
    """Stands for the default `globalize` in the signature: Raydan's (1997) nonmonotone
    search, built afresh for each controller (a shared default instance would share its
    reference values between controllers)."""

    def __repr__(self) -> str:
        return call("NonmonotoneArmijo", [("reference", "max"), ("memory", 10)])


_DEFAULT_GLOBALIZATION = _DefaultGlobalization()


class BarzilaiBorwein(StepController):
    """Barzilai–Borwein step α_k along −∇f(x_k) from the last displacement and gradient change.

    With s = x_k − x_{k−1} and y = ∇f(x_k) − ∇f(x_{k−1}), taken from this
    controller's previous call (the previous `x` and gradient are state):

    * ``"long"`` (BB1): α = sᵀs / sᵀy;
    * ``"short"`` (BB2): α = sᵀy / yᵀy;
    * ``"alternate"``: BB1 on the 1st, 3rd, 5th, ... BB step and BB2 on the 2nd,
      4th, ... (the alternating rule studied by Dai and Fletcher 2005).

    α is clipped to [`min_size`, `max_size`]. When sᵀy ≤ 0 with s ≠ 0 (f is
    not convex along s) the previous BB trial step is doubled (the globalising
    search cuts it back if that is too far); when s = 0 (x did not move) or the
    quotient is not finite it is reused. The message says which, before the
    search's own message when it has one. The
    very first call, with no previous point, takes its step from `first`, capped
    at `max_size` but not lifted to `min_size`: the default moves x by a
    distance of 1 whatever the size of the gradient, so a start gradient of 1e42
    gets a first step near 1e-42.

    By default the BB step is the first trial of Raydan's (1997) globalisation:
    a nonmonotone backtracking search, ``NonmonotoneArmijo(reference="max",
    memory=10)``, so f may rise for a while but the iteration converges on
    smooth problems. ``globalize=None`` takes the pure BB step, evaluating the new
    point once only as a guard against a non-finite value.

    BB scales the *negative gradient*: the direction must be d = c·(−∇f(x))
    with c > 0 (normally c = 1), up to a relative difference `DIRECTION_RTOL`;
    anything else raises `ValueError`. To scale another direction (L-BFGS,
    nonlinear CG) use a search such as `NonmonotoneArmijo` instead. The BB step
    α and the bounds below are steps along −∇f; the returned size along d is
    α/c, so x always moves to x − α·∇f.

    Parameters
    ----------
    variant : {"long", "short", "alternate"}
    first : float or trial strategy
        Step along `direction` at the first call (and after `reset()`), before s
        and y exist; the default (None) is ``ScaledTrial()``, which moves x by a
        distance of 1 (t = 1/‖g₀‖₂ for d = −g₀).
    min_size, max_size : float
        Bounds on the BB step α, 0 < min_size <= max_size (finite).
    globalize : controller or None
        The search that takes the BB step as its first trial (its own `initial`
        is ignored), or None for the pure BB step. Its state (the nonmonotone
        reference) is reset with this controller's; do not share one instance
        between controllers.

    Returns
    -------
    Step
        ``accepted``: with a search, the search accepted `size` (its condition
        holds); without, `size` is the clipped BB step and `x` = x + size·d, whose
        value may be above f(x). The message says when sᵀy ≤ 0 forced the
        fallback (then the search's message, if any).
        ``non_finite``: no finite value along d (without a search: at the BB step);
        `x` unchanged, size 0.
        ``step_too_small``, ``max_evaluations``: from the search; `x` unchanged.
        ``not_descent`` does not occur: a direction other than c·(−∇f) raises.
        A zero gradient gives ``accepted`` with size 0 and nothing evaluated along d.

    References
    ----------
    J. Barzilai and J. M. Borwein, "Two-point step size gradient methods", IMA J.
    Numer. Anal. 8(1):141–148, 1988.
    M. Raydan, "On the Barzilai and Borwein choice of steplength for the gradient
    method", IMA J. Numer. Anal. 13(3):321–326, 1993.
    M. Raydan, "The Barzilai and Borwein gradient method for the large scale
    unconstrained minimization problem", SIAM J. Optim. 7(1):26–33, 1997.
    Y.-H. Dai and R. Fletcher, "Projected Barzilai–Borwein methods for large-scale
    box-constrained quadratic programming", Numer. Math. 100(1):21–47, 2005.

    Examples
    --------
    On f(x) = ½(x₁² + 4x₂²) the second call already uses the curvature seen:

    >>> import numpy as np
    >>> from linestep.rules.barzilai_borwein import BarzilaiBorwein
    >>> scale = np.array([1.0, 4.0])
    >>> f = lambda x: 0.5 * float(x @ (scale * x))
    >>> g = lambda x: scale * x
    >>> rule = BarzilaiBorwein(variant="long", first=0.1, globalize=None)
    >>> x = np.array([1.0, 1.0])
    >>> for _ in range(2):
    ...     step = rule((f, g), x, -g(x))
    ...     x = step.x
    >>> round(step.size, 6)   # sᵀs/sᵀy = (0.01 + 0.16)/(0.01 + 0.64)
    0.261538
    """

    _fields = ("variant", "first", "min_size", "max_size", "globalize")
    negative_gradient_only = True

    def __init__(self, *, variant: str = "alternate", first: Any = None,
                 min_size: float = 1e-10, max_size: float = 1e10,
                 globalize: Any = _DEFAULT_GLOBALIZATION) -> None:
        super().__init__()
        self.variant = _validate.choice("variant", variant, _VARIANTS)
        self.first = _initial.resolve(_initial.ScaledTrial() if first is None else first,
                                      name="first")
        self.initial = self.first
        self.min_size = _validate.positive("min_size", min_size)
        self.max_size = _validate.positive("max_size", max_size)
        if self.min_size > self.max_size:
            raise ValueError(
                f"`min_size` must not exceed `max_size`; got min_size={min_size!r}, "
                f"max_size={max_size!r}."
            )
        if globalize is _DEFAULT_GLOBALIZATION:
            globalize = NonmonotoneArmijo(reference="max", memory=10)
        elif globalize is not None and not _is_search(globalize):
            # A rule (Fixed, Schedule, Polyak, BarzilaiBorwein, Fallback) would replace
            # the BB step with its own, silently: only a search uses the trial it is given.
            kind = "class" if isinstance(globalize, type) else "object"
            raise TypeError(
                "`globalize` must be a line search instance such as NonmonotoneArmijo() or "
                f"Armijo(), or None for the pure BB step; got the {kind} {globalize!r}, "
                "which would not search from the BB step."
            )
        self.globalize = globalize
        if globalize is None:
            self.max_evaluations = 1
        else:
            self.c1 = globalize.c1
            self.max_evaluations = globalize.max_evaluations
            self.record_trials = globalize.record_trials
        self._reset_state()

    def _reset_state(self) -> None:
        self._x: Any = None  # x of the previous call
        self._gradient: Any = None  # ∇f there
        self._trial: float | None = None  # the BB step proposed at the previous call
        self._count = 0  # BB steps computed from (s, y) since the last reset
        if self.globalize is not None:
            self.globalize.reset()

    # -- hooks ---------------------------------------------------------------------
    def _search(self, ray: Ray, first: float) -> Outcome:
        origin = ray.origin
        scale = _validate.negative_gradient_multiple(_NAME, origin.gradient, ray.direction,
                                                     origin.slope, rtol=DIRECTION_RTOL)
        step, note = self._propose(origin, first * scale)
        # State first: a budget stop inside the search must not lose this call's pair.
        self._x, self._gradient = _snapshot(origin.x), _snapshot(origin.gradient)
        self._trial = step
        size = step / scale
        if self.globalize is None:
            point = ray.value(size)
            if not point.finite:
                return Outcome(None, Status.non_finite, (
                    f"f is not finite at the BB step {size:.3g}; x is unchanged. Lower "
                    "`max_size` or use the default nonmonotone globalisation."
                ))
            return Outcome(point, message=note)
        outcome = self._delegate(self.globalize, ray, first=size)
        if note is None:
            return outcome
        # Both sentences: why the trial was not a BB quotient, then what the search said
        # (for a failure without a sentence, the default of the status the base will
        # report: settled here by the base's own rule, which may make it non_finite).
        point, status, said = outcome.point, outcome.status, outcome.message
        if status is not Status.accepted:
            point, status = settle(ray, point, status)
            if said is None:
                said = MESSAGES[status]
        return Outcome(point, status, note if said is None else f"{note} {said}")

    # -- the BB step -----------------------------------------------------------------
    def _propose(self, origin: Point, first: float) -> tuple[float, str | None]:
        """The clipped BB step for this call and a message when a fallback was used."""
        if self._x is None or _array.shape(self._x) != _array.shape(origin.x):
            # No previous point (or one of another problem): the first-step rule, capped
            # at max_size but not lifted to min_size: it scales with the gradient (a
            # start gradient of 1e42 needs a step near 1e-42, far below any fixed bound).
            return min(first, self.max_size), None
        s = origin.x - self._x
        y = origin.gradient - self._gradient
        sy = _array.dot(s, y)
        self._count += 1
        long = self.variant == "long" or (self.variant == "alternate" and self._count % 2 == 1)
        if sy > 0.0:
            size = _array.dot(s, s) / sy if long else sy / _array.dot(y, y)
            if math.isfinite(size) and size > 0.0:
                return self._clip(size), None
        if sy <= 0.0 and _array.dot(s, s) > 0.0:
            # f is not convex along s: a longer step gains more than the linear model says
            size = self._clip(self._trial * NEGATIVE_CURVATURE_GROWTH)
            return size, (f"sᵀy = {sy:.3g} ≤ 0 gives no BB step (f is not convex along the "
                          f"last step), so the previous BB trial step was doubled to "
                          f"{size:.3g}.")
        size = self._clip(self._trial)
        return size, (f"sᵀy = {sy:.3g} gives no usable BB step (x did not move, or the "
                      f"quotient is not finite), so the previous BB trial step {size:.3g} "
                      "was reused.")

    def _clip(self, size: float) -> float:
        return min(max(size, self.min_size), self.max_size)


def _is_search(controller: Any) -> bool:
    """An instance of a line search of linestep.searches (or of a subclass of one)."""
    from linestep.searches.armijo import Armijo
    from linestep.searches.goldstein import Goldstein
    from linestep.searches.hager_zhang import HagerZhang
    from linestep.searches.more_thuente import MoreThuente
    from linestep.searches.wolfe import Wolfe

    return isinstance(controller, (Armijo, Goldstein, HagerZhang, MoreThuente,
                                   NonmonotoneArmijo, Wolfe))


def _snapshot(a: Any) -> Any:
    """A copy of `a`, so that a caller updating x or a gradient buffer in place cannot
    change the stored previous point."""
    if isinstance(a, np.ndarray):
        return a.copy()
    xp = _array.namespace(a)
    return xp.asarray(a, copy=True)
