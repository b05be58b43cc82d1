"""Regression tests for issue 10 ("every bad input gets a clear answer"), items 7–16.

Each test names its item. The objectives are invented (small quadratics and a seeded
least-squares fit); where a value is checked against a formula, the formula is given.
The invalid-argument rows of these items live in tests/test_bad_arguments.py.
"""

from __future__ import annotations

import math
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

from linestep import (
    Armijo,
    Goldstein,
    HagerZhang,
    MoreThuente,
    Objective,
    Status,
    Wolfe,
    descend,
    stopping,
)
from linestep._interpolate import cubic_backtrack
from linestep.rules.barzilai_borwein import BarzilaiBorwein
from linestep.rules.polyak import Polyak
from linestep.stopping import Kind, MaxIterations


def square(x):
    return float(x @ x)


def square_gradient(x):
    return 2.0 * x


PAIR = (square, square_gradient)


def least_squares(dtype, seed=0, rows=50, columns=20):
    """An invented least-squares fit ½‖Ax − b‖² in `dtype`, and its float64 minimiser."""
    rng = np.random.default_rng(seed)
    a = rng.standard_normal((rows, columns)).astype(dtype)
    b = rng.standard_normal(rows).astype(dtype)

    def f(x):
        return 0.5 * float(np.sum((a @ x - b) ** 2))

    def g(x):
        return a.T @ (a @ x - b)

    best = np.linalg.lstsq(a.astype(float), b.astype(float), rcond=None)[0]
    return f, g, best


# ----------------------------------------------------------------- item 7: precision


def test_a_float32_least_squares_fit_ends_converged():
    f, g, best = least_squares(np.float32)
    run = descend((f, g), np.zeros(20, np.float32))
    assert run.converged, run.verdict.reason
    assert run.x.dtype == np.float32
    # float32 resolves x to ~√ε·cond, far from float64's digits; 1e-2 is ample.
    assert np.max(np.abs(run.x - best)) < 1e-2


@pytest.mark.parametrize("controller", [Armijo, Wolfe, MoreThuente, Goldstein])
def test_a_search_stopped_by_rounding_at_a_small_gradient_is_converged(controller):
    # float64 tolerances on a float32 run: the gradient test cannot fire, so the run
    # ends when the search can no longer move, which is convergence at working precision.
    f, g, best = least_squares(np.float32)
    run = descend((f, g), np.zeros(20, np.float32), controller=controller(),
                  stop=stopping.default())
    assert run.converged, run.verdict.reason
    assert run.verdict.reason.startswith("Converged at working precision (float32)")
    assert np.max(np.abs(run.x - best)) < 1e-2


def test_a_search_stopped_by_rounding_at_a_large_gradient_still_fails():
    # A gradient that is wrong (twice too large in one coordinate, invented) makes the
    # search fail at a point where the true gradient is large: that is no convergence.
    def wrong(x):
        g = 2.0 * (x - np.array([1.0, -2.0]))
        return g * np.array([1.0, -1.0])

    run = descend((lambda x: float(np.sum((x - np.array([1.0, -2.0])) ** 2)), wrong),
                  np.array([5.0, 5.0]))
    assert run.verdict.kind is Kind.failed


def test_default_tolerances_follow_the_dtype():
    def tolerances(stop):
        gradient, value = stop.criteria[1], stop.criteria[2]
        return gradient.atol, gradient.rtol, value.rtol

    # float64 tests the gradient absolutely only (no part relative to the start).
    assert tolerances(stopping.default()) == (1e-6, 0.0, 1e-12)
    assert tolerances(stopping.default(dtype=np.float64)) == (1e-6, 0.0, 1e-12)
    atol, rtol, value = tolerances(stopping.default(dtype=np.float32))
    ratio = np.finfo(np.float32).eps / np.finfo(np.float64).eps  # 2**29
    assert atol == 1e-6
    assert rtol == pytest.approx(1e-8 * math.sqrt(ratio))
    assert value == pytest.approx(8 * np.finfo(np.float32).eps)
    # Given numbers are kept as given.
    assert tolerances(stopping.default(dtype=np.float32, gradient_rtol=1e-9,
                                       value_rtol=1e-13))[1:] == (1e-9, 1e-13)


