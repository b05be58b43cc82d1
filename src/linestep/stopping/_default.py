"""`default()`: the combination of stopping rules suited to most runs."""

from __future__ import annotations

from linestep.stopping._base import (
    DEFAULT_BOUND,
    DEFAULT_GRADIENT_ATOL,
    DEFAULT_GRADIENT_RTOL,
    DEFAULT_GROWTH,
    DEFAULT_MAX_ITERATIONS,
    DEFAULT_STALL_ITERATIONS,
    DEFAULT_VALUE_RTOL,
    DEFAULT_VALUE_WINDOW,
    AnyOf,
    Criterion,
)
from linestep.stopping._budgets import MaxEvaluations, MaxIterations, TimeLimit
from linestep.stopping._convergence import GradientNorm, ValueChange
from linestep.stopping._failures import Divergence, Stall

# ------------------------------------------------------------------------ default


def default(
    *,
    gradient_atol: float = DEFAULT_GRADIENT_ATOL,
    gradient_rtol: float = DEFAULT_GRADIENT_RTOL,
    value_rtol: float = DEFAULT_VALUE_RTOL,
    value_window: int = DEFAULT_VALUE_WINDOW,
    max_iterations: int = DEFAULT_MAX_ITERATIONS,
    max_evaluations: int | None = None,
    seconds: float | None = None,
    stall_iterations: int = DEFAULT_STALL_ITERATIONS,
    bound: float = DEFAULT_BOUND,
    growth: float | None = DEFAULT_GROWTH,
) -> AnyOf:
    """A fresh combination of stopping rules suited to most runs.

    In order of precedence::

        Divergence(bound=1e100, growth=1e8)
        | GradientNorm(atol=1e-06, rtol=1e-08, norm=inf)
        | ValueChange(atol=0.0, rtol=1e-12, window=5)
        | MaxIterations(10000)
        [| MaxEvaluations(max_evaluations)] [| TimeLimit(seconds)]
        | Stall(iterations=100, rtol=0.0)

    Divergence comes first, so a blown-up run ends as failed with a reason
    even when another rule would also fire; convergence comes before budgets,
    so a run that converges on its last allowed iteration says so.

    Parameters
    ----------
    gradient_atol, gradient_rtol : float
        `GradientNorm` tolerances.
    value_rtol : float
        `ValueChange` relative tolerance; its `atol` is 0.
    value_window : int
        `ValueChange` window.
    max_iterations : int
        `MaxIterations` budget.
    max_evaluations : int or None
        Adds `MaxEvaluations` when given.
    seconds : float or None
        Adds `TimeLimit` when given.
    stall_iterations : int
        `Stall` patience.
    bound : float
        `Divergence` bound on ``|f|``.
    growth : float or None
        `Divergence` growth limit: a value above f0 + growth·max(1, |f0|) fails the
        run, so a fixed rate that is too large stops within a few iterations of
        blowing up (None switches it off).

    Returns
    -------
    AnyOf
        New criterion objects on every call; none is shared between runs.
    """
    criteria: list[Criterion] = [
        Divergence(bound=bound, growth=growth),
        GradientNorm(atol=gradient_atol, rtol=gradient_rtol),
        ValueChange(atol=0.0, rtol=value_rtol, window=value_window),
        MaxIterations(max_iterations),
    ]
    if max_evaluations is not None:
        criteria.append(MaxEvaluations(max_evaluations))
    if seconds is not None:
        criteria.append(TimeLimit(seconds))
    criteria.append(Stall(iterations=stall_iterations))
    return AnyOf(*criteria)
