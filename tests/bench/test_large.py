"""The large suite: gradients against central differences, starts and optimal values.

Sources: Moré, Garbow & Hillstrom 1981 (MGH) and Andrei 2008 (A08); the formulas
in linestep.bench._large were written from memory of them, so the checks below
hold them to what can be verified: the MGH members agree with the independently
written MGH module (linestep.bench._mgh) at small n, each extended A08 form
repeats its small MGH parent, every gradient matches central differences, and
every stated optimal value is attained (or, for a limit, approached) where the
source says.
"""

from __future__ import annotations

import numpy as np
import pytest

from linestep.bench import _large, get_problem
from linestep.bench.suites import large_problems, suite

PROBLEMS = _large.LARGE_PROBLEMS
NAMES = [kind.name for kind in PROBLEMS]


def central_difference(f, x, h=1e-6):
    g = np.empty_like(x)
    for i in range(x.size):
        step = np.zeros_like(x)
        step[i] = h * max(1.0, abs(x[i]))
        g[i] = (f(x + step) - f(x - step)) / (2.0 * step[i])
    return g


@pytest.mark.parametrize("kind", PROBLEMS, ids=NAMES)
@pytest.mark.parametrize("n", [8, 12])
def test_gradient_matches_central_differences(kind, n):
    problem = kind(n)
    rng = np.random.default_rng(n)
    start = problem.start_point()
    for x in (start, start + 0.1 * rng.standard_normal(n), 0.5 * rng.standard_normal(n)):
        expected = central_difference(problem.value, x)
        scale = max(1.0, np.max(np.abs(expected)))
        np.testing.assert_allclose(problem.gradient(x), expected, rtol=1e-6,
                                   atol=1e-6 * scale)


# The MGH variable-dimension members against the MGH module (MGH 21-23, 25, 26, 28-32).
SAME_AS_MGH = ["extended_rosenbrock", "extended_powell_singular", "penalty_1",
               "variably_dimensioned", "trigonometric", "discrete_boundary_value",
               "discrete_integral_equation", "broyden_tridiagonal", "broyden_banded",
               "linear_full_rank"]


@pytest.mark.parametrize("name", SAME_AS_MGH)
@pytest.mark.parametrize("n", [8, 12])
def test_mgh_members_agree_with_the_mgh_module(name, n):
    ours = {kind.name: kind for kind in PROBLEMS}[name](n)
    reference = get_problem(name, dimension=n)
    np.testing.assert_allclose(ours.start_point(), reference.start, rtol=1e-15)
    rng = np.random.default_rng(7)
    for x in (reference.start, rng.standard_normal(n)):
        assert ours.value(x) == pytest.approx(reference.value(x), rel=1e-12)
        np.testing.assert_allclose(ours.gradient(x), reference.gradient(x), rtol=1e-10,
                                   atol=1e-12)


@pytest.mark.parametrize("extended, parent, size, start", [
    ("extended_freudenstein_roth", "freudenstein_roth", 2, None),
    ("extended_beale", "beale", 2, [1.0, 0.8]),  # A08 starts Beale at (1, 0.8), MGH at (1, 1)
    ("extended_wood", "wood", 4, None),
])
def test_extended_forms_repeat_their_mgh_parent(extended, parent, size, start):
    # A08's extended functions are sums of the MGH function over disjoint blocks.
    ours = {kind.name: kind for kind in PROBLEMS}[extended](4 * size)
    reference = get_problem(parent)
    rng = np.random.default_rng(3)
    x = rng.standard_normal(4 * size)
    blocks = x.reshape(-1, size)
    assert ours.value(x) == pytest.approx(sum(reference.value(b) for b in blocks), rel=1e-12)
    np.testing.assert_allclose(ours.gradient(x),
                               np.concatenate([reference.gradient(b) for b in blocks]),
                               rtol=1e-12, atol=1e-12)
    block = reference.start if start is None else start
    np.testing.assert_array_equal(ours.start_point(), np.tile(block, 4))