# --------------------------------------------------------------- item 9: answers


@pytest.mark.parametrize("answer", [True, np.True_])
def test_a_callback_returning_true_stops_the_run(answer):
    seen = []

    def callback(progress):
        seen.append(progress.iteration)
        return answer

    run = descend((lambda x: float(x @ x) + float(x[0]) ** 4, lambda x: 2 * x + np.array(
        [4 * x[0] ** 3, 0.0])), np.array([3.0, 1.0]), stop=MaxIterations(50), callback=callback)
    assert seen == [1] and run.iterations == 1
    assert run.verdict.reason == "The callback asked to stop."


@pytest.mark.parametrize("answer", [None, False, np.False_])
def test_a_callback_returning_false_or_none_goes_on(answer):
    run = descend(PAIR, np.array([3.0, 1.0]), controller=Armijo(initial=0.1),
                  stop=MaxIterations(4), callback=lambda progress: answer)
    assert run.iterations == 4


def test_a_stop_rule_returning_numpy_true_stops_with_a_budget_verdict():
    run = descend(PAIR, np.array([3.0, 1.0]), stop=lambda progress: np.bool_(
        progress.iteration >= 2))
    assert run.iterations == 2 and run.verdict.kind is Kind.budget
    assert "returned True" in run.verdict.reason


def test_a_stop_rule_returning_something_else_raises_before_any_step():
    objective = Objective(square, square_gradient)
    with pytest.raises(TypeError, match=r"`stop`.*returned 0 of type int"):
        descend(objective, np.array([3.0, 1.0]), stop=lambda progress: 0)
    assert objective.evaluations.values == 1  # only f(x0)


# ---------------------------------------------------------- item 10: trial gradients


def test_wolfe_refuses_a_trial_gradient_of_the_wrong_shape():
    # The 1-D quadratic f(x) = (x − 1)², from x = 0 along d = 2: the minimiser is t = 0.5.
    # A gradient returned with shape (1, 1) at trial points used to broadcast.
    def f(x):
        return float((x[0] - 1.0) ** 2)

    def g(x):
        return np.array([[2.0 * (x[0] - 1.0)]])

    x, d = np.zeros(1), np.array([2.0])
    with pytest.raises(ValueError) as caught:
        Wolfe()((f, g), x, d, value=f(x), gradient=np.array([-2.0]))
    message = str(caught.value)
    assert "`grad`" in message and "(1, 1)" in message and "(1,)" in message


@pytest.mark.parametrize("controller", [Wolfe, MoreThuente, HagerZhang])
@pytest.mark.parametrize(("bad", "shown"), [
    (lambda g: g[:1], "(1,)"),
    (lambda g: g.reshape(2, 1), "(2, 1)"),
    (lambda g: float(g[0]), "()"),
    (lambda g: None, "None"),
])
def test_every_trial_gradient_is_checked(controller, bad, shown):
    x = np.array([1.0, 2.0])

    def g(y):
        return 2.0 * y if y is x else bad(2.0 * y)

    with pytest.raises(ValueError, match=re_escape(shown)) as caught:
        controller()((square, g), x, -2.0 * x, value=square(x), gradient=2.0 * x)
    assert "`grad`" in str(caught.value)


def re_escape(text):
    import re

    return re.escape(text)


def test_a_fused_objective_with_a_wrong_gradient_is_named():
    x = np.array([1.0, 2.0])

    def fused(y):
        return square(y), (2.0 * y)[:1]

    with pytest.raises(ValueError, match="the fused `fun`"):
        Wolfe()(Objective(fused, fused=True), x, -x, value=5.0, gradient=2 * x)


def test_a_list_gradient_at_a_trial_point_becomes_an_array():
    x = np.array([1.0, 2.0])
    step = Wolfe()((square, lambda y: list(2.0 * y)), x, -x, value=5.0, gradient=2 * x)
    assert step.ok and isinstance(step.gradient, np.ndarray)


# ------------------------------------------------------------ item 11: return values


