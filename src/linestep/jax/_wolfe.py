"""Compiled bracketing-and-zoom search for the strong or weak Wolfe conditions.

The host `Wolfe` (Nocedal & Wright 2006, Alg. 3.5 and 3.6, with the bisection
safeguard of Moré & Thuente 1994), step for step, with its constants imported
from `linestep.searches.wolfe` so that both paths stay the same algorithm.

References
----------
P. Wolfe, "Convergence conditions for ascent methods", SIAM Review
11(2):226–235, 1969.
J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., Springer, 2006,
§3.5 (Alg. 3.5, 3.6, eq. 3.59).
J. J. Moré and D. J. Thuente, "Line search algorithms with guaranteed
sufficient decrease", ACM TOMS 20(3):286–307, 1994.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import jax
import jax.numpy as jnp

from linestep._constants import BISECT_UNLESS_SHRUNK, NON_FINITE_SHRINK
from linestep.jax import _interpolate, _tree
from linestep.jax._line import INF, Line, Point
from linestep.jax._search import (
    ACCEPTED,
    INTERVAL_TOO_SMALL,
    MAX_EVALUATIONS,
    STEP_TOO_LARGE,
    CompiledSearch,
)
from linestep.jax._twin import twin, twin_fields
from linestep.searches.wolfe import (
    AGREE,
    EXTRAPOLATE_MIN,
    MARGIN,
    MODEL_REACH,
    TRUSTED_MARGIN,
    VALUE_TIE,
    Wolfe,
)

# Loop outcomes (private; mapped to status codes at the end).
_RUNNING, _ACCEPTED, _ZOOM_FROM_PREVIOUS, _ZOOM_FROM_POINT, _TOO_LARGE, _COLLAPSED, \
    _SPENT = range(7)


@dataclass(frozen=True, eq=True, repr=False)
class WolfeSearch(CompiledSearch):
    c1: float
    c2: float
    strong: bool
    initial: Any
    expand: float
    max_size: float
    max_evaluations: int
    _factory = "wolfe"
    _fields = twin_fields(Wolfe)
    _needs_slope = True
    _track_best = True

    def _curvature(self, slope: Any, curvature_bound: Any) -> Any:
        ok = slope >= -curvature_bound
        return ok & (slope <= curvature_bound) if self.strong else ok

    def _search(self, line: Line, first: Any, active: Any, state: Any) -> tuple:
        outcome, previous, point, tally = self._bracket(line, first, active)
        zooming = (outcome == _ZOOM_FROM_PREVIOUS) | (outcome == _ZOOM_FROM_POINT)
        ends = (previous, _ends(point))
        lo = _pick(outcome == _ZOOM_FROM_PREVIOUS, ends[0], ends[1])
        hi = _pick(outcome == _ZOOM_FROM_PREVIOUS, ends[1], ends[0])
        zoomed, last, tally = self._zoom(line, lo, hi, point, tally, active & zooming)
        outcome = jnp.where(zooming, zoomed, outcome)
        accepted = outcome == _ACCEPTED
        status = jnp.select(
            [accepted, outcome == _TOO_LARGE, outcome == _COLLAPSED],
            [ACCEPTED, STEP_TOO_LARGE, INTERVAL_TOO_SMALL], MAX_EVALUATIONS,
        ).astype(jnp.int32)
        chosen = _tree.select(accepted, last, tally.best)
        return chosen, accepted | tally.has_best, status, tally, state.method

    # -- Alg. 3.5: grow the trial until it is acceptable or brackets an acceptable step
    def _bracket(self, line: Line, first: Any, active: Any) -> tuple:
        f0 = line.value
        decrease = self.c1 * line.slope
        curvature_bound = -self.c2 * line.slope
        max_size = self.max_size

        def keep_going(carry: tuple) -> Any:
            outcome, tally = carry[0], carry[4]
            return active & (outcome == _RUNNING) & (tally.count < self.max_evaluations)

        def trial(carry: tuple) -> tuple:
            _, size, previous, _, tally = carry
            point, tally = line.evaluate(size, tally, gradient=True)
            value, slope = point.value, point.slope
            fails = (value > f0 + size * decrease) | (value >= previous[1])
            accept = ~fails & self._curvature(slope, curvature_bound)
            turned = ~fails & ~accept & (slope >= 0.0)
            too_large = ~fails & ~accept & ~turned & (size >= max_size)
            outcome = jnp.select([fails, accept, turned, too_large],
                                 [_ZOOM_FROM_PREVIOUS, _ACCEPTED, _ZOOM_FROM_POINT, _TOO_LARGE],
                                 _RUNNING).astype(jnp.int32)
            going = outcome == _RUNNING
            next_size = jnp.where(going, self._extrapolate(previous, point), size)
            previous = _pick(going, _ends(point), previous)
            return outcome, next_size, previous, point, tally

        size = jnp.where(first < max_size, first, max_size).astype(line.dtype)
        origin = line.origin()
        start = (jnp.asarray(_RUNNING, jnp.int32), size, _ends(origin), origin, line.start())
        outcome, _, previous, point, tally = jax.lax.while_loop(keep_going, trial, start)
        outcome = jnp.where(outcome == _RUNNING, _SPENT, outcome).astype(jnp.int32)
        return outcome, previous, point, tally

    def _extrapolate(self, previous: tuple, point: Point) -> Any:
        """The next bracketing trial beyond `point` (cubic model, clipped)."""
        size = point.size
        increment = size - previous[0]
        low = size + min(EXTRAPOLATE_MIN, self.expand) * increment
        blind = size + self.expand * increment
        reach = size + MODEL_REACH * self.expand * increment
        model = _interpolate.cubic_from_slopes(previous[0], previous[1], previous[2],
                                               size, point.value, point.slope)
        # the host's rule: no minimiser beyond t takes the blind step, else [low, reach]
        model = jnp.where(jnp.isnan(model) | (model <= size), blind,
                          jnp.where(model < low, low, jnp.minimum(model, reach)))
        return jnp.where(model < self.max_size, model, self.max_size)

    # -- Alg. 3.6: shrink [lo, hi] until a trial satisfies both conditions -----------
    def _zoom(self, line: Line, lo: tuple, hi: tuple, last: Point, tally: Any,
              active: Any) -> tuple:
        f0 = line.value
        decrease = self.c1 * line.slope
        curvature_bound = -self.c2 * line.slope
        floor = line.rounding_size()
        eps = _tree.epsilon(line.x)
        tie = VALUE_TIE * eps

        def plan(lo: tuple, hi: tuple, width_older: Any, last: Point, tally: Any) -> tuple:
            """The next trial, or why there is none (checked before evaluating)."""
            a, b = lo[0], hi[0]
            width = jnp.abs(b - a)
            collapsed = (width <= floor) | (width <= eps * jnp.maximum(a, b))
            inside = _zoom_trial(a, lo[1], lo[2], b, hi[1], hi[2])
            size = jnp.where(width >= BISECT_UNLESS_SHRUNK * width_older, 0.5 * (a + b),
                             jnp.where(hi[1] < INF, inside, a + NON_FINITE_SHRINK * (b - a)))
            spent = (size != last.size) & (tally.count >= self.max_evaluations)
            outcome = jnp.where(collapsed, _COLLAPSED, jnp.where(spent, _SPENT, _RUNNING))
            return outcome.astype(jnp.int32), size, width

        def keep_going(carry: tuple) -> Any:
            return active & (carry[0] == _RUNNING)

        def trial(carry: tuple) -> tuple:
            _, size, lo, hi, width_older, width_old, last, tally = carry
            # The host ray answers a repeated size from its cache, without counting.
            point, tally = jax.lax.cond(
                size == last.size, lambda: (last, tally),
                lambda: line.evaluate(size, tally, gradient=True))
            value, slope = point.value, point.slope
            a, b = lo[0], hi[0]
            # A value within `tie` rounding units above φ(t_lo) counts as a tie.
            fails = (value > f0 + size * decrease) | (value - lo[1] > tie * jnp.abs(value))
            accept = ~fails & self._curvature(slope, curvature_bound)
            flip = ~fails & (slope * (b - a) >= 0.0)
            new_hi = _pick(fails, _ends(point), _pick(flip, lo, hi))
            new_lo = _pick(fails, lo, _ends(point))
            # Bisect unless the bracket shrank enough over the last two trials.
            outcome, next_size, width = plan(new_lo, new_hi, width_older, point, tally)
            outcome = jnp.where(accept, _ACCEPTED, outcome).astype(jnp.int32)
            return outcome, next_size, new_lo, new_hi, width_old, width, point, tally

        infinity = jnp.full((), INF, line.dtype)
        outcome, size, width = plan(lo, hi, infinity, last, tally)
        start = (outcome, size, lo, hi, infinity, width, last, tally)
        outcome, _, _, _, _, _, last, tally = jax.lax.while_loop(keep_going, trial, start)
        return outcome, last, tally


def _ends(point: Point) -> tuple:
    """(size, value, slope) of a point: what the bracket keeps of its ends."""
    return point.size, point.value, point.slope


def _pick(condition: Any, a: tuple, b: tuple) -> tuple:
    return tuple(jnp.where(condition, u, v) for u, v in zip(a, b, strict=True))


def _zoom_trial(a: Any, fa: Any, da: Any, b: Any, fb: Any, db: Any) -> Any:
    """A trial strictly inside (a, b): cubic, else quadratic, else the midpoint.

    The twin of `linestep.searches.wolfe._zoom_trial`: the trial keeps `MARGIN` of
    the bracket from either end, or only `TRUSTED_MARGIN` when the cubic and the
    quadratic agree to `AGREE` of the bracket.
    """
    cubic = _interpolate.cubic_from_slopes(a, fa, da, b, fb, db)
    quadratic = _interpolate.quadratic_from_slope(a, fa, da, b, fb)
    no_cubic = jnp.isnan(cubic)
    trusted = ~no_cubic & ~jnp.isnan(quadratic) & (
        jnp.abs(cubic - quadratic) <= AGREE * jnp.abs(b - a))
    size = jnp.where(no_cubic, quadratic, cubic)
    margin = jnp.where(trusted, TRUSTED_MARGIN, MARGIN) * (b - a)
    near, far = a + margin, b - margin
    near, far = jnp.minimum(near, far), jnp.maximum(near, far)
    clamped = jnp.where(size < near, near, jnp.where(size > far, far, size))
    return jnp.where(jnp.isnan(size), 0.5 * (a + b), clamped)


def wolfe(*, c1: float = 1e-4, c2: float = 0.9, strong: bool = True, initial: Any = 1.0,
          expand: float = 4.0, max_size: float = 1e10, max_evaluations: int = 40) -> WolfeSearch:
    """Compiled bracketing-and-zoom search for the (strong) Wolfe conditions.

    The compiled twin of `linestep.searches.wolfe.Wolfe`: the same options,
    defaults, constants, trials and statuses. Accepts t when
    φ(t) ≤ φ(0) + c1·t·φ'(0) and |φ'(t)| ≤ c2·|φ'(0)| (``strong=True``) or
    φ'(t) ≥ c2·φ'(0) (``strong=False``). Every trial evaluates f and ∇f in one
    `jax.value_and_grad` pass.

    Parameters
    ----------
    c1, c2, strong, initial, expand, max_size, max_evaluations
        As for the host `Wolfe` (checked the same way).

    Returns
    -------
    WolfeSearch
        With ``begin`` and ``step`` as for `armijo`. Statuses: ``accepted`` (both
        conditions hold at `size`, `x` = x + size·d); ``step_too_large`` (the trial
        reached `max_size` still too short; `x` is the best point with sufficient
        decrease); ``interval_too_small`` and ``max_evaluations`` (`x` is the best
        point with sufficient decrease found, else unchanged with size 0);
        ``non_finite`` (no finite trial, or f(x) or φ'(0) not finite; `x`
        unchanged); ``not_descent`` (φ'(0) >= 0; nothing evaluated).

    References
    ----------
    Wolfe, SIAM Review 11(2):226–235, 1969. Nocedal & Wright, 2006, Alg. 3.5–3.6.
    Moré & Thuente, ACM TOMS 20(3):286–307, 1994.

    Examples
    --------
    >>> import jax, jax.numpy as jnp
    >>> import linestep.jax as lj
    >>> f = lambda x: jnp.sum(x ** 2)
    >>> x = jnp.array([3.0, -4.0])
    >>> search = lj.wolfe()
    >>> out = search.step(f, x, -2 * x, state=search.begin(x))
    >>> float(out.size), int(out.values), int(out.gradients)
    (0.5, 3, 3)
    """
    host = Wolfe(c1=c1, c2=c2, strong=strong, initial=initial, expand=expand,
                 max_size=max_size, max_evaluations=max_evaluations)
    return twin(WolfeSearch, host)
