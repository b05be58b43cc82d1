"""Tests for `Polyak` (known target, and the Goffin–Kiwiel path-based adaptive level).

Published results checked, with the exact statements:

* Polyak 1987, §5.3 (subgradient method with the step (f − f*)/‖g‖²): for convex f and
  a minimiser x*, every step satisfies
  ‖x_{k+1} − x*‖² ≤ ‖x_k − x*‖² − (f_k − f*)²/‖g_k‖²            (Fejér inequality),
  so with R = ‖x_0 − x*‖ and G_K = max_{k<K} ‖g_k‖:
  min_{k<K} f_k − f* ≤ G_K·R/√K                                    (any convex f),
  min_{k<K} f_k − f* ≤ 2·L·R²/K     (∇f L-Lipschitz: ‖g‖² ≤ 2L(f − f*); the smooth
  case as in Hazan & Kakade 2019, "Revisiting the Polyak step size").
* Goffin & Kiwiel 1999 (Math. Program. 85:207–211), the path-based level method for
  unknown f*: the rule is recomputed here independently, step by step; its guarantee
  inf_k f_k = f* (recalled from memory) is checked as far as a finite run can: the best
  value approaches f*.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from linestep import Evaluations, Status
from linestep.rules.polyak import Polyak


def square(x):
    return float(x @ x)


def square_gradient(x):
    return 2.0 * x


def least_squares(seed, m=30, n=10):
    """f = ½‖Ax − b‖² with b = A·x* (invented data): f* = 0, L = λ_max(AᵀA)."""
    rng = np.random.default_rng(seed)
    a = rng.standard_normal((m, n))
    solution = rng.standard_normal(n)
    b = a @ solution
    f = lambda x: 0.5 * float(np.sum((a @ x - b) ** 2))  # noqa: E731
    g = lambda x: a.T @ (a @ x - b)  # noqa: E731
    return f, g, solution, float(np.linalg.eigvalsh(a.T @ a).max())


def absolute_deviations(seed, m=40, n=10):
    """f = ‖Ax − b‖₁ with b = A·x* (invented data): convex, nonsmooth, f* = 0."""
    rng = np.random.default_rng(seed)
    a = rng.standard_normal((m, n))
    solution = rng.standard_normal(n)
    b = a @ solution
    f = lambda x: float(np.sum(np.abs(a @ x - b)))  # noqa: E731
    g = lambda x: a.T @ np.sign(a @ x - b)  # noqa: E731
    return f, g, solution


def run(rule, f, g, x, iterations):
    """x ← x − t·g; returns the values f_k, gradients g_k and iterates x_k (k < K)."""
    values, gradients, points, steps = [], [], [], []
    for _ in range(iterations):
        gradient = g(x)
        value = f(x)
        if not np.any(gradient):
            break
        values.append(value)
        gradients.append(gradient)
        points.append(x)
        step = rule((f, g), x, -gradient, value=value, gradient=gradient)
        steps.append(step)
        x = step.x
    return np.array(values), gradients, points + [x], steps


# --------------------------------------------------------------------------- known f*


def test_step_by_hand():
    # f = ‖x‖², x = (2, −2): f = 8, g = (4, −4), ‖g‖² = 32, t = 8/32 = 0.25.
    x = np.array([2.0, -2.0])
    step = Polyak(f_min=0.0)((square, square_gradient), x, -square_gradient(x))
    assert step.status is Status.accepted and step.size == 0.25
    np.testing.assert_array_equal(step.x, [1.0, -1.0])
    assert step.evaluations == Evaluations(values=2, gradients=1)


def test_scaled_negative_gradient_reaches_the_same_point():
    # d = −2.5g: size along d is t/2.5 and x moves to the Polyak point.
    x = np.array([2.0, -2.0])
    step = Polyak(f_min=1.0)((square, square_gradient), x, -2.5 * square_gradient(x))
    assert step.size == pytest.approx(7.0 / 32.0 / 2.5, rel=1e-15)
    np.testing.assert_allclose(step.x, x - 7.0 / 32.0 * square_gradient(x), rtol=1e-15)


@pytest.mark.parametrize("seed", range(5))
def test_smooth_convex_gap_follows_the_polyak_bound(seed):
    f, g, solution, lipschitz = least_squares(seed)
    x0 = np.zeros_like(solution)
    values, gradients, points, _ = run(Polyak(f_min=0.0), f, g, x0, 300)
    radius2 = float((x0 - solution) @ (x0 - solution))
    for k in range(len(values)):
        # Fejér inequality (rounding slack of 1e-12·R²).
        before = float((points[k] - solution) @ (points[k] - solution))
        after = float((points[k + 1] - solution) @ (points[k + 1] - solution))
        gap2 = values[k] ** 2 / float(gradients[k] @ gradients[k])
        assert after <= before - gap2 + 1e-12 * radius2
        # min_{j<K} f_j − f* <= 2·L·R²/K with K = k + 1 evaluated points.
        assert values[: k + 1].min() <= 2.0 * lipschitz * radius2 / (k + 1)
    assert values.min() <= 1e-20 * values[0]


@pytest.mark.parametrize("seed", range(5))
def test_nonsmooth_convex_gap_follows_the_polyak_bound(seed):
    f, g, solution = absolute_deviations(seed)
    x0 = np.zeros_like(solution)
    values, gradients, points, _ = run(Polyak(f_min=0.0), f, g, x0, 500)
    radius = float(np.linalg.norm(x0 - solution))
    norms = np.array([np.linalg.norm(gradient) for gradient in gradients])
    for k in range(len(values)):
        before = float((points[k] - solution) @ (points[k] - solution))
        after = float((points[k + 1] - solution) @ (points[k + 1] - solution))
        assert after <= before - values[k] ** 2 / norms[k] ** 2 + 1e-12 * radius**2
        bound = norms[: k + 1].max() * radius / math.sqrt(k + 1)
        assert values[: k + 1].min() <= bound
    assert values.min() <= 1e-6 * values[0]


def test_an_underestimated_target_can_raise_f_and_is_accepted():
    # ‖x‖² from (2, −2), d = (−4, 4): f_min = −24 gives t = 32/32 = 1, x → (−2, 2), f stays
    # 8; f_min = −56 gives t = 2: x → (−6, 6), f = 72 > 8, accepted (documented).
    x = np.array([2.0, -2.0])
    step = Polyak(f_min=-56.0)((square, square_gradient), x, -square_gradient(x))
    assert step.status is Status.accepted and step.size == 2.0 and step.value == 72.0


def test_max_size_caps_the_step():
    x = np.array([2.0, -2.0])
    step = Polyak(f_min=-1e20, max_size=0.1)((square, square_gradient), x,
                                              -square_gradient(x))
    assert step.size == 0.1


@pytest.mark.parametrize("f_min", [8.0, 10.0])
def test_target_at_or_above_the_value_is_met_with_x_unchanged(f_min):
    x = np.array([2.0, -2.0])
    step = Polyak(f_min=f_min)((square, square_gradient), x, -square_gradient(x))
    assert step.status is Status.target_met and not step.ok
    assert step.x is x and step.size == 0.0 and step.value == 8.0
    assert step.evaluations == Evaluations(values=1, gradients=1)  # f(x), ∇f(x) only
    step = Polyak(f_min=f_min)((square, square_gradient), x, -square_gradient(x),
                               value=8.0, gradient=square_gradient(x))
    assert step.status is Status.target_met
    assert step.evaluations == Evaluations(values=0, gradients=0)


def test_zero_gradient_is_accepted_with_size_zero():
    x = np.zeros(3)
    step = Polyak(f_min=-1.0)((square, square_gradient), x, np.zeros(3))
    assert step.status is Status.accepted and step.size == 0.0
    assert "stationary" in step.message


# --------------------------------------------------------------------------- guard


def test_non_finite_value_shrinks_by_ten():
    # f = x² for |x| < 2, else inf. From x = 1 (g = 2) with f_min = −100: t = 101/4 =
    # 25.25 (x = −49.5, inf), then 2.525 (x = −4.05, inf), then 0.2525 (x = 0.495).
    def f(x):
        return float(x @ x) if abs(x[0]) < 2.0 else math.inf

    x = np.array([1.0])
    step = Polyak(f_min=-100.0)((f, square_gradient), x, np.array([-2.0]), value=1.0,
                                gradient=np.array([2.0]))
    assert step.status is Status.accepted
    assert step.size == pytest.approx(0.2525, rel=1e-14)
    assert step.evaluations == Evaluations(values=3, gradients=0)


def test_nothing_finite_is_non_finite_with_x_unchanged():
    x = np.array([1.0])
    step = Polyak(f_min=0.0)((lambda x: math.nan, square_gradient), x, np.array([-2.0]),
                             value=1.0, gradient=np.array([2.0]))
    assert step.status is Status.non_finite and step.x is x and step.size == 0.0
    assert step.evaluations == Evaluations(values=4, gradients=0)  # 1 + 3 retries


# --------------------------------------------------------------------------- unknown f*


class PaperLevel:
    """Goffin & Kiwiel 1999 path-based level rule, written out independently.

    Groups l = 0, 1, ... with start k(l), reference f_rec at k(l), gap δ_l, path σ:
      f_rec_k = min_{j<=k} f_j;
      if f_k <= f_rec_{k(l)} − δ_l/2: new group, same δ;
      elif σ_k > B: new group, δ_{l+1} = δ_l/2;
      f_lev_k = f_rec_{k(l)} − δ_l;  t_k = (f_k − f_lev_k)/‖g_k‖²;  σ_{k+1} = σ_k + t_k‖g_k‖.
    Here δ_0 = |f_0|/2 and B = t_0‖g_0‖ (the class's documented defaults).
    """

    def __init__(self):
        self.record = self.group_record = self.delta = self.bound = None
        self.path = 0.0

    def size(self, value, gradient_norm):
        if self.delta is None:
            self.record = self.group_record = value
            self.delta = abs(value) / 2
        self.record = min(self.record, value)
        if value <= self.group_record - self.delta / 2:
            self.group_record, self.path = self.record, 0.0
        elif self.bound is not None and self.path > self.bound:
            self.group_record, self.path = self.record, 0.0
            self.delta /= 2
        size = (value - (self.group_record - self.delta)) / gradient_norm**2
        length = size * gradient_norm
        if self.bound is None:
            self.bound = length
        self.path += length
        return size


def test_adaptive_first_steps_by_hand():
    # f = ‖x‖², x₀ = (2, −2): f₀ = 8, δ₀ = 4, target 4, t₀ = 4/32 = 0.125 → x₁ = (1.5, −1.5).
    # f₁ = 4.5 <= 8 − 4/2: a new group with reference 4.5, target 0.5,
    # t₁ = (4.5 − 0.5)/18 = 2/9.
    rule = Polyak()
    x = np.array([2.0, -2.0])
    first = rule((square, square_gradient), x, -square_gradient(x))
    assert first.size == 0.125
    np.testing.assert_array_equal(first.x, [1.5, -1.5])
    second = rule((square, square_gradient), first.x, -square_gradient(first.x))
    assert second.size == pytest.approx(2.0 / 9.0, rel=1e-15)


@pytest.mark.parametrize("problem", ["least_squares", "absolute_deviations"])
def test_adaptive_steps_follow_the_path_based_level_rule(problem):
    if problem == "least_squares":
        f, g, _, _ = least_squares(1)
    else:
        f, g, _ = absolute_deviations(1)
    paper = PaperLevel()
    _, gradients, points, steps = run(Polyak(), f, g, np.zeros(10), 400)
    for k, step in enumerate(steps):
        expected = paper.size(f(points[k]), float(np.linalg.norm(gradients[k])))
        assert step.size == pytest.approx(expected, rel=1e-12)


def test_adaptive_level_approaches_f_star_on_a_nonsmooth_problem():
    # Goffin–Kiwiel: inf f_k = f* = 0. After 3000 steps the best value is within 1e-3
    # of f* relative to f_0 (measured: about 6e-5, seed 0).
    f, g, _ = absolute_deviations(0)
    values, _, _, steps = run(Polyak(), f, g, np.zeros(10), 3000)
    assert all(step.ok for step in steps)
    assert values.min() <= 1e-3 * values[0]


def test_adaptive_level_approaches_f_star_on_a_smooth_problem():
    f, g, _, _ = least_squares(0)
    values, _, _, _ = run(Polyak(), f, g, np.zeros(10), 1000)
    assert values.min() <= 1e-10 * values[0]


def test_explicit_gap_and_path_bound_are_used():
    # δ₀ = 1 on ‖x‖² at (2, −2): target 7, t₀ = 1/32.
    x = np.array([2.0, -2.0])
    step = Polyak(gap=1.0, path_bound=0.5)((square, square_gradient), x,
                                           -square_gradient(x))
    assert step.size == 1.0 / 32.0


def test_reset_forgets_the_level():
    f, g, _ = absolute_deviations(2)
    rule = Polyak()
    _, _, _, before = run(rule, f, g, np.zeros(10), 50)
    rule.reset()
    _, _, _, after = run(rule, f, g, np.zeros(10), 50)
    assert [s.size for s in after] == [s.size for s in before]


# --------------------------------------------------------------------------- bad arguments


@pytest.mark.parametrize("direction", [np.array([4.0, -4.0]), np.array([-4.0, 3.0])])
def test_direction_other_than_negative_gradient_raises(direction):
    x = np.array([2.0, -2.0])
    with pytest.raises(ValueError, match="Polyak is defined for the negative gradient"):
        Polyak(f_min=0.0)((square, square_gradient), x, direction)


def test_repr_rebuilds():
    rule = Polyak(f_min=-1.5, max_size=3.0)
    text = repr(rule)
    assert text == "Polyak(f_min=-1.5, max_size=3.0, gap=None, path_bound=None)"
    assert repr(eval(text, {"Polyak": Polyak})) == text  # noqa: S307