@pytest.mark.parametrize(("returned", "error", "shown"), [
    (None, TypeError, "None"),
    ("1.5", TypeError, "'1.5'"),
    (np.ones(2), TypeError, "shape (2,)"),
    (np.array([5.0]), TypeError, "shape (1,)"),
    (1.0 + 2.0j, TypeError, "complex"),
    (10**400, ValueError, "401-digit integer"),
    (True, TypeError, "True"),
    (np.True_, TypeError, "True"),
], ids=["None", "str", "array", "one-entry array", "complex", "10**400", "bool", "numpy bool"])
def test_an_objective_returning_a_non_scalar_is_a_clear_error(returned, error, shown):
    def named_loss(x):
        return returned

    with pytest.raises(error, match=re_escape(shown)) as caught:
        Armijo()((named_loss, square_gradient), np.array([1.0, 2.0]), np.array([-1.0, -2.0]))
    assert "`named_loss`" in str(caught.value)


@pytest.mark.parametrize("returned", [np.float32(5.0), np.array(5.0), 5])
def test_an_objective_returning_a_real_scalar_of_another_type_works(returned):
    assert Objective(lambda x: returned).value(np.zeros(2)) == 5.0


@pytest.mark.parametrize(("returned", "shown"), [(5.0, "5.0 (float)"),
                                                 ((5.0, np.ones(2), 0), "tuple of length 3")])
def test_a_fused_objective_must_return_a_pair(returned, shown):
    def fused_loss(x):
        return returned

    with pytest.raises(TypeError, match=re_escape(shown)) as caught:
        Objective(fused_loss, fused=True).value_and_gradient(np.zeros(2))
    assert "`fused_loss`" in str(caught.value)


# ------------------------------------------------------- item 14: one instance, one loop


def test_a_polyak_reused_on_another_problem_resets_with_a_warning():
    # Problem A: ½‖x‖² (minimum 0). Problem B: 9.9 + ½‖x‖² (minimum 9.9), invented so that
    # a Goffin–Kiwiel level left from A (near 0) is far below B's minimum.
    reused = Polyak()
    x = np.array([3.0, 1.0])
    for _ in range(50):
        x = reused((lambda y: 0.5 * float(y @ y), lambda y: y.copy()), x, -x).x

    def problem_b(y):
        return 9.9 + 0.5 * float(y @ y)

    def gradient_b(y):
        return y.copy()

    start = np.array([0.4472, 0.0])
    with pytest.warns(RuntimeWarning, match="different problem"):
        step = reused((problem_b, gradient_b), start, -start)
    fresh = Polyak()((problem_b, gradient_b), start, -start)
    assert step.size == fresh.size and np.array_equal(step.x, fresh.x)


