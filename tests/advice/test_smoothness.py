"""estimate_smoothness against exact eigenvalues (invented quadratics, analytic and dense
finite-difference Hessians of MGH problems)."""

from __future__ import annotations

import numpy as np
import pytest

from linestep import Objective, estimate_smoothness
from linestep.bench import get_problem
from linestep.bench.suites import quadratic_problem


def dense_hessian(gradient, x, step=1e-5):
    """Central finite differences of the gradient, column by column, symmetrised."""
    n = x.size
    columns = []
    for i in range(n):
        e = np.zeros(n)
        e[i] = step * max(1.0, abs(x[i]))
        columns.append((gradient(x + e) - gradient(x - e)) / (2 * e[i]))
    matrix = np.array(columns).T
    return 0.5 * (matrix + matrix.T)


def test_diagonal_quadratic_is_exact_and_cheap():
    # invented: f = ½ Σ sᵢ xᵢ², eigenvalues are the sᵢ
    scales = np.array([0.5, 3.0, 40.0, 7.0])
    estimate = estimate_smoothness((lambda x: 0.5 * float(scales @ x**2), lambda x: scales * x),
                                   np.ones(4))
    assert estimate.status == "converged"
    assert estimate.lipschitz == pytest.approx(40.0, rel=1e-3)
    assert estimate.safe_rate == pytest.approx(1 / estimate.lipschitz)
    assert estimate.limit_rate == pytest.approx(2 / estimate.lipschitz)
    assert not estimate.central  # the gradient is linear: forward differences suffice
    assert estimate.evaluations.gradients <= 6
    assert estimate.evaluations.values == 0
    assert estimate.ok


@pytest.mark.parametrize("dimension", [10, 100, 1000])
@pytest.mark.parametrize("condition", [1e2, 1e4, 1e6])
def test_invented_quadratics_within_ten_percent_in_thirty_gradients(dimension, condition):
    problem = quadratic_problem(condition, dimension=dimension, seed=1)
    estimate = estimate_smoothness((problem.value, problem.gradient), problem.start)
    # the suite's spectrum is geometric in [1, κ], so λ_max = κ (invented problem)
    assert abs(estimate.lipschitz - condition) <= 0.1 * condition
    assert estimate.evaluations.gradients <= 30


def test_rosenbrock_against_its_analytic_hessian():
    # f = 100(x₂ − x₁²)² + (1 − x₁)² (Moré, Garbow and Hillstrom 1981, problem 1);
    # its Hessian is [[1200x₁² − 400x₂ + 2, −400x₁], [−400x₁, 200]] (differentiated by hand)
    problem = get_problem("rosenbrock")
    x1, x2 = problem.start
    hessian = np.array([[1200 * x1**2 - 400 * x2 + 2, -400 * x1], [-400 * x1, 200.0]])
    exact = np.abs(np.linalg.eigvalsh(hessian)).max()
    estimate = estimate_smoothness((problem.value, problem.gradient), problem.start)
    assert estimate.lipschitz == pytest.approx(exact, rel=0.2)
    assert estimate.lipschitz == pytest.approx(exact, rel=1e-4)  # in fact far closer


@pytest.mark.parametrize("name", ["beale", "helical_valley", "powell_singular", "wood",
                                  "extended_rosenbrock", "brown_dennis", "penalty_1"])
def test_mgh_problems_at_standard_starts_within_twenty_percent(name):
    problem = get_problem(name)
    exact = np.abs(np.linalg.eigvalsh(dense_hessian(problem.gradient, problem.start))).max()
    estimate = estimate_smoothness((problem.value, problem.gradient), problem.start)
    assert estimate.lipschitz == pytest.approx(exact, rel=0.2)
    assert estimate.evaluations.gradients <= 30


def test_central_differences_when_the_gradient_bends_at_the_probe_scale():
    # invented: f = Σ exp(xᵢ) at x = 40: third derivatives as large as the second
    f = lambda x: float(np.sum(np.exp(x)))  # noqa: E731
    x = np.full(4, 40.0)
    estimate = estimate_smoothness((f, np.exp), x)
    assert estimate.central
    assert estimate.lipschitz == pytest.approx(np.exp(40.0), rel=1e-4)


