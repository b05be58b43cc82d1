"""Performance profiles, data profiles and the robustness score on hand-worked examples.

Definitions checked (the formulas are the papers'; equation numbers are not
quoted because they are recalled from memory):

* Dolan and Moré, "Benchmarking optimization software with performance
  profiles", Math. Program. 91:201–213, 2002: r_{p,s} = t_{p,s} / min_s t_{p,s}
  (r = ∞ for a failure) and ρ_s(τ) = |{p : r_{p,s} <= τ}| / |P|.
* Moré and Wild, "Benchmarking derivative-free optimization algorithms", SIAM J.
  Optim. 20(1):172–191, 2009: convergence test f(x_0) − f(x) >= (1 − τ)(f(x_0) −
  f_L), and d_s(κ) = |{p : t_{p,s} / (n_p + 1) <= κ}| / |P|.
* The robustness score is ours: (1/|P|) Σ_p max(0, 1 − log₂ r_{p,s} / U).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from linestep.bench.profiles import (
    data_profile,
    first_success,
    performance_profile,
    performance_ratios,
    robustness_score,
)

INF = math.inf

# Four problems, three solvers A, B, C (costs in evaluations; inf = failed).
#            A     B     C
COSTS = [[10.0, 20.0, INF],   # p1: best 10   -> ratios 1, 2, inf
         [40.0, 20.0, 10.0],  # p2: best 10   -> ratios 4, 2, 1
         [INF, INF, INF],     # p3: unsolved  -> ratios inf, inf, inf
         [5.0, 5.0, 50.0]]    # p4: best 5 (tie) -> ratios 1, 1, 10


def test_ratios_by_hand() -> None:
    expected = [[1, 2, INF], [4, 2, 1], [INF, INF, INF], [1, 1, 10]]
    np.testing.assert_array_equal(performance_ratios(COSTS), expected)


def test_performance_profile_by_hand() -> None:
    # ρ_A: τ=1 -> {p1, p4} = 2/4; τ=2 -> same; τ=4 -> {p1, p2, p4} = 3/4; τ=100 -> 3/4.
    # ρ_B: τ=1 -> {p4} = 1/4 (a tie counts as best for both); τ=2 -> {p1, p2, p4} = 3/4.
    # ρ_C: τ=1 -> {p2} = 1/4; τ=2, 4 -> 1/4; τ=100 -> {p2, p4} = 2/4.
    # p3, solved by no one, never counts: no profile reaches 1.
    profile = performance_profile(COSTS, [1.0, 2.0, 4.0, 100.0])
    expected = [[0.50, 0.25, 0.25],
                [0.50, 0.75, 0.25],
                [0.75, 0.75, 0.25],
                [0.75, 0.75, 0.50]]
    np.testing.assert_allclose(profile, expected)


def test_robustness_score_by_hand() -> None:
    # U = 4 (τ up to 16); credit per problem = max(0, 1 − log2(r)/4):
    # A: 1 + (1 − 2/4) + 0 + 1 = 2.5            -> 2.5/4 = 0.625
    # B: (1 − 1/4) + (1 − 1/4) + 0 + 1 = 2.5     -> 0.625
    # C: 0 + 1 + 0 + (1 − log2(10)/4) = 1.16952  -> 0.29238
    score = robustness_score(COSTS, log2_tau_max=4)
    np.testing.assert_allclose(score, [0.625, 0.625, (2 - math.log2(10) / 4) / 4])


def test_robustness_score_is_the_area_under_the_profile() -> None:
    # The closed form equals the integral of ρ_s(2^u) over u in [0, U], divided by U.
    u = np.linspace(0.0, 4.0, 400_001)
    profile = performance_profile(COSTS, 2.0 ** u)
    area = profile.mean(axis=0)  # uniform grid: the mean approximates (1/U)∫ du
    np.testing.assert_allclose(robustness_score(COSTS, log2_tau_max=4), area, atol=1e-4)


def test_first_success_by_hand() -> None:
    costs = [1, 3, 5, 8, 12]
    values = [10.0, 6.0, 2.0, 0.5, 0.4]
    # f0 = 10, f_L = 0. τ = 0.1: f0 − f >= 9, i.e. f <= 1: first at index 3, cost 8.
    assert first_success(costs, values, f_low=0.0, tolerance=0.1) == 8.0
    # τ = 0.5: f <= 5 first at index 2, cost 5.
    assert first_success(costs, values, f_low=0.0, tolerance=0.5) == 5.0
    # τ = 1e-3: f <= 0.01 never.
    assert first_success(costs, values, f_low=0.0, tolerance=1e-3) == INF
    # With f_L = 0.4 (the lowest anyone reached), τ = 1e-3 needs f <= 0.4096: index 4.
    assert first_success(costs, values, f_low=0.4, tolerance=1e-3) == 12.0


def test_first_success_when_the_start_is_already_lowest() -> None:
    # f0 = f_L: the test 0 >= 0 holds at the start, at the start's cost.
    assert first_success([1, 2], [3.0, 3.0], f_low=3.0, tolerance=0.5) == 1.0


def test_data_profile_by_hand() -> None:
    first = [[6.0, 30.0],    # n = 2: n+1 = 3  -> κ-costs A 2, B 10
             [INF, 25.0],    # n = 4: n+1 = 5  -> A inf, B 5
             [10.0, 100.0]]  # n = 9: n+1 = 10 -> A 1, B 10
    profile = data_profile(first, [2, 4, 9], [1.0, 2.0, 5.0, 10.0, 100.0])
    expected = [[1 / 3, 0.0],    # κ=1: A {p3}; B none
                [2 / 3, 0.0],    # κ=2: A {p1, p3}
                [2 / 3, 1 / 3],  # κ=5: B {p2}
                [2 / 3, 1.0],    # κ=10: B all
                [2 / 3, 1.0]]
    np.testing.assert_allclose(profile, expected)


@given(st.lists(st.lists(st.one_of(st.floats(1.0, 1e6), st.just(INF)), min_size=3,
                         max_size=3), min_size=1, max_size=8))
def test_profile_properties(rows: list[list[float]]) -> None:
    costs = np.array(rows)
    taus = np.geomspace(1.0, 1e7, 30)
    profile = performance_profile(costs, taus)
    # non-decreasing in τ, within [0, 1], and at large τ the fraction solved
    assert np.all(np.diff(profile, axis=0) >= 0)
    assert np.all((profile >= 0) & (profile <= 1))
    np.testing.assert_allclose(profile[-1], np.isfinite(costs).mean(axis=0))
    # on each problem someone solved, some solver has ratio 1
    solved_by_someone = np.isfinite(costs).any(axis=1).mean()
    assert profile[0].sum() >= solved_by_someone - 1e-12
    score = robustness_score(costs)
    assert np.all((score >= 0) & (score <= 1))


@pytest.mark.parametrize("bad", [[1.0, 2.0], [[0.0, 1.0]], [[math.nan, 1.0]], [[-1.0, 2.0]]])
def test_bad_costs_are_rejected(bad: list) -> None:
    with pytest.raises(ValueError, match="costs"):
        performance_ratios(bad)


def test_bad_arguments() -> None:
    with pytest.raises(ValueError, match="tolerance"):
        first_success([1], [1.0], f_low=0.0, tolerance=1.0)
    with pytest.raises(ValueError, match="dimensions"):
        data_profile([[1.0]], [1, 2], [1.0])
    with pytest.raises(ValueError, match="log2_tau_max"):
        robustness_score([[1.0]], log2_tau_max=0)


def test_empty_problem_sets_give_zero_profiles() -> None:
    empty = np.zeros((0, 2))
    np.testing.assert_array_equal(performance_profile(empty, [1.0]), [[0.0, 0.0]])
    np.testing.assert_array_equal(robustness_score(empty), [0.0, 0.0])
    np.testing.assert_array_equal(data_profile(empty, [], [1.0]), [[0.0, 0.0]])


@pytest.mark.parametrize("shape", [(0, 0), (3, 0)])
def test_no_solvers_give_empty_profiles(shape: tuple[int, int]) -> None:
    costs = np.zeros(shape)
    assert performance_ratios(costs).shape == shape
    assert performance_profile(costs, [1.0, 2.0]).shape == (2, 0)
    assert robustness_score(costs).shape == (0,)
