"""Tests of the Hager–Zhang line search.

Sources named beside the checks:
[HZ05] W. W. Hager and H. Zhang, SIAM J. Optim. 16(1):170–192, 2005, §4.
[HZ06] W. W. Hager and H. Zhang, "Algorithm 851: CG_DESCENT", ACM TOMS 32(1), 2006.
[MT94] J. J. Moré and D. J. Thuente, ACM TOMS 20(3):286–307, 1994, §5 (test functions).
All test problems and data are invented here except the [MT94] functions, whose
constants are recalled from memory.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from _problems import quadratic, quintic, rational, wiggly, yanai_ozawa_kaneko
from linestep._initial import PreviousTrial, QuadraticTrial, ScaledTrial, UnitTrial
from linestep._objective import Objective
from linestep._step import Evaluations, Status
from linestep.searches.armijo import Armijo
from linestep.searches.hager_zhang import HagerZhang, HagerZhangStart

# ---------------------------------------------------------------------------------
# The conditions, written as in [HZ05] §4: (T1), (T2), (AW) and φ(t) ≤ φ(0) + ε_k
# (labels as recalled from memory).


def check_accepted(step, f0, d0, direction, *, c1=0.1, c2=0.9, epsilon_k):
    """Assert the step meets (Wolfe) or (approximate Wolfe and φ(t) ≤ φ(0) + ε_k).

    Returns which one held ("wolfe" or "approximate").
    """
    assert step.status is Status.accepted, step.message
    t, value = step.size, step.value
    slope = float(step.gradient @ direction)
    assert t > 0.0 and math.isfinite(value) and math.isfinite(slope)
    wolfe = value - f0 <= c1 * t * d0 and slope >= c2 * d0
    approximate = (2.0 * c1 - 1.0) * d0 >= slope >= c2 * d0 and value <= f0 + epsilon_k
    assert wolfe or approximate, (t, value, slope, f0, d0)
    kind = "wolfe" if wolfe else "approximate"
    assert ("approximate" in step.message) == (kind == "approximate"), step.message
    return kind


def run(search, f, g, x, d, **kwargs):
    """Call `search` with f(x), ∇f(x) supplied; return the step, φ(0) and φ'(0)."""
    f0, g0 = f(x), g(x)
    step = search((f, g), x, d, value=f0, gradient=g0, **kwargs)
    return step, f0, float(g0 @ d)


# ---------------------------------------------------------------------------------
# Invented test problems.


def random_quadratic(seed, n, log10_condition):
    """`quadratic` with κ = 10^log10_condition, and the generator for drawing points."""
    rng = np.random.default_rng(seed)
    return (*quadratic(rng, n, log10_condition), rng)


def random_wavy(seed, n):
    """Nonconvex smooth f = ½s‖x‖² + Σ a_k sin(w_k·x + p_k): bounded below, many minima."""
    rng = np.random.default_rng(seed)
    s = 10.0 ** rng.uniform(-2, 1)
    w = rng.standard_normal((5, n)) * 10.0 ** rng.uniform(-1, 1)
    a = rng.standard_normal(5)
    p = rng.uniform(0, 2 * math.pi, 5)

    def f(x):
        return float(0.5 * s * x @ x + a @ np.sin(w @ x + p))

    def g(x):
        return s * x + (a * np.cos(w @ x + p)) @ w

    return f, g, rng


def mt_functions():
    """The six 1-D functions of [MT94] §5 with the paper's parameters (recalled)."""
    return [("mt1", rational(2.0)), ("mt2", quintic(0.004)), ("mt3", wiggly(0.01, 39)),
            ("mt4", yanai_ozawa_kaneko(0.001, 0.001)),
            ("mt5", yanai_ozawa_kaneko(0.01, 0.001)),
            ("mt6", yanai_ozawa_kaneko(0.001, 0.01))]


def one_dimensional(phi):
    return (lambda x: phi(float(x[0]))[0]), (lambda x: np.array([phi(float(x[0]))[1]]))


