"""Tests for `descend`, with textbook facts about step sizes and scipy as a reference.

Facts checked, with their sources:

* Fixed-step gradient descent on f(x) = L/2·‖x‖² is x ← (1 − tL)·x, so it
  converges iff |1 − tL| < 1, i.e. 0 < t < 2/L (Nocedal & Wright 2006, §3.3;
  Boyd & Vandenberghe 2004, §9.3). Derived here, checked at t = 0.99·2/L and
  1.01·2/L.
* Steepest descent with exact line searches on a strongly convex quadratic
  contracts f − f* by at least ((κ − 1)/(κ + 1))² per step (Nocedal & Wright 2006,
  Thm 3.3, eq. 3.29; the theorem bounds ‖x − x*‖²_A = 2(f − f*); section and
  equation numbers recalled from memory).
* scipy.optimize.minimize (BFGS) as an independent reference optimum.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from _problems import objectives, quadratic, random_spd, square, square_gradient
from linestep import (
    Armijo,
    Evaluations,
    Fixed,
    Goldstein,
    Objective,
    PreviousTrial,
    descend,
    stopping,
)


def tight_stop():
    return stopping.GradientNorm(atol=1e-6, rtol=0.0) | stopping.MaxIterations(100000)


# --------------------------------------------------------------------------- exact counts


def test_one_step_to_the_minimum_of_a_round_bowl_counts():
    # Start: f and ∇f (1 + 1). Armijo with f and ∇f supplied: t = 1 (f = 25, rejected)
    # and t = 0.5 (f = 0) are two values; then ∇f at the new point. ∇f = 0: converged.
    # (the unit first trial, given explicitly: descend's default scales it along −∇f)
    run = descend((square, square_gradient), np.array([3.0, -4.0]), controller=Armijo())
    assert run.converged and run.iterations == 1
    assert run.evaluations == Evaluations(values=3, gradients=2)
    np.testing.assert_array_equal(run.x, [0.0, 0.0])
    np.testing.assert_array_equal(run.history.value, [25.0, 0.0])
    np.testing.assert_array_equal(run.history.size, [0.0, 0.5])
    np.testing.assert_array_equal(run.history.values, [1, 3])
    np.testing.assert_array_equal(run.history.gradients, [1, 2])
    assert run.history.status == ("start", "accepted")


def test_fused_objective_reuses_the_gradient_of_the_step():
    objective = Objective(lambda x: (square(x), square_gradient(x)), fused=True)
    run = descend(objective, np.array([3.0, -4.0]), controller=Armijo())
    # Start, t = 1 and t = 0.5: three fused calls, no separate gradient call.
    assert run.evaluations == Evaluations(values=3, gradients=3)


def test_a_run_starts_from_fresh_controller_state():
    controller = Armijo(initial=PreviousTrial(growth=2.0))
    x0 = np.array([2.0, -1.0, 0.5])

    def f(x):
        return float(x @ (np.arange(1.0, 4.0) * x))

    def g(x):
        return 2.0 * np.arange(1.0, 4.0) * x

    first = descend((f, g), x0, controller=controller)
    second = descend((f, g), x0, controller=controller)
    np.testing.assert_array_equal(first.x, second.x)
    assert first.evaluations == second.evaluations


def test_float32_and_matrix_shaped_start():
    x0 = np.full((3, 2), 2.0, dtype=np.float32)
    run = descend((square, square_gradient), x0, stop=stopping.MaxIterations(3))
    assert run.x.dtype == np.float32 and run.x.shape == (3, 2)


def test_user_exception_propagates_unchanged():
    error = OverflowError("user code")

    def f(x):
        if x[0] < 2.0:
            raise error
        return square(x)

    with pytest.raises(OverflowError) as caught:
        descend((f, square_gradient), np.array([3.0]))
    assert caught.value is error


# --------------------------------------------------------------------------- monotone


@given(objectives(), st.sampled_from(["armijo", "goldstein"]))
def test_descend_never_increases_f(problem, kind):
    f, g, rng, n = problem
    x0 = rng.standard_normal(n) * 3.0
    controller = Armijo() if kind == "armijo" else Goldstein()
    run = descend((f, g), x0, controller=controller,
                  stop=stopping.default(max_iterations=60))
    values = run.history.value
    assert np.all(np.diff(values) <= 0.0)
    assert run.value == values[-1] == f(run.x)
    assert np.all(np.isfinite(run.x))


# --------------------------------------------------------------------------- fixed steps


@pytest.mark.parametrize("lipschitz", [0.5, 3.0, 100.0])
def test_fixed_step_converges_iff_below_two_over_l(lipschitz):
    # f(x) = L/2·‖x‖²: x ← x − t·L·x = (1 − tL)·x, a contraction iff 0 < t < 2/L.
    def f(x):
        return float(0.5 * lipschitz * x @ x)

    def g(x):
        return lipschitz * x

    x0 = np.array([1.0, -2.0, 0.5])
    for factor, converges in ((0.99, True), (1.01, False)):
        size = factor * 2.0 / lipschitz
        controller = Fixed(size)
        x = x0
        for _ in range(1500):
            step = controller((f, g), x, -g(x))
            np.testing.assert_allclose(step.x, (1.0 - size * lipschitz) * x, rtol=1e-12)
            x = step.x
        # |1 − tL| = 0.98 or 1.02: after 1500 steps the norm is ≈ 7e-14 or ≈ 8e12 times x0's.
        ratio = np.linalg.norm(x) / np.linalg.norm(x0)
        assert (ratio < 1e-10) if converges else (ratio > 1e10)


def test_descend_with_a_stable_fixed_step_converges():
    lipschitz = 3.0
    run = descend((lambda x: float(0.5 * lipschitz * x @ x), lambda x: lipschitz * x),
                  np.array([1.0, -2.0]), controller=Fixed(0.99 * 2.0 / lipschitz))
    assert run.converged
    assert np.max(np.abs(run.x)) <= 1e-6 / lipschitz


@pytest.mark.parametrize("stop", [None, stopping.Divergence() | stopping.MaxIterations(100000)],
                         ids=["default", "divergence"])
def test_descend_with_a_diverging_fixed_step_fails_without_overflow(stop):
    lipschitz = 3.0
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # an overflow warning would fail the test
        run = descend((lambda x: float(0.5 * lipschitz * x @ x), lambda x: lipschitz * x),
                      np.array([1.0, -2.0]), controller=Fixed(1.01 * 2.0 / lipschitz),
                      stop=stop)
    assert run.verdict.kind is stopping.Kind.failed
    assert "step is probably too large" in run.verdict.reason
    assert np.all(np.isfinite(run.x)) and math.isfinite(run.value)
    if stop is not None:
        assert "exceeds the bound" in run.verdict.reason


@given(seed=st.integers(0, 2**32 - 1), n=st.integers(2, 20),
       log_condition=st.floats(0.0, 6.0))
def test_exact_line_search_steepest_descent_contracts_as_nw_theorem_3_3(seed, n,
                                                                         log_condition):
    # f(x) = ½xᵀAx − bᵀx; along d = −g the exact minimiser is t = gᵀg / gᵀAg, and
    # N&W Thm 3.3: f(x+) − f* ≤ ((κ − 1)/(κ + 1))²·(f(x) − f*).
    rng = np.random.default_rng(seed)
    matrix = random_spd(rng, n, log_condition)
    b = rng.standard_normal(n)
    solution = np.linalg.solve(matrix, b)
    eigenvalues = np.linalg.eigvalsh(matrix)
    kappa = eigenvalues[-1] / eigenvalues[0]
    bound = ((kappa - 1.0) / (kappa + 1.0)) ** 2

    def f(x):
        return float(0.5 * x @ matrix @ x - b @ x)

    def g(x):
        return matrix @ x - b

    def gap(x):  # f(x) − f* = ½(x − x*)ᵀA(x − x*), computed without cancellation
        e = x - solution
        return 0.5 * float(e @ matrix @ e)

    x = solution + rng.standard_normal(n) * 10.0
    start_gap = gap(x)
    for _ in range(30):
        gradient = g(x)
        exact = float(gradient @ gradient) / float(gradient @ matrix @ gradient)
        step = Fixed(exact)((f, g), x, -gradient, value=f(x), gradient=gradient)
        assert step.ok and step.size == exact
        before, after = gap(x), gap(step.x)
        # Slack: rounding in the gaps, relative to the start (stop once in that noise).
        assert after <= bound * before + 1e-10 * start_gap
        x = step.x
        if gap(x) < 1e-8 * start_gap:
            break


# --------------------------------------------------------------------------- scipy reference


def _quadratic_5d():
    f, g = quadratic(np.random.default_rng(7), 5, 2.0)  # κ = 100
    return f, g, np.zeros(5)


def _curved_valley_2d():
    # Invented: f(x, y) = (x − 1)² + 4(y − x²)², nonconvex, f ≥ 0 with equality only
    # at (1, 1), which is therefore the unique minimiser.
    def f(z):
        return float((z[0] - 1.0) ** 2 + 4.0 * (z[1] - z[0] ** 2) ** 2)

    def g(z):
        u = z[1] - z[0] ** 2
        return np.array([2.0 * (z[0] - 1.0) - 16.0 * z[0] * u, 8.0 * u])

    return f, g, np.array([-1.2, 1.0])


REGULARISATION = 0.1


def _logistic_loss():
    # Invented data: 80 points in 4 features, labels from a noisy linear rule.
    rng = np.random.default_rng(20240611)
    features = rng.standard_normal((80, 4))
    labels = np.where(features @ rng.standard_normal(4) + 0.5 * rng.standard_normal(80) > 0,
                      1.0, -1.0)

    def f(w):
        margins = labels * (features @ w)
        return float(np.mean(np.logaddexp(0.0, -margins)) + 0.5 * REGULARISATION * w @ w)

    def g(w):
        margins = labels * (features @ w)
        weights = 0.5 * (1.0 - np.tanh(0.5 * margins))  # σ(−margin), overflow-free
        return -(features.T @ (labels * weights)) / len(labels) + REGULARISATION * w

    return f, g, np.zeros(4)


def _hessian(g, x, h=1e-6):
    columns = [(g(x + h * e) - g(x - h * e)) / (2 * h) for e in np.eye(len(x))]
    matrix = np.array(columns)
    return 0.5 * (matrix + matrix.T)


@pytest.mark.parametrize("make_problem", [_quadratic_5d, _curved_valley_2d, _logistic_loss],
                         ids=["quadratic-5d", "curved-valley-2d", "logistic"])
@pytest.mark.parametrize("controller", [Armijo, Goldstein])
def test_descend_reaches_the_scipy_bfgs_optimum(make_problem, controller):
    optimize = pytest.importorskip("scipy.optimize")
    f, g, x0 = make_problem()
    reference = optimize.minimize(f, x0, jac=g, method="BFGS", options={"gtol": 1e-10})
    assert reference.success
    run = descend((f, g), x0, controller=controller(), stop=tight_stop())
    assert run.converged
    # Tolerance: near a minimiser where ∇²f ⪰ μI, ‖x − x*‖₂ ≤ ‖∇f(x)‖₂/μ ≤ √n·‖∇f‖∞/μ,
    # with ‖∇f‖∞ ≤ 1e-6 (the stopping rule) for our run and 1e-10 for scipy's; μ is
    # the smallest Hessian eigenvalue at scipy's optimum, halved for the nonlinearity
    # between the points (the logistic loss has μ ≥ the regularisation everywhere).
    mu = 0.5 * np.linalg.eigvalsh(_hessian(g, reference.x))[0]
    n = len(x0)
    tolerance = math.sqrt(n) * (1e-6 + 1e-10) / mu
    assert np.linalg.norm(run.x - reference.x) <= tolerance
    # And f − f* ≤ ‖∇f‖₂²/(2μ).
    assert run.value - reference.fun <= n * 1e-12 / (2.0 * mu) + 1e-15 * abs(reference.fun)


def test_a_non_finite_gradient_ends_the_run_as_failed_whatever_the_stopping_rule():
    # f(x) = sqrt(|x|): a fixed step of 2 from x = 1 lands on x = 0, where f = 0 is
    # finite but the gradient sign(x)/(2 sqrt|x|) is 0/0. The stopping rule has no
    # Divergence member, so descend itself must end the run instead of passing the
    # NaN gradient to the controller (whose argument check would raise).
    from linestep import Fixed, descend, stopping

    def fun(x):
        return float(np.sum(np.sqrt(np.abs(x))))

    def grad(x):
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.sign(x) / (2 * np.sqrt(np.abs(x)))

    run = descend((fun, grad), np.array([1.0]), controller=Fixed(2.0),
                  stop=stopping.GradientNorm(atol=1e-6, rtol=0) | stopping.MaxIterations(50))
    assert run.verdict.kind.value == "failed"
    assert "non-finite" in run.verdict.reason
    assert run.iterations == 1
