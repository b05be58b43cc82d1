"""Tests for `Goldstein`.

Conditions checked at every accepted step, recomputed here from the returned
point (Goldstein 1965; Nocedal & Wright 2006, eq. 3.11, as cited by the module):
φ(0) + (1 − c)·t·φ'(0) ≤ φ(t) ≤ φ(0) + c·t·φ'(0), 0 < c < 1/2.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

import linestep
from _problems import descent_problems, square, square_gradient
from linestep import Evaluations, Goldstein, Objective, PreviousTrial, ScaledTrial, Status

ULPS = 8 * np.finfo(float).eps  # slack for re-checking an inequality the search checked


@given(descent_problems(), st.sampled_from([0.01, 0.1, 0.25, 0.45]),
       st.sampled_from([1.0, 1e-3, 1e3, ScaledTrial()]), st.sampled_from([1, 3, 40]))
def test_accepted_steps_satisfy_both_goldstein_inequalities(problem, c, initial, budget):
    f, g, x, d = problem
    step = Goldstein(c=c, initial=initial, max_evaluations=budget)((f, g), x, d)
    f0, slope0 = f(x), float(g(x) @ d)
    assert np.all(np.isfinite(step.x))
    assert step.value <= f0  # never worse, whatever the status
    if step.status is Status.accepted:
        np.testing.assert_array_equal(step.x, x + step.size * d)
        value = f(step.x)
        assert value == step.value
        change = value - f0  # as a difference, exactly: rounding cannot pass it
        assert (1.0 - c) * step.size * slope0 <= change <= c * step.size * slope0
        assert change < 0.0
        slack = ULPS * max(abs(f0), abs(value), 1.0)  # the textbook form, up to ulps
        assert value <= f0 + c * step.size * slope0 + slack
        assert value >= f0 + (1.0 - c) * step.size * slope0 - slack
    elif step.size > 0.0:
        # A failed search may still move, but only to a sufficient-decrease point.
        assert step.value - f0 <= c * step.size * slope0
    else:
        assert step.x is x


# --------------------------------------------------------------------------- exact counts


def test_counts_when_the_first_trial_is_too_long():
    # φ(t) = 2(1 − 2t)², φ(0) = 2, φ'(0) = −8. t = 1: φ = 2 > 2 − 0.25·8 = 0, too long.
    # The quadratic model is exact: t = 8/(2·8) = 0.5 (N&W eq. 3.57), inside
    # [0.1, 0.9]; φ(0.5) = 0 lies in [2 − 0.75·4, 2 − 0.25·4] = [−1, 1]: accepted.
    x = np.array([1.0, 1.0])
    step = Goldstein(record_trials=True)((square, square_gradient), x, -square_gradient(x))
    assert step.status is Status.accepted
    assert step.size == 0.5 and step.value == 0.0
    assert step.evaluations == Evaluations(values=3, gradients=1)
    assert [t.size for t in step.trials] == [1.0, 0.5]


def test_counts_when_the_first_trials_are_too_short():
    # φ(t) = (10 − t)², φ(0) = 100, φ'(0) = −20, c = 1/4. t = 1: 81 < 85, too short;
    # t = 4 (×EXPAND): 36 < 40, too short; t = 16: 36 > 20, too long. The exact
    # quadratic model gives 10, inside [4 + 1.2, 16 − 1.2]; φ(10) = 0 ∈ [−50, 50].
    x = np.array([10.0])
    step = Goldstein(record_trials=True)((square, square_gradient), x, np.array([-1.0]),
                                         value=100.0, gradient=np.array([20.0]))
    assert step.ok and step.size == 10.0 and step.value == 0.0
    assert [t.size for t in step.trials] == [1.0, 4.0, 16.0, 10.0]
    assert step.evaluations == Evaluations(values=4, gradients=0)


def test_fused_objective_returns_the_gradient():
    x = np.array([1.0, 1.0])
    objective = Objective(lambda x: (square(x), square_gradient(x)), fused=True)
    step = Goldstein()(objective, x, -square_gradient(x))
    assert step.evaluations == Evaluations(values=3, gradients=3)
    np.testing.assert_array_equal(step.gradient, [0.0, 0.0])


@pytest.mark.parametrize(("supplied", "expected"), [
    (False, Evaluations(values=0, gradients=1)), (True, Evaluations())])
def test_not_descent_evaluates_nothing_along_the_ray(supplied, expected):
    x = np.array([1.0, 1.0])
    extra = {"value": 2.0, "gradient": square_gradient(x)} if supplied else {}
    step = Goldstein()((square, square_gradient), x, square_gradient(x), **extra)
    assert step.status is Status.not_descent
    assert step.x is x and step.size == 0.0
    assert step.evaluations == expected


def test_step_from_a_stationary_point_leaves_x_unchanged():
    x = np.zeros(3)
    step = Goldstein()((square, square_gradient), x, np.ones(3))
    assert step.ok and step.size == 0.0 and step.x is x
    assert "stationary" in step.message


# --------------------------------------------------------------------------- failures


def test_budget_spent_returns_the_best_sufficient_decrease_point():
    # As above, two evaluations allowed: t = 1 (φ = 81) and t = 4 (φ = 36) both satisfy
    # sufficient decrease but are too short; the better one is returned.
    x = np.array([10.0])
    step = Goldstein(max_evaluations=2)((square, square_gradient), x, np.array([-1.0]))
    assert step.status is Status.max_evaluations
    assert step.size == 4.0 and step.value == 36.0
    np.testing.assert_array_equal(step.x, [6.0])


def test_budget_spent_without_decrease_returns_x_unchanged():
    x = np.array([1.0, 1.0])
    step = Goldstein(max_evaluations=1)((square, square_gradient), x, -square_gradient(x))
    assert step.status is Status.max_evaluations
    assert step.x is x and step.size == 0.0


def test_unbounded_below_reaches_max_size():
    # f = −x: every step is too short; trials grow ×4 up to max_size.
    x = np.array([0.0])
    step = Goldstein(max_size=100.0, record_trials=True)(
        (lambda x: float(-x[0]), lambda x: np.array([-1.0])), x, np.array([1.0]))
    assert step.status is Status.step_too_large
    assert [t.size for t in step.trials] == [1.0, 4.0, 16.0, 64.0, 100.0]
    assert step.size == 100.0 and step.value == -100.0


def test_collapsed_bracket_returns_the_best_point():
    # A jump at x = 1: below it φ(t) = −t is always too short, above it f = 10 is too
    # long, so the bracket closes on t = 1 without an acceptable step.
    def f(x):
        return float(-x[0]) if x[0] < 1.0 else 10.0

    x = np.array([0.0])
    step = Goldstein(max_evaluations=200)((f, lambda x: np.array([-1.0])), x, np.array([1.0]))
    assert step.status is Status.interval_too_small
    assert 1.0 - 1e-12 < step.size < 1.0 and step.value == -step.size


def test_no_move_below_rounding_level_is_not_accepted():
    # Regression: f = 1e8 at x = 1 exactly, 1e8 + 1 elsewhere, with a false gradient:
    # every trial that moves x is too long; t = 2.5e-17 leaves x = 1, and both
    # inequalities written as φ(t) ≤ φ(0) + c·t·φ'(0) held there only by rounding.
    # Step documents size = 0.0 (and the caller's x) when x is unchanged; `descend`
    # spun without moving when such a step was accepted.
    def spike(x):
        return 1e8 if x[0] == 1.0 else 1e8 + 1.0

    x = np.array([1.0])
    step = Goldstein()((spike, lambda x: np.array([-1.0])), x, np.array([1.0]))
    assert step.size == 0.0 and step.x is x
    assert step.status in (Status.interval_too_small, Status.step_too_small)


def test_nan_beyond_a_radius_shrinks_the_step():
    def f(x):
        return square(x) if np.linalg.norm(x) <= 2.0 else math.nan

    x = np.array([1.5, 0.0])
    step = Goldstein()((f, square_gradient), x, np.array([-100.0, 0.0]))
    assert step.ok and np.all(np.isfinite(step.x)) and np.linalg.norm(step.x) <= 2.0


def test_overflow_without_exception_shrinks_the_step():
    def f(x):
        return float(np.sum(np.cosh(x)))

    x = np.array([5.0])
    with np.errstate(over="ignore"):
        step = Goldstein(initial=100.0)((f, np.sinh), x, -np.sinh(x))
    assert step.ok and np.all(np.isfinite(step.x)) and step.value < f(x)


def test_nothing_finite_along_the_ray_is_non_finite_with_x_unchanged():
    def f(x):
        return 1.0 if np.all(x == 1.0) else math.inf

    x = np.ones(2)
    step = Goldstein()((f, np.ones_like), x, -np.ones(2))
    assert step.status is Status.non_finite and step.x is x and step.value == 1.0


def test_user_exception_propagates_unchanged():
    error = KeyError("missing")

    def f(x):
        if x[0] != 1.0:
            raise error
        return square(x)

    with pytest.raises(KeyError) as caught:
        Goldstein()((f, square_gradient), np.array([1.0]), np.array([-2.0]))
    assert caught.value is error


# --------------------------------------------------------------------------- arrays, reprs


def test_record_trials_ends_with_the_accepted_trial():
    x = np.array([7.0, -3.0])
    step = Goldstein(record_trials=True, initial=1e-3)((square, square_gradient), x,
                                                       -square_gradient(x))
    assert step.ok and len(step.trials) == step.evaluations.values - 1
    assert step.trials[-1].size == step.size and step.trials[-1].value == step.value


@pytest.mark.parametrize("controller", [
    Goldstein(),
    Goldstein(c=0.1, initial=0.5, max_size=1e3, max_evaluations=9, record_trials=True),
    Goldstein(initial=PreviousTrial(growth=2.0)),  # max_size=inf: `inf` supplied below
])
def test_repr_rebuilds(controller):
    namespace = {name: getattr(linestep, name) for name in linestep.__all__}
    namespace["inf"] = math.inf
    text = repr(controller)
    assert repr(eval(text, namespace)) == text
