"""Tests for `Armijo` (backtracking with sufficient decrease) and the initial-trial strategies.

Condition checked at every accepted step, recomputed here from the returned point:
φ(t) ≤ φ(0) + c1·t·φ'(0) (Armijo 1966; Nocedal & Wright 2006, eq. 3.4, equation
number recalled from memory). c1 = 1e-4 as a default is common practice.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

import linestep
from _problems import descent_problems, square, square_gradient
from linestep import (
    Armijo,
    Evaluations,
    Objective,
    PreviousTrial,
    QuadraticTrial,
    ScaledTrial,
    Status,
    Trial,
    UnitTrial,
)

# Rounding slack when re-checking an inequality the search checked itself: a few
# ulps of the largest number in it.
ULPS = 8 * np.finfo(float).eps


X = np.array([3.0, -4.0])
D = -square_gradient(X)  # [−6, 8]; φ(t) = 25(1 − 2t)², φ(0) = 25, φ'(0) = −100


armijo_options = st.fixed_dictionaries({
    "c1": st.sampled_from([1e-4, 0.1, 0.3, 0.5]),
    "interpolation": st.sampled_from(["cubic", "quadratic", None]),
    "initial": st.sampled_from([1.0, 1e-3, 100.0, UnitTrial(), ScaledTrial()]),
    # Small budgets exercise the failure statuses too.
    "max_evaluations": st.sampled_from([1, 2, 40]),
})


# --------------------------------------------------------------------------- properties


@given(descent_problems(("quadratic", "sines", "rosenbrock")), armijo_options)
def test_accepted_steps_satisfy_sufficient_decrease(problem, options):
    f, g, x, d = problem
    step = Armijo(**options)((f, g), x, d)
    f0, slope0 = f(x), float(g(x) @ d)
    assert np.all(np.isfinite(step.x))
    assert step.value <= f0  # never worse, whatever the status
    if step.status is Status.accepted:
        np.testing.assert_array_equal(step.x, x + step.size * d)
        value = f(step.x)
        assert value == step.value
        # As a difference, exactly (rounding of f0 + c1·t·φ'(0) could pass a step
        # with no decrease at all), and in the textbook form up to a few ulps.
        assert value - f0 <= options["c1"] * step.size * slope0
        assert value <= f0 + options["c1"] * step.size * slope0 + ULPS * max(abs(f0), 1.0)
        assert step.size > 0.0 and value < f0
    else:
        assert step.size == 0.0 and step.x is x


# --------------------------------------------------------------------------- exact counts


def test_counts_on_a_round_bowl_by_hand():
    # ∇f(x) (1 gradient) and f(x) (1 value); t = 1 gives f = 25, not below
    # 25 − 1e-4·100; the quadratic through φ(0) = 25, φ'(0) = −100, φ(1) = 25 has its
    # minimiser at 100/(2·100) = 0.5 (N&W eq. 3.57), inside [0.1, 0.5]; φ(0.5) = 0.
    step = Armijo(record_trials=True)((square, square_gradient), X, D)
    assert step.status is Status.accepted
    assert step.size == 0.5 and step.value == 0.0
    np.testing.assert_array_equal(step.x, [0.0, 0.0])
    assert step.evaluations == Evaluations(values=3, gradients=1)
    assert step.gradient is None
    assert step.trials == (Trial(size=1.0, value=25.0, slope=None),
                           Trial(size=0.5, value=0.0, slope=None))


def test_supplied_value_and_gradient_leave_only_the_trials_counted():
    step = Armijo()((square, square_gradient), X, D, value=25.0, gradient=-D)
    assert step.size == 0.5
    assert step.evaluations == Evaluations(values=2, gradients=0)


def test_fused_objective_counts_one_value_and_one_gradient_per_point():
    objective = Objective(lambda x: (square(x), square_gradient(x)), fused=True)
    step = Armijo()(objective, X, D)
    # x, t = 1 and t = 0.5: three fused calls.
    assert step.evaluations == Evaluations(values=3, gradients=3)
    np.testing.assert_array_equal(step.gradient, [0.0, 0.0])


def test_plain_shrinking_counts():
    # shrink 0.3 without interpolation: t = 1 fails, t = 0.3 gives x = [1.2, −1.6],
    # f = 4 ≤ 25 − 1e-4·0.3·100.
    step = Armijo(interpolation=None, shrink=0.3)((square, square_gradient), X, D)
    assert step.size == 0.3 and step.value == pytest.approx(4.0)
    assert step.evaluations == Evaluations(values=3, gradients=1)


def test_first_trial_accepted_costs_one_trial():
    step = Armijo(initial=0.5)((square, square_gradient), X, D, value=25.0, gradient=-D)
    assert step.evaluations == Evaluations(values=1, gradients=0)


@pytest.mark.parametrize(("supplied", "expected"), [
    (False, Evaluations(values=0, gradients=1)),  # only ∇f(x), to learn φ'(0) ≥ 0
    (True, Evaluations()),
])
def test_not_descent_evaluates_nothing_along_the_ray(supplied, expected):
    extra = {"value": 25.0, "gradient": -D} if supplied else {}
    step = Armijo(record_trials=True)((square, square_gradient), X, -D, **extra)
    assert step.status is Status.not_descent
    assert step.x is X and step.size == 0.0
    assert step.evaluations == expected
    assert step.trials == ()
    assert not step.ok


def test_step_from_a_stationary_point_leaves_x_unchanged():
    x = np.zeros(2)
    step = Armijo()((square, square_gradient), x, np.array([1.0, 0.0]))
    assert step.status is Status.accepted and step.ok
    assert step.size == 0.0 and step.x is x
    assert "stationary" in step.message
    assert step.evaluations == Evaluations(values=0, gradients=1)


def test_stationary_point_with_supplied_value_keeps_it():
    x = np.zeros(2)
    step = Armijo()((square, square_gradient), x, np.array([1.0, 0.0]), value=0.0,
                    gradient=np.zeros(2))
    assert step.ok and step.value == 0.0 and step.evaluations == Evaluations()


# --------------------------------------------------------------------------- failures


def test_budget_spent_returns_x_unchanged():
    step = Armijo(max_evaluations=1)((square, square_gradient), X, D)
    assert step.status is Status.max_evaluations
    assert step.x is X and step.size == 0.0 and step.value == 25.0
    assert step.evaluations == Evaluations(values=2, gradients=1)


def test_wrong_gradient_ends_below_rounding_level_with_x_unchanged():
    # The gradient claims descent but f = x² rises along d: every trial fails and the
    # step shrinks by 10 each time until it stops moving x.
    x = np.array([1.0])
    step = Armijo(interpolation=None, shrink=0.1)(
        (square, lambda x: -2.0 * x), x, np.array([2.0]))
    assert step.status is Status.step_too_small
    assert step.x is x and step.size == 0.0 and step.value == 1.0
    # 1, 0.1, …, 1e-16: the 17th trial is below eps/2 = 1.1e-16 (rounding_size).
    assert step.evaluations.values == 1 + 17


def spike(x):
    """f = 1e8 at x = 1 exactly and 1e8 + 1 elsewhere (paired with a false gradient)."""
    return 1e8 if x[0] == 1.0 else 1e8 + 1.0


def test_no_move_below_rounding_level_is_not_accepted():
    # Regression: every trial that moves x raises f; the 18th trial (t = 2.5e-17 <
    # ulp(1)/2) does not move x at all, and φ(t) ≤ φ(0) + c1·t·φ'(0) held there only
    # because the right side rounds to φ(0) = 1e8. Step documents size = 0.0 (and the
    # caller's x) when x is unchanged, so the search must end with step_too_small.
    x = np.array([1.0])
    step = Armijo()((spike, lambda x: np.array([-1.0])), x, np.array([1.0]))
    assert step.size == 0.0 and step.x is x
    assert step.status is Status.step_too_small


def test_nan_beyond_a_radius_shrinks_the_step():
    def f(x):
        return square(x) if np.linalg.norm(x) <= 2.0 else math.nan

    x = np.array([1.5, 0.0])
    step = Armijo(record_trials=True)((f, square_gradient), x, np.array([-100.0, 0.0]))
    assert step.status is Status.accepted
    assert np.all(np.isfinite(step.x)) and np.linalg.norm(step.x) <= 2.0
    assert step.value < 2.25
    # Non-finite trials shrink by NON_FINITE_SHRINK = 0.1: t = 1, 0.1, 0.01.
    assert [trial.size for trial in step.trials] == pytest.approx([1.0, 0.1, 0.01])
    assert [trial.value for trial in step.trials][:2] == [math.inf, math.inf]


def test_overflow_without_exception_shrinks_the_step():
    def f(x):
        return float(np.sum(np.cosh(x)))

    def g(x):
        return np.sinh(x)

    x = np.array([5.0])
    with np.errstate(over="ignore"):
        step = Armijo(initial=100.0)((f, g), x, -g(x))
    assert step.status is Status.accepted
    assert np.all(np.isfinite(step.x)) and step.value < f(x)


def test_nothing_finite_along_the_ray_is_non_finite_with_x_unchanged():
    def f(x):
        return 1.0 if np.all(x == 1.0) else math.nan

    x = np.ones(2)
    step = Armijo()((f, np.ones_like), x, -np.ones(2))
    assert step.status is Status.non_finite
    assert step.x is x and step.size == 0.0 and step.value == 1.0


@pytest.mark.parametrize("where", ["origin", "ray"])
def test_user_exception_propagates_unchanged(where):
    error = RuntimeError("user code failed")

    def f(x):
        if where == "origin" or x[0] != X[0]:
            raise error
        return square(x)

    with pytest.raises(RuntimeError) as caught:
        Armijo()((f, square_gradient), X, D)
    assert caught.value is error


# --------------------------------------------------------------------------- arrays


def test_matrix_shaped_points():
    x = np.arange(6.0).reshape(3, 2) - 2.0
    step = Armijo()((square, square_gradient), x, -square_gradient(x))
    assert step.ok and step.x.shape == (3, 2)
    np.testing.assert_allclose(step.x, np.zeros((3, 2)), atol=1e-15)


def test_record_trials_lists_every_trial_with_the_accepted_one_last():
    x = np.array([10.0])
    step = Armijo(record_trials=True, initial=1000.0)((square, square_gradient), x,
                                                       -square_gradient(x))
    assert step.ok
    assert len(step.trials) == step.evaluations.values - 1
    assert step.trials[-1] == Trial(size=step.size, value=step.value, slope=None)
    assert all(t.size > 0 for t in step.trials)
    assert Armijo()((square, square_gradient), x, -square_gradient(x)).trials is None


# --------------------------------------------------------------------------- reprs


@pytest.mark.parametrize("controller", [
    Armijo(),
    Armijo(c1=0.3, shrink=0.25, interpolation=None, shrink_limits=(0.2, 0.4),
           initial=2.5, max_evaluations=7, record_trials=True),
    Armijo(interpolation="quadratic", initial=UnitTrial()),
    Armijo(initial=ScaledTrial(length=0.5)),
    Armijo(initial=PreviousTrial(growth=2.0, first=ScaledTrial(), max_size=10.0)),
    Armijo(initial=QuadraticTrial(first=0.1, cap=1.0)),
    Armijo(initial=QuadraticTrial()),  # cap=inf: `inf` is supplied to eval below
])
def test_repr_rebuilds(controller):
    namespace = {name: getattr(linestep, name) for name in linestep.__all__}
    namespace["inf"] = math.inf  # float reprs spell infinity `inf`
    text = repr(controller)
    assert repr(eval(text, namespace)) == text


# --------------------------------------------------------------------------- initial trials


def first_trial_sizes(controller, calls):
    """The first trial size of each call, recorded by the search."""
    return [controller(*call).trials[0].size for call in calls]


OBJECTIVE = (square, square_gradient)
CALL_A = (OBJECTIVE, X, D)  # f = 25, accepted at 0.5
CALL_B = (OBJECTIVE, np.array([1.0, 0.0]), np.array([-2.0, 0.0]))  # f = 1, φ'(0) = −4


def test_unit_and_constant_first_trials():
    assert first_trial_sizes(Armijo(initial=UnitTrial(), record_trials=True),
                             [CALL_A, CALL_B]) == [1.0, 1.0]
    assert first_trial_sizes(Armijo(initial=0.2, record_trials=True),
                             [CALL_A, CALL_B]) == [0.2, 0.2]


def test_scaled_first_trial_moves_x_by_length():
    # t = length/‖d‖₂ = 2/10.
    sizes = first_trial_sizes(Armijo(initial=ScaledTrial(length=2.0), record_trials=True),
                              [CALL_A])
    assert sizes == [pytest.approx(0.2)]


def test_previous_trial_grows_the_last_accepted_step_and_reset_forgets_it():
    controller = Armijo(initial=PreviousTrial(growth=3.0, max_size=1.2), record_trials=True)
    # Call 1 starts at `first` = 1 and accepts 0.5; call 2 starts at min(3·0.5, 1.2).
    assert first_trial_sizes(controller, [CALL_A, CALL_B]) == [1.0, 1.2]
    controller.reset()
    assert first_trial_sizes(controller, [CALL_B]) == [1.0]


def test_quadratic_trial_follows_nw_eq_3_60():
    # After call A (f = 25), call B has f = 1 and φ'(0) = −4:
    # t₀ = 1.01·2·(1 − 25)/(−4) = 12.12 (N&W eq. 3.60 with their 1.01 enlargement).
    controller = Armijo(initial=QuadraticTrial(), record_trials=True)
    assert first_trial_sizes(controller, [CALL_A, CALL_B]) == [1.0, pytest.approx(12.12)]
    capped = Armijo(initial=QuadraticTrial(cap=1.0), record_trials=True)
    assert first_trial_sizes(capped, [CALL_A, CALL_B]) == [1.0, 1.0]
