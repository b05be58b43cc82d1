"""Compiled rules that take a step without searching: fixed and scheduled sizes.

As the host `Fixed` and `Schedule`, the new point is evaluated once as a guard:
a non-finite value leaves x unchanged with status ``non_finite``; an increase
in f is accepted (that is what a fixed rate does).

References
----------
I. Loshchilov and F. Hutter, "SGDR: Stochastic gradient descent with warm
restarts", ICLR 2017 (cosine annealing); constant, decaying and warm-up rates
are common practice.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import jax.numpy as jnp

from linestep import _validate
from linestep.jax._line import Line
from linestep.jax._search import CompiledSearch, guarded_step
from linestep.rules.fixed import Fixed


@dataclass(frozen=True, eq=True, repr=False)
class ScheduledSearch(CompiledSearch):
    """A step size from a traceable function of the call counter k (constant for `fixed`).

    k is the state's `calls`: the calls that reached the rule.
    """

    function: Any
    label: str  # the factory that built it: "fixed" or "schedule"
    fused: bool = True

    # The repr is the factory call (`linestep._rebuild`), e.g. ``fixed(0.5, fused=True)``.
    def _constructor(self) -> str:
        return self.label

    def _arguments(self) -> list[tuple[str | None, Any]]:
        function = self.function
        argument = function.size if isinstance(function, _Constant) else function
        return [(None, argument), ("fused", self.fused)]

    def _search(self, line: Line, first: Any, active: Any, state: Any) -> tuple:
        size = jnp.asarray(self.function(state.calls), line.dtype)
        if jnp.shape(size) != ():
            raise TypeError(
                f"The schedule must return a scalar size for the counter k; got shape "
                f"{jnp.shape(size)}."
            )
        usable = jnp.isfinite(size) & (size > 0)
        return *guarded_step(line, size, active, usable), state.method


def fixed(size: float, *, fused: bool = True) -> ScheduledSearch:
    """Compiled constant step x + size·d, guarded against non-finite values.

    The compiled twin of `linestep.Fixed`.

    Parameters
    ----------
    size : float
        The step length, > 0.
    fused : bool
        Evaluate f and ∇f at the new point in one pass (True), or f first and ∇f
        only when the point is kept (False). A fused guard also reads a
        non-finite gradient as a non-finite value.

    Returns
    -------
    ScheduledSearch
        ``accepted``: `x` = x + size·d (f may have risen). ``non_finite``: f was not
        finite there; `x` unchanged, size 0. ``not_descent``: φ'(0) >= 0; nothing
        evaluated.

    Examples
    --------
    >>> import jax.numpy as jnp
    >>> import linestep.jax as lj
    >>> rule = lj.fixed(0.25)
    >>> x = jnp.array([2.0])
    >>> out = rule.step(lambda x: jnp.sum(x * x), x, jnp.array([-4.0]), state=rule.begin(x))
    >>> float(out.x[0]), float(out.value)
    (1.0, 1.0)
    """
    size = Fixed(size).size
    return ScheduledSearch(function=_Constant(size), label="fixed",
                           fused=_validate.flag("fused", fused))


def schedule(function: Any, *, fused: bool = True) -> ScheduledSearch:
    """Compiled step size from the call counter: x + function(k)·d, k = 0, 1, 2, ...

    The compiled twin of `linestep.Schedule` built from a callable. `function`
    receives k as a traced int32 array, so write it with `jax.numpy`
    (``lambda k: 0.1 * 0.9 ** k``, ``lambda k: 0.5 * (1 + jnp.cos(jnp.pi * k / 100))``).
    k counts the calls that reach the rule (not those answered ``not_descent``)
    and lives in the `SearchState`.

    Parameters
    ----------
    function : callable
        k -> size, traceable. A size that is not finite and positive (which the
        host would raise for) leaves x unchanged with status ``non_finite``: a
        compiled function cannot raise on data.
    fused : bool
        As for `fixed`.

    Returns
    -------
    ScheduledSearch
        Statuses as for `fixed`.

    Examples
    --------
    >>> import jax.numpy as jnp
    >>> import linestep.jax as lj
    >>> rule = lj.schedule(lambda k: 0.5 * 0.5 ** k)
    >>> f = lambda x: jnp.sum(x * x)
    >>> x = jnp.array([1.0]); state = rule.begin(x)
    >>> for _ in range(3):
    ...     out = rule.step(f, x, -x, state=state)
    ...     x, state = out.x, out.state
    ...     print(float(out.size), float(x[0]))
    0.5 0.5
    0.25 0.375
    0.125 0.328125
    """
    if not callable(function):
        raise TypeError(
            "`function` must be a traceable callable k -> size, such as "
            f"`lambda k: 0.1 * 0.9 ** k`; got {function!r}."
        )
    return ScheduledSearch(function=function, label="schedule",
                           fused=_validate.flag("fused", fused))


@dataclass(frozen=True)
class _Constant:
    size: float

    def __call__(self, k: Any) -> float:
        return self.size
