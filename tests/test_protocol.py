"""One conformance suite, run against every controller linestep exports.

Each controller must follow the protocol of DESIGN.md §2 the same way: the
same call signature, the same bookkeeping, the same behaviour at the edges.
Method-specific conditions are checked in the per-method test files.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

import linestep
from linestep import Status, Step
from linestep._controller import StepController


def _factories() -> dict[str, object]:
    """How to build each exported controller for the suite (name -> factory)."""
    factories = {
        "Armijo": lambda: linestep.Armijo(),
        "Goldstein": lambda: linestep.Goldstein(),
        "Fixed": lambda: linestep.Fixed(0.1),
        "Fallback": lambda: linestep.Fallback(linestep.Fixed(0.1), linestep.Armijo()),
    }
    optional = {
        "Schedule": lambda: linestep.Schedule.robbins_monro(0.4, rate=0.01),
        "Wolfe": lambda: linestep.Wolfe(),
        "MoreThuente": lambda: linestep.MoreThuente(),
        "HagerZhang": lambda: linestep.HagerZhang(),
        "NonmonotoneArmijo": lambda: linestep.NonmonotoneArmijo(),
        "BarzilaiBorwein": lambda: linestep.BarzilaiBorwein(),
        "Polyak": lambda: linestep.Polyak(f_min=0.0),
    }
    for name, factory in optional.items():
        if hasattr(linestep, name):
            factories[name] = factory
    return factories


FACTORIES = _factories()
# Controllers that only accept the negative gradient as direction (documented).
NEGATIVE_GRADIENT_ONLY = {"BarzilaiBorwein", "Polyak"}


def test_every_exported_controller_is_in_the_suite():
    exported = {
        name for name in linestep.__all__
        if isinstance(getattr(linestep, name), type)
        and issubclass(getattr(linestep, name), StepController)
    }
    assert exported == set(FACTORIES)


def quadratic(scale: float = 1.0):
    """f(x) = scale/2·‖x − 1‖² (any shape); minimiser all ones, f* = 0."""

    def fun(x):
        r = np.asarray(x, dtype=float) - 1.0
        return 0.5 * scale * float(np.sum(r * r))

    def grad(x):
        return scale * (x - 1.0)

    return fun, grad


def counted(fun, grad):
    return linestep.Objective(fun, grad)


parametrize = pytest.mark.parametrize("name", sorted(FACTORIES))


@parametrize
def test_returns_a_step_whose_counts_match_the_objective(name):
    controller = FACTORIES[name]()
    fun, grad = quadratic()
    objective = counted(fun, grad)
    x = np.array([3.0, -2.0, 0.5])
    before = objective.evaluations
    step = controller(objective, x, -grad(x))
    assert type(step) is Step
    assert isinstance(step.status, Status)
    assert step.evaluations == objective.evaluations - before
    # An ordinary frozen Step, equal to one built by its constructor (the base class
    # builds it more cheaply; see `_step.step_from`).
    assert step == Step(**{name: getattr(step, name) for name in Step.__slots__})
    with pytest.raises(dataclasses.FrozenInstanceError):
        step.size = 2.0
    assert np.all(np.isfinite(step.x))
    assert isinstance(step.message, str) and step.message
    assert step.ok is (step.status is Status.accepted)
    if step.size > 0:
        np.testing.assert_allclose(step.x, x - step.size * grad(x), rtol=1e-15, atol=0)
        assert step.value == pytest.approx(fun(step.x), rel=1e-15)


@parametrize
def test_values_supplied_are_not_evaluated_again(name):
    controller = FACTORIES[name]()
    fun, grad = quadratic()
    objective = counted(fun, grad)
    x = np.array([3.0, -2.0])
    step = controller(objective, x, -grad(x), value=fun(x), gradient=grad(x))
    # Only points along the ray are evaluated: at most one value and gradient per trial.
    assert objective.values == step.evaluations.values
    assert step.evaluations.values >= 1


@parametrize
def test_not_descent_leaves_x_unchanged_and_evaluates_nothing(name):
    controller = FACTORIES[name]()
    fun, grad = quadratic()
    objective = counted(fun, grad)
    x = np.array([3.0, -2.0])
    if name in NEGATIVE_GRADIENT_ONLY:
        with pytest.raises(ValueError, match="`direction`"):
            controller(objective, x, grad(x), value=fun(x), gradient=grad(x))
        return
    step = controller(objective, x, grad(x), value=fun(x), gradient=grad(x))
    assert step.status is Status.not_descent
    assert step.x is x and step.size == 0.0
    assert step.evaluations.total == 0 and objective.evaluations.total == 0


@parametrize
def test_stationary_point_is_kept(name):
    controller = FACTORIES[name]()
    fun, grad = quadratic()
    x = np.ones(4)
    step = controller((fun, grad), x, -grad(x), value=fun(x), gradient=grad(x))
    assert step.size == 0.0
    np.testing.assert_array_equal(step.x, x)
    assert step.ok
    assert "stationary" in step.message


# -- a failed step never makes f worse -----------------------------------------------------
# An inexact gradient claims descent along d = [−1, 0] (φ'(0) = −1), but f rises along d
# (φ(t) = 1 + 2t) and is NaN beyond t = 1e-4. No controller can accept anything: every
# finite trial is worse than x, every longer one is not finite. (Invented case.)
_CLAIMED_GRADIENT = np.array([1.0, 0.0])
_RISING_START = np.array([0.5, 0.25])


def _rising(x):
    moved = 0.5 - float(x[0])
    if moved > 1e-4:
        return math.nan
    return 1.0 + 2.0 * abs(moved) + (float(x[1]) - 0.25) ** 2


def _rising_gradient(x):
    moved = 0.5 - float(x[0])
    return np.array([-2.0 if moved > 0 else 2.0, 2.0 * (float(x[1]) - 0.25)])


def check_failed_step_never_worse(controller):
    start = _RISING_START
    step = controller((_rising, _rising_gradient), start, -_CLAIMED_GRADIENT, value=1.0,
                      gradient=_CLAIMED_GRADIENT)
    assert not step.ok, "the case must make the controller fail"
    assert np.all(np.isfinite(step.x))
    assert _rising(step.x) <= _rising(start)


@parametrize
def test_a_failed_step_never_makes_f_worse(name):
    check_failed_step_never_worse(FACTORIES[name]())


class _ReturnsItsLastTrial:
    """Deliberately wrong: on failure it moves to its last finite trial, which is worse."""

    def __call__(self, objective, x, direction, *, value=None, gradient=None):
        size = 1e-5  # a finite trial, where f has risen
        new = x + size * direction
        return Step(size=size, x=new, value=_rising(new), gradient=None,
                    evaluations=linestep.Evaluations(values=1), status=Status.step_too_small,
                    message="gave up")

    def reset(self):
        pass


def test_the_failed_step_check_catches_a_controller_that_worsens_f():
    with pytest.raises(AssertionError):
        check_failed_step_never_worse(_ReturnsItsLastTrial())


# -- a non-finite region shrinks the step ------------------------------------------------
# f = ‖x‖² is NaN outside the ball of radius 0.3; from x = [0.2, 0.1] along −40·∇f(x)
# (or, for Barzilai–Borwein's first step, a distance of 1 in x) every controller's first
# trial lands outside it. (Invented case.)
_BALL_START = np.array([0.2, 0.1])
# Controllers that accept a rise in f by design: for them only finiteness is required.
RISE_ACCEPTED = {"Fixed", "Schedule", "Polyak"}
# The suite's Polyak(f_min=0) would stop inside the ball; a target far below f makes
# its step overshoot into the NaN region like the others.
_OVERSHOOTING = {"Polyak": lambda: linestep.Polyak(f_min=-100.0)}


def check_non_finite_region(controller, *, rise_accepted):
    non_finite = []

    def fun(x):
        value = float(x @ x)
        if value < 0.09:
            return value
        non_finite.append(value)
        return math.nan

    def grad(x):
        return 2 * x

    x = _BALL_START
    step = controller((fun, grad), x, -40.0 * grad(x))
    assert non_finite, "the case must send a trial into the non-finite region"
    assert np.all(np.isfinite(step.x))
    if step.size > 0:
        assert math.isfinite(fun(step.x))
        assert step.value == fun(step.x)
        if not rise_accepted:
            assert step.value <= fun(x)
    else:
        np.testing.assert_array_equal(step.x, x)
        assert not step.ok


@parametrize
def test_non_finite_region_shrinks_the_step(name):
    controller = _OVERSHOOTING.get(name, FACTORIES[name])()
    check_non_finite_region(controller, rise_accepted=name in RISE_ACCEPTED)


class _TakesTheFirstTrial:
    """Deliberately wrong: accepts its first trial without looking at its value."""

    def __call__(self, objective, x, direction, *, value=None, gradient=None):
        new = x + direction
        fun = objective[0]  # the checks pass (fun, grad)
        return Step(size=1.0, x=new, value=fun(new), gradient=None,
                    evaluations=linestep.Evaluations(values=1), status=Status.accepted,
                    message="took it")

    def reset(self):
        pass


def test_the_non_finite_check_catches_a_controller_that_ignores_nan():
    with pytest.raises(AssertionError):
        check_non_finite_region(_TakesTheFirstTrial(), rise_accepted=True)


@parametrize
def test_user_exception_propagates_unchanged(name):
    class Boom(Exception):
        pass

    def fun(x):
        raise Boom("from the objective")

    controller = FACTORIES[name]()
    x = np.array([1.0, 2.0])
    with pytest.raises(Boom, match="from the objective"):
        controller((fun, lambda x: 2 * x), x, -2 * x, gradient=2 * x)


@parametrize
def test_float32_stays_float32_and_shapes_are_kept(name):
    controller = FACTORIES[name]()
    fun, grad = quadratic()
    x = np.full((3, 2), 2.0, dtype=np.float32)
    step = controller((fun, grad), x, -grad(x))
    assert step.x.dtype == np.float32
    assert step.x.shape == (3, 2)
    assert step.ok and fun(step.x) < fun(x)


@parametrize
def test_wrong_direction_shape_names_the_argument(name):
    controller = FACTORIES[name]()
    fun, grad = quadratic()
    with pytest.raises(ValueError, match="`direction`"):
        controller((fun, grad), np.zeros(3), np.ones(2))


@parametrize
def test_non_finite_x_names_the_argument(name):
    controller = FACTORIES[name]()
    fun, grad = quadratic()
    with pytest.raises(ValueError, match="`x`"):
        controller((fun, grad), np.array([1.0, np.nan]), np.ones(2))


@parametrize
def test_reset_replays_the_same_steps(name):
    fun, grad = quadratic(scale=3.0)

    def sequence(controller):
        x, sizes = np.array([4.0, -3.0]), []
        for _ in range(5):
            step = controller((fun, grad), x, -grad(x))
            sizes.append(step.size)
            x = step.x
        return sizes

    controller = FACTORIES[name]()
    first = sequence(controller)
    controller.reset()
    assert sequence(controller) == first
    assert sequence(FACTORIES[name]()) == first


@parametrize
def test_repr_rebuilds_the_controller(name):
    controller = FACTORIES[name]()
    namespace = {key: getattr(linestep, key) for key in linestep.__all__}
    namespace["inf"] = math.inf
    rebuilt = eval(repr(controller), namespace)  # noqa: S307 - our own repr
    assert repr(rebuilt) == repr(controller)
    assert type(rebuilt) is type(controller)


@parametrize
def test_descend_runs_with_every_controller(name):
    fun, grad = quadratic(scale=2.0)
    run = linestep.descend(
        (fun, grad), np.array([3.0, -1.0]), controller=FACTORIES[name](),
        stop=linestep.stopping.GradientNorm(atol=1e-6, rtol=0)
        | linestep.stopping.MaxIterations(5000),
    )
    assert run.converged, run.verdict
    np.testing.assert_allclose(run.x, 1.0, atol=1e-5)


@parametrize
def test_an_overflowing_slope_is_a_status_not_an_error(name):
    # g and d are finite but g·d = −2e400 overflows: numeric trouble, reported as
    # non_finite with x unchanged and nothing evaluated along the ray.
    controller = FACTORIES[name]()
    fun, grad = quadratic()
    objective = counted(fun, grad)
    x = np.array([1.0, 2.0])
    gradient = np.array([1e200, 1e200])
    with np.errstate(over="ignore"):  # numpy warns about the overflowing product itself
        step = controller(objective, x, -gradient, value=fun(x), gradient=gradient)
    assert step.status is Status.non_finite
    assert step.x is x and step.size == 0.0
    assert objective.evaluations.total == 0
    assert "overflows" in step.message