# ---------------------------------------------------------------------------------
# Exact behaviour on simple problems (counts determined by B1, S1 and U0–U3 [HZ05]).


def square(x):
    return float(x @ x)


def square_gradient(x):
    return 2.0 * x


def test_unit_step_overshoot_takes_one_secant_step():
    # φ(t) = 25(1 − 2t)²·4: t = 1 has φ'(1) > 0 (B1), the secant of φ' gives t = 0.5.
    x = np.array([3.0, -4.0])
    step, f0, d0 = run(HagerZhang(), square, square_gradient, x, -square_gradient(x))
    assert (step.size, step.value) == (0.5, 0.0)
    assert step.evaluations == Evaluations(values=2, gradients=2)
    assert check_accepted(step, f0, d0, -square_gradient(x), epsilon_k=0.0) == "wolfe"
    assert step.message.startswith("The step satisfies the Wolfe conditions")


def test_cubic_replaces_the_secant_while_values_inform():
    # Invented φ(t) = t³/3 − t/4: t = 1 has φ' > 0 (B1). The secant of φ' through 0 and
    # 1 gives 0.25; the cubic matching φ and φ' at both ends is φ itself, so its
    # minimiser 0.5 is exact, and (T1)–(T2) hold there (our rule, see `_BracketSearch.model`).
    f = lambda x: float(x[0] ** 3 / 3.0 - 0.25 * x[0])  # noqa: E731
    g = lambda x: np.array([x[0] ** 2 - 0.25])  # noqa: E731
    step, f0, d0 = run(HagerZhang(record_trials=True), f, g, np.zeros(1), np.ones(1))
    assert [trial.size for trial in step.trials] == [1.0, pytest.approx(0.5, rel=1e-12)]
    assert check_accepted(step, f0, d0, np.ones(1), epsilon_k=0.0) == "wolfe"
    # Where the end values differ by less than 10·ε_k the secant is kept: a huge ε
    # (with |φ(0)| = 1, ε_k = ε) makes every value difference "rounding level".
    secant, _, _ = run(HagerZhang(epsilon=1e3, record_trials=True),
                       lambda x: 1.0 + f(x), g, np.zeros(1), np.ones(1))
    assert secant.trials[1].size == pytest.approx(0.25, rel=1e-12)


def test_acceptable_first_trial_costs_one_evaluation():
    x = np.array([3.0, -4.0])
    step, _, _ = run(HagerZhang(initial=0.5), square, square_gradient, x,
                     -square_gradient(x))
    assert step.size == 0.5
    assert step.evaluations == Evaluations(values=1, gradients=1)


def test_short_trial_expands_by_rho():
    # B3 [HZ05]: trials grow by ρ = 5 while φ' < σφ'(0) = −90 (φ'(t) = −100 + 200t);
    # the fourth, t = 0.125, meets (T1)–(T2).
    x = np.array([3.0, -4.0])
    search = HagerZhang(initial=0.001, record_trials=True)
    step, _, _ = run(search, square, square_gradient, x, -square_gradient(x))
    assert [trial.size for trial in step.trials] == [0.001, 0.001 * 5, 0.001 * 5 * 5,
                                                     0.001 * 5 * 5 * 5]
    assert step.ok and step.size == pytest.approx(0.125, rel=1e-15)


def kinked(x):
    """φ(t) = 3t² − t for t < 1, then 2 − (t − 1)/10: high but still decreasing."""
    t = x[0]
    return float(3.0 * t * t - t if t < 1.0 else 2.0 - 0.1 * (t - 1.0))


def kinked_gradient(x):
    t = x[0]
    return np.array([6.0 * t - 1.0 if t < 1.0 else -0.1])


