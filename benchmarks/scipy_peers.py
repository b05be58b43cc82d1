"""The scipy peers of the benchmark scripts, configured once, as a competent user would.

* `ScipyLineSearch`: ``scipy.optimize.line_search`` (strong Wolfe, c1 = 1e-4,
  c2 = 0.9, unit first trial: no ``old_old_fval``, as an L-BFGS driver should
  use it) as a linestep controller, so the same `descend` loop and L-BFGS
  direction drive it. Each evaluation scipy makes is counted exactly once: scipy
  calls the counting objective through a cache keyed on x, and the accepted
  point is rebuilt from that cache. scipy evaluates f and ∇f at the step it
  returns, except when its extrapolation reaches ``maxiter``: it then returns
  the last trial with f only, and the adapter evaluates ∇f there (any driver
  needs it for the next direction); that evaluation is counted, and
  `recomputed` says how often it happened.
* `lbfgsb`: ``scipy.optimize.minimize(method="L-BFGS-B")`` with m = 10
  (``maxcor``), the max-norm gradient test at the same tolerance as the linestep
  runs (``gtol`` is L-BFGS-B's projected-gradient max-norm, identical without
  bounds), ``ftol = 0`` so that the gradient test, not a relative decrease of
  f, decides when to stop, and budgets that never bind first.

Not a test module: the benchmark scripts import it, and
``tests/test_benchmark_adapters.py`` checks the adapter's counts against scipy's.
"""

from __future__ import annotations

import warnings
from typing import Any

import numpy as np
from scipy.optimize import line_search, minimize

from linestep import Objective
from linestep._controller import Outcome, StepController
from linestep._ray import Point
from linestep._step import Status

MEMORY = 10  # L-BFGS pairs, both sides


class _Cached:
    """f and ∇f through the counting objective, remembering every point of one search."""

    def __init__(self, objective: Objective) -> None:
        self.objective = objective
        self.values: dict[bytes, float] = {}
        self.gradients: dict[bytes, Any] = {}

    def value(self, x: np.ndarray) -> float:
        key = x.tobytes()
        if key not in self.values:
            self.values[key] = self.objective.value(x)
        return self.values[key]

    def gradient(self, x: np.ndarray) -> Any:
        key = x.tobytes()
        if key not in self.gradients:
            self.gradients[key] = self.objective.gradient(x)
        return self.gradients[key]


class ScipyLineSearch(StepController):
    """scipy.optimize.line_search as a linestep controller (benchmark adapter only).

    Attributes
    ----------
    last_counts : tuple of int
        scipy's own ``(fc, gc)`` for the last call.
    recomputed : int
        Evaluations the adapter itself made (beyond scipy's) since construction;
        0 when scipy's returned point is reused in full.
    """

    _fields = ("c1", "c2", "max_iterations")

    def __init__(self, *, c1: float = 1e-4, c2: float = 0.9, max_iterations: int = 10) -> None:
        super().__init__()
        self.c1, self.c2, self.max_iterations = c1, c2, max_iterations
        self.max_evaluations = 10**9
        self.last_counts = (0, 0)
        self.recomputed = 0

    def _search(self, ray, first):
        objective, origin, direction = ray.objective, ray.origin, ray.direction
        cached = _Cached(objective)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            size, fc, gc, *_ = line_search(cached.value, cached.gradient, origin.x, direction,
                                           gfk=origin.gradient, old_fval=origin.value,
                                           c1=self.c1, c2=self.c2, maxiter=self.max_iterations)
        self.last_counts = (fc, gc)
        if size is None:
            return Outcome(None, Status.max_evaluations)
        x = origin.x + size * direction  # scipy's own expression, so the key matches
        before = objective.values + objective.gradients
        value, gradient = cached.value(x), cached.gradient(x)
        self.recomputed += objective.values + objective.gradients - before
        point = Point(size, x, value, gradient, float(gradient @ direction))
        return Outcome(point, Status.accepted)


def lbfgsb_options(gradient_atol: float, max_iterations: int) -> dict[str, Any]:
    """L-BFGS-B options for a max-norm gradient stop at `gradient_atol`."""
    return {"maxcor": MEMORY, "gtol": gradient_atol, "ftol": 0.0,
            "maxiter": max_iterations, "maxfun": 10 * max_iterations}


def lbfgsb_settings(gradient_rule: str, max_iterations: int) -> str:
    """One line describing the L-BFGS-B configuration, for the scripts' headers."""
    return (f"scipy L-BFGS-B: maxcor (m) = {MEMORY}, gtol = {gradient_rule} (max-norm of the "
            f"gradient, no bounds), ftol = 0 (the gradient test decides), "
            f"maxiter = {max_iterations}, maxfun = {10 * max_iterations}, maxls = 20 (default)")


def scipy_driver_settings() -> str:
    """One line describing the scipy line-search driver, for the scripts' headers."""
    return ("scipy line_search driver: the same descend loop and LBFGS(10) with "
            "scipy.optimize.line_search(c1=1e-4, c2=0.9, maxiter=10, unit first trial) as "
            "the step; scipy's evaluations counted once (value and gradient reused)")


def lbfgsb(objective: Objective, x0: np.ndarray, gradient_atol: float,
           max_iterations: int) -> Any:
    """Run L-BFGS-B on a counting objective (value and gradient fused per call)."""
    return minimize(objective.value_and_gradient, x0, jac=True, method="L-BFGS-B",
                    options=lbfgsb_options(gradient_atol, max_iterations))
