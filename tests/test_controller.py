"""The base class's own machinery: the inlined fast path, `Outcome`, `_delegate`, `step_from`."""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from linestep import Armijo, Evaluations, Fallback, Fixed, Status, Step
from linestep._controller import Outcome, StepController
from linestep._step import _StepDraft, step_from

# Floats of every kind the fast path must sort out: ordinary, huge (x·x overflows
# while x is finite), NaN and ±inf.
_ANY_FLOAT = st.one_of(
    st.floats(min_value=-10.0, max_value=10.0),
    st.floats(min_value=1e150, max_value=1e300),
    st.floats(min_value=-1e300, max_value=-1e150),
    st.sampled_from([np.nan, np.inf, -np.inf, 0.0]),
)


def _outcome(call):
    """What a call ends in: the Step's fields, or the exception's type and message."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # overflow in x·x is expected
        try:
            step = call()
        except (ValueError, TypeError) as error:
            return ("raised", type(error), str(error))
    return ("step", step.size, None if step.x is None else step.x.tolist(), step.value,
            step.status, step.message, step.evaluations)


@given(data=st.data(), n=st.integers(min_value=1, max_value=4))
def test_fast_path_accepts_and_rejects_what_the_general_path_does(data, n):
    """The inlined check at the top of `StepController.__call__` (1-D float64 arrays with
    f and ∇f given) must accept exactly the calls the general path accepts, with the
    same Step, and reject the others with the same error. The general path runs on the
    same numbers passed as lists, which skip the fast path."""
    x = data.draw(hnp.arrays(np.float64, n, elements=_ANY_FLOAT), label="x")
    direction = data.draw(hnp.arrays(np.float64, n, elements=_ANY_FLOAT), label="direction")
    gradient = data.draw(hnp.arrays(np.float64, n, elements=_ANY_FLOAT), label="gradient")
    value = data.draw(_ANY_FLOAT, label="value")
    fun = (lambda z: 0.5 * float(z @ z), lambda z: np.asarray(z, dtype=float))
    fast = _outcome(lambda: Armijo()(fun, x, direction, value=value, gradient=gradient))
    general = _outcome(lambda: Armijo()(fun, x.tolist(), direction.tolist(), value=value,
                                        gradient=gradient.tolist()))
    assert fast == general


@pytest.mark.parametrize(("x", "direction", "gradient", "value"), [
    ([1.0, 2.0], [-1.0, -2.0], [1.0, 2.0], 2.5),  # accepted
    ([1e200, 1.0], [-1.0, 0.0], [1.0, 0.0], 1.0),  # x finite, x·x overflows
    ([np.nan, 1.0], [-1.0, 0.0], [1.0, 0.0], 1.0),  # x not finite
    ([1.0, 1.0], [-1.0, np.inf], [1.0, 0.0], 1.0),  # g·d is NaN: direction not finite
    ([1.0, 1.0], [-1.0, 0.0], [1.0, np.nan], 1.0),  # gradient not finite
    ([1.0, 1.0], [-1.0, 0.0], [1.0, 0.0], np.inf),  # value not finite
    ([1.0, 1.0], [-1e200, 0.0], [1e200, 0.0], 1.0),  # g·d overflows: non_finite status
    ([1.0, 1.0], [1.0, 0.0], [1.0, 0.0], 1.0),  # uphill: not_descent
])
def test_fast_path_cases(x, direction, gradient, value):
    fun = (lambda z: 0.5 * float(z @ z), lambda z: np.asarray(z, dtype=float))
    fast = _outcome(lambda: Armijo()(fun, np.array(x), np.array(direction), value=value,
                                     gradient=np.array(gradient)))
    general = _outcome(lambda: Armijo()(fun, x, direction, value=value, gradient=gradient))
    assert fast == general


def test_fast_path_check_can_fail():
    """The comparison above distinguishes outcomes: a wrong fast path would be caught."""
    fun = (lambda z: 0.5 * float(z @ z), lambda z: np.asarray(z, dtype=float))
    accepted = _outcome(lambda: Armijo()(fun, [1.0], [-1.0], value=0.5, gradient=[1.0]))
    rejected = _outcome(lambda: Armijo()(fun, [np.nan], [-1.0], value=0.5, gradient=[1.0]))
    assert accepted[0] == "step" and rejected[0] == "raised" and accepted != rejected


# -- Step built through the draft ---------------------------------------------------------
def test_step_from_builds_the_step_the_constructor_builds():
    class Where:
        size, x, value, gradient = 0.25, np.array([1.0]), 3.0, None

    built = step_from(Where(), 40, 2, Status.max_evaluations, "spent", ())
    expected = Step(size=0.25, x=Where.x, value=3.0, gradient=None,
                    evaluations=Evaluations(values=40, gradients=2),
                    status=Status.max_evaluations, message="spent", trials=())
    assert type(built) is Step
    assert dataclasses.astuple(built)[2:] == dataclasses.astuple(expected)[2:]
    with pytest.raises(dataclasses.FrozenInstanceError):
        built.size = 1.0  # the result is as frozen as any Step


def test_draft_keeps_the_slot_layout_of_step():
    assert _StepDraft.__slots__ == tuple(f.name for f in dataclasses.fields(Step))
    assert not hasattr(Step, "__post_init__")


# -- Outcome and _delegate ---------------------------------------------------------------
def test_outcome_is_a_record_not_a_tuple():
    outcome = Outcome(None, Status.non_finite)
    assert (outcome.point, outcome.status, outcome.message) == (None, Status.non_finite, None)
    with pytest.raises(TypeError):
        len(outcome)
    with pytest.raises(TypeError):
        point, status = outcome


def test_a_hook_returning_a_tuple_is_an_error():
    class Old(StepController):
        needs_gradient = False

        def _search(self, ray, first):
            return ray.value(1.0), Status.accepted

    with pytest.raises(AttributeError):
        Old()(lambda z: float(z @ z), np.array([1.0]), np.array([-1.0]))


def test_delegate_runs_a_member_with_its_first_trial_and_memory():
    """Fallback's search gets its own first trial capped at the rejected size, and
    remembers the accepted step as a call of its own would."""
    f = lambda z: float(z @ z)  # noqa: E731
    g = lambda z: 2 * z  # noqa: E731
    search = Armijo(record_trials=True)
    fallback = Fallback(Fixed(0.8), search)
    x = np.array([1.0])
    step = fallback((f, g), x, -g(x))
    # Fixed(0.8) moves x = 1 to 1 − 0.8·2 = −0.6, where f = 0.36 < 1: the rule's step stands.
    assert step.ok and step.size == 0.8
    big = Fallback(Fixed(5.0), search)
    step = big((f, g), x, -g(x))
    assert step.ok and step.trials[0].size == 5.0  # the rule's trial
    assert step.trials[1].size <= 5.0  # the search starts at most at the rejected size
    assert search._memory.size == step.size  # remembered like a call of its own