def test_high_decreasing_trial_bisects_with_theta():
    # B2 → U3 [HZ05]: φ(4) > φ(0) + ε_k with φ'(4) < 0, so bisect [0, 4] at θ = 0.5:
    # 2 and 1 are high (U3c), 0.5 has φ' ≥ 0 (U3a); the secant on [0, 0.5] then hits
    # the minimiser 1/6 of 3t² − t.
    search = HagerZhang(initial=4.0, record_trials=True)
    step, f0, d0 = run(search, kinked, kinked_gradient, np.zeros(1), np.ones(1))
    assert [trial.size for trial in step.trials] == [4.0, 2.0, 1.0, 0.5, step.size]
    assert step.size == pytest.approx(1.0 / 6.0, rel=1e-15)
    assert check_accepted(step, f0, d0, np.ones(1), epsilon_k=0.0) == "wolfe"


def test_theta_sets_the_bisection_point():
    # θ = 0.25: U3 tries 1 (high), then 0.25, where (T1)–(T2) hold.
    search = HagerZhang(initial=4.0, theta=0.25, record_trials=True)
    step, _, _ = run(search, kinked, kinked_gradient, np.zeros(1), np.ones(1))
    assert [trial.size for trial in step.trials] == [4.0, 1.0, 0.25]
    assert step.ok


def test_unbounded_ray_stops_at_max_size():
    # f = −Σx: φ' = −2 everywhere. Trials 1, 5, …, 5^14, then 1e10 (capped): 16 points.
    f = lambda x: float(-x.sum())  # noqa: E731
    g = lambda x: -np.ones_like(x)  # noqa: E731
    x = np.zeros(2)
    step, _, _ = run(HagerZhang(), f, g, x, np.ones(2))
    assert step.status is Status.step_too_large
    assert step.size == 1e10
    assert step.evaluations == Evaluations(values=16, gradients=16)


def test_not_descent_evaluates_nothing():
    x = np.array([1.0, 2.0])
    step, _, _ = run(HagerZhang(), square, square_gradient, x, square_gradient(x))
    assert step.status is Status.not_descent
    assert step.size == 0.0 and step.x is x
    assert step.evaluations == Evaluations(values=0, gradients=0)


def test_nan_region_shrinks_and_accepts():
    # f = (x − 1)² for x < 2, NaN beyond. Trial 10 is NaN; the next is 10% of the way
    # (our safeguard), t = 1, the exact minimiser: (T1)–(T2) hold.
    def f(x):
        return float((x[0] - 1.0) ** 2) if x[0] < 2.0 else math.nan

    def g(x):
        return np.array([2.0 * (x[0] - 1.0)]) if x[0] < 2.0 else np.array([math.nan])

    step, f0, d0 = run(HagerZhang(initial=10.0), f, g, np.zeros(1), np.ones(1))
    assert step.size == 1.0 and step.value == 0.0
    assert step.evaluations == Evaluations(values=2, gradients=2)
    check_accepted(step, f0, d0, np.ones(1), epsilon_k=0.0)


def test_nan_gradient_only_counts_as_too_long():
    def g(x):
        return np.array([2.0 * (x[0] - 1.0)]) if x[0] < 2.0 else np.array([math.inf])

    step, _, _ = run(HagerZhang(initial=10.0), lambda x: float((x[0] - 1.0) ** 2), g,
                     np.zeros(1), np.ones(1))
    assert step.ok and step.size == 1.0


def test_nowhere_finite_gives_non_finite_and_keeps_x():
    def f(x):
        return 0.0 if not x[0] > 0.0 else math.nan

    def g(x):
        return np.array([-1.0]) if not x[0] > 0.0 else np.array([math.nan])

    x = np.zeros(1)
    step, _, _ = run(HagerZhang(), f, g, x, np.ones(1))
    assert step.status is Status.non_finite
    assert step.x is x and step.size == 0.0


def test_budget_spent_keeps_x_when_nothing_decreased():
    x = np.array([3.0, -4.0])
    step, _, _ = run(HagerZhang(max_evaluations=1), square, square_gradient, x,
                     -square_gradient(x))
    assert step.status is Status.max_evaluations
    assert step.size == 0.0 and step.x is x


