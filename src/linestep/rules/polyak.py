"""Polyak's step size from a target value, with an adaptive target when f* is unknown."""

from __future__ import annotations

from linestep import _array, _validate
from linestep._constants import DIRECTION_RTOL, NON_FINITE_SHRINK
from linestep._controller import Outcome, StepController
from linestep._ray import Ray
from linestep._step import Status

__all__ = ["Polyak"]

_NAME = "Polyak"

# Shrinks by NON_FINITE_SHRINK tried after a non-finite value before giving up.
NON_FINITE_RETRIES = 3
# Without `gap`, the first target sits this fraction of |f(x₀)| below f(x₀) (our choice).
INITIAL_GAP_FRACTION = 0.5
# Goffin–Kiwiel: a decrease of DESCENT_FRACTION·δ below the record starts a new group.
DESCENT_FRACTION = 0.5
# Goffin–Kiwiel: after a path longer than the bound, δ is multiplied by this factor.
GAP_SHRINK = 0.5


class Polyak(StepController):
    """Polyak's step along the negative gradient towards a target value f_lev.

    x moves to x − (f(x) − f_lev)/‖∇f(x)‖² · ∇f(x), with the step capped at
    `max_size`. The direction must be d = c·(−∇f(x)) with c > 0 (normally
    c = 1; otherwise `ValueError`), and the size along d is
    t = (f(x) − f_lev)/(−φ'(0)) = (f(x) − f_lev)/(c‖∇f(x)‖²), the point where the
    first-order model f(x) + t·φ'(0) reaches f_lev.

    The target is `f_min` when given (Polyak's choice f_lev = f*). Otherwise it
    is adapted between calls by the path-based level rule of Goffin and Kiwiel
    (1999), described under Notes; the values then need not decrease, so keep
    the best point yourself.

    The new point is evaluated once as a guard. A rise in f is *accepted*: the
    Polyak step brings x closer to the minimisers of a convex f (for f_min = f*),
    not f down at every step. A non-finite value shrinks the step by
    NON_FINITE_SHRINK, at most NON_FINITE_RETRIES times.

    Parameters
    ----------
    f_min : float or None
        The optimal value f* (a lower estimate gives longer steps), or None to adapt.
    max_size : float
        Upper bound on the size t along d (finite, > 0).
    gap : float or None
        The first δ of the adaptive target; None means ``0.5·|f(x₀)|`` (1 when
        f(x₀) = 0). Ignored with `f_min`.
    path_bound : float or None
        The path length B in x after which δ is halved; None means the length of
        the first step, t₀·‖d₀‖. Ignored with `f_min`.

    Returns
    -------
    Step
        ``accepted``: `x` = x + size·d with size = min(Polyak step, max_size),
        shrunk after non-finite values; its value may be above f(x).
        ``target_met``: f(x) <= `f_min` already; `x` unchanged, size 0, nothing
        evaluated along d.
        ``non_finite``: f was not finite at any of the trials; `x` unchanged, size 0.
        ``not_descent`` does not occur: a direction other than c·(−∇f) raises.
        A zero gradient gives ``accepted`` with size 0.

    References
    ----------
    B. T. Polyak, *Introduction to Optimization*, Optimization Software, 1987,
    §5.3 (subgradient method with the step (f(x) − f*)/‖g‖²).
    J.-L. Goffin and K. C. Kiwiel, "Convergence of a simple subgradient level
    method", Math. Program. 85(1):207–211, 1999.
    A. Nedić and D. P. Bertsekas, "Incremental subgradient methods for
    nondifferentiable optimization", SIAM J. Optim. 12(1):109–138, 2001.
    E. Hazan and S. Kakade, "Revisiting the Polyak step size", arXiv:1905.00313, 2019.

    Examples
    --------
    On f(x) = ‖x‖² with f* = 0 one Polyak step halves the distance to 0:

    >>> import numpy as np
    >>> from linestep.rules.polyak import Polyak
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([2.0, -2.0])
    >>> step = Polyak(f_min=0.0)((f, g), x, -g(x))
    >>> step.size, step.x
    (0.25, array([ 1., -1.]))
    >>> Polyak(f_min=10.0)((f, g), x, -g(x)).status
    Status.target_met

    Notes
    -----
    The adaptive target (Goffin and Kiwiel 1999, also analysed by Nedić and
    Bertsekas 2001). With f_k the value at the start of call k, f_rec the lowest
    f_k so far, and a *group* of calls sharing one reference value r and gap δ:

    * if f_k ≤ r − δ/2 (enough descent), a new group starts: r = f_rec, same δ;
    * else if the path length Σ t·‖d‖ since the group started exceeds
      `path_bound`, a new group starts with r = f_rec and δ halved;
    * the target is f_lev = r − δ.

    For convex f with bounded subgradients and f* finite this gives
    inf_k f(x_k) = f* for any path bound (Goffin and Kiwiel 1999; recalled
    from memory).

    Proof of the known-f* bounds (Polyak 1987, §5.3): for convex f and
    x* a minimiser, the step gives
    ‖x_{k+1} − x*‖² ≤ ‖x_k − x*‖² − (f_k − f*)²/‖g_k‖², hence with R = ‖x_0 − x*‖
    min_{k<K} f_k − f* ≤ G·R/√K when ‖g_k‖ ≤ G, and ≤ 2·L·R²/K when ∇f is
    L-Lipschitz (‖g_k‖² ≤ 2L(f_k − f*); Hazan and Kakade 2019).
    """

    _fields = ("f_min", "max_size", "gap", "path_bound")
    negative_gradient_only = True

    def __init__(self, *, f_min: float | None = None, max_size: float = 1e10,
                 gap: float | None = None, path_bound: float | None = None) -> None:
        super().__init__()
        self.f_min = None if f_min is None else _validate.finite_scalar("f_min", f_min)
        self.max_size = _validate.positive("max_size", max_size)
        self.gap = None if gap is None else _validate.positive("gap", gap)
        self.path_bound = (None if path_bound is None
                           else _validate.positive("path_bound", path_bound))
        self.max_evaluations = 1 + NON_FINITE_RETRIES
        self._reset_state()

    def _reset_state(self) -> None:
        self._record: float | None = None  # f_rec: lowest value at the start of a call
        self._reference: float | None = None  # r: the record when the group started
        self._delta: float | None = None  # δ of the group
        self._path = 0.0  # Σ t·‖d‖ since the group started
        self._bound: float | None = self.path_bound  # B in use

    def _search(self, ray: Ray, first: float) -> Outcome:
        origin = ray.origin
        _validate.negative_gradient_multiple(_NAME, origin.gradient, ray.direction,
                                             origin.slope, rtol=DIRECTION_RTOL)
        target = self.f_min if self.f_min is not None else self._level(origin.value)
        if not origin.value > target:
            return Outcome(None, Status.target_met)
        size = min((origin.value - target) / -origin.slope, self.max_size)
        length = _array.norm2(ray.direction)
        if self.f_min is None and self._bound is None:
            self._bound = size * length  # B defaults to the length of the first step
        point = ray.value(size)
        for _ in range(NON_FINITE_RETRIES):
            if point.finite:
                break
            point = ray.value(point.size * NON_FINITE_SHRINK)
        if not point.finite:
            return Outcome(None, Status.non_finite)
        if self.f_min is None:
            self._path += point.size * length  # the path actually travelled
        return Outcome(point)

    def _level(self, value: float) -> float:
        """Goffin–Kiwiel target for a call starting at f_k = `value`."""
        if self._delta is None:
            gap = self.gap
            if gap is None:
                gap = INITIAL_GAP_FRACTION * abs(value) if value != 0.0 else 1.0
            self._delta, self._record, self._reference = gap, value, value
        self._record = min(self._record, value)
        if value <= self._reference - DESCENT_FRACTION * self._delta:
            self._reference, self._path = self._record, 0.0
        elif self._bound is not None and self._path > self._bound:
            self._delta *= GAP_SHRINK
            self._reference, self._path = self._record, 0.0
        return self._reference - self._delta
