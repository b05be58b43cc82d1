"""Fixed rates chosen per problem from a stated rule, for studies that compare every family.

A fixed rate has no sensible default across problems: 0.01 diverges on one and
crawls on the next. The default study therefore sets it per problem with the
rule of the textbook analysis of gradient descent on an L-smooth function:

    rate = 1 / L̂,

where L̂ estimates the largest curvature |λ_max(∇²f)| at the problem's standard
start with `linestep.estimate_smoothness` (Lanczos on finite-difference
Hessian–vector products; at most a few dozen gradient evaluations per problem,
spent while the study is built and not counted in any run). Runs from other starts reuse
the standard start's rate (the rule is stated per problem, not per start).

On a non-quadratic problem the curvature along the way can exceed L̂, so
``Fixed(1/L)`` may still diverge there: the study shows it, and
``Fallback(Fixed(1/L), Armijo())`` shows the safety net recovering.

Examples
--------
>>> from linestep.bench import get_problem
>>> from linestep.bench.rates import fixed_at_smoothness, lipschitz_at_start
>>> # ∇²f(−1.2, 1) = [[1330, 480], [480, 200]]: λ_max = 1506.37 (numpy's eigvalsh)
>>> round(lipschitz_at_start(get_problem("rosenbrock")), 1)
1506.4
>>> fixed_at_smoothness().build(get_problem("rosenbrock"))  # doctest: +ELLIPSIS
Fixed(size=0.000663...)
"""

from __future__ import annotations

import functools
import math
import zlib
from typing import Any

import numpy as np

from linestep.bench import _identity
from linestep.bench._study import PerProblem
from linestep.bench.problems import SOLVE_RTOL, Problem

__all__ = ["fallback_at_smoothness", "fixed_at_smoothness", "lipschitz_at_start"]

# Estimates already made in this process, by the problem's content fingerprint (name,
# dimension, start bytes, f and ∇f there, optima): an edited objective of the same name
# gets a new estimate, never a stale one.
_CACHE: dict[str, float | None] = {}


def lipschitz_at_start(problem: Problem) -> float | None:
    """L̂ = |λ_max(∇²f(x_s))| at the standard start x_s, by `estimate_smoothness`.

    None when a gradient along the way is not finite or the curvature is zero
    (no fixed rate follows from the rule then).
    """
    x = np.array(problem.start, dtype=float).reshape(-1)
    key = _identity.digest_description(
        _identity.fingerprint_problem(problem, x, solve_rtol=SOLVE_RTOL))
    if key not in _CACHE:
        _CACHE[key] = _estimate(problem, x)
    return _CACHE[key]


def _estimate(problem: Problem, x: np.ndarray) -> float | None:
    from linestep.advice._smoothness import estimate_smoothness

    with np.errstate(all="ignore"):
        found = estimate_smoothness((problem.value, problem.gradient), x,
                                    seed=zlib.crc32(problem.name.encode("utf-8")))
    lipschitz = found.lipschitz
    return lipschitz if lipschitz is not None and math.isfinite(lipschitz) and lipschitz > 0 \
        else None


def _fixed(problem: Problem, *, fallback: bool) -> Any:
    from linestep.rules.fallback import Fallback
    from linestep.rules.fixed import Fixed
    from linestep.searches.armijo import Armijo

    lipschitz = lipschitz_at_start(problem)
    if lipschitz is None:
        return None
    rule = Fixed(1.0 / lipschitz)
    return Fallback(rule, Armijo()) if fallback else rule


def fixed_at_smoothness() -> PerProblem:
    """``Fixed(1/L̂)`` with L̂ estimated per problem (see the module docstring)."""
    return PerProblem("Fixed(1/L)", functools.partial(_fixed, fallback=False))


def fallback_at_smoothness() -> PerProblem:
    """``Fallback(Fixed(1/L̂), Armijo())``: the same rate with backtracking as a safety net."""
    return PerProblem("Fallback(Fixed(1/L), Armijo())", functools.partial(_fixed, fallback=True))