def test_budget_spent_returns_best_decrease():
    # Expanding on −Σx: every trial decreases; the budget ends the bracket phase.
    f = lambda x: float(-x.sum())  # noqa: E731
    g = lambda x: -np.ones_like(x)  # noqa: E731
    step, _, _ = run(HagerZhang(max_evaluations=3), f, g, np.zeros(2), np.ones(2))
    assert step.status is Status.max_evaluations
    assert step.size == 25.0


def test_wrong_gradient_collapses_the_interval():
    # The gradient claims descent but f only rises: U3 bisects towards 0 until rounding.
    f = lambda x: float(1.0 + x @ x + abs(x[0]))  # noqa: E731
    g = lambda x: np.array([-1.0, 0.0])  # noqa: E731
    x = np.zeros(2)
    step, _, _ = run(HagerZhang(max_evaluations=200), f, g, x, np.array([1.0, 0.0]))
    assert step.status is Status.interval_too_small
    assert step.x is x


def test_bracket_at_float_spacing_of_large_steps_ends():
    # Regression: φ' jumps from −1 to +1 at T ≈ 1e9 with φ jumping up there, so no
    # point is acceptable and the secants bisect. The bracket reaches the spacing of
    # floats near T (≈1e-7) long before the rounding level of x + t·d at x = 0
    # (≈2e-16); the search must stop there instead of looping without evaluating.
    jump = 1e9 + 12345.678
    f = lambda x: float(-x[0] if x[0] < jump else 10.0 * jump + (x[0] - jump))  # noqa: E731
    g = lambda x: np.array([-1.0 if x[0] < jump else 1.0])  # noqa: E731
    step, f0, d0 = run(HagerZhang(max_evaluations=500), f, g, np.zeros(1), np.ones(1))
    assert step.status is Status.interval_too_small
    assert step.evaluations.values < 100
    assert step.size < jump and jump - step.size < 1e-5
    assert step.value - f0 <= 0.1 * step.size * d0  # the best sufficient-decrease point


def test_float32_is_kept():
    x = np.array([3.0, -4.0], dtype=np.float32)
    step, f0, d0 = run(HagerZhang(), square, square_gradient, x, -square_gradient(x))
    assert step.x.dtype == np.float32
    assert step.ok and step.size == 0.5


# ---------------------------------------------------------------------------------
# The approximate Wolfe conditions where rounding hides the decrease [HZ05] §4.


def test_approximate_wolfe_accepts_when_values_are_equal_by_rounding():
    # f = 1e6 + ½(x − 3)², x at 1e-9 from the minimiser: f(x) − 1e6 ≈ 5e-19 is far below
    # the spacing of floats near 1e6 (≈1.2e-10), so φ(t) = φ(0) in floating point for
    # every useful t: (T1) in the paper's form φ(t) − φ(0) ≤ δ·t·φ'(0) fails, while
    # φ'(1) ≈ 0 meets (AW) [HZ05] §4.
    f = lambda x: float(1e6 + 0.5 * (x[0] - 3.0) ** 2)  # noqa: E731
    g = lambda x: np.array([x[0] - 3.0])  # noqa: E731
    x = np.array([3.0 + 1e-9])
    direction = -g(x)
    step, f0, d0 = run(HagerZhang(approximate_switch=math.inf), f, g, x, direction)
    assert check_accepted(step, f0, d0, direction, epsilon_k=1e-6 * abs(f0)) == "approximate"
    assert step.size == 1.0 and step.value == f0
    assert "approximate Wolfe" in step.message
    assert step.evaluations == Evaluations(values=1, gradients=1)


