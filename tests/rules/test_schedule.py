"""Tests for `Schedule`: formulas, restarts, the ramp, the iteration counter, the guard."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from linestep._step import Evaluations, Status
from linestep.rules.fallback import Fallback
from linestep.rules.schedule import SMALLEST_SIZE, Schedule
from linestep.searches.armijo import Armijo


def sphere(x):
    return float(x @ x)


def sphere_gradient(x):
    return 2 * x


# -- each formula against values worked out by hand ---------------------------------------
ROOT2_OVER_4 = math.sqrt(2.0) / 4.0

# (schedule, k, expected, how the expected value follows from the formula)
CLOSED_FORM = [
    # step decay: initial·factor^⌊k/every⌋
    (Schedule.step_decay(0.1, factor=0.5, every=10), 0, 0.1, "0.1·0.5^0"),
    (Schedule.step_decay(0.1, factor=0.5, every=10), 9, 0.1, "⌊9/10⌋ = 0"),
    (Schedule.step_decay(0.1, factor=0.5, every=10), 10, 0.05, "0.1·0.5^1"),
    (Schedule.step_decay(0.1, factor=0.5, every=10), 25, 0.025, "0.1·0.5^2"),
    (Schedule.step_decay(3.0, factor=1.0, every=1), 1000, 3.0, "factor 1 is constant"),
    # exponential: initial·rate^k
    (Schedule.exponential(2.0, rate=0.5), 0, 2.0, "2·0.5^0"),
    (Schedule.exponential(2.0, rate=0.5), 3, 0.25, "2/8"),
    (Schedule.exponential(2.0, rate=0.5), 10, 2.0 / 1024, "2/2^10"),
    # robbins_monro: initial/(1 + rate·k)^power
    (Schedule.robbins_monro(1.0, rate=0.5), 2, 0.5, "1/(1 + 1)"),
    (Schedule.robbins_monro(1.0, rate=0.5), 6, 0.25, "1/(1 + 3)"),
    (Schedule.robbins_monro(1.0, rate=1.0, power=0.5), 3, 0.5, "1/√4"),
    (Schedule.robbins_monro(1.0, rate=1.0, power=0.5), 8, 1.0 / 3.0, "1/√9"),
    (Schedule.robbins_monro(1.0, rate=1.0, power=2.0), 1, 0.25, "1/2²"),
    (Schedule.robbins_monro(0.7, rate=0.0), 50, 0.7, "rate 0 is constant"),
    # taper: (initial − final)·(1 − min(k, steps)/steps)^power + final
    (Schedule.taper(1.0, final=0.1, steps=10), 0, 1.0, "0.9·1 + 0.1"),
    (Schedule.taper(1.0, final=0.1, steps=10), 5, 0.55, "0.9·0.5 + 0.1"),
    (Schedule.taper(1.0, final=0.1, steps=10), 10, 0.1, "0.9·0 + 0.1"),
    (Schedule.taper(1.0, final=0.1, steps=10), 30, 0.1, "min(30, 10) = 10"),
    (Schedule.taper(1.0, final=0.1, steps=10, power=2.0), 5, 0.325, "0.9·0.25 + 0.1"),
    # cosine (SGDR eq. 5): final + (initial − final)·(1 + cos(π·k/period))/2
    (Schedule.cosine(1.1, final=0.1, period=4), 0, 1.1, "cos 0 = 1"),
    (Schedule.cosine(1.1, final=0.1, period=4), 1, 0.6 + ROOT2_OVER_4, "cos π/4 = √2/2"),
    (Schedule.cosine(1.1, final=0.1, period=4), 2, 0.6, "cos π/2 = 0: the midpoint"),
    (Schedule.cosine(1.1, final=0.1, period=4), 3, 0.6 - ROOT2_OVER_4, "cos 3π/4 = −√2/2"),
    (Schedule.cosine(1.1, final=0.1, period=4), 4, 0.1, "cos π = −1"),
    (Schedule.cosine(1.1, final=0.1, period=4), 400, 0.1, "stays at final"),
]


@pytest.mark.parametrize(("schedule", "k", "expected", "why"), CLOSED_FORM,
                         ids=[f"{s!r}-k={k}" for s, k, _, _ in CLOSED_FORM])
def test_formula_matches_hand_computed_value(schedule, k, expected, why):
    assert schedule.size_at(k) == pytest.approx(expected, rel=1e-14, abs=0.0), why


# -- monotonicity where the formula implies it ---------------------------------------------
SIZES = st.floats(1e-6, 1e3)
UNIT = st.floats(1e-3, 1.0)
KS = st.integers(0, 10_000)


def _non_increasing(schedule, k):
    # 1e-12 of slack covers rounding in pow(); the formulas are exactly monotone.
    return schedule.size_at(k + 1) <= schedule.size_at(k) * (1 + 1e-12)


@given(initial=SIZES, factor=UNIT, every=st.integers(1, 50), k=KS)
def test_step_decay_never_increases(initial, factor, every, k):
    assert _non_increasing(Schedule.step_decay(initial, factor=factor, every=every), k)


@given(initial=SIZES, rate=UNIT, k=KS)
def test_exponential_never_increases(initial, rate, k):
    assert _non_increasing(Schedule.exponential(initial, rate=rate), k)


@given(initial=SIZES, rate=st.floats(0.0, 100.0), power=st.floats(0.1, 5.0), k=KS)
def test_robbins_monro_never_increases(initial, rate, power, k):
    assert _non_increasing(Schedule.robbins_monro(initial, rate=rate, power=power), k)


@given(initial=SIZES, ratio=UNIT, steps=st.integers(1, 500), power=st.floats(0.1, 5.0), k=KS)
def test_taper_never_increases(initial, ratio, steps, power, k):
    schedule = Schedule.taper(initial, final=initial * ratio, steps=steps, power=power)
    assert _non_increasing(schedule, k)


@given(initial=SIZES, ratio=UNIT, period=st.integers(1, 500), k=KS)
def test_cosine_without_restarts_never_increases(initial, ratio, period, k):
    assert _non_increasing(Schedule.cosine(initial, final=initial * ratio, period=period), k)


@given(initial=SIZES, ratio=UNIT, period=st.integers(1, 50), growth=st.integers(1, 3),
       k=st.integers(0, 2000))
def test_cosine_sizes_stay_between_final_and_initial(initial, ratio, period, growth, k):
    final = initial * ratio
    size = Schedule.cosine(initial, final=final, period=period,
                           restart_growth=growth).size_at(k)
    assert final * (1 - 1e-12) <= size <= initial * (1 + 1e-12)


# -- cosine warm restarts ---------------------------------------------------------------------
def test_cosine_restarts_with_growing_periods():
    # SGDR (Loshchilov & Hutter 2017, §3): periods T_0, T_0·m, T_0·m², ...; with T_0 = 5, m = 2
    # the restarts fall at k = 5, 5·(1 + 2) = 15, 5·(1 + 2 + 4) = 35, 75.
    schedule = Schedule.cosine(1.0, final=0.01, period=5, restart_growth=2)
    restarts = [5, 15, 35, 75]
    for k in [0, *restarts]:
        assert schedule.size_at(k) == 1.0
    for k in restarts:
        assert schedule.size_at(k - 1) < schedule.size_at(k)
    # Inside the second period (length 10, from k = 5) the midpoint is at T_cur = 5.
    assert schedule.size_at(10) == pytest.approx((1.0 + 0.01) / 2, rel=1e-14)
    # Decreasing inside a period; the second period is twice as long.
    sizes = [schedule.size_at(k) for k in range(5, 15)]
    assert sizes == sorted(sizes, reverse=True)
    assert len(set(sizes)) == 10


def test_cosine_restarts_with_equal_periods():
    schedule = Schedule.cosine(0.5, final=0.1, period=3, restart_growth=1)
    sizes = [schedule.size_at(k) for k in range(12)]
    assert sizes[0:3] == sizes[3:6] == sizes[6:9] == sizes[9:12]
    assert sizes[0] == 0.5
    # T_cur = 1 of 3: 0.1 + 0.4·(1 + cos(π/3))/2 = 0.1 + 0.4·0.75 = 0.4.
    assert sizes[1] == pytest.approx(0.4, rel=1e-14)


def test_cosine_restart_position_for_a_large_k_is_fast_and_exact():
    # Restarts at 1·(2^i − 1); k = 2^40 − 1 is a restart point.
    schedule = Schedule.cosine(1.0, final=0.5, period=1, restart_growth=2)
    assert schedule.size_at(2**40 - 1) == 1.0


# -- ramp ---------------------------------------------------------------------------------------
def test_ramp_ramps_linearly_then_runs_the_schedule_from_its_start():
    base = Schedule.exponential(1.0, rate=0.5)
    warm = base.with_ramp(4, start=0.2)
    # Ramp: 1.0·(0.2 + 0.8·k/4) for k = 0..3, then base(k − 4).
    expected = [0.2, 0.4, 0.6, 0.8, 1.0, 0.5, 0.25, 0.125]
    assert [warm.size_at(k) for k in range(8)] == pytest.approx(expected, rel=1e-14)
    assert warm is not base
    assert base.size_at(0) == 1.0


def test_ramp_default_start_and_cosine():
    warm = Schedule.cosine(0.1, final=0.001, period=100).with_ramp(10)
    assert warm.size_at(0) == pytest.approx(0.01, rel=1e-14)  # default start = 0.1
    assert warm.size_at(10) == 0.1
    assert warm.size_at(110) == pytest.approx(0.001, rel=1e-14)
    ramp = [warm.size_at(k) for k in range(11)]
    assert ramp == sorted(ramp)


def test_ramp_with_start_one_is_a_plain_shift():
    base = Schedule.step_decay(1.0, factor=0.5, every=2)
    warm = base.with_ramp(3, start=1.0)
    assert [warm.size_at(k) for k in range(3)] == [1.0, 1.0, 1.0]
    assert [warm.size_at(k + 3) for k in range(10)] == [base.size_at(k) for k in range(10)]


# -- the counter ------------------------------------------------------------------------------
def test_each_call_uses_the_next_k_and_reset_starts_over():
    schedule = Schedule.exponential(0.5, rate=0.5)
    x = np.array([1.0, -2.0])
    sizes = []
    for _ in range(4):
        step = schedule(sphere, x, -sphere_gradient(x))
        sizes.append(step.size)
        x = step.x
    assert sizes == [0.5, 0.25, 0.125, 0.0625]
    assert schedule.iteration == 4
    schedule.reset()
    assert schedule.iteration == 0
    assert schedule(sphere, x, -sphere_gradient(x)).size == 0.5


def test_size_at_has_no_side_effects():
    schedule = Schedule.robbins_monro(1.0, rate=1.0)
    for k in (0, 5, 100):
        schedule.size_at(k)
    assert schedule.iteration == 0


def test_guard_failure_leaves_x_unchanged_and_still_advances_k():
    def cliff(x):  # invented: finite only near the origin
        return math.inf if abs(float(x[0])) > 1.5 else float(x @ x)

    schedule = Schedule.step_decay(4.0, factor=0.1, every=1)
    x = np.array([1.0])
    step = schedule(cliff, x, np.array([-1.0]))
    assert step.status is Status.non_finite
    assert step.size == 0.0
    assert np.array_equal(step.x, x)
    assert step.evaluations == Evaluations(values=1, gradients=0)
    assert "k=0" in step.message
    assert schedule.iteration == 1
    # The next call uses k = 1: size 0.4 lands at 0.6, where f is finite.
    step = schedule(cliff, x, np.array([-1.0]))
    assert step.status is Status.accepted
    assert step.size == pytest.approx(0.4)
    assert step.x == pytest.approx([0.6])


def test_nan_value_is_non_finite():
    schedule = Schedule(lambda k: 1.0)
    step = schedule(lambda x: math.nan, np.array([1.0]), np.array([-1.0]))
    assert step.status is Status.non_finite
    assert schedule.iteration == 1


def test_not_descent_does_not_advance_k():
    # Documented: the base answers not_descent before the rule runs.
    schedule = Schedule.exponential(1.0, rate=0.5)
    x = np.array([1.0])
    step = schedule(sphere, x, x.copy(), gradient=sphere_gradient(x))
    assert step.status is Status.not_descent
    assert step.evaluations == Evaluations()
    assert schedule.iteration == 0


def test_an_increase_is_accepted():
    # Like Fixed: size 5 along −∇f from x = 1 lands at −9, where f = 81 > 1.
    schedule = Schedule(lambda k: 5.0)
    step = schedule(sphere, np.array([1.0]), np.array([-2.0]))
    assert step.status is Status.accepted
    assert step.value == 81.0


@pytest.mark.parametrize("how", ["bare", "pair", "given"])
def test_exactly_one_value_and_no_gradient_per_call(how):
    x = np.array([3.0, 4.0])
    schedule = Schedule.cosine(0.1, final=0.01, period=10)
    if how == "bare":
        step = schedule(sphere, x, -sphere_gradient(x))
    elif how == "pair":
        step = schedule((sphere, sphere_gradient), x, -sphere_gradient(x))
    else:
        step = schedule((sphere, sphere_gradient), x, -sphere_gradient(x), value=25.0,
                        gradient=sphere_gradient(x))
    assert step.evaluations == Evaluations(values=1, gradients=0)
    assert step.gradient is None


def test_float32_is_kept():
    x = np.array([1.0, -1.0], dtype=np.float32)
    step = Schedule.exponential(0.25, rate=0.9)(sphere, x, -sphere_gradient(x))
    assert step.x.dtype == np.float32
    assert step.x == pytest.approx([0.5, -0.5])


def test_inside_fallback_k_advances_once_per_call_and_resets():
    def bowl(x):  # invented: curvatures 2 and 20
        return float(x[0] ** 2 + 10.0 * x[1] ** 2)

    def bowl_gradient(x):
        return np.array([2.0 * x[0], 20.0 * x[1]])

    schedule = Schedule.step_decay(10.0, factor=0.5, every=1)  # starts far too large
    controller = Fallback(schedule, Armijo())
    x = np.array([1.0, 2.0])
    for k in range(3):
        step = controller((bowl, bowl_gradient), x, -bowl_gradient(x))
        # Sizes 10, 5, 2.5 (k = 0, 1, 2) all exceed 2/20 and raise f: Armijo takes over.
        assert step.ok
        assert f"size {schedule.size_at(k):.3g} raised f" in step.message
        assert step.size < schedule.size_at(k)
        x = step.x
    assert schedule.iteration == 3
    controller.reset()
    assert schedule.iteration == 0


# -- named sizes stay positive -----------------------------------------------------------------
def test_decays_are_floored_instead_of_underflowing_to_zero():
    assert Schedule.exponential(1.0, rate=0.5).size_at(5000) == SMALLEST_SIZE
    assert Schedule.step_decay(1.0, factor=0.1, every=1).size_at(400) == SMALLEST_SIZE
    # (1 + k)^400 overflows a float for k = 10^6: floored, not an OverflowError.
    assert Schedule.robbins_monro(1.0, rate=1.0, power=400.0).size_at(10**6) == SMALLEST_SIZE
    assert SMALLEST_SIZE > 0.0


# -- user functions ------------------------------------------------------------------------
def test_plain_callable_is_called_with_k():
    seen = []

    def sizes(k):
        seen.append(k)
        return 1.0 / (k + 1)

    schedule = Schedule(sizes)
    x = np.array([1.0])
    for _ in range(3):
        schedule(sphere, x, -x)
    assert seen == [0, 1, 2]
    assert schedule.size_at(9) == 0.1


@pytest.mark.parametrize("bad", [0.0, -0.5, math.inf, math.nan, np.float64(-1.0)])
def test_a_bad_size_from_a_user_function_raises_naming_schedule_and_k(bad):
    def sizes(k):
        return 0.1 if k < 2 else bad

    schedule = Schedule(sizes)
    x = np.array([1.0])
    schedule(sphere, x, -x)
    schedule(sphere, x, -x)
    with pytest.raises(ValueError, match=r"Schedule\(<function .*sizes>\) returned .* at k=2"):
        schedule(sphere, x, -x)
    assert schedule.iteration == 2  # the failed call did not count
    with pytest.raises(ValueError, match="k=7"):
        schedule.size_at(7)


@pytest.mark.parametrize("bad", [None, "0.1", np.array([0.1, 0.2])])
def test_a_non_number_from_a_user_function_raises_type_error(bad):
    schedule = Schedule(lambda k: bad)
    with pytest.raises(TypeError, match="at k=0"):
        schedule.size_at(0)


def test_numpy_scalars_from_a_user_function_are_accepted():
    assert Schedule(lambda k: np.float32(0.5)).size_at(0) == 0.5
    assert Schedule(lambda k: np.array(0.25)).size_at(3) == 0.25


# -- reprs -----------------------------------------------------------------------------------
REBUILDABLE = [
    Schedule.step_decay(0.1, factor=0.5, every=10),
    Schedule.exponential(2.0, rate=0.99),
    Schedule.robbins_monro(1.0, rate=0.5),
    Schedule.robbins_monro(1.0, rate=0.5, power=0.5),
    Schedule.taper(1.0, final=0.01, steps=50),
    Schedule.taper(1.0, final=0.01, steps=50, power=2.0),
    Schedule.cosine(0.1, final=0.001, period=100),
    Schedule.cosine(0.1, final=0.001, period=7, restart_growth=2),
    Schedule.cosine(0.1, final=0.001, period=7, restart_growth=1).with_ramp(5, start=0.3),
    Schedule.exponential(1.0, rate=0.9).with_ramp(3).with_ramp(2, start=0.5),
]


@pytest.mark.parametrize("schedule", REBUILDABLE, ids=repr)
def test_repr_rebuilds_the_same_sizes(schedule):
    rebuilt = eval(repr(schedule), {"Schedule": Schedule})  # noqa: S307 - our own repr
    assert repr(rebuilt) == repr(schedule)
    assert [rebuilt.size_at(k) for k in range(300)] == [schedule.size_at(k) for k in range(300)]


def test_repr_examples():
    assert repr(Schedule.cosine(0.1, final=0.001, period=100)) == (
        "Schedule.cosine(0.1, final=0.001, period=100)")
    assert repr(Schedule.exponential(1, rate=0.5).with_ramp(4, start=0.25)) == (
        "Schedule.exponential(1.0, rate=0.5).with_ramp(4, start=0.25)")

    def halving(k):
        return 0.5**k

    assert repr(Schedule(halving)) == (
        "Schedule(<function test_repr_examples.<locals>.halving>)")
    assert repr(Schedule(math.exp)) == "Schedule(<function exp>)"
