"""Tests for `Objective`: wrapping the user's callables and counting evaluations."""

from __future__ import annotations

import numpy as np
import pytest

from linestep import Evaluations, Objective
from linestep._objective import as_objective


def square(x):
    return float(x @ x)


def square_gradient(x):
    return 2.0 * x


def square_fused(x):
    return float(x @ x), 2.0 * x


X = np.array([1.0, 2.0])


def test_separate_callables_count_one_each():
    objective = Objective(square, square_gradient)
    assert objective.value(X) == 5.0
    np.testing.assert_array_equal(objective.gradient(X), [2.0, 4.0])
    assert objective.evaluations == Evaluations(values=1, gradients=1)
    value, gradient = objective.value_and_gradient(X)
    assert value == 5.0
    np.testing.assert_array_equal(gradient, [2.0, 4.0])
    assert (objective.values, objective.gradients) == (2, 2)


def test_value_is_returned_as_a_python_float():
    objective = Objective(lambda x: np.float32(1.5))
    value = objective.value(X)
    assert type(value) is float and value == 1.5


def test_fused_call_counts_one_value_and_one_gradient():
    objective = Objective(square_fused, fused=True)
    value, gradient = objective.value_and_gradient(X)
    assert value == 5.0
    np.testing.assert_array_equal(gradient, [2.0, 4.0])
    assert objective.evaluations == Evaluations(values=1, gradients=1)
    # Asking a fused objective for one part still costs (and counts) the whole call.
    objective.value(X)
    objective.gradient(X)
    assert objective.evaluations == Evaluations(values=3, gradients=3)


def test_has_gradient():
    assert Objective(square, square_gradient).has_gradient
    assert Objective(square_fused, fused=True).has_gradient
    assert not Objective(square).has_gradient


def test_gradient_without_one_raises_type_error_explaining_how():
    objective = Objective(square)
    with pytest.raises(TypeError, match="`Objective\\(fun, grad\\)`"):
        objective.gradient(X)
    with pytest.raises(TypeError, match="fused=True"):
        objective.value_and_gradient(X)
    assert objective.gradients == 0


def test_user_exceptions_propagate_unchanged_and_are_counted():
    error = ZeroDivisionError("boom")

    def fail(x):
        raise error

    objective = Objective(fail, fail)
    with pytest.raises(ZeroDivisionError) as caught:
        objective.value(X)
    assert caught.value is error
    with pytest.raises(ZeroDivisionError) as caught:
        objective.gradient(X)
    assert caught.value is error
    # Documented: the count includes the call that raised.
    assert objective.evaluations == Evaluations(values=1, gradients=1)


def test_as_objective_accepts_an_objective_a_pair_or_a_callable():
    objective = Objective(square, square_gradient)
    assert as_objective(objective) is objective
    pair = as_objective((square, square_gradient))
    assert pair.has_gradient and pair.value(X) == 5.0
    bare = as_objective(square)
    assert not bare.has_gradient and bare.value(X) == 5.0


def test_as_objective_rejects_other_things_naming_the_argument():
    with pytest.raises(TypeError, match="`objective`"):
        as_objective(3.0)


def test_repr_shows_the_callables():
    assert repr(Objective(square, square_gradient)).startswith("Objective(<function square at")
    assert repr(Objective(square_fused, fused=True)).endswith(", fused=True)")


def test_evaluations_arithmetic_and_total():
    a = Evaluations(values=3, gradients=1)
    b = Evaluations(values=1, gradients=1)
    assert a + b == Evaluations(values=4, gradients=2)
    assert a - b == Evaluations(values=2, gradients=0)
    assert a.total == 4
    with pytest.raises(TypeError):
        a + (1, 1)