def test_approximate_wolfe_accepts_where_armijo_cannot_certify_decrease():
    # The same kind of quadratic (invented), evaluated in expanded form so that the
    # cancellation leaves rounding noise of ~1e-8 in f, as sums of large terms do.
    # At x = 1e4 + 1.1e-8 the computed f(x) lies 7.5e-9 below 1e6, while the exact
    # minimiser x − g(x) = 1e4 gives 1e6: every trial looks like a rise, and
    # backtracking on the Armijo condition ends at rounding level. (AW) with
    # φ(1) ≤ φ(0) + ε_k holds at the minimiser itself [HZ05] §4.
    centre = 1e4
    f = lambda x: float(1e6 + (0.5 * x[0] * x[0] - centre * x[0] + 0.5 * centre**2))  # noqa: E731
    g = lambda x: np.array([x[0] - centre])  # noqa: E731
    x = np.array([centre + 1.1e-8])
    direction = -g(x)
    step, f0, d0 = run(HagerZhang(approximate_switch=math.inf), f, g, x, direction)
    assert f0 < 1e6 == step.value  # the rounding noise the test relies on
    assert check_accepted(step, f0, d0, direction, epsilon_k=1e-6 * abs(f0)) == "approximate"
    assert step.size == 1.0 and "approximate Wolfe" in step.message
    assert step.evaluations == Evaluations(values=1, gradients=1)
    armijo, _, _ = run(Armijo(), f, g, x, direction)
    assert armijo.status is Status.step_too_small and armijo.x is x


def test_epsilon_zero_still_accepts_equal_values():
    # With ε = 0 the bound φ(t) ≤ φ(0) + ε_k reads φ(t) ≤ φ(0); values that round to
    # equal still pass.
    f = lambda x: float(1e6 + 0.5 * (x[0] - 3.0) ** 2)  # noqa: E731
    g = lambda x: np.array([x[0] - 3.0])  # noqa: E731
    x = np.array([3.0 + 1e-9])
    step, _, _ = run(HagerZhang(epsilon=0.0, approximate_switch=math.inf), f, g, x, -g(x))
    assert step.ok and "approximate Wolfe" in step.message


def test_running_average_of_the_epsilon_scale():
    # [HZ06] §3 (recalled): Q_k = 1 + Δ·Q_{k−1}, C_k = C_{k−1} + (|f_k| − C_{k−1})/Q_k.
    search = HagerZhang(memory_weight=0.7)
    values = []
    x = np.array([3.0, -4.0])
    for _ in range(3):
        values.append(square(x))
        step = search((square, square_gradient), x, -0.1 * square_gradient(x))
        x = step.x
    weight = scale = 0.0
    for value in values:
        weight = 1.0 + 0.7 * weight
        scale += (abs(value) - scale) / weight
    assert search._scale == pytest.approx(scale, rel=1e-15)
    search.reset()
    assert (search._weight, search._scale) == (0.0, 0.0)


def test_without_memory_the_scale_is_the_current_value():
    search = HagerZhang(memory_weight=0.0)
    x = np.array([3.0, -4.0])
    for _ in range(2):
        value = square(x)
        x = search((square, square_gradient), x, -0.1 * square_gradient(x)).x
        assert search._scale == abs(value)


def test_approximate_conditions_switch_on_once_values_settle():
    # [HZ06] §3 (recalled): (AW) is used once |f(x_k) − f(x_{k−1})| ≤ ω·C_k. The
    # rounding-level function of the test above: a fresh search asks for (T1)–(T2),
    # which φ(t) = φ(0) cannot meet, so it expands and ends without accepting.
    f = lambda x: float(1e6 + 0.5 * (x[0] - 3.0) ** 2)  # noqa: E731
    g = lambda x: np.array([x[0] - 3.0])  # noqa: E731
    x = np.array([3.0 + 1e-9])
    search = HagerZhang(max_evaluations=10)
    first, _, _ = run(search, f, g, x, -g(x))
    assert "approximate" not in first.message and not search._approximate
    # A second call from a point with the same value: |f_k − f_{k−1}| = 0 ≤ ω·C_k.
    second, f0, d0 = run(search, f, g, x, -g(x))
    assert search._approximate
    assert check_accepted(second, f0, d0, -g(x), epsilon_k=1e-6 * abs(f0)) == "approximate"
    search.reset()
    assert (search._previous_value, search._approximate) == (None, False)
    assert (search._weight, search._scale) == (0.0, 0.0)


