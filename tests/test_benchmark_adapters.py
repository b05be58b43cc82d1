"""The scipy line-search adapter of the benchmark scripts counts each evaluation once.

The adapter lives in ``benchmarks/scipy_peers.py`` (a script helper, not part of the
package); these checks hold its counts to scipy's own ``fc``/``gc``.
"""

from __future__ import annotations

import pathlib
import sys

import numpy as np
import pytest

pytest.importorskip("scipy.optimize")

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1] / "benchmarks"))
from scipy_peers import ScipyLineSearch, lbfgsb  # noqa: E402

from linestep import LBFGS, Objective, descend, stopping  # noqa: E402
from linestep.bench import get_problem  # noqa: E402


def test_one_call_counts_what_scipy_counts():
    # Rosenbrock from the standard start along −∇f: the unit step is rejected, so scipy
    # brackets and zooms, evaluating gradients at some trials only.
    problem = get_problem("rosenbrock")
    x = problem.start.copy()
    g = problem.gradient(x)
    objective = Objective(problem.value, problem.gradient)
    adapter = ScipyLineSearch()
    step = adapter(objective, x, -g, value=problem.value(x), gradient=g)
    fc, gc = adapter.last_counts
    assert step.ok and fc > 1  # several trials, so the check means something
    assert (step.evaluations.values, step.evaluations.gradients) == (fc, gc)
    assert adapter.recomputed == 0
    # The point returned is scipy's accepted point, with f and ∇f as evaluated there.
    assert step.value == problem.value(step.x)
    np.testing.assert_array_equal(step.gradient, problem.gradient(step.x))
    np.testing.assert_array_equal(step.x, x - step.size * g)


class _Tally(ScipyLineSearch):
    """The adapter, summing scipy's own counts over a run."""

    def __init__(self):
        super().__init__()
        self.fc = self.gc = 0

    def _search(self, ray, first):
        outcome = super()._search(ray, first)
        self.fc += self.last_counts[0]
        self.gc += self.last_counts[1]
        return outcome


@pytest.mark.parametrize("name", ["rosenbrock", "helical_valley", "wood"])
def test_a_whole_run_counts_what_scipy_counts(name):
    problem = get_problem(name)
    adapter = _Tally()
    run = descend(Objective(problem.value, problem.gradient), problem.start.copy(),
                  controller=adapter, direction=LBFGS(10),
                  stop=stopping.GradientNorm(atol=1e-8, rtol=0.0) | stopping.MaxIterations(500))
    assert run.converged
    # The start point's value and gradient are descend's; everything else is scipy's.
    assert (run.evaluations.values, run.evaluations.gradients) == (adapter.fc + 1,
                                                                   adapter.gc + 1)
    assert adapter.recomputed == 0


@pytest.mark.parametrize("name", ["rosenbrock", "wood"])
def test_the_lbfgsb_peer_counts_what_scipy_counts(name):
    # The L-BFGS-B peer gets f and ∇f fused, so each of scipy's nfev is one value and
    # one gradient on our counter, nothing more.
    problem = get_problem(name)
    objective = Objective(problem.value, problem.gradient)
    result = lbfgsb(objective, problem.start.copy(), 1e-8, 5000)
    assert result.nfev > 10
    assert (objective.values, objective.gradients) == (result.nfev, result.nfev)


def test_the_scipy_cg_peer_counts_what_scipy_counts():
    from scipy.optimize import minimize

    problem = get_problem("rosenbrock")
    objective = Objective(problem.value, problem.gradient)
    result = minimize(objective.value_and_gradient, problem.start.copy(), jac=True,
                      method="CG", options={"gtol": 1e-8, "norm": np.inf, "maxiter": 5000})
    # Every call is fused, so our counter sees nfev values and nfev gradients. scipy's
    # njev can read one less (its first gradient comes with the first value and is
    # counted as a function call only), which is why the peer is counted by our counter.
    assert result.nfev > 10 and result.njev in (result.nfev - 1, result.nfev)
    assert (objective.values, objective.gradients) == (result.nfev, result.nfev)
