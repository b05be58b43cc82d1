"""`descend` compiled end to end: direction, search and stopping test in one `lax.while_loop`."""

from __future__ import annotations

from typing import Any

import jax
import jax.numpy as jnp

from linestep import _validate
from linestep.jax import _tree
from linestep.jax._armijo import armijo
from linestep.jax._checks import check_function, check_parameters
from linestep.jax._directions import LBFGSDirection, SteepestDirection, steepest_descent
from linestep.jax._line import value_and_gradient
from linestep.jax._records import CompiledRun, Reason
from linestep.jax._search import ACCEPTED, CompiledSearch
from linestep.stopping import DEFAULT_GRADIENT_ATOL, DEFAULT_GRADIENT_RTOL, DEFAULT_MAX_ITERATIONS
from linestep.stopping._base import _relative

_RUNNING = -1


def descend(fun: Any, x0: Any, *, search: Any = None, direction: Any = None,
            max_iterations: int = DEFAULT_MAX_ITERATIONS,
            gradient_atol: float = DEFAULT_GRADIENT_ATOL,
            gradient_rtol: float = DEFAULT_GRADIENT_RTOL) -> CompiledRun:
    """Minimise f from `x0` in one compiled loop: the compiled twin of `linestep.descend`.

    Each iteration asks `direction` for d, asks `search` for a step along it and
    tests the gradient, all inside one `lax.while_loop`, so the whole run is one
    XLA computation. It can itself be used inside `jax.jit` and `jax.vmap` (for
    a batch of starting points). Called directly, it compiles once per
    function, options and parameter shapes, and reuses the compiled loop.

    The run stops when ‖∇f‖∞ <= max(`gradient_atol`, `gradient_rtol`·‖∇f(x0)‖∞)
    (the host `stopping.GradientNorm` test), after `max_iterations` iterations,
    or when the search cannot move. As the host loop, a direction other than
    steepest descent gets one retry along −∇f (with its memory cleared) when
    the search fails to move.

    Parameters
    ----------
    fun : callable
        ``fun(x) -> scalar`` written with `jax.numpy`. Hashable (functions are);
        use the same function object between calls to reuse the compiled loop.
    x0 : pytree of floating arrays
        The start; its structure and dtypes are kept (float32 stays float32).
    search : compiled search, optional
        Default: ``armijo()``, as the host `descend`.
    direction : compiled direction, optional
        Default: ``steepest_descent()``; or ``lbfgs(...)``.
    max_iterations : int
        Iteration budget, >= 0.
    gradient_atol, gradient_rtol : float
        Tolerances of the gradient test (`gradient_rtol` = 0 switches the relative
        test off).

    Returns
    -------
    CompiledRun
        `reason` is a `Reason` code: ``gradient_norm`` or ``stationary``
        (converged), ``max_iterations`` (budget), ``search_failed`` (the search
        could not move from x, even along −∇f; x is the last point reached) or
        ``non_finite_start`` (f or ∇f not finite at x0, which the host raises for;
        nothing is iterated). ``run.verdict()`` turns it into the host
        `stopping.Verdict` outside `jax.jit`.

    Examples
    --------
    >>> import jax.numpy as jnp
    >>> import linestep.jax as lj
    >>> f = lambda p: (p["a"] - 1.0) ** 2 + 10.0 * (p["b"] + 2.0) ** 2
    >>> run = lj.descend(f, {"a": jnp.array(0.0), "b": jnp.array(0.0)},
    ...                  search=lj.wolfe(), direction=lj.lbfgs())
    >>> lj.Reason(int(run.reason)).name, round(float(run.x["a"]), 4), round(float(run.x["b"]), 4)
    ('gradient_norm', 1.0, -2.0)
    """
    search = armijo() if search is None else search
    direction = steepest_descent() if direction is None else direction
    check_function(fun)
    if not isinstance(search, CompiledSearch):
        raise TypeError(
            "`search` must be a compiled search from linestep.jax, such as "
            f"linestep.jax.armijo() or linestep.jax.wolfe(); got {search!r}."
        )
    if not isinstance(direction, (SteepestDirection, LBFGSDirection)):
        raise TypeError(
            "`direction` must be linestep.jax.steepest_descent() or linestep.jax.lbfgs(); "
            f"got {direction!r}."
        )
    max_iterations = _validate.integer("max_iterations", max_iterations, minimum=0)
    atol = _validate.nonnegative("gradient_atol", gradient_atol)
    rtol = _relative("gradient_rtol", gradient_rtol)  # as GradientNorm's rtol
    check_parameters(x0)
    try:
        hash((fun, search, direction))
    except TypeError:
        return _loop(fun, search, direction, x0, max_iterations, atol, rtol)
    return _compiled_loop(fun, search, direction, x0, max_iterations, atol, rtol)


