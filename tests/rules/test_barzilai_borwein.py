"""Tests for `BarzilaiBorwein` (BB steps, optionally globalised by Raydan's nonmonotone search).

Published results checked:

* Barzilai & Borwein 1988 (IMA J. Numer. Anal. 8:141–148): the step formulas
  sᵀs/sᵀy and sᵀy/yᵀy, and R-superlinear convergence on 2-D strictly convex
  quadratics (recalled from memory: the paper's 2-D analysis).
* Raydan 1993 (IMA J. Numer. Anal. 13:321–326): the unmodified BB method (long
  step) converges on strictly convex quadratics of any dimension. For the short
  and alternating steps convergence on these problems is checked empirically
  (Dai & Fletcher 2005 study the alternating rule).
* Raydan 1997 (SIAM J. Optim. 7:26–33): BB with a GLL nonmonotone search as
  globalisation converges on smooth nonconvex problems.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from _problems import random_spd
from linestep import (
    Armijo,
    Evaluations,
    Fallback,
    ScaledTrial,
    Status,
    SteepestDescent,
    descend,
    stopping,
)
from linestep._controller import Outcome
from linestep._step import MESSAGES
from linestep.rules.barzilai_borwein import BarzilaiBorwein
from linestep.searches.nonmonotone import NonmonotoneArmijo

VARIANTS = ("long", "short", "alternate")


def bowl(scale):
    """f(x) = ½ Σ scaleᵢ xᵢ² (invented test problem), minimiser 0."""
    scale = np.asarray(scale, dtype=float)
    return (lambda x: 0.5 * float(x @ (scale * x))), (lambda x: scale * x)


def run(rule, f, g, x, iterations, tolerance=0.0):
    """The plain loop x ← x + t·(−∇f); returns the iterates and the steps."""
    xs, steps = [x], []
    g0 = np.linalg.norm(g(x))
    for _ in range(iterations):
        gradient = g(x)
        if np.linalg.norm(gradient) <= tolerance * g0:
            break
        step = rule((f, g), x, -gradient, value=f(x), gradient=gradient)
        steps.append(step)
        x = step.x
        xs.append(x)
    return xs, steps


# --------------------------------------------------------------------------- the formulas


def test_second_step_by_hand():
    # f = ½(x₁² + 4x₂²), x₀ = (1, 1), g₀ = (1, 4), first step 0.1: x₁ = (0.9, 0.6),
    # s = (−0.1, −0.4), y = (−0.1, −1.6): sᵀs = 0.17, sᵀy = 0.65, yᵀy = 2.57.
    f, g = bowl([1.0, 4.0])
    for variant, expected in [("long", 0.17 / 0.65), ("short", 0.65 / 2.57),
                              ("alternate", 0.17 / 0.65)]:
        _, steps = run(BarzilaiBorwein(variant=variant, first=0.1, globalize=None), f, g,
                       np.array([1.0, 1.0]), 2)
        assert steps[0].size == 0.1
        assert steps[1].size == pytest.approx(expected, rel=1e-14)


@pytest.mark.parametrize("variant", VARIANTS)
def test_every_step_is_the_bb_formula_from_the_previous_call(variant):
    # Recomputed here from the iterates: BB1 sᵀs/sᵀy, BB2 sᵀy/yᵀy (BB 1988, eqs. for
    # the two-point step), alternating BB1, BB2, BB1, ... from the second call on.
    rng = np.random.default_rng(3)
    a = random_spd(rng, 6, math.log10(50.0))
    f, g = (lambda x: 0.5 * float(x @ a @ x)), (lambda x: a @ x)
    xs, steps = run(BarzilaiBorwein(variant=variant, first=0.01, globalize=None), f, g,
                    rng.standard_normal(6), 12)
    assert steps[0].size == 0.01
    for k in range(1, len(steps)):
        s, y = xs[k] - xs[k - 1], g(xs[k]) - g(xs[k - 1])
        long = variant == "long" or (variant == "alternate" and k % 2 == 1)
        expected = float(s @ s) / float(s @ y) if long else float(s @ y) / float(y @ y)
        assert steps[k].size == pytest.approx(expected, rel=1e-13)
        assert steps[k].status is Status.accepted


def test_steps_are_clipped():
    f, g = bowl([1.0, 4.0])
    _, steps = run(BarzilaiBorwein(first=1e3, max_size=10.0, globalize=None), f, g,
                   np.array([1.0, 1.0]), 1)
    assert steps[0].size == 10.0
    # A tiny curvature ratio is lifted to min_size: f = ½·1e-12·x² gives sᵀs/sᵀy = 1e12,
    # clipped to max_size; on ½·1e12·x² it is 1e-12, lifted to min_size = 1e-10. The
    # first step is not lifted: it comes from `first`, not from a BB quotient.
    f, g = bowl([1e12])
    _, steps = run(BarzilaiBorwein(first=1e-13, min_size=1e-10, globalize=None), f, g,
                   np.array([1.0]), 2)
    assert steps[0].size == 1e-13 and steps[1].size == 1e-10


def test_first_step_follows_a_huge_start_gradient():
    # ∇f = 1e40·x at x = (1, 1): the default first step moves x by a distance of 1
    # (t = 1/‖g‖₂ ≈ 7e-41, far below min_size = 1e-10), so the globalised search starts
    # from a finite trial and accepts it (with min_size it would start 1e30 too far).
    f, g = bowl([1e40, 1e40])
    x = np.array([1.0, 1.0])
    step = BarzilaiBorwein()((f, g), x, -g(x))
    assert step.status is Status.accepted
    assert step.size == pytest.approx(1.0 / np.linalg.norm(g(x)), rel=1e-12)
    assert f(step.x) < f(x)


def test_scaled_negative_gradient_moves_x_to_the_same_point():
    # d = −3g is accepted; BB steps are along −g, so the size along d is α/3.
    rng = np.random.default_rng(5)
    a = random_spd(rng, 4, math.log10(20.0))
    f, g = (lambda x: 0.5 * float(x @ a @ x)), (lambda x: a @ x)
    plain, scaled = (BarzilaiBorwein(globalize=None) for _ in range(2))
    x_plain = x_scaled = rng.standard_normal(4)
    for _ in range(6):
        one = plain((f, g), x_plain, -g(x_plain))
        three = scaled((f, g), x_scaled, -3.0 * g(x_scaled))
        assert three.size == pytest.approx(one.size / 3.0, rel=1e-14)
        np.testing.assert_allclose(three.x, one.x, rtol=1e-13)
        x_plain, x_scaled = one.x, three.x


# --------------------------------------------------------------------------- convergence


@pytest.mark.parametrize("variant", VARIANTS)
@pytest.mark.parametrize("globalize", [None, "default"])
def test_converges_on_strictly_convex_quadratics(variant, globalize):
    # Raydan 1993 (long step, any n); short/alternate empirically. n = 40, κ = 1e3.
    # f = ½(x − x*)ᵀA(x − x*) is written around x* so that f → 0 is computed without
    # cancellation: a value-based search can then follow ‖g‖ down to 1e-10·‖g₀‖.
    rng = np.random.default_rng(11)
    for _ in range(3):
        a = random_spd(rng, 40, 3.0)
        solution = rng.standard_normal(40)
        f, g = (lambda x, a=a, s=solution: 0.5 * float((x - s) @ a @ (x - s))), \
            (lambda x, a=a, s=solution: a @ (x - s))
        options = {} if globalize else {"globalize": None}
        rule = BarzilaiBorwein(variant=variant, **options)
        xs, steps = run(rule, f, g, np.zeros(40), 2000, tolerance=1e-10)
        assert np.linalg.norm(g(xs[-1])) <= 1e-10 * np.linalg.norm(g(xs[0]))
        assert all(step.ok for step in steps)
        # ‖e‖ <= ‖A⁻¹‖·‖g‖ = ‖g‖ (λ_min = 1).
        assert np.linalg.norm(xs[-1] - solution) <= 1e-10 * np.linalg.norm(g(xs[0]))


def _two_d(seed):
    """A 2-D strictly convex quadratic ½xᵀAx with random rotation and κ ∈ [√10, 1000]."""
    rng = np.random.default_rng(seed)
    condition = 10.0 ** rng.uniform(0.5, 3.0)
    angle = rng.uniform(0.0, math.pi)
    q = np.array([[math.cos(angle), -math.sin(angle)], [math.sin(angle), math.cos(angle)]])
    return (q * [1.0, condition]) @ q.T, rng.standard_normal(2)


# Iterations stop at ‖e_k‖ <= STOP·‖e_0‖, above float64 rounding of the iteration.
STOP = 1e-12


def _window_ratios(errors):
    """ρ_j = (‖e_{3j+3}‖/‖e_{3j}‖)^{1/3}: the mean contraction over windows of 3 steps."""
    return np.array([(errors[j + 3] / errors[j]) ** (1 / 3)
                     for j in range(0, len(errors) - 3, 3)])


@pytest.mark.parametrize("variant", VARIANTS)
def test_two_dimensional_quadratics_converge_r_superlinearly(variant):
    """BB 1988: R-superlinear on 2-D quadratics, i.e. ‖e_k‖^{1/k} → 0.

    Single ratios ‖e_{k+1}‖/‖e_k‖ do not tend to 0 monotonically (BB is not Q-superlinear
    and some single ratios exceed 1), so we assert on windows of 3 steps. What is
    asserted, for 20 seeded problems per variant (κ between √10 and 1000, x* = 0):
    (a) ‖e_K‖ <= 1e-12·‖e_0‖ within K <= 12 iterations;
    (b) the window ratios ρ_0 > ρ_1 > ... decrease strictly up to that point (they tend
        to 0 as far as float64 lets us follow), and for the long and alternating steps,
        which run for at least two windows here, ρ_last <= 0.25·ρ_0.
    The control below shows that (b) fails for a Q-linear method on the same problems.
    """
    for seed in range(20):
        a, x0 = _two_d(seed)
        f, g = (lambda x, a=a: 0.5 * float(x @ a @ x)), (lambda x, a=a: a @ x)
        rule = BarzilaiBorwein(variant=variant, globalize=None)
        errors, x = [np.linalg.norm(x0)], x0
        while errors[-1] > STOP * errors[0] and len(errors) <= 12:
            gradient = g(x)
            x = rule((f, g), x, -gradient, value=f(x), gradient=gradient).x
            errors.append(np.linalg.norm(x))
        assert errors[-1] <= STOP * errors[0], (seed, errors)
        ratios = _window_ratios(np.array(errors))
        assert np.all(np.diff(ratios) < 0.0), (seed, ratios)
        if variant != "short":
            assert len(ratios) >= 2 and ratios[-1] <= 0.25 * ratios[0], (seed, ratios)


def test_control_steepest_descent_with_exact_steps_is_only_linear():
    # Cauchy's exact step t = gᵀg/gᵀAg converges Q-linearly (Akaike's zigzag): the same
    # window test (b) fails on every one of the 20 problems.
    for seed in range(20):
        a, x = _two_d(seed)
        errors = [np.linalg.norm(x)]
        for _ in range(12):
            gradient = a @ x
            x = x - float(gradient @ gradient) / float(gradient @ a @ gradient) * gradient
            errors.append(np.linalg.norm(x))
        assert not np.all(np.diff(_window_ratios(np.array(errors))) < 0.0)


def test_default_globalisation_finds_the_rosenbrock_minimiser():
    # Raydan 1997 uses the extended Rosenbrock function among his tests; from (−1.2, 1).
    def f(x):
        return float(100.0 * (x[1] - x[0] ** 2) ** 2 + (1.0 - x[0]) ** 2)

    def g(x):
        return np.array([-400.0 * x[0] * (x[1] - x[0] ** 2) - 2.0 * (1.0 - x[0]),
                         200.0 * (x[1] - x[0] ** 2)])

    # ‖g‖ ≤ 1e-10·‖g₀‖ ≈ 2.3e-8; the Hessian's smallest eigenvalue at x* is about 0.4, so
    # x is then within about 6e-8 of x* (a 1e-8 test left up to 6e-6, above the atol).
    xs, steps = run(BarzilaiBorwein(), f, g, np.array([-1.2, 1.0]), 5000, tolerance=1e-10)
    np.testing.assert_allclose(xs[-1], [1.0, 1.0], atol=1e-6)
    assert all(step.ok for step in steps)
    # Nonmonotone: f rose at some steps, which the GLL reference allows.
    values = [f(x) for x in xs]
    assert any(b > a for a, b in zip(values[:-1], values[1:], strict=True))


# --------------------------------------------------------------------------- safeguards


def test_negative_curvature_doubles_the_previous_trial():
    # f = cos x (invented), g = −sin x; from x₀ = 0.3 with first step 1: x₁ = 0.3 + sin 0.3,
    # s = sin 0.3 > 0, y = sin 0.3 − sin x₁ < 0, so sᵀy < 0 and the trial 1 is doubled.
    f, g = (lambda x: float(np.cos(x[0]))), (lambda x: -np.sin(x))
    _, steps = run(BarzilaiBorwein(first=1.0, globalize=None), f, g, np.array([0.3]), 2)
    assert steps[1].status is Status.accepted and steps[1].size == 2.0
    assert "sᵀy" in steps[1].message and "doubled" in steps[1].message


class _Saying(Armijo):
    """Armijo that ends with a sentence of its own, or fails after its first call."""

    def __init__(self, fail):
        super().__init__()
        self.fail, self.calls = fail, 0

    def _search(self, ray, first):
        self.calls += 1
        if self.fail and self.calls > 1:
            return Outcome(None, Status.max_evaluations)
        outcome = super()._search(ray, first)
        return Outcome(outcome.point, outcome.status, "The search's own sentence.")


@pytest.mark.parametrize("fail", [False, True])
def test_negative_curvature_note_is_kept_beside_the_search_message(fail):
    # The cos ray of the test above, globalised by a search that has its own message (or
    # fails with the status's default one): the step says both, BB's note first.
    f, g = (lambda x: float(np.cos(x[0]))), (lambda x: -np.sin(x))
    _, steps = run(BarzilaiBorwein(first=1.0, globalize=_Saying(fail)), f, g,
                   np.array([0.3]), 2)
    message = steps[1].message
    assert "doubled" in message
    said = MESSAGES[Status.max_evaluations] if fail else "The search's own sentence."
    assert message.endswith(said) and message.index("doubled") < message.index(said)
    assert steps[1].status is (Status.max_evaluations if fail else Status.accepted)


class _Lost(Armijo):
    """Armijo whose later calls evaluate one non-finite point and give up."""

    def _search(self, ray, first):
        if ray.origin.x[0] < 0.5:
            return super()._search(ray, first)
        ray.value(first)
        return Outcome(None, Status.step_too_small)


def test_negative_curvature_note_names_the_status_the_step_reports():
    # f (invented) is cos x below 1.5 and NaN beyond; the doubled BB trial lands beyond, and
    # the search gives up having seen no finite value, so the step reports non_finite: the
    # sentence after BB's note must be that status's, not step_too_small's.
    f = lambda x: float(np.cos(x[0])) if x[0] < 1.5 else math.nan  # noqa: E731
    g = lambda x: -np.sin(x)  # noqa: E731
    _, steps = run(BarzilaiBorwein(first=1.0, globalize=_Lost()), f, g, np.array([0.3]), 2)
    assert steps[1].status is Status.non_finite
    assert "doubled" in steps[1].message
    assert steps[1].message.endswith(MESSAGES[Status.non_finite])
    assert steps[1].size == 0.0


def test_negative_curvature_growth_stops_at_max_size():
    # f = −x² (invented, concave): every pair has sᵀy < 0, so the trial doubles each call.
    f, g = (lambda x: -float(x @ x)), (lambda x: -2.0 * x)
    rule = BarzilaiBorwein(first=0.5, max_size=3.0, globalize=None)
    x, sizes = np.array([1.0]), []
    for _ in range(4):
        step = rule((f, g), x, -g(x))
        sizes.append(step.size)  # d = −g: the size along d is α
        x = step.x
    assert sizes == [0.5, 1.0, 2.0, 3.0]


def test_negative_curvature_near_a_saddle_does_not_stall():
    # Wood's function (Moré, Garbow & Hillstrom 1981, problem 14) has a stationary point
    # near f ≈ 7.88 with negative curvature. From this start (the standard one perturbed
    # by 10%: `Start.perturbed(0.1)`, seed 1000) steepest descent reaches it in ~30 steps;
    # the BB step reused unchanged where sᵀy ≤ 0 then stayed at 0.0011 for 10,000
    # iterations (f still 7.867). Doubling it leaves the saddle and reaches f* = 0.
    from linestep.bench import get_problem

    problem = get_problem("wood")
    x0 = np.array([-3.04552372, -0.55636336, -3.86934884, -0.63263527])
    result = descend((problem.value, problem.gradient), x0, controller=BarzilaiBorwein(),
                     direction=SteepestDescent(),
                     stop=stopping.default(max_iterations=5000, max_evaluations=20000))
    assert result.value < 1e-8, result.verdict.reason


def test_x_unchanged_gives_s_zero_and_reuses_the_previous_trial():
    f, g = bowl([1.0, 4.0])
    rule = BarzilaiBorwein(first=0.2, globalize=None)
    x = np.array([1.0, 1.0])
    rule((f, g), x, -g(x))
    step = rule((f, g), x, -g(x))  # the caller did not move: s = 0, sᵀy = 0
    assert step.size == 0.2 and "reused" in step.message


def test_in_place_updates_by_the_caller_do_not_corrupt_s_and_y():
    # A loop that updates x and a gradient buffer in place must see the same steps.
    f, g = bowl([1.0, 4.0, 9.0])
    _, reference = run(BarzilaiBorwein(first=0.05, globalize=None), f, g,
                       np.array([1.0, -1.0, 0.5]), 6)
    rule = BarzilaiBorwein(first=0.05, globalize=None)
    x, buffer = np.array([1.0, -1.0, 0.5]), np.empty(3)
    for expected in reference:
        np.multiply([1.0, 4.0, 9.0], x, out=buffer)
        step = rule((f, g), x, -buffer, value=f(x), gradient=buffer)
        assert step.size == expected.size
        x -= step.size * buffer


def test_pure_step_with_non_finite_value_leaves_x_unchanged():
    x = np.array([1.0])
    step = BarzilaiBorwein(first=5.0, globalize=None)(
        (lambda x: math.inf if abs(x[0]) > 2 else float(x @ x), lambda x: 2 * x), x,
        np.array([-2.0]), value=1.0, gradient=np.array([2.0]))
    assert step.status is Status.non_finite and step.x is x and step.size == 0.0
    assert step.evaluations == Evaluations(values=1, gradients=0)


def test_globalised_step_backtracks_from_a_non_finite_bb_trial():
    x = np.array([1.0])
    step = BarzilaiBorwein(first=5.0)(
        (lambda x: math.inf if abs(x[0]) > 2 else float(x @ x), lambda x: 2 * x), x,
        np.array([-2.0]), value=1.0, gradient=np.array([2.0]))
    assert step.ok and step.value < 1.0


def test_pure_step_costs_one_value():
    f, g = bowl([1.0, 4.0])
    x = np.array([1.0, 1.0])
    step = BarzilaiBorwein(globalize=None)((f, g), x, -g(x), value=f(x), gradient=g(x))
    assert step.evaluations == Evaluations(values=1, gradients=0)
    # Without value and gradient: one gradient and one value at x, one value at the step.
    step = BarzilaiBorwein(globalize=None)((f, g), x, -g(x))
    assert step.evaluations == Evaluations(values=2, gradients=1)


def test_zero_gradient_is_accepted_with_size_zero():
    f, g = bowl([1.0, 4.0])
    x = np.zeros(2)
    for direction in (np.zeros(2), np.array([1.0, -2.0])):
        step = BarzilaiBorwein()((f, g), x, direction)
        assert step.status is Status.accepted and step.size == 0.0
        assert "stationary" in step.message
        np.testing.assert_array_equal(step.x, x)
        assert step.evaluations == Evaluations(values=0, gradients=1)


def test_reset_starts_again_from_the_first_step():
    f, g = bowl([1.0, 4.0])
    rule = BarzilaiBorwein(first=0.1, globalize=None)
    _, before = run(rule, f, g, np.array([1.0, 1.0]), 3)
    rule.reset()
    _, after = run(rule, f, g, np.array([1.0, 1.0]), 3)
    assert [s.size for s in after] == [s.size for s in before]
    assert after[0].size == 0.1


def test_reset_also_resets_the_globalising_search():
    search = NonmonotoneArmijo(memory=5)
    rule = BarzilaiBorwein(globalize=search)
    f, g = bowl([1.0])
    rule((f, g), np.array([3.0]), np.array([-3.0]))
    assert len(search._values) == 1
    rule.reset()
    assert len(search._values) == 0


def test_monotone_armijo_as_globalisation_keeps_f_decreasing():
    f, g = bowl(np.logspace(0, 3, 30))
    xs, steps = run(BarzilaiBorwein(globalize=Armijo()), f, g, np.ones(30), 3000,
                    tolerance=1e-8)
    values = [f(x) for x in xs]
    assert all(b < a for a, b in zip(values[:-1], values[1:], strict=True))
    assert np.linalg.norm(g(xs[-1])) <= 1e-8 * np.linalg.norm(g(xs[0]))


def test_a_point_of_another_shape_starts_again_from_first():
    rule = BarzilaiBorwein(first=0.1, globalize=None)
    f2, g2 = bowl([1.0, 4.0])
    run(rule, f2, g2, np.array([1.0, 1.0]), 3)
    f3, g3 = bowl([1.0, 2.0, 3.0])
    x = np.ones(3)
    # Another shape is another problem: the state is reset, with a warning (issue 10).
    with pytest.warns(RuntimeWarning, match="different problem"):
        assert rule((f3, g3), x, -g3(x)).size == 0.1


def test_works_inside_fallback():
    f, g = bowl([1.0, 100.0])
    x = np.array([1.0, 1.0])
    step = Fallback(BarzilaiBorwein(first=1.0, globalize=None), Armijo())((f, g), x, -g(x))
    assert step.ok and step.value < f(x)


# --------------------------------------------------------------------------- bad arguments


@pytest.mark.parametrize("direction", [
    np.array([1.0, 4.0]),  # +g: not a descent direction
    np.array([-1.0, -3.0]),  # a descent direction other than −g
    np.array([-1.0, -4.0 * (1 + 1e-4)]),  # −g perturbed well above rounding
])
def test_direction_other_than_negative_gradient_raises(direction):
    f, g = bowl([1.0, 4.0])
    x = np.array([1.0, 1.0])
    for options in ({}, {"globalize": None}):
        with pytest.raises(ValueError, match="negative gradient: `direction` must be"):
            BarzilaiBorwein(**options)((f, g), x, direction)
        with pytest.raises(ValueError, match="`direction`"):
            BarzilaiBorwein(**options)((f, g), x, direction, value=f(x), gradient=g(x))


def test_repr_rebuilds():
    rule = BarzilaiBorwein(variant="short", first=ScaledTrial(length=0.5))
    text = repr(rule)
    assert text.startswith("BarzilaiBorwein(variant='short', first=ScaledTrial(length=0.5)")
    assert "globalize=NonmonotoneArmijo(memory=10, reference='max'" in text
    namespace = {"BarzilaiBorwein": BarzilaiBorwein, "NonmonotoneArmijo": NonmonotoneArmijo,
                 "ScaledTrial": ScaledTrial}
    assert repr(eval(text, namespace)) == text  # noqa: S307
    assert repr(BarzilaiBorwein(globalize=None)).endswith("globalize=None)")
