"""`default()`: the combination of stopping rules suited to most runs."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

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
    gradient_atol: float | None = None,
    gradient_rtol: float | None = None,
    value_rtol: float | None = None,
    value_window: int = DEFAULT_VALUE_WINDOW,
    max_iterations: int = DEFAULT_MAX_ITERATIONS,
    max_evaluations: int | None = None,
    seconds: float | None = None,
    stall_iterations: int = DEFAULT_STALL_ITERATIONS,
    bound: float = DEFAULT_BOUND,
    growth: float | None = DEFAULT_GROWTH,
    dtype: Any = None,
) -> AnyOf:
    """A fresh combination of stopping rules suited to most runs.

    In order of precedence::

        Divergence(bound=1e100, growth=1e8)
        | GradientNorm(atol=1e-06, rtol=0.0, norm=inf)
        | ValueChange(atol=0.0, rtol=1e-12, window=5)
        | MaxIterations(10000)
        [| MaxEvaluations(max_evaluations)] [| TimeLimit(seconds)]
        | Stall(iterations=100, rtol=0.0)

    Divergence comes first, so a blown-up run ends as failed with a reason
    even when another rule would also fire; convergence comes before budgets,
    so a run that converges on its last allowed iteration says so.

    The tolerances left out follow the precision of `dtype` (docs/stopping.md,
    "Precision"): the numbers above are float64's; for float32 they are
    ``GradientNorm(atol=1e-06, rtol=0.000232)`` and ``ValueChange(rtol=9.54e-07)``,
    so a float32 run can meet them. `descend` passes the dtype of ``x0``.

    In float64 the gradient test is absolute only: a test relative to the start
    gradient, ‖g_k‖ ≤ rtol·‖g_0‖, declares convergence far from any minimum when
    the start lies on a steep slope (a start gradient of 1e13 makes 1e-8 of it
    1e5). A run whose gradient cannot reach `gradient_atol` because of rounding
    still ends as converged, through the value test or, for a search, the
    working-precision verdict of `descend`.

    Parameters
    ----------
    gradient_atol, gradient_rtol : float, optional
        `GradientNorm` tolerances (default 1e-6 and 0, no relative test, for float64).
    value_rtol : float, optional
        `ValueChange` relative tolerance (default 1e-12 for float64); its `atol` is 0.
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
    dtype : dtype, optional
        The floating dtype of x, for the default tolerances; None means float64.

    Returns
    -------
    AnyOf
        New criterion objects on every call; none is shared between runs.
    """
    atol, rtol, value_default = _tolerances(dtype)
    gradient_atol = atol if gradient_atol is None else gradient_atol
    gradient_rtol = rtol if gradient_rtol is None else gradient_rtol
    value_rtol = value_default if value_rtol is None else value_rtol
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


def _tolerances(dtype: Any = None) -> tuple[float, float, float]:
    """Default (gradient atol, gradient rtol, value rtol) for x of `dtype`.

    float64 gets (1e-6, 0, 1e-12): no relative gradient test (see `default`). A
    dtype with a larger machine epsilon ε gets a relative gradient test of
    1e-8·√r, r = ε/ε₆₄ (the gradient that rounding in f lets a search resolve grows
    like the square root of f's rounding level, which soon exceeds the absolute
    1e-6), and a value tolerance of max(1e-12, 8·ε), 8 roundings of f. float32:
    r = 2**29, so (1e-6, 0.000232, 9.54e-07). The absolute gradient tolerance is not scaled: it
    depends on the problem's units, not on the dtype, and a run that cannot reach it
    ends "converged at working precision" (see `descend`). None, or a dtype numpy
    cannot describe, is float64.
    """
    epsilon = _epsilon(dtype)
    if epsilon <= _EPSILON64:
        return DEFAULT_GRADIENT_ATOL, 0.0, DEFAULT_VALUE_RTOL
    root = math.sqrt(epsilon / _EPSILON64)
    return (DEFAULT_GRADIENT_ATOL, min(DEFAULT_GRADIENT_RTOL * root, _RTOL_CAP),
            min(max(DEFAULT_VALUE_RTOL, VALUE_ROUNDINGS * epsilon), _RTOL_CAP))


def _epsilon(dtype: Any) -> float:
    if dtype is None:
        return _EPSILON64
    try:
        return float(np.finfo(dtype).eps)
    except (TypeError, ValueError):  # not a floating dtype numpy knows
        return _EPSILON64


_EPSILON64 = float(np.finfo(np.float64).eps)
# Value changes below this many roundings of f are noise (the float32 value test).
VALUE_ROUNDINGS = 8
# Relative tolerances must stay below 1 (a float16 run gets at most this).
_RTOL_CAP = 0.1
