"""Tests for the private `Ray`: φ(t) = f(x + t·d) with caching, counting and guards."""

from __future__ import annotations

import math

import numpy as np
import pytest

from linestep import Evaluations, Objective, Trial
from linestep._ray import BudgetSpent, Point, Ray

X = np.array([3.0, -4.0])
D = np.array([-6.0, 8.0])  # −∇f for f = x·x


def square(x):
    return float(x @ x)


def square_gradient(x):
    return 2.0 * x


def make_ray(objective=None, *, x=X, d=D, max_evaluations=10, c1=1e-4, record=False,
             value=None, gradient=None):
    objective = objective or Objective(square, square_gradient)
    value = square(x) if value is None else value
    gradient = square_gradient(x) if gradient is None else gradient
    origin = Point(0.0, x, value, gradient, float(gradient.ravel() @ d.ravel()))
    return Ray(objective, origin, d, max_evaluations=max_evaluations, c1=c1, record=record)


def test_value_evaluates_one_value_at_x_plus_t_d():
    ray = make_ray()
    point = ray.value(0.25)
    np.testing.assert_array_equal(point.x, [1.5, -2.0])
    assert point.value == 6.25 and point.gradient is None and point.slope is None
    assert ray.objective.evaluations == Evaluations(values=1, gradients=0)
    assert ray.count == 1


def test_value_then_slope_at_the_same_size_costs_exactly_one_extra_gradient():
    ray = make_ray()
    first = ray.value(0.25)
    second = ray.value_and_slope(0.25)
    assert second is first
    assert ray.objective.evaluations == Evaluations(values=1, gradients=1)
    # φ'(t) = ∇f(x + t·d)·d = 2·[1.5, −2]·[−6, 8] = −50.
    assert second.slope == -50.0
    assert ray.count == 1


def test_repeated_requests_at_the_same_size_cost_nothing():
    ray = make_ray()
    ray.value_and_slope(0.25)
    ray.value_and_slope(0.25)
    ray.value(0.25)
    assert ray.objective.evaluations == Evaluations(values=1, gradients=1)


def test_size_zero_is_the_origin_and_costs_nothing():
    ray = make_ray()
    assert ray.value(0.0) is ray.origin
    assert ray.objective.evaluations == Evaluations()


def test_fused_objective_evaluates_the_gradient_with_every_value():
    ray = make_ray(Objective(lambda x: (square(x), square_gradient(x)), fused=True))
    point = ray.value(0.5)
    assert point.value == 0.0 and point.slope == 0.0
    np.testing.assert_array_equal(point.gradient, [0.0, 0.0])
    assert ray.objective.evaluations == Evaluations(values=1, gradients=1)


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_non_finite_value_reads_as_plus_infinity(bad):
    ray = make_ray(Objective(lambda x: bad, square_gradient))
    point = ray.value(1.0)
    assert point.value == math.inf and not point.finite
    assert ray.non_finite_seen and not ray.finite_seen
    assert ray.best is None


@pytest.mark.parametrize("bad", [math.nan, math.inf])
def test_non_finite_gradient_reads_as_plus_infinity(bad):
    ray = make_ray(Objective(square, lambda x: np.full_like(x, bad)))
    with np.errstate(invalid="ignore"):  # inf·0 inside the slope is the point here
        point = ray.value_and_slope(0.5)
    assert point.value == math.inf and point.slope is None
    assert ray.non_finite_seen
    assert ray.best is None


def test_non_finite_gradient_after_a_cached_value_reads_as_plus_infinity():
    ray = make_ray(Objective(square, lambda x: np.array([math.nan, 0.0])), record=True)
    ray.value(0.5)
    assert ray.best is not None  # f = 0 there: sufficient decrease
    point = ray.value_and_slope(0.5)
    assert point.value == math.inf
    assert ray.best is None
    assert ray.trials == [Trial(size=0.5, value=math.inf, slope=None)]


def test_best_falls_back_to_the_previous_point_when_the_best_turns_non_finite():
    # From x = 1 along d = −1.5, t = 1 and t = 2/3 both decrease f = x²; only the
    # gradient at t = 2/3 is NaN. The ray's docstring says it "keeps the best point
    # that satisfies sufficient decrease", and t = 1 still does.
    def gradient(x):
        return np.array([math.nan, 0.0]) if x[0] == 0.0 else 2.0 * x

    x, d = np.array([1.0, 0.0]), np.array([-1.5, 0.0])
    ray = make_ray(Objective(square, gradient), x=x, d=d)
    longer = ray.value(1.0)  # x = −0.5, f = 0.25 < 1
    ray.value(2.0 / 3.0)  # x = 0, f = 0: the new best
    ray.value_and_slope(2.0 / 3.0)  # its gradient is NaN
    assert ray.best is longer


def test_best_keeps_the_lowest_sufficient_decrease_point():
    ray = make_ray(c1=0.5)
    # φ(t) = 25(1 − 2t)²; φ(0) = 25, φ'(0) = −100; sufficient decrease (c1 = 0.5)
    # needs φ(t) ≤ 25 − 50t.
    ray.value(0.9)  # φ = 16 > −20: fails
    assert ray.best is None
    ray.value(0.25)  # φ = 6.25 ≤ 12.5
    ray.value(0.4)  # φ = 1 ≤ 5, lower
    ray.value(0.45)  # φ = 0.25 ≤ 2.5, lower still
    ray.value(0.3)  # φ = 4 ≤ 10, but higher than the best
    assert ray.best.size == 0.45


