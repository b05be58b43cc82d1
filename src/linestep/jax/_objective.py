"""`objective`: a host `Objective` whose gradient JAX derives by automatic differentiation."""

from __future__ import annotations

from typing import Any

import jax
import numpy as np

from linestep import _validate
from linestep._objective import Objective
from linestep.jax._checks import check_function


def objective(fun: Any, *, fused: bool = True) -> Objective:
    """Wrap a JAX function f(x) as a counting `linestep.Objective`, with ∇f by autodiff.

    For the host path (the controllers called from a Python loop, and
    `linestep.descend`). The callables are compiled once with `jax.jit` (and
    again only for new shapes or dtypes of x). The gradient comes back in the
    array library of `x`: a numpy `x` gets a numpy gradient of its dtype, a JAX
    `x` a JAX array.

    Parameters
    ----------
    fun : callable
        ``fun(x) -> scalar``, written with `jax.numpy`.
    fused : bool
        True: one ``jax.jit(jax.value_and_grad(fun))`` call gives f and ∇f and
        counts as one value and one gradient (best for searches that need the
        slope at every trial, such as Wolfe). False: ``jax.jit(fun)`` and
        ``jax.jit(jax.grad(fun))`` separately (best for value-only backtracking
        such as Armijo, where most trials need no gradient).

    Returns
    -------
    Objective

    Examples
    --------
    >>> import jax.numpy as jnp
    >>> import linestep
    >>> from linestep.jax import objective
    >>> f = objective(lambda x: jnp.sum((x - 1.0) ** 2))
    >>> step = linestep.Armijo()(f, jnp.zeros(3), jnp.ones(3))
    >>> step.status, step.size, [float(v) for v in step.x]
    (Status.accepted, 1.0, [1.0, 1.0, 1.0])
    >>> step.evaluations
    Evaluations(values=2, gradients=2)
    """
    check_function(fun)
    if _validate.flag("fused", fused):
        both = jax.jit(jax.value_and_grad(fun))

        def value_and_gradient(x: Any) -> tuple[Any, Any]:
            value, gradient = both(x)
            return value, _like(x, gradient)

        value_and_gradient.__name__ = f"value_and_grad({_name(fun)})"
        return Objective(value_and_gradient, fused=True)
    value = jax.jit(fun)
    grad = jax.jit(jax.grad(fun))

    def gradient(x: Any) -> Any:
        return _like(x, grad(x))

    gradient.__name__ = f"grad({_name(fun)})"
    return Objective(value, gradient)


def _like(x: Any, gradient: Any) -> Any:
    """The gradient in x's array library (numpy x: a numpy array of x's dtype)."""
    if isinstance(x, np.ndarray):
        return np.asarray(gradient, dtype=x.dtype)
    return gradient


def _name(fun: Any) -> str:
    return getattr(fun, "__name__", type(fun).__name__)
