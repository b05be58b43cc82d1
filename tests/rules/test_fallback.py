"""Tests for `Fallback(rule, search)` and the `Fixed` rule it usually wraps."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

import linestep
from linestep import Armijo, Evaluations, Fallback, Fixed, Goldstein, Objective, Status
from linestep._step import MESSAGES


def square(x):
    return float(x @ x)


def square_gradient(x):
    return 2.0 * x


X = np.array([1.0, -1.0])
D = -square_gradient(X)  # φ(t) = 2(1 − 2t)², φ(0) = 2, φ'(0) = −8


class Recording:
    """f = x·x that remembers every point it was evaluated at."""

    def __init__(self):
        self.points = []

    def __call__(self, x):
        self.points.append(tuple(x))
        return square(x)


# --------------------------------------------------------------------------- Fixed


def test_fixed_takes_its_step_and_evaluates_once():
    step = Fixed(0.25)(square, X, D)
    np.testing.assert_array_equal(step.x, [0.5, -0.5])
    assert step.ok and step.size == 0.25 and step.value == 0.5
    assert step.evaluations == Evaluations(values=1, gradients=0)


def test_fixed_accepts_an_increase():
    # Documented: an increase is what a fixed rate does; only Fallback recovers.
    step = Fixed(5.0)((square, square_gradient), X, D)
    assert step.ok and step.value == 162.0


def test_fixed_non_finite_leaves_x_unchanged():
    step = Fixed(1.0)(lambda x: math.nan, X, D)
    assert step.status is Status.non_finite
    assert step.x is X and step.size == 0.0
    assert step.evaluations == Evaluations(values=1, gradients=0)


def test_fixed_with_a_gradient_checks_descent():
    step = Fixed(1.0)((square, square_gradient), X, -D, value=2.0, gradient=-D)
    assert step.status is Status.not_descent and step.evaluations == Evaluations()


# --------------------------------------------------------------------------- Fallback


def test_good_rule_step_is_taken_as_is_for_one_value():
    controller = Fallback(Fixed(0.25), Armijo())
    step = controller((square, square_gradient), X, D, value=2.0, gradient=-D)
    assert step.ok and step.size == 0.25 and step.value == 0.5
    assert step.evaluations == Evaluations(values=1, gradients=0)
    assert step.message == MESSAGES[Status.accepted]  # the rule's own verdict


@pytest.mark.parametrize(("initial", "expected_points"), [
    # Armijo's first trial is min(1, 5) = 1: φ(1) = 2 fails by c1·8; the exact
    # quadratic then gives 0.5.
    (1.0, [(-9.0, 9.0), (-1.0, 1.0), (0.0, 0.0)]),
    # Armijo's first trial is min(10, 5) = 5, the rule's own point: read from the cache.
    (10.0, [(-9.0, 9.0), (0.0, 0.0)]),
])
def test_diverging_rule_recovers_without_repeating_the_rules_point(initial, expected_points):
    f = Recording()
    controller = Fallback(Fixed(5.0), Armijo(initial=initial, record_trials=True))
    step = controller((f, square_gradient), X, D, value=2.0, gradient=-D)
    assert step.ok and step.size == 0.5 and step.value == 0.0
    assert f.points == expected_points  # the rule's point (t = 5) once
    assert step.evaluations == Evaluations(values=len(expected_points), gradients=0)
    assert "raised f" in step.message and "Armijo" in step.message
    assert step.trials[0].size == 5.0 and step.trials[-1].size == 0.5


def test_non_finite_rule_step_recovers():
    def f(x):
        return square(x) if np.max(np.abs(x)) < 3.0 else math.nan

    step = Fallback(Fixed(5.0), Armijo())((f, square_gradient), X, D)
    assert step.ok and np.all(np.isfinite(step.x)) and step.value < 2.0
    assert "not finite" in step.message


def test_overflowing_rule_step_recovers():
    x = np.array([5.0])
    with np.errstate(over="ignore"):
        step = Fallback(Fixed(100.0), Goldstein())(
            (lambda x: float(np.sum(np.cosh(x))), np.sinh), x, -np.sinh(x))
    assert step.ok and np.all(np.isfinite(step.x)) and step.value < math.cosh(5.0)


def test_reset_clears_the_state_of_both_parts():
    controller = Fallback(Fixed(5.0), Armijo())
    controller((square, square_gradient), X, D)
    assert controller.search._memory.size == 0.5
    controller.reset()
    for part in (controller, controller.rule, controller.search):
        assert part._memory.size is None


def test_exception_from_the_objective_propagates_unchanged():
    error = FloatingPointError("user code")

    def f(x):
        if x[0] != X[0]:
            raise error
        return square(x)

    with pytest.raises(FloatingPointError) as caught:
        Fallback(Fixed(5.0), Armijo())((f, square_gradient), X, D)
    assert caught.value is error


@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 20),
       log_size=st.floats(-4.0, 4.0), log_condition=st.floats(0.0, 6.0))
def test_fallback_never_ends_worse_and_fixed_is_honest(seed, n, log_size, log_condition):
    rng = np.random.default_rng(seed)
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    matrix = (q * np.logspace(0.0, log_condition, n)) @ q.T

    def f(x):
        return float(0.5 * x @ matrix @ x)

    def g(x):
        return matrix @ x

    x = rng.standard_normal(n)
    size = 10.0**log_size
    fixed = Fixed(size)((f, g), x, -g(x))
    # Fixed: accepted, exactly x − size·g, whether f went up or down.
    assert fixed.ok and np.all(np.isfinite(fixed.x))
    np.testing.assert_array_equal(fixed.x, x - size * g(x))
    step = Fallback(Fixed(size), Armijo())((f, g), x, -g(x))
    assert np.all(np.isfinite(step.x))
    assert step.value <= f(x)


@pytest.mark.parametrize("controller", [
    Fixed(0.1),
    Fallback(Fixed(0.5), Armijo(c1=0.2)),
    Fallback(Fixed(2.0), Goldstein(c=0.1, max_evaluations=5)),
])
def test_repr_rebuilds(controller):
    namespace = {name: getattr(linestep, name) for name in linestep.__all__}
    text = repr(controller)
    assert repr(eval(text, namespace)) == text


def test_fused_objective_through_fallback():
    objective = Objective(lambda x: (square(x), square_gradient(x)), fused=True)
    step = Fallback(Fixed(0.25), Armijo())(objective, X, D)
    # x (one fused call) and the rule's point (one fused call).
    assert step.ok and step.evaluations == Evaluations(values=2, gradients=2)
    np.testing.assert_array_equal(step.gradient, [1.0, -1.0])
