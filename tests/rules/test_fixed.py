"""Tests for `Fixed`: the 2/L stability bound, one evaluation per call, the guard."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from linestep._step import Evaluations, Status
from linestep.rules.fixed import Fixed


def sphere(x):
    return float(x @ x)


def sphere_gradient(x):
    return 2 * x


def _run_fixed(size, curvatures, x0, iterations):
    """Gradient descent on f(x) = ½·Σ L_i·x_i² with a fixed step, through `Fixed`."""
    curvatures = np.asarray(curvatures, dtype=float)

    def f(x):
        return 0.5 * float(curvatures @ (x * x))

    rule = Fixed(size)
    x = np.asarray(x0, dtype=float)
    for _ in range(iterations):
        step = rule(f, x, -curvatures * x)
        assert step.status is Status.accepted
        x = step.x
    return x


# The textbook fact, derived here: for f(x) = L/2·x², ∇f(x) = L·x, so one gradient step
# with fixed size t gives x ← x − t·L·x = (1 − t·L)·x, hence x_n = (1 − t·L)^n·x_0. This
# tends to 0 iff |1 − t·L| < 1, i.e. iff 0 < t < 2/L; at t = 2/L the factor is −1 and x
# flips sign forever; above it |x| grows geometrically. (Nocedal & Wright 2006, §3.3, and
# Boyd & Vandenberghe 2004, §9.3, treat the general L-smooth / strongly convex case.)
@pytest.mark.parametrize("curvature", [1.0, 4.0, 50.0])
def test_fixed_step_converges_below_two_over_curvature_and_diverges_above(curvature):
    limit = 2.0 / curvature
    below = _run_fixed(0.98 * limit, [curvature], [1.0], 400)  # factor |1 − 1.96| = 0.96
    above = _run_fixed(1.02 * limit, [curvature], [1.0], 400)  # factor |1 − 2.04| = 1.04
    assert abs(below[0]) == pytest.approx(0.96**400, rel=1e-9)  # ≈ 8e-8
    assert abs(above[0]) == pytest.approx(1.04**400, rel=1e-9)  # ≈ 7e6
    assert abs(below[0]) < 1e-7 and abs(above[0]) > 1e6


def test_fixed_step_at_exactly_two_over_curvature_oscillates():
    # L = 4, t = 0.5: 1 − t·L = −1 exactly, so x_n = (−1)^n·x_0.
    assert _run_fixed(0.5, [4.0], [3.0], 7)[0] == -3.0
    assert _run_fixed(0.5, [4.0], [3.0], 8)[0] == 3.0


def test_fixed_step_bound_is_set_by_the_largest_curvature():
    # Each coordinate evolves independently by (1 − t·L_i); the largest L_i = 10 binds.
    curvatures = [0.5, 2.0, 10.0]
    below = _run_fixed(0.19, curvatures, [1.0, 1.0, 1.0], 300)  # factors 0.905, 0.62, 0.9
    above = _run_fixed(0.21, curvatures, [1.0, 1.0, 1.0], 300)  # factor |1 − 2.1| = 1.1
    assert np.max(np.abs(below)) < 1e-12
    assert abs(above[2]) > 1e12


@given(curvature=st.floats(1e-2, 1e3), ratio=st.sampled_from([0.9, 1.1]))
def test_fixed_step_stability_for_any_curvature(curvature, ratio):
    # t = ratio·2/L gives the factor 1 − 2·ratio: −0.8 (contracts) or −1.2 (grows).
    x = _run_fixed(ratio * 2.0 / curvature, [curvature], [1.0], 200)
    if ratio < 1:
        assert abs(x[0]) < 1e-15
    else:
        assert abs(x[0]) > 1e15


@pytest.mark.parametrize("how", ["bare", "pair", "value given", "both given"])
def test_fixed_evaluates_exactly_one_value_per_call(how):
    x = np.array([3.0, -4.0])
    direction = -sphere_gradient(x)
    rule = Fixed(0.25)
    if how == "bare":
        step = rule(sphere, x, direction)
    elif how == "pair":
        step = rule((sphere, sphere_gradient), x, direction)
    elif how == "value given":
        step = rule((sphere, sphere_gradient), x, direction, value=25.0)
    else:
        step = rule((sphere, sphere_gradient), x, direction, value=25.0,
                    gradient=sphere_gradient(x))
    assert step.evaluations == Evaluations(values=1, gradients=0)
    assert step.size == 0.25
    assert step.x == pytest.approx([1.5, -2.0])
    assert step.value == pytest.approx(6.25)


def test_overflow_gives_non_finite_and_leaves_x_unchanged():
    def steep(x):  # invented: exp overflows to inf for x·x > ~709
        with np.errstate(over="ignore"):
            return float(np.exp(x @ x))

    x = np.array([1.0])
    step = Fixed(1.0)(steep, x, np.array([100.0]), value=steep(x))
    assert step.status is Status.non_finite
    assert step.size == 0.0
    assert np.array_equal(step.x, x)
    assert step.value == pytest.approx(math.e)
    assert step.evaluations == Evaluations(values=1, gradients=0)


@pytest.mark.parametrize("bad", [math.inf, -math.inf, math.nan])
def test_non_finite_values_give_non_finite(bad):
    x = np.array([1.0, 2.0])
    step = Fixed(0.1)(lambda x: bad, x, -x)
    assert step.status is Status.non_finite
    assert np.array_equal(step.x, x)
    assert not step.ok


def test_an_increase_is_accepted():
    # Size 5 along −∇f = −2 from x = 1 lands at 1 − 10 = −9: f rises from 1 to 81.
    x = np.array([1.0])
    step = Fixed(5.0)((sphere, sphere_gradient), x, -sphere_gradient(x))
    assert step.status is Status.accepted
    assert step.x == pytest.approx([-9.0])
    assert step.value == 81.0


def test_float32_is_kept():
    x = np.array([1.0, -1.0], dtype=np.float32)
    step = Fixed(0.25)(sphere, x, -sphere_gradient(x))
    assert step.x.dtype == np.float32
    assert step.x == pytest.approx([0.5, -0.5])


def test_repr_rebuilds():
    rule = Fixed(0.25)
    assert repr(rule) == "Fixed(size=0.25)"
    assert eval(repr(rule), {"Fixed": Fixed}).size == 0.25  # noqa: S307 - our own repr


@pytest.mark.parametrize(("size", "error"), [(0.0, ValueError), (-1.0, ValueError),
                                             (math.inf, ValueError), (math.nan, ValueError),
                                             ("0.1", TypeError)])
def test_bad_size_raises_naming_it(size, error):
    with pytest.raises(error, match="`size`"):
        Fixed(size)
