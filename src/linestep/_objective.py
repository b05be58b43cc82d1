"""`Objective`: the user's callables behind one counting interface."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from linestep import _validate
from linestep._step import Evaluations

__all__ = ["Objective", "as_objective"]


class Objective:
    """Wrap a function (and its gradient) so that evaluations are counted.

    Parameters
    ----------
    fun : callable
        ``fun(x) -> float``; with ``fused=True``, ``fun(x) -> (value, gradient)``.
    grad : callable, optional
        ``grad(x) -> array`` of x's shape. Leave out with ``fused=True``, or when only
        value-based rules will be used.
    fused : bool, keyword-only
        `fun` returns the value and the gradient together; one such call counts as
        one value and one gradient evaluation.

    Attributes
    ----------
    values, gradients : int
        Evaluations so far. Exceptions raised by the user's callables propagate
        unchanged; the count includes the call that raised.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import Objective
    >>> objective = Objective(lambda x: float(x @ x), lambda x: 2 * x)
    >>> objective.value(np.array([1.0, 2.0]))
    5.0
    >>> objective.evaluations
    Evaluations(values=1, gradients=0)
    """

    __slots__ = ("_fun", "_grad", "fused", "values", "gradients")

    def __init__(self, fun: Callable[..., Any], grad: Callable[..., Any] | None = None, *,
                 fused: bool = False) -> None:
        if not callable(fun):
            raise TypeError(f"`fun` must be callable; got {fun!r}.")
        if grad is not None and not callable(grad):
            raise TypeError(f"`grad` must be callable or None; got {grad!r}.")
        if not isinstance(fused, (bool, np.bool_)):
            raise TypeError(f"`fused` must be True or False; got {fused!r}.")
        if fused and grad is not None:
            raise ValueError(
                "`grad` must be None when `fused=True`: the fused `fun` already returns "
                "(value, gradient)."
            )
        self._fun = fun
        self._grad = grad
        self.fused = bool(fused)
        self.values = 0
        self.gradients = 0

    def __repr__(self) -> str:
        if self.fused:
            return f"Objective({self._fun!r}, fused=True)"
        return f"Objective({self._fun!r}, {self._grad!r})"

    @property
    def has_gradient(self) -> bool:
        """True when a gradient can be evaluated."""
        return self.fused or self._grad is not None

    @property
    def evaluations(self) -> Evaluations:
        """Evaluations so far, as an `Evaluations` record."""
        return Evaluations(values=self.values, gradients=self.gradients)

    def value(self, x: Any) -> float:
        """f(x) as a float (a fused objective also computes, and discards, ∇f)."""
        if self.fused:
            return self.value_and_gradient(x)[0]
        self.values += 1
        value = self._fun(x)
        return value if value.__class__ is float else _value(value, self._fun)

    def gradient(self, x: Any) -> Any:
        """∇f(x)."""
        if self.fused:
            return self.value_and_gradient(x)[1]
        if self._grad is None:
            raise TypeError(_NO_GRADIENT)
        self.gradients += 1
        return self._grad(x)

    def value_and_gradient(self, x: Any) -> tuple[float, Any]:
        """(f(x), ∇f(x)) in one call when fused, else two calls."""
        if self.fused:
            self.values += 1
            self.gradients += 1
            pair = self._fun(x)
            if pair.__class__ is not tuple or len(pair) != 2:
                pair = _pair(pair, self._fun)
            value, gradient = pair
            return (value if value.__class__ is float else _value(value, self._fun)), gradient
        if self._grad is None:
            raise TypeError(_NO_GRADIENT)
        self.values += 1
        value = self._fun(x)
        if value.__class__ is not float:
            value = _value(value, self._fun)
        self.gradients += 1
        return value, self._grad(x)


_NO_GRADIENT = (
    "This controller needs gradients but the objective has none. Pass "
    "`(fun, grad)`, `Objective(fun, grad)`, or `Objective(fun_and_grad, fused=True)`; "
    "for a function written with jax.numpy, `linestep.jax.objective(fun)` derives the "
    "gradient by autodiff."
)


def _name(fun: Any) -> str:
    return getattr(fun, "__name__", None) or repr(fun)


def _value(value: Any, fun: Any) -> float:
    """The objective's value as a float, or a clear error naming the callable."""
    return _validate.real_scalar(
        f"The objective `{_name(fun)}` returned a value that", value,
        "return f(x) as a Python float, e.g. `float(loss)` for a one-entry array "
        "(complex values and strings are never converted)")


def _pair(result: Any, fun: Any) -> tuple[Any, Any]:
    """A fused objective's (value, gradient), or a clear error naming the callable."""
    if isinstance(result, (tuple, list)) and len(result) == 2:
        return result[0], result[1]
    got = (f"a {type(result).__name__} of length {len(result)}"
           if isinstance(result, (tuple, list)) else f"{result!r} ({type(result).__name__})")
    raise TypeError(
        f"The fused objective `{_name(fun)}` must return a pair (value, gradient); got "
        f"{got}. Return both, or pass the gradient separately: `Objective(fun, grad)`.")


def as_objective(objective: Any) -> Objective:
    """Accept an `Objective`, a bare callable, or a ``(fun, grad)`` pair."""
    if isinstance(objective, Objective):
        return objective
    if isinstance(objective, tuple) and len(objective) == 2:
        return Objective(objective[0], objective[1])
    if callable(objective):
        return Objective(objective)
    raise TypeError(
        "`objective` must be an Objective, a callable f(x), or a (fun, grad) pair; "
        f"got {objective!r}."
    )