def test_switch_waits_while_values_change():
    # Values that change by more than ω·C_k keep the standard conditions.
    search = HagerZhang(approximate_switch=1e-3)
    x = np.array([3.0, -4.0])
    for _ in range(3):
        step = search((square, square_gradient), x, -0.1 * square_gradient(x))
        assert step.ok and "approximate" not in step.message
        x = step.x
    assert not search._approximate


def scipy_gh12157(alpha):
    """φ and φ' of scipy's line-search regression case (scipy/optimize/tests/
    test_linesearch.py, test_scalar_search_wolfe2_regression, gh-12157): linear
    with slope −3π/2 up to 1, then cos(3πα/2 − π); its first minimiser is 4/3."""
    if alpha < 1.0:
        return -1.5 * math.pi * (alpha - 1.0), -1.5 * math.pi
    return (math.cos(1.5 * math.pi * alpha - math.pi),
            -1.5 * math.pi * math.sin(1.5 * math.pi * alpha - math.pi))


def test_scipy_regression_case_is_not_accepted_at_the_step_cap():
    # Issue 14, §3: each expansion by 5 lands at the same phase (φ = 0, φ' = −3π/2), and
    # with (AW) from the first call the search ends at the cap 1e10, where (AW) does
    # hold but (T1) fails by far. The first call now asks for (T1)–(T2).
    f, g = one_dimensional(scipy_gh12157)
    step, f0, d0 = run(HagerZhang(), f, g, np.zeros(1), np.ones(1))
    assert check_accepted(step, f0, d0, np.ones(1), epsilon_k=0.0) == "wolfe"
    # (T1) bounds the step: φ ≥ −1 gives t ≤ (φ(0) + 1)/(δ·|φ'(0)|) ≈ 12.1.
    assert step.size < 12.2
    old, f0, d0 = run(HagerZhang(approximate_switch=math.inf), f, g, np.zeros(1),
                      np.ones(1))
    assert old.size == 1e10
    assert check_accepted(old, f0, d0, np.ones(1), epsilon_k=1e-6 * abs(f0)) == "approximate"


# ---------------------------------------------------------------------------------
# Property tests: every accepted step meets the conditions of [HZ05] as stated.


@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 12),
       log_condition=st.floats(0.0, 6.0), log_scale=st.floats(-3.0, 3.0),
       steepest=st.booleans(), log_first=st.floats(-4.0, 4.0))
def test_quadratics_accept_with_the_stated_conditions(seed, n, log_condition, log_scale,
                                                      steepest, log_first):
    f, g, rng = random_quadratic(seed, n, log_condition)
    x = rng.standard_normal(n) * 10.0**log_scale
    direction = -g(x) if steepest else rng.standard_normal(n)
    if float(g(x) @ direction) >= 0.0:
        direction = -direction
    step, f0, d0 = run(HagerZhang(initial=10.0**log_first, max_evaluations=80), f, g, x,
                       direction)
    if d0 == 0.0:
        return
    check_accepted(step, f0, d0, direction, epsilon_k=1e-6 * abs(f0))


@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 6), log_first=st.floats(-3.0, 3.0),
       c1=st.floats(0.01, 0.45), c2_gap=st.floats(0.0, 1.0))
def test_nonconvex_functions_accept_with_the_stated_conditions(seed, n, log_first, c1,
                                                               c2_gap):
    c2 = c1 + c2_gap * (0.99 - c1)
    f, g, rng = random_wavy(seed, n)
    x = rng.standard_normal(n) * 3.0
    direction = -g(x)
    search = HagerZhang(c1=c1, c2=c2, initial=10.0**log_first, max_evaluations=80)
    step, f0, d0 = run(search, f, g, x, direction)
    if d0 == 0.0:
        return
    check_accepted(step, f0, d0, direction, c1=c1, c2=c2, epsilon_k=1e-6 * abs(f0))


