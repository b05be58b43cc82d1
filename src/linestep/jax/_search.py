"""The base of the compiled searches (template method, as `linestep._controller`).

`CompiledSearch.step` owns what every compiled search shares: the trace-time
checks of the arguments, the origin (f, ∇f and φ'(0), evaluated when not
given), the answer without evaluating when d is not a descent direction, the
first trial from the ``initial`` strategy, the clean-up of the outcome and the
memory kept in the `SearchState`. A search implements one hook:

1. ``_search(line, first, active, state)`` receives a `Line` (the origin, the
   direction, and ``line.evaluate(t, tally)``), the first trial, `active` (a
   boolean array: False when the call must not evaluate anything, so every
   loop of the hook must include it in its condition) and the state.
2. It evaluates only through the line and never counts by hand: the `Tally`
   it threads through its loops counts.
3. It returns ``(point, has_point, status, tally, method)``: the `Point` to move
   to when `has_point`, a `StatusCode` array, the final tally and the new
   method-specific state (the base keeps the old one when not `active`).
4. Its loops stop when the tally's count reaches ``max_evaluations``; it then
   reports ``max_evaluations`` with the best sufficient-decrease point, if it
   tracks one.

Unlike the host base, bad *data* (a non-finite f(x) or φ'(0)) cannot raise
inside a compiled function: such a call evaluates nothing and returns x
unchanged with status ``non_finite``. Bad *structure* (a state, direction or
gradient that does not match `x`) raises ValueError while JAX traces.
"""

from __future__ import annotations

from typing import Any

import jax
import jax.numpy as jnp

from linestep.jax import _checks, _initial, _tree
from linestep.jax._line import INF, Line, Point, scalar_value, value_and_gradient
from linestep.jax._records import CompiledStep, Rebuildable, SearchState, StatusCode

ACCEPTED = int(StatusCode.accepted)
MAX_EVALUATIONS = int(StatusCode.max_evaluations)
NOT_DESCENT = int(StatusCode.not_descent)
NON_FINITE = int(StatusCode.non_finite)
STEP_TOO_SMALL = int(StatusCode.step_too_small)
INTERVAL_TOO_SMALL = int(StatusCode.interval_too_small)
STEP_TOO_LARGE = int(StatusCode.step_too_large)


def guarded_step(line: Line, size: Any, active: Any, usable: Any = True) -> tuple:
    """The hook's result for a rule that does not search: one evaluation at `size`.

    Nothing is evaluated when not `active`. The status is ``accepted``, or
    ``non_finite`` (no point to move to) when f is not finite there or the size
    is not `usable`.
    """
    point, tally = jax.lax.cond(active, lambda: line.evaluate(size, line.start()),
                                lambda: (line.origin(), line.start()))
    good = usable & (point.value < INF)
    status = jnp.where(good, ACCEPTED, NON_FINITE).astype(jnp.int32)
    return point, good, status, tally


