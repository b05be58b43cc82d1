"""Tests of `Wolfe` (Nocedal & Wright 2006, Alg. 3.5–3.6), strong and weak forms."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from linestep import Status
from linestep.searches.more_thuente import MoreThuente
from linestep.searches.wolfe import Wolfe

from .test_more_thuente import (
    DATA,
    assert_same_conditions_as_scipy,
    assert_strong_wolfe,
    constants,
    kink_1d,
    make_phi,
    quadratic_1d,
    search_phi,
    sines_with_start,
    spd_quadratic,
)


def assert_wolfe(step, f0: float, d0: float, c1: float, c2: float, strong: bool,
                 direction=None):
    """Nocedal & Wright eqs. 3.6 (weak) / 3.7 (strong), exactly as stated."""
    if strong:
        assert_strong_wolfe(step, f0, d0, c1, c2, direction)
        return
    slope = float(step.gradient @ (np.array([1.0]) if direction is None else direction))
    assert step.value <= f0 + c1 * step.size * d0
    assert slope >= c2 * d0


def trial_sizes(step) -> list[float]:
    return [trial.size for trial in step.trials]


# -- exact behaviour on simple problems -------------------------------------------------
def test_unit_step_accepted_in_one_evaluation():
    # φ(t) = (t − 2)²: at t = 1, φ = 1 ≤ 4 − 4e-4 and |φ'| = 2 ≤ 0.9·4.
    step = Wolfe()(quadratic_1d(2.0), np.array([0.0]), np.array([1.0]), value=4.0,
                   gradient=np.array([-4.0]))
    assert step.status is Status.accepted
    assert step.size == 1.0
    assert step.evaluations.values == 1 and step.evaluations.gradients == 1


def test_too_short_first_trial_extrapolates_within_bounds():
    # Same φ with c2 = 0.1: t = 1 is too short (|φ'| = 2 > 0.4). The cubic through t = 0
    # and t = 1 is exact (t = 2) but the bracketing trial must lie in
    # [1 + 1.1·1, 1 + 4·1] = [2.1, 5]; at 2.1, |φ'| = 0.2 ≤ 0.4.
    step = Wolfe(c2=0.1, record_trials=True)(quadratic_1d(2.0), np.array([0.0]),
                                             np.array([1.0]))
    assert step.status is Status.accepted
    assert trial_sizes(step) == [1.0, pytest.approx(2.1)]


def test_zoom_is_exact_on_a_quadratic():
    f = lambda x: float(x @ x)  # noqa: E731
    g = lambda x: 2 * x  # noqa: E731
    x = np.array([3.0, -4.0])
    step = Wolfe(record_trials=True)((f, g), x, -g(x), value=25.0, gradient=g(x))
    assert trial_sizes(step) == [1.0, 0.5]
    assert step.value == 0.0


def test_trusted_cubic_reaches_a_minimiser_near_the_end():
    # An ill-conditioned 1-D quadratic: minimiser at t = 1e-6, first trial 1. t = 1 fails
    # sufficient decrease and costs no gradient (N&W Alg. 3.6), so the quadratic alone
    # models the bracket and is kept a tenth inside it: t = 0.1. There it points near
    # the end again; φ'(0.1) lets the cubic agree with it (both exact), and the third
    # trial is the minimiser itself.
    fun = lambda x: 0.5e6 * float((x[0] - 1e-6) ** 2)  # noqa: E731
    grad = lambda x: 1e6 * (x - 1e-6)  # noqa: E731
    step = Wolfe(record_trials=True)((fun, grad), np.array([0.0]), np.array([1.0]))
    assert step.status is Status.accepted
    assert trial_sizes(step)[:2] == [1.0, pytest.approx(0.1)] and len(step.trials) == 3
    assert step.size == pytest.approx(1e-6)
    # x, then values at the three trials; gradients at x, at 0.1 and at the minimiser.
    assert step.evaluations.values == 4 and step.evaluations.gradients == 3


def test_a_trial_rejected_on_its_value_costs_no_gradient():
    # φ(t) = (t − 0.5)²·4 + …: from x = (3, −4) along −∇f the unit step overshoots to a
    # value no lower than φ(0); the quadratic then gives the exact minimiser 0.5.
    f = lambda x: float(x @ x)  # noqa: E731
    g = lambda x: 2 * x  # noqa: E731
    x = np.array([3.0, -4.0])
    step = Wolfe(record_trials=True)((f, g), x, -g(x), value=25.0, gradient=g(x))
    assert [trial.slope for trial in step.trials][0] is None
    assert step.evaluations.values == 2 and step.evaluations.gradients == 1


# -- the six functions of Moré & Thuente 1994 --------------------------------------------
CASES = [pytest.param(table, row[0], id=f"table{table['table']}-a0={row[0]:g}")
         for table in DATA["tables"] for row in table["rows"]]


@pytest.mark.parametrize("strong", [True, False], ids=["strong", "weak"])
@pytest.mark.parametrize(("table", "alpha0"), CASES)
def test_paper_functions(table, alpha0, strong):
    """Moré & Thuente 1994 §5 functions, c1/c2 per table (recalled from memory):
    the accepted step satisfies the conditions claimed; the budget is not needed."""
    c1, c2 = table["c1"], table["c2"]
    step, f0, d0 = search_phi(Wolfe(c1=c1, c2=c2, strong=strong, initial=alpha0),
                              make_phi(table))
    assert step.status is Status.accepted
    assert_wolfe(step, f0, d0, c1, c2, strong)
    assert step.evaluations.values <= 25


@pytest.mark.parametrize("table", DATA["tables"], ids=lambda t: f"table{t['table']}")
def test_same_conditions_as_scipy(table):
    """scipy.optimize.line_search implements the same algorithm (Nocedal & Wright
    Alg. 3.5–3.6, strong form). From the same unit first step our accepted step
    satisfies the same conditions, in at most scipy's trial count + 1.

    Measured (trial points; scipy's function/gradient counts), scipy 1.17:
    table 1: ours 3, scipy 3/2; table 2: 6, 9/6; table 3: 1, 1/1; table 4: 2, 2/1;
    table 5: 6, scipy fails after 12/11; table 6: 5, 9/7. scipy evaluates no gradient
    at trials that fail sufficient decrease, we always do. Tables 4–6 have c1 = c2,
    which scipy refuses, so scipy runs with c2 one ulp above c1.
    """
    assert_same_conditions_as_scipy(Wolfe, table)


# -- properties --------------------------------------------------------------------------
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 8), log_condition=st.floats(0, 6),
       scale=st.floats(-3, 3), pair=constants(), strong=st.booleans())
def test_wolfe_conditions_on_random_quadratics(seed, n, log_condition, scale, pair, strong):
    """Random SPD quadratics, condition numbers up to 1e6 (invented problems)."""
    c1, c2 = pair
    fun, grad, x = spd_quadratic(seed, n, log_condition)
    d = -(10.0**scale) * grad(x)
    step = Wolfe(c1=c1, c2=c2, strong=strong)((fun, grad), x, d)
    assert step.status is Status.accepted
    assert_wolfe(step, fun(x), float(grad(x) @ d), c1, c2, strong, direction=d)


@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 6), scale=st.floats(-2, 2),
       pair=constants(), strong=st.booleans())
def test_wolfe_conditions_on_nonconvex_functions(seed, n, scale, pair, strong):
    """Sums of sines plus a quadratic (smooth, bounded below, many local minima; invented)."""
    c1, c2 = pair
    fun, grad, x = sines_with_start(seed, n)
    g = grad(x)
    if not float(g @ g) > 1e-12:
        return
    d = -(10.0**scale) * g
    step = Wolfe(c1=c1, c2=c2, strong=strong)((fun, grad), x, d)
    assert step.status is Status.accepted
    assert_wolfe(step, fun(x), float(g @ d), c1, c2, strong, direction=d)


# -- statuses ----------------------------------------------------------------------------
@pytest.mark.parametrize("direction", [[1.0], [0.0]], ids=["ascent", "flat"])
def test_not_descent_leaves_x_and_evaluates_nothing(direction):
    x = np.array([3.0])
    step = Wolfe()(quadratic_1d(), x, np.array(direction), value=4.0, gradient=np.array([4.0]))
    assert step.status is Status.not_descent
    assert step.x is x
    assert step.size == 0.0
    assert step.evaluations.values == 0 and step.evaluations.gradients == 0


@pytest.mark.parametrize("strong", [True, False], ids=["strong", "weak"])
@pytest.mark.parametrize("bad", [math.nan, math.inf], ids=["nan", "inf"])
@pytest.mark.parametrize("first", [2.0, 10.0, 1e6])
def test_non_finite_region_shrinks_the_step(bad, first, strong):
    # f is a quadratic with minimiser t = 1 for t < 1.5 and NaN/inf beyond.
    def fun(x):
        return float((x[0] - 1.0) ** 2) if x[0] < 1.5 else bad

    def grad(x):
        return 2.0 * (x - 1.0) if x[0] < 1.5 else np.array([bad])

    step = Wolfe(initial=first, strong=strong)((fun, grad), np.array([0.0]), np.array([1.0]))
    assert step.status is Status.accepted
    assert 0.0 < step.size < 1.5
    assert math.isfinite(step.value) and np.all(np.isfinite(step.x))


def test_non_finite_beyond_the_first_expansion():
    # The first trial is too short; the region beyond t = 1.5 is NaN. The expansion lands
    # there, and the zoom shrinks back into the finite part.
    fun = lambda x: float((x[0] - 1.4) ** 2) if x[0] < 1.5 else math.nan  # noqa: E731
    grad = lambda x: 2.0 * (x - 1.4) if x[0] < 1.5 else np.array([math.nan])  # noqa: E731
    step = Wolfe(c2=0.1, initial=0.1)((fun, grad), np.array([0.0]), np.array([1.0]))
    assert step.status is Status.accepted
    assert step.size < 1.5


def test_non_finite_everywhere_gives_non_finite():
    step = Wolfe()((lambda x: math.nan if x[0] > 0 else 0.0, lambda x: -np.ones(1)),
                   np.array([0.0]), np.array([1.0]), value=0.0, gradient=np.array([-1.0]))
    assert step.status is Status.non_finite
    assert step.size == 0.0 and step.x[0] == 0.0


@pytest.mark.parametrize("strong", [True, False], ids=["strong", "weak"])
def test_unbounded_below_stops_at_max_size(strong):
    # f(x) = −x along d = [1]: φ(t) = −t decreases for ever.
    step = Wolfe(max_size=1e6, strong=strong)((lambda x: -float(x[0]), lambda x: -np.ones(1)),
                                              np.array([0.0]), np.array([1.0]))
    assert step.status is Status.step_too_large
    assert step.size == 1e6 and step.value == -1e6
    assert step.evaluations.values <= 40


def test_concave_stretch_extrapolates_to_the_reach():
    # Issue 14, §3 (invented ray): φ(t) = −t² − 0.01·t. The cubic through two trials
    # of a concave quadratic degenerates at rounding level, with a "minimiser" far
    # ahead; the trial goes to the reach t + 4·expand·(t − t_prev) = t + 16·(t − t_prev),
    # never crawls, and needs no more trials than Moré–Thuente's (whose bound is 4).
    objective = (lambda x: float(-x[0] ** 2 - 0.01 * x[0]),
                 lambda x: np.array([-2.0 * x[0] - 0.01]))
    wolfe = Wolfe(max_size=1e6, record_trials=True)(objective, np.zeros(1), np.ones(1))
    more_thuente = MoreThuente(max_size=1e6, record_trials=True)(objective, np.zeros(1),
                                                                 np.ones(1))
    assert wolfe.status is more_thuente.status is Status.step_too_large
    assert trial_sizes(wolfe)[:3] == [1.0, 17.0, 273.0]
    assert len(wolfe.trials) <= len(more_thuente.trials)


def test_no_minimiser_ahead_takes_the_blind_step():
    # φ(t) = −t: the cubic has no minimiser, so each trial is t + expand·(t − t_prev)
    # (Moré & Thuente 1994, case 3's bound), up to max_size.
    objective = (lambda x: float(-x[0]), lambda x: np.array([-1.0]))
    step = Wolfe(max_size=1e3, record_trials=True)(objective, np.zeros(1), np.ones(1))
    assert trial_sizes(step) == [1.0, 5.0, 21.0, 85.0, 341.0, 1000.0]
    assert step.status is Status.step_too_large


@pytest.mark.parametrize("strong", [True, False], ids=["strong", "weak"])
def test_random_concave_rays_need_no_more_trials_than_more_thuente(strong):
    # Invented rays f(x) = bᵀx − ½·xᵀDx (the setting of benchmarks/concave_rays.py):
    # the median number of trials stays within one of Moré–Thuente's.
    rng = np.random.default_rng(14)
    counts = {"wolfe": [], "more_thuente": []}
    for _ in range(20):
        eigenvalues = 10.0 ** rng.uniform(-3.0, 3.0, 5)
        b = rng.standard_normal(5)
        objective = (lambda x, b=b, e=eigenvalues: float(b @ x - 0.5 * x @ (e * x)),
                     lambda x, b=b, e=eigenvalues: b - e * x)
        x0, d = rng.standard_normal(5), rng.standard_normal(5)
        if objective[1](x0) @ d > 0.0:
            d = -d
        for name, search in (("wolfe", Wolfe(max_size=1e6, strong=strong)),
                             ("more_thuente", MoreThuente(max_size=1e6))):
            step = search(objective, x0, d)
            assert step.status is Status.step_too_large
            counts[name].append(step.evaluations.values)
    assert np.median(counts["wolfe"]) <= np.median(counts["more_thuente"]) + 1


def test_kink_collapses_the_bracket():
    # φ(t) = |t − k|: |φ'| = 1 everywhere, so the strong curvature test with c2 = 0.5 can
    # never hold; the bracket shrinks to rounding level around the kink.
    k = 0.7 * math.sqrt(2.0)
    step = Wolfe(c2=0.5, initial=3.0)(kink_1d(k), np.array([0.0]), np.array([1.0]))
    assert step.status is Status.interval_too_small
    assert step.size == pytest.approx(k, abs=1e-12)
    assert step.value < k  # the best point with sufficient decrease
    # The weak form accepts the first trial past the kink instead.
    weak = Wolfe(c2=0.5, initial=3.0, strong=False)(kink_1d(k), np.array([0.0]),
                                                   np.array([1.0]))
    assert weak.status is Status.accepted


def test_budget_returns_best_sufficient_decrease_point():
    table = DATA["tables"][5]
    step, f0, d0 = search_phi(Wolfe(c1=1e-3, c2=1e-3, initial=1e-3, max_evaluations=4),
                              make_phi(table))
    assert step.status is Status.max_evaluations
    assert step.evaluations.values == 4
    assert step.value <= f0 + 1e-3 * step.size * d0


def test_expand_limits_the_bracketing_growth():
    # φ(t) = (t − 100)²: the cubic's minimiser is 100 exactly, taken up to the reach
    # t + 4·expand·(t − t_prev): with expand = 2, 1 + 8·1 = 9, then 9 + 8·8 = 73, where
    # |φ'| = 54 ≤ 0.9·200 accepts. With the default expand = 4, 1 + 16 = 17 accepts.
    step = Wolfe(expand=2.0, record_trials=True)(quadratic_1d(100.0), np.array([0.0]),
                                                 np.array([1.0]))
    assert trial_sizes(step) == [1.0, 9.0, 73.0]
    assert step.status is Status.accepted
    step = Wolfe(record_trials=True)(quadratic_1d(100.0), np.array([0.0]), np.array([1.0]))
    assert trial_sizes(step) == [1.0, 17.0]


def test_c1_equal_c2_is_legal():
    assert Wolfe(c1=0.3, c2=0.3).c2 == 0.3


def test_repr_rebuilds():
    controller = Wolfe(c1=1e-3, c2=0.1, strong=False, initial=0.5, expand=3.0,
                       max_size=100.0, max_evaluations=30, record_trials=True)
    rebuilt = eval(repr(controller), {"Wolfe": Wolfe})
    assert repr(rebuilt) == repr(controller)