@pytest.mark.parametrize("name, phi", mt_functions(), ids=[n for n, _ in mt_functions()])
@pytest.mark.parametrize("first", [1e-3, 1e-1, 1e1, 1e3])  # the starts of [MT94] §5
def test_more_thuente_functions(name, phi, first):
    # [MT94] publish evaluation counts for their own search with other constants, so
    # only the acceptance conditions are compared here.
    f, g = one_dimensional(phi)
    step, f0, d0 = run(HagerZhang(initial=first), f, g, np.zeros(1), np.ones(1))
    check_accepted(step, f0, d0, np.ones(1), epsilon_k=1e-6 * abs(f0))


def test_approximate_wolfe_accepts_a_long_step_with_little_decrease():
    # [MT94] function 1, φ(t) = −t/(t² + 2), from t = 1000: φ'(1000) ≈ 1e-6 > 0 is small
    # and φ(1000) < φ(0), so (AW) holds although (T1) asks for φ ≤ −50. This is the
    # documented price of (AW) [HZ05] §4; CG_DESCENT's switch rule [HZ06] avoids it.
    f, g = one_dimensional(mt_functions()[0][1])
    step, f0, d0 = run(HagerZhang(initial=1000.0, approximate_switch=math.inf), f, g,
                       np.zeros(1), np.ones(1))
    assert check_accepted(step, f0, d0, np.ones(1), epsilon_k=0.0) == "approximate"
    assert step.size == 1000.0 and step.evaluations == Evaluations(values=1, gradients=1)
    # With the switch (default), the first call asks for (T1)–(T2).
    step, f0, d0 = run(HagerZhang(initial=1000.0), f, g, np.zeros(1), np.ones(1))
    assert check_accepted(step, f0, d0, np.ones(1), epsilon_k=0.0) == "wolfe"


# ---------------------------------------------------------------------------------
# Side by side with scipy.optimize.line_search (strong Wolfe, c1 = 1e-4, c2 = 0.9).


def rosenbrock(x):
    return float(100.0 * (x[1] - x[0] ** 2) ** 2 + (1.0 - x[0]) ** 2)


def rosenbrock_gradient(x):
    return np.array([-400.0 * x[0] * (x[1] - x[0] ** 2) - 2.0 * (1.0 - x[0]),
                     200.0 * (x[1] - x[0] ** 2)])


def _scipy_cases():
    f_q, g_q, _ = random_quadratic(7, 10, 3.0)
    f_w, g_w, _ = random_wavy(11, 4)
    return [
        ("rosenbrock", rosenbrock, rosenbrock_gradient, np.array([-1.2, 1.0])),
        ("quadratic10", f_q, g_q, np.linspace(-1.0, 1.0, 10)),
        ("wavy4", f_w, g_w, np.array([0.5, -1.0, 2.0, 0.3])),
        ("square", square, square_gradient, np.array([3.0, -4.0])),
    ]


@pytest.mark.parametrize("name, f, g, x", _scipy_cases(), ids=[c[0] for c in _scipy_cases()])
def test_side_by_side_with_scipy(name, f, g, x, record_property):
    optimize = pytest.importorskip("scipy.optimize")
    direction = -g(x)
    step, f0, d0 = run(HagerZhang(), f, g, x, direction)
    check_accepted(step, f0, d0, direction, epsilon_k=1e-6 * abs(f0))
    counted = Objective(f, g)
    alpha, *_ = optimize.line_search(counted.value, counted.gradient, x, direction,
                                     gfk=g(x), old_fval=f0)
    assert alpha is not None
    value, slope = f(x + alpha * direction), float(g(x + alpha * direction) @ direction)
    assert value <= f0 + 1e-4 * alpha * d0 and abs(slope) <= 0.9 * abs(d0)  # strong Wolfe
    record_property("evaluations", {"HagerZhang": step.evaluations.total,
                                    "scipy": counted.evaluations.total})
    # Our own tolerance (not from a source): on these smooth problems HagerZhang should
    # not need many more evaluations than scipy's search.
    assert step.evaluations.total <= 2 * counted.evaluations.total + 2


# ---------------------------------------------------------------------------------
# Options, initial strategies, repr and bad arguments.