def test_a_new_closure_of_the_same_function_keeps_the_state():
    # The mini-batch pattern: each call wraps its batch in a new closure of one function.
    rule = BarzilaiBorwein(globalize=None, first=0.1)
    scales = [1.0, 1.1, 0.9, 1.0]
    x = np.array([1.0, -1.0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        for scale in scales:
            def f(y, scale=scale):
                return scale * float(y @ y)

            def g(y, scale=scale):
                return 2.0 * scale * y

            x = rule((f, g), x, -g(x)).x
    assert rule._count > 0  # BB pairs were formed: the state was kept


def test_a_controller_reused_with_another_shape_resets():
    search = Armijo(initial=0.5)
    search(PAIR, np.ones(2), -np.ones(2))
    with pytest.warns(RuntimeWarning):
        search((lambda y: float(np.sum(y ** 4)), lambda y: 4 * y ** 3), np.ones(3),
               -np.ones(3))


def test_reset_clears_the_problem_so_no_warning_follows():
    search = Armijo()
    search(PAIR, np.ones(2), -np.ones(2))
    search.reset()
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        search((lambda y: float(np.sum(y ** 4)), lambda y: 4 * y ** 3), np.ones(3), -np.ones(3))


# --------------------------------------------------------------- item 15: underflow


@pytest.mark.parametrize("controller", [Armijo, Wolfe, BarzilaiBorwein,
                                        lambda: Polyak(f_min=0.0)])
def test_an_underflowing_slope_is_a_status_not_an_exception(controller):
    # f = ‖x‖² at x = 1e-170: ∇f·(−∇f) = −12e-340 underflows to 0.
    x = np.full(3, 1e-170)
    step = controller()(PAIR, x, -square_gradient(x))
    assert step.status is Status.step_too_small
    assert "underflows" in step.message
    assert step.size == 0.0 and step.x is x


def test_descend_from_an_underflowing_point_converges():
    run = descend(PAIR, np.full(3, 1e-170))
    assert run.converged


def test_cubic_backtracking_survives_an_underflowing_denominator():
    # a²b²(b − a) = 0 in floating point for a, b ~ 1e-100.
    assert cubic_backtrack(1.0, -1.0, 1e-100, 1.0, 5e-101, 1.0) is None
    assert cubic_backtrack(1.0, -1.0, 1e100, 1.0, 5e99, 1.0) is None  # overflow


def test_armijo_with_a_tiny_first_trial_and_a_huge_direction_does_not_raise():
    x = np.ones(3)
    step = Armijo(initial=1e-150)(PAIR, x, -1e160 * square_gradient(x))
    assert step.ok and square(step.x) <= square(x)


# ------------------------------------------------------------ item 16: a wrong `value`


def test_goldstein_refuses_a_value_far_above_f_of_x():
    x = np.array([1.0, 2.0])  # f(x) = 5
    with pytest.raises(ValueError, match=r"`value` must be f\(x\); got value=1000000.0"):
        Goldstein()(PAIR, x, -square_gradient(x), value=1e6, gradient=square_gradient(x))


@pytest.mark.parametrize("controller", [Armijo, Goldstein, Wolfe, MoreThuente, HagerZhang])
@pytest.mark.parametrize("supplied", [5.0, 100.0, 1e6])
def test_no_search_returns_a_point_worse_than_f_of_x_for_any_value(controller, supplied):
    x = np.array([1.0, 2.0])
    try:
        step = controller()(PAIR, x, -square_gradient(x), value=supplied,
                            gradient=square_gradient(x))
    except ValueError as error:
        assert "`value`" in str(error)
    else:
        assert square(step.x) <= square(x)


# ------------------------------------------------- item 18: no test folder shadows a package


def test_no_test_folder_shares_a_name_with_an_importable_package(tmp_path):
    # pytest puts tests/ on sys.path; a folder named like an installed package (tests/jax
    # did) would shadow it. Look the names up in a fresh interpreter without tests/.
    tests = Path(__file__).parent
    names = sorted(p.name for p in tests.iterdir() if p.is_dir() and not p.name.startswith(
        ("_", ".")))
    probe = ("import importlib.util, sys; names = sys.argv[1:]; "
             "print(' '.join(n for n in names if importlib.util.find_spec(n) is not None))")
    found = subprocess.run([sys.executable, "-c", probe, *names], capture_output=True,
                           text=True, check=True, cwd=tmp_path).stdout.split()
    assert found == [], f"test folders that shadow importable packages: {found}"


def test_default_does_not_stop_on_a_steep_start():
    # f(x) = (Σx)⁴ + ½‖x − 1‖² from a start where the quartic gives ∇f ≈ 7e6 (invented):
    # a relative test, ‖g‖∞ ≤ 1e-8·‖g₀‖∞ ≈ 0.07, stopped Armijo at ‖g‖∞ ≈ 0.01, far from
    # the minimiser; the default's absolute 1e-6 lets it run on (it ends by the value
    # test with ‖g‖∞ near 1e-6, rounding in f being ~1e-16·(Σx)⁴ there).
    def f(x):
        return float(np.sum(x) ** 4 + 0.5 * np.sum((x - 1.0) ** 2))

    def g(x):
        return 4.0 * np.sum(x) ** 3 * np.ones_like(x) + (x - 1.0)

    x0 = np.full(4, 30.0)
    assert np.abs(g(x0)).max() > 6e6
    run = descend((f, g), x0, controller=Armijo(), stop=stopping.default())
    assert run.converged
    assert np.abs(g(run.x)).max() <= 1e-5