def test_float32_point_and_matrix_shape():
    scales = np.array([[1.0, 2.0], [30.0, 4.0]])
    f = lambda x: 0.5 * float(np.sum(scales * x**2))  # noqa: E731
    g = lambda x: scales * x  # noqa: E731
    estimate = estimate_smoothness((f, g), np.ones((2, 2), dtype=np.float32))
    assert estimate.lipschitz == pytest.approx(30.0, rel=1e-2)


def test_given_gradient_saves_an_evaluation():
    scales = np.array([1.0, 9.0])
    objective = Objective(lambda x: 0.5 * float(scales @ x**2), lambda x: scales * x)
    x = np.array([1.0, 1.0])
    plain = estimate_smoothness(objective, x)
    given = estimate_smoothness(objective, x, gradient=scales * x)
    assert given.evaluations.gradients == plain.evaluations.gradients - 1
    assert given.lipschitz == pytest.approx(plain.lipschitz)


def test_negative_curvature_only_is_reported():
    # invented: f = −½(x₁² + 5x₂²), a maximum at 0
    scales = np.array([1.0, 5.0])
    estimate = estimate_smoothness((lambda x: -0.5 * float(scales @ x**2), lambda x: -scales * x),
                                   np.array([0.3, -0.2]))
    assert estimate.status == "negative_curvature"
    assert estimate.lipschitz == pytest.approx(5.0, rel=1e-3)
    assert "negative curvature" in estimate.message
    assert "largest |eigenvalue|" in estimate.message
    assert not estimate.ok


def test_saddle_with_dominant_negative_curvature_says_so():
    scales = np.array([1.0, -8.0])  # invented saddle
    estimate = estimate_smoothness((lambda x: 0.5 * float(scales @ x**2), lambda x: scales * x),
                                   np.array([1.0, 1.0]))
    assert estimate.lipschitz == pytest.approx(8.0, rel=1e-3)
    assert estimate.lowest == pytest.approx(-8.0, rel=1e-3)
    assert "negative" in estimate.message


def test_non_finite_gradient_is_undetermined_not_an_exception():
    def gradient(x):
        return np.full_like(x, np.nan) if abs(x[0] - 1.0) > 0 else 2 * x

    estimate = estimate_smoothness((lambda x: float(x @ x), gradient), np.array([1.0, 2.0]))
    assert estimate.status == "undetermined"
    assert estimate.lipschitz is None and estimate.safe_rate is None
    assert "not finite" in estimate.message


def test_non_finite_gradient_at_x_is_undetermined():
    estimate = estimate_smoothness((lambda x: 0.0, lambda x: np.array([np.inf, 0.0])),
                                   np.zeros(2))
    assert estimate.status == "undetermined"
    assert estimate.evaluations.gradients == 1


def test_linear_function_has_no_curvature():
    estimate = estimate_smoothness((lambda x: float(x.sum()), lambda x: np.ones_like(x)),
                                   np.zeros(3))
    assert estimate.status == "undetermined"
    assert "No curvature" in estimate.message


@pytest.mark.parametrize(("arguments", "error", "words"), [
    ({"x": np.array([np.nan])}, ValueError, "`x` must be finite"),
    ({"difference": "sideways"}, ValueError, "`difference`"),
    ({"max_evaluations": 2}, ValueError, "`max_evaluations`"),
    ({"rtol": 0.0}, ValueError, "`rtol`"),
    ({"seed": -1}, ValueError, "`seed`"),
    ({"gradient": np.zeros(3)}, ValueError, "`gradient` has 3 entries"),
    ({"x": np.array(["a"])}, TypeError, "`x` must be an array of real numbers"),
])
def test_bad_arguments(arguments, error, words):
    values = {"x": np.ones(2), **arguments}
    x = values.pop("x")
    with pytest.raises(error, match=words.replace("(", r"\(").replace("|", r"\|")):
        estimate_smoothness((lambda x: float(x @ x), lambda x: 2 * x), x, **values)


def test_objective_without_gradient_is_a_type_error():
    with pytest.raises(TypeError, match="needs a gradient"):
        estimate_smoothness(lambda x: float(x @ x), np.ones(2))