@pytest.mark.parametrize("initial", [UnitTrial(), PreviousTrial(growth=2.0),
                                     QuadraticTrial(), ScaledTrial(), 0.3, HagerZhangStart()])
def test_initial_strategies(initial):
    f, g, rng = random_quadratic(3, 5, 2.0)
    search = HagerZhang(initial=initial)
    x = rng.standard_normal(5)
    for _ in range(4):
        step, f0, d0 = run(search, f, g, x, -g(x))
        check_accepted(step, f0, d0, -g(x), epsilon_k=1e-6 * abs(f0))
        x = step.x


def test_start_rule_i0_cases():
    # [HZ06] I0 (recalled): (a) ψ0‖x‖∞/‖g‖∞, (b) ψ0|f|/‖g‖₂², (c) 1; I2: ψ2·previous.
    start = HagerZhangStart(fraction=0.5, probe=None)
    search = HagerZhang(initial=start, record_trials=True)
    x = np.array([3.0, -4.0])
    assert search((square, square_gradient), x, -square_gradient(x)).trials[0].size == 0.25
    f = lambda x: float(x @ x + 2.0)  # noqa: E731
    z = np.zeros(2)
    g0 = np.array([-1.0, 1.0])  # supplied gradient: ‖g‖₂² = 2, f(0) = 2
    search.reset()
    step = search((f, square_gradient), z, -g0, gradient=g0)
    assert step.trials[0].size == pytest.approx(0.5 * 2.0 / 2.0, rel=1e-15)
    search.reset()
    step = search((square, square_gradient), z, -g0, value=0.0, gradient=g0)
    assert step.trials[0].size == 1.0
    accepted = search((square, square_gradient), x, -square_gradient(x))
    again = search((square, square_gradient), x, -square_gradient(x))
    assert again.trials[0].size == 2.0 * accepted.size


def test_start_rule_i1_fits_a_quadratic_through_one_probe():
    # [HZ06] I1 (recalled): φ at ψ1·t_prev, then the minimiser of the quadratic through
    # φ(0), φ'(0) and that value; exact on a quadratic φ. One value is spent on the probe.
    search = HagerZhang(initial=HagerZhangStart(probe=0.1), record_trials=True)
    x = np.array([3.0, -4.0])
    first = search((square, square_gradient), x, -square_gradient(x))
    x = first.x
    step = search((square, square_gradient), x, -square_gradient(x), value=square(x),
                  gradient=square_gradient(x))
    assert step.trials[0].size == pytest.approx(0.1 * first.size, rel=1e-15)
    assert step.trials[1].size == pytest.approx(0.5, rel=1e-9)
    assert step.evaluations == Evaluations(values=2, gradients=1)
    # A concave quadratic through the probe falls back to I2 (growth·t_prev).
    f = lambda x: float(-(x @ x))  # noqa: E731
    g = lambda x: -2.0 * x  # noqa: E731
    search.reset()
    search._memory.size = 1.0  # as after an accepted unit step
    step = search((f, g), x, -g(x), value=f(x), gradient=g(x))
    assert step.trials[0].size == 0.1 and step.trials[1].size == 2.0


def test_repr_rebuilds():
    search = HagerZhang(c1=0.2, c2=0.5, epsilon=1e-8, theta=0.4, bisect_threshold=0.5,
                        expand=3.0, memory_weight=0.5, approximate_switch=1e-2,
                        initial=HagerZhangStart(),
                        max_size=1e6, max_evaluations=60, record_trials=True)
    namespace = {"HagerZhang": HagerZhang, "HagerZhangStart": HagerZhangStart}
    assert repr(eval(repr(search), namespace)) == repr(search)
    assert repr(HagerZhang()) == (
        "HagerZhang(c1=0.1, c2=0.9, epsilon=1e-06, theta=0.5, bisect_threshold=0.66, "
        "expand=5.0, memory_weight=0.7, approximate_switch=0.001, initial=1.0, "
        "max_size=10000000000.0, "
        "max_evaluations=40, record_trials=False)"
    )