def test_budget_raises_budget_spent_and_cached_points_are_free():
    ray = make_ray(max_evaluations=2)
    ray.value(1.0)
    ray.value(0.5)
    ray.value_and_slope(0.5)  # cached value: only a gradient, not a new point
    with pytest.raises(BudgetSpent):
        ray.value(0.25)
    with pytest.raises(BudgetSpent):
        ray.value_and_slope(0.125)
    assert ray.count == 2
    assert ray.objective.evaluations == Evaluations(values=2, gradients=1)


def test_trials_are_recorded_only_when_asked():
    assert make_ray().trials is None
    ray = make_ray(record=True)
    ray.value(1.0)
    ray.value_and_slope(0.5)
    ray.value(0.5)
    assert ray.trials == [Trial(size=1.0, value=25.0, slope=None),
                          Trial(size=0.5, value=0.0, slope=0.0)]


def test_last_is_the_most_recent_point():
    ray = make_ray()
    assert ray.last is ray.origin
    point = ray.value(0.1)
    assert ray.last is point


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_rounding_size_uses_the_precision_of_x(dtype):
    x = np.array([3.0, -40.0], dtype=dtype)
    d = np.array([-0.5, 2.0], dtype=dtype)
    ray = make_ray(x=x, d=d, value=1.0, gradient=-d)
    # eps·max(1, ‖x‖∞)/‖d‖∞: a step below it moves x only at rounding level.
    expected = float(np.finfo(dtype).eps) * 40.0 / 2.0
    assert ray.rounding_size() == pytest.approx(expected, rel=1e-12)


def test_rounding_size_of_a_small_x_uses_unit_scale():
    x = np.array([1e-3])
    d = np.array([-4.0])
    ray = make_ray(x=x, d=d)
    assert ray.rounding_size() == pytest.approx(np.finfo(float).eps / 4.0, rel=1e-12)


def test_float32_points_stay_float32():
    x = np.array([3.0, -4.0], dtype=np.float32)
    d = np.array([-6.0, 8.0], dtype=np.float32)
    ray = make_ray(x=x, d=d)
    assert ray.value(0.25).x.dtype == np.float32


def test_best_without_a_slope_is_plain_decrease():
    origin = Point(0.0, X, 25.0, None, None)
    ray = Ray(Objective(square), origin, D, max_evaluations=5, c1=0.5)
    assert ray.value(1.0).value == 25.0 and ray.best is None  # not below φ(0) = 25
    assert ray.value(0.1) is ray.best  # φ = 16 < 25


def test_no_best_without_a_start_value():
    origin = Point(0.0, X, None, None, None)
    ray = Ray(Objective(square), origin, D, max_evaluations=5, c1=0.5)
    ray.value(0.1)
    assert ray.best is None


def test_best_needs_a_decrease_beyond_rounding():
    # φ(t) = 1 + 1e-17·(t − 1): every trial rounds to φ(0) = 1 (the sum form would
    # accept it), so no point shows the required decrease c1·t·φ'(0) < 0.
    objective = Objective(lambda x: 1.0 + 1e-17 * float(x[0]))
    origin = Point(0.0, np.array([0.0]), 1.0, np.array([1e-17]), -1e-17)
    ray = Ray(objective, origin, np.array([-1.0]), max_evaluations=5, c1=1e-4)
    assert ray.value(1.0).value == 1.0 and ray.best is None


def _saturating():
    """f(w) = Σ 1/(1 + w²): finite (0) at w = ±inf, so overflow in x + t·d hides in f."""

    def fun(w):
        with np.errstate(over="ignore"):
            return float(np.sum(1.0 / (1.0 + w * w)))

    def grad(w):
        with np.errstate(over="ignore", invalid="ignore"):
            return -2.0 * w / (1.0 + w * w) ** 2

    return fun, grad


def test_a_trial_point_that_overflows_reads_as_non_finite():
    fun, grad = _saturating()
    x = np.array([1.0, 2.0])
    d = -grad(x) * 1e10
    origin = Point(0.0, x, fun(x), grad(x), float(grad(x) @ d))
    for method in ("value", "value_and_slope"):
        ray = Ray(Objective(fun, grad), origin, d, 5)
        with np.errstate(over="ignore"):
            point = getattr(ray, method)(1e300)  # x + t·d = +inf in every entry
        assert point.value == math.inf and not point.finite
        assert ray.best is None


def test_fixed_never_returns_an_overflowed_point():
    from linestep import Fixed, Status

    fun, grad = _saturating()
    x = np.array([1.0, 2.0])
    with np.errstate(over="ignore"):
        step = Fixed(1e300)((fun, grad), x, -grad(x) * 1e10)
    assert step.status is Status.non_finite
    assert step.x is x


def test_complete_adds_one_gradient_to_the_last_point_and_refuses_any_other():
    ray = make_ray(record=True)
    first = ray.value(0.25)
    second = ray.value(0.5)
    with pytest.raises(RuntimeError, match="last point evaluated"):
        ray.complete(first)  # not the last: it would overwrite the wrong trial record
    point = ray.complete(second)
    assert point is second and point.slope == pytest.approx(float(2.0 * point.x @ D))
    assert ray.objective.evaluations == Evaluations(values=2, gradients=1)
    assert ray.trials[-1] == Trial(size=0.5, value=point.value, slope=point.slope)
    with pytest.raises(RuntimeError, match="last point evaluated"):
        ray.complete(second)  # it has its gradient: a second call would count it twice
    assert ray.objective.evaluations == Evaluations(values=2, gradients=1)