# Minimisers stated in each problem's source line (zero-residual points, or derived).
MINIMIZERS = {
    "extended_rosenbrock": lambda n: np.ones(n),
    "extended_powell_singular": lambda n: np.zeros(n),
    "variably_dimensioned": lambda n: np.ones(n),
    "linear_full_rank": lambda n: -np.ones(n),
    "extended_freudenstein_roth": lambda n: np.tile([5.0, 4.0], n // 2),
    "extended_beale": lambda n: np.tile([3.0, 0.5], n // 2),
    "extended_wood": lambda n: np.ones(n),
    "extended_white_holst": lambda n: np.ones(n),
    "extended_tridiagonal_1": lambda n: np.tile([1.0, 2.0], n // 2),
    "raydan_1": lambda n: np.zeros(n),
    "perturbed_quadratic": lambda n: np.zeros(n),
    "quadratic_qf1": lambda n: np.eye(n)[-1] / n,
    "liarwhd": lambda n: np.ones(n),
    "arwhead": lambda n: np.concatenate([np.ones(n - 1), [0.0]]),
    "dqdrtic": lambda n: np.zeros(n),
    "tridia": lambda n: 2.0 ** -np.arange(n),
}


@pytest.mark.parametrize("name", sorted(MINIMIZERS))
@pytest.mark.parametrize("n", [8, 1000])
def test_stated_minimizers_attain_the_optimal_value(name, n):
    problem = {kind.name: kind for kind in PROBLEMS}[name](n)
    x = MINIMIZERS[name](n)
    assert problem.value(x) == pytest.approx(problem.optimal_value(), abs=1e-12)
    assert np.max(np.abs(problem.gradient(x))) <= 1e-10


@pytest.mark.parametrize("n", [8, 1000, 10000])
def test_penalty_1_optimum_is_the_symmetric_one_dimensional_minimum(n):
    problem = _large.PenaltyOne(n)
    best = problem.optimal_value()
    # The symmetric point t·1 with the reported value is stationary in all n variables ...
    t_grid = np.linspace(0.0, 1.0, 200_001) / np.sqrt(n)
    a = _large.PENALTY_WEIGHT
    values = a * n * (t_grid - 1.0) ** 2 + (n * t_grid ** 2 - 0.25) ** 2
    assert best <= values.min() + 1e-15
    t = t_grid[np.argmin(values)]
    # ... and no random point does better (f is the symmetric reduction's minimum).
    rng = np.random.default_rng(0)
    for _ in range(20):
        x = np.full(n, t) + 1e-3 / np.sqrt(n) * rng.standard_normal(n)
        assert problem.value(x) >= best


def test_penalty_1_matches_mgh_published_value_at_n_10():
    # MGH 1981 list f* = 7.08765e-5 for n = 10 (recalled from memory).
    assert _large.PenaltyOne(10).optimal_value() == pytest.approx(7.08765e-5, rel=1e-5)


def test_freudenstein_roth_local_value():
    # MGH 2's second minimum, f = 48.9842 (recalled from memory), reached by descent from
    # the extended form's start in each pair.
    from scipy.optimize import minimize

    problem = _large.ExtendedFreudensteinRoth(2)
    result = minimize(problem.value, problem.start_point(), jac=problem.gradient,
                      method="BFGS", options={"gtol": 1e-10})
    assert result.fun == pytest.approx(_large.FREUDENSTEIN_ROTH_LOCAL, rel=1e-5)  # 6 digits


def test_the_large_suite():
    problems = suite("large", dimension=8)
    assert len(problems) == len(PROBLEMS) >= 15
    assert len({p.name for p in problems}) == len(problems)
    assert all(p.dimension == 8 and p.reference for p in problems)
    assert [p.dimension for p in suite("large")[:1]] == [1000]
    for problem in problems:
        value = problem.value(problem.start)
        assert np.isfinite(value) and np.all(np.isfinite(problem.gradient(problem.start)))
        assert not problem.solved(value)  # no start is already optimal


@pytest.mark.parametrize("dimension, match", [
    (10, "multiple of 4"), (4, "`dimension` must be >= 8"),
])
def test_bad_dimension(dimension, match):
    with pytest.raises(ValueError, match=match):
        large_problems(dimension)


def test_dimension_is_for_the_large_suite_only():
    with pytest.raises(ValueError, match="'large' suite only"):
        suite("mgh", dimension=10)