class CompiledSearch(Rebuildable):
    """Base class of the compiled searches; see the module docstring for the contract.

    Subclasses are frozen dataclasses of their options (``repr=False``: the repr
    is the factory call from `_factory` and `_fields`), so that a search is
    hashable and can be a static argument of `jax.jit`.
    """

    #: Every trial evaluates ∇f (Wolfe needs φ'(t)), whatever `fused` says.
    _needs_slope = False
    #: Keep the best sufficient-decrease point for failure returns.
    _track_best = False

    # -- what a subclass provides ------------------------------------------------
    @property
    def _trial_gradients(self) -> bool:
        return self._needs_slope or getattr(self, "fused", True)

    @property
    def _c1(self) -> float:
        return getattr(self, "c1", 0.0)

    @property
    def _initial(self) -> Any:
        return _initial.resolve(getattr(self, "initial", 1.0))

    def _begin_method(self, x: Any, dtype: Any) -> Any:
        return None

    def _usable(self, line: Line) -> Any:
        """False where this search cannot use the direction (beyond φ'(0) >= 0)."""
        return jnp.ones((), bool)

    def _search(self, line: Line, first: Any, active: Any, state: SearchState) -> tuple:
        raise NotImplementedError

    # -- public protocol -----------------------------------------------------------
    def begin(self, x: Any) -> SearchState:
        """A fresh state for parameters shaped like `x` (a pytree of float arrays).

        Parameters
        ----------
        x : pytree
            The parameters, or any pytree of the same structure and dtypes.

        Returns
        -------
        SearchState
            Pass it to the first `step`, then pass each step's ``state`` on.
        """
        structure = _checks.check_parameters(x)
        dtype = _tree.scalar_dtype(x)
        nan = jnp.full((), jnp.nan, dtype)
        return SearchState(previous_size=nan, previous_value=nan,
                           calls=jnp.zeros((), jnp.int32),
                           method=self._begin_method(x, dtype), structure=structure)

    def step(self, fun: Any, x: Any, direction: Any, *, value: Any = None,
             gradient: Any = None, state: SearchState) -> CompiledStep:
        """Search along `direction` from `x`; traceable (use it inside `jax.jit`).

        Parameters
        ----------
        fun : callable
            ``fun(x) -> scalar`` written with `jax.numpy`; gradients come from
            `jax.value_and_grad`.
        x, direction : pytrees of one structure
            The point and the search direction.
        value, gradient : optional
            f(x) and ∇f(x) when known (evaluated and counted otherwise).
        state : SearchState
            From `begin` or the previous step.

        Returns
        -------
        CompiledStep
            See the search's factory for the statuses it returns.

        Raises
        ------
        ValueError
            While tracing, when `state`, `direction` or `gradient` does not match
            the structure or leaf shapes of `x`, or `value` is not a scalar.
        """
        _checks.check_function(fun)
        structure = _checks.check_state(state, SearchState, x, returned_by="step")
        _checks.check_like("direction", direction, x, structure)
        _checks.check_value(value)
        if gradient is not None:
            _checks.check_like("gradient", gradient, x, structure)
            gradient = _tree.like(gradient, x)
        direction = _tree.like(direction, x)
        value, gradient, values, gradients = self._complete_origin(fun, x, value, gradient)
        line = Line(fun, x, direction, value, gradient, fused=self._trial_gradients,
                    c1=self._c1, track_best=self._track_best)
        f0, d0 = line.value, line.slope
        finite = jnp.isfinite(f0) & jnp.isfinite(d0)
        stationary = finite & (d0 == 0) & (_tree.max_abs(gradient) == 0)
        usable = self._usable(line)
        active = finite & (d0 < 0) & usable
        first = _initial.first_trial(self._initial, state, line)
        point, has_point, status, tally, method = self._search(line, first, active, state)
        return self._finish(line, state, point, has_point, status, tally, method, active,
                            stationary, finite, values, gradients)

    # -- bookkeeping ---------------------------------------------------------------
    def _complete_origin(self, fun: Any, x: Any, value: Any,
                         gradient: Any) -> tuple[Any, Any, Any, Any]:
        """f(x) and ∇f(x), evaluating (and counting) what the caller did not give."""
        values = gradients = 0
        if value is None or gradient is None:
            if self._trial_gradients or (value is None and gradient is None):
                new_value, new_gradient = value_and_gradient(fun, x)
                values = gradients = 1
            elif value is None:
                new_value, new_gradient = scalar_value(fun, x), gradient
                values = 1
            else:
                new_value, new_gradient = value, jax.grad(lambda p: scalar_value(fun, p))(x)
                gradients = 1
            value = new_value if value is None else value
            gradient = new_gradient if gradient is None else gradient
        return (value, gradient, jnp.asarray(values, jnp.int32),
                jnp.asarray(gradients, jnp.int32))

    def _finish(self, line: Line, state: SearchState, point: Point, has_point: Any,
                status: Any, tally: Any, method: Any, active: Any, stationary: Any,
                finite: Any, values: Any, gradients: Any) -> CompiledStep:
        f0 = line.value
        accepted = status == ACCEPTED
        # A failed search never moves x to a worse or non-finite place.
        has_point = has_point & (point.value < INF) & (accepted | ~(point.value > f0))
        no_finite_seen = ~has_point & ~accepted & (tally.count > 0) & ~tally.finite_seen
        status = jnp.where(no_finite_seen, NON_FINITE, status)
        idle = jnp.where(stationary, ACCEPTED, jnp.where(finite, NOT_DESCENT, NON_FINITE))
        status = jnp.where(active, status, idle).astype(jnp.int32)
        has_point = has_point & active
        origin = line.origin()
        result = _tree.select(has_point, point, origin)
        gradient = result.gradient
        values = values + tally.count
        gradients = gradients + (tally.count if self._trial_gradients else 0)
        if not self._trial_gradients:
            # Trials evaluated values only: one gradient at the point returned.
            grad = jax.grad(lambda p: scalar_value(line.fun, p))
            gradient = jax.lax.cond(has_point, grad, lambda p: line.gradient, result.x)
            gradients = gradients + has_point.astype(jnp.int32)
        remember = active & (status == ACCEPTED)
        size = jnp.where(has_point, point.size, jnp.zeros((), line.dtype))
        new_state = SearchState(
            previous_size=jnp.where(remember, size, state.previous_size),
            previous_value=jnp.where(remember, f0, state.previous_value),
            calls=state.calls + active.astype(jnp.int32),
            method=_tree.select(active, method, state.method),
            structure=state.structure,
        )
        return CompiledStep(size=result.size, x=result.x, value=result.value,
                            gradient=gradient, status=status, values=values,
                            gradients=gradients, state=new_state)
