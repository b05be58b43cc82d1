"""Performance profiles, data profiles and the robustness score (pure numpy).

Vocabulary: a *problem* p is one problem instance (problem, dimension, start,
seed); a *solver* s is one controller with one direction. ``costs[p, s]`` is
the cost t_{p,s} of solver s on problem p (evaluations, say), ``inf`` when s
failed on p.

Performance profile (Dolan and Moré 2002). With the performance ratio
r_{p,s} = t_{p,s} / min_s t_{p,s} (``inf`` when s failed on p), the profile of
solver s is ρ_s(τ) = |{p : r_{p,s} <= τ}| / |P|: the fraction of problems that
s solves within a factor τ of the best solver. ρ_s(1) is the fraction on which
s is (one of) the cheapest; ρ_s(τ) for large τ is the fraction s solves at all.

Data profile (Moré and Wild 2009). With t_{p,s} the cost at which s first
passes the convergence test

    f(x_0) − f(x) >= (1 − τ) · (f(x_0) − f_L),

where f_L is the smallest value any solver reached on p, the profile is
d_s(κ) = |{p : t_{p,s} / (n_p + 1) <= κ}| / |P|, n_p the dimension of p:
the fraction of problems solved within κ "simplex gradients" of cost.

Robustness score (ours). The area under ρ_s on a log₂ τ axis from τ = 1 to
τ = 2^U, divided by U (``log2_tau_max``, default 10):

    score_s = (1/U) ∫_0^U ρ_s(2^u) du = (1/|P|) Σ_p max(0, 1 − log₂ r_{p,s} / U).

It is 1 for a solver that is cheapest on every problem and 0 for one that solves
nothing within 2^U times the best cost; a problem solved 2^k times slower than
the best adds (1 − k/U)/|P|. It rewards solving many problems first and being
fast second.

References
----------
E. D. Dolan and J. J. Moré, "Benchmarking optimization software with performance
profiles", Math. Program. 91:201–213, 2002.
J. J. Moré and S. M. Wild, "Benchmarking derivative-free optimization
algorithms", SIAM J. Optim. 20(1):172–191, 2009.

Examples
--------
>>> import numpy as np
>>> from linestep.bench.profiles import performance_profile
>>> costs = np.array([[10.0, 20.0], [30.0, 15.0], [5.0, np.inf]])
>>> performance_profile(costs, [1.0, 2.0, 4.0])
array([[0.66666667, 0.33333333],
       [1.        , 0.66666667],
       [1.        , 0.66666667]])
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from linestep import _validate

__all__ = [
    "DEFAULT_LOG2_TAU_MAX",
    "data_profile",
    "first_success",
    "performance_profile",
    "performance_ratios",
    "robustness_score",
]

# The robustness score integrates the performance profile up to τ = 2**10 = 1024.
DEFAULT_LOG2_TAU_MAX = 10.0


def _costs(costs: Sequence | np.ndarray) -> np.ndarray:
    array = np.array(costs, dtype=float)
    if array.ndim != 2:
        raise ValueError(
            f"`costs` must be a 2-D array (problems × solvers); got shape {array.shape}."
        )
    if np.isnan(array).any():
        raise ValueError("`costs` must not contain NaN; write inf for a failed run.")
    if (array <= 0).any():
        raise ValueError(
            f"`costs` must be positive (or inf for a failure); got {array[array <= 0][0]!r}."
        )
    return array


def performance_ratios(costs: Sequence | np.ndarray) -> np.ndarray:
    """r_{p,s} = t_{p,s} / min_s t_{p,s}; inf where s failed or every solver failed on p.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep.bench.profiles import performance_ratios
    >>> performance_ratios([[10.0, 20.0], [np.inf, np.inf]])
    array([[ 1.,  2.],
           [inf, inf]])
    """
    array = _costs(costs)
    best = array.min(axis=1, keepdims=True, initial=np.inf)  # inf also with no solvers
    with np.errstate(invalid="ignore"):
        ratios = array / best
    ratios[~np.isfinite(array)] = np.inf
    return ratios


def performance_profile(costs: Sequence | np.ndarray, taus: Sequence[float] | np.ndarray
                        ) -> np.ndarray:
    """ρ_s(τ) for each τ in `taus` (rows) and each solver (columns)."""
    ratios = performance_ratios(costs)
    taus = np.asarray(taus, dtype=float).reshape(-1, 1, 1)
    if ratios.shape[0] == 0:
        return np.zeros((taus.shape[0], ratios.shape[1]))
    return (ratios[np.newaxis] <= taus).mean(axis=1)


def robustness_score(costs: Sequence | np.ndarray, *,
                     log2_tau_max: float = DEFAULT_LOG2_TAU_MAX) -> np.ndarray:
    """The area under each solver's performance profile on log₂ τ ∈ [0, U], over U.

    See the module docstring for the definition; computed exactly, not by
    sampling τ.

    Examples
    --------
    >>> from linestep.bench.profiles import robustness_score
    >>> robustness_score([[1.0, 4.0], [2.0, 2.0]], log2_tau_max=4)  # ratios [1, 4], [1, 1]
    array([1.  , 0.75])
    """
    log2_tau_max = _validate.positive("log2_tau_max", log2_tau_max)
    ratios = performance_ratios(costs)
    if ratios.shape[0] == 0:
        return np.zeros(ratios.shape[1])
    with np.errstate(divide="ignore"):
        credit = np.clip(1.0 - np.log2(ratios) / log2_tau_max, 0.0, 1.0)
    return credit.mean(axis=0)


def first_success(costs: Sequence | np.ndarray, values: Sequence | np.ndarray, *,
                  f_low: float, tolerance: float) -> float:
    """The first cost at which Moré and Wild's convergence test holds; inf if never.

    Parameters
    ----------
    costs : array of float
        Cumulative cost after each iteration (entry 0: the start point).
    values : array of float
        f after each iteration; ``values[0]`` is f(x_0).
    f_low : float
        f_L, the smallest value reached on this problem by any solver.
    tolerance : float
        τ of the test f(x_0) − f(x) >= (1 − τ)(f(x_0) − f_L), in (0, 1).

    Examples
    --------
    >>> from linestep.bench.profiles import first_success
    >>> # f0 = 10, f_L = 0, τ = 0.1: the test needs f <= 1; it first holds at cost 7
    >>> first_success([1, 4, 7, 9], [10.0, 3.0, 0.5, 0.0], f_low=0.0, tolerance=0.1)
    7.0
    """
    tolerance = _validate.open_unit("tolerance", tolerance)
    costs = np.asarray(costs, dtype=float)
    values = np.asarray(values, dtype=float)
    if costs.shape != values.shape or costs.ndim != 1 or costs.size == 0:
        raise ValueError(
            "`costs` and `values` must be non-empty 1-D arrays of equal length; got shapes "
            f"{costs.shape} and {values.shape}."
        )
    f0 = values[0]
    with np.errstate(invalid="ignore"):
        passed = f0 - values >= (1.0 - tolerance) * (f0 - f_low)
    hits = np.flatnonzero(passed & np.isfinite(values))
    return float(costs[hits[0]]) if hits.size else float("inf")


def data_profile(first_costs: Sequence | np.ndarray, dimensions: Sequence[int] | np.ndarray,
                 kappas: Sequence[float] | np.ndarray) -> np.ndarray:
    """d_s(κ) for each κ in `kappas` (rows) and each solver (columns).

    Parameters
    ----------
    first_costs : 2-D array, problems × solvers
        t_{p,s} from `first_success` (inf when the test never held).
    dimensions : 1-D array
        n_p for each problem.
    kappas : 1-D array
        Budgets in units of n_p + 1 evaluations.
    """
    array = np.array(first_costs, dtype=float)
    if array.ndim != 2:
        raise ValueError(
            f"`first_costs` must be 2-D (problems × solvers); got shape {array.shape}."
        )
    dimensions = np.asarray(dimensions, dtype=float)
    if dimensions.shape != (array.shape[0],):
        raise ValueError(
            f"`dimensions` must hold one n_p per problem ({array.shape[0]}); got shape "
            f"{dimensions.shape}."
        )
    kappas = np.asarray(kappas, dtype=float).reshape(-1, 1, 1)
    if array.shape[0] == 0:
        return np.zeros((kappas.shape[0], array.shape[1]))
    scaled = array / (dimensions[:, np.newaxis] + 1.0)
    return (scaled[np.newaxis] <= kappas).mean(axis=1)