def _loop(fun: Any, search: CompiledSearch, direction: Any, x0: Any, max_iterations: Any,
          atol: Any, rtol: Any) -> CompiledRun:
    x0 = _tree.tree_map(jnp.asarray, x0)
    dtype = _tree.scalar_dtype(x0)
    value, gradient = value_and_gradient(fun, x0)
    value = jnp.asarray(value, dtype)
    start_norm = _tree.max_abs(gradient)
    relative = jnp.where(jnp.isfinite(start_norm), rtol * start_norm, 0.0)
    tolerance = jnp.maximum(atol, relative)
    finite = jnp.isfinite(value) & _tree.all_finite(gradient) & _tree.all_finite(x0)
    reason = jnp.select(
        [~finite, start_norm <= tolerance, max_iterations <= 0],
        [int(Reason.non_finite_start), int(Reason.gradient_norm), int(Reason.max_iterations)],
        _RUNNING,
    ).astype(jnp.int32)
    retries = not isinstance(direction, SteepestDirection)
    one = jnp.ones((), jnp.int32)

    def keep_going(carry: tuple) -> Any:
        return carry[8] == _RUNNING

    def iterate(carry: tuple) -> tuple:
        x, value, gradient, search_state, direction_state, iteration, values, gradients, \
            _, retry, _ = carry
        proposal = direction.propose(x, gradient, direction_state)
        d = _tree.select(retry, _tree.negative(gradient), proposal.direction)
        direction_state = direction.reset(proposal.state, when=retry)
        out = search.step(fun, x, d, value=value, gradient=gradient, state=search_state)
        moved = out.size > 0
        # The host loop retries once along −∇f, with the direction's memory cleared.
        again = ~moved & ~out.ok & ~retry if retries else jnp.zeros((), bool)
        direction_state = direction.reset(direction_state, when=again)
        iteration = iteration + jnp.where(again, 0, 1).astype(jnp.int32)
        norm = _tree.max_abs(out.gradient)
        reason = jnp.select(
            [again, norm <= tolerance, iteration >= max_iterations, ~moved & out.ok, ~moved],
            [_RUNNING, int(Reason.gradient_norm), int(Reason.max_iterations),
             int(Reason.stationary), int(Reason.search_failed)],
            _RUNNING,
        ).astype(jnp.int32)
        return (out.x, out.value, out.gradient, out.state, direction_state, iteration,
                values + out.values, gradients + out.gradients, reason, again, out.status)

    start = (x0, value, gradient, search.begin(x0), direction.begin(x0),
             jnp.zeros((), jnp.int32), one, one, reason, jnp.zeros((), bool),
             jnp.asarray(ACCEPTED, jnp.int32))
    x, value, gradient, _, _, iterations, values, gradients, reason, _, status = \
        jax.lax.while_loop(keep_going, iterate, start)
    return CompiledRun(x=x, value=value, gradient=gradient, iterations=iterations,
                       values=values, gradients=gradients, reason=reason, status=status)


_compiled_loop = jax.jit(_loop, static_argnums=(0, 1, 2))

