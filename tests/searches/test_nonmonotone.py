"""Tests for `NonmonotoneArmijo` (GLL max-based and Zhang–Hager average-based references).

The conditions, as the papers state them, recomputed here from an independent copy
of the reference values:

* GLL (Grippo, Lampariello & Lucidi 1986, eq. (4) of the paper's algorithm, recalled
  from memory): f(x_k + t·d_k) ≤ max_{0≤j≤m(k)} f(x_{k−j}) + γ·t·∇f(x_k)ᵀd_k, with
  m(0) = 0 and m(k) ≤ min(m(k−1) + 1, M − 1); here m(k) = min(k, M − 1).
* Zhang & Hager 2004, Algorithm NMLS, conditions (1.4)–(1.5): f(x_k + t·d_k) ≤
  C_k + δ·t·∇f(x_k)ᵀd_k with Q_0 = 1, C_0 = f(x_0), Q_{k+1} = η_k·Q_k + 1,
  C_{k+1} = (η_k·Q_k·C_k + f(x_{k+1}))/Q_{k+1}.

Our c1 is GLL's γ and Zhang–Hager's δ. Both sides are compared as a difference,
f(x_k + t·d_k) − R_k ≤ c1·t·∇f(x_k)ᵀd_k, the form the implementation (like `Armijo`)
evaluates, so that the check is exact in floating point.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from _problems import extended_rosenbrock, quadratic, separable_sines, square, square_gradient
from linestep import Armijo, Evaluations, Status, Trial
from linestep.searches.nonmonotone import NonmonotoneArmijo

# --------------------------------------------------------------------------- problems
# Invented test functions: a convex quadratic, a nonconvex sum of sines with a small
# quadratic term (bounded below), and the extended Rosenbrock valley (nonconvex).
PROBLEMS = {
    "quadratic": lambda rng, n: quadratic(rng, n, rng.uniform(0.0, 4.0)),  # κ ≤ 1e4
    "sines": lambda rng, n: separable_sines(rng, n, weight=0.05),
    "rosenbrock": lambda rng, n: extended_rosenbrock(),
}


class PaperReference:
    """The reference values of the papers, kept apart from the implementation."""

    def __init__(self, kind, memory, eta):
        self.kind, self.memory, self.eta = kind, memory, eta
        self.values = []  # f(x_0), f(x_1), ...
        self.q = self.c = None

    def next(self, value):
        """Register f(x_k) and return the reference of iteration k."""
        self.values.append(value)
        if self.kind == "max":
            k = len(self.values) - 1
            window = min(k, self.memory - 1)  # m(k)
            return max(self.values[k - j] for j in range(window + 1))
        if self.q is None:
            self.q, self.c = 1.0, value  # Q_0 = 1, C_0 = f(x_0)
        else:
            q_next = self.eta * self.q + 1.0
            self.c = (self.eta * self.q * self.c + value) / q_next
            self.q = q_next
        return self.c


@st.composite
def runs(draw):
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    kind = draw(st.sampled_from(sorted(PROBLEMS)))
    n = draw(st.integers(2, 12))
    f, g = PROBLEMS[kind](rng, n)
    x0 = rng.standard_normal(n) * draw(st.sampled_from([0.3, 1.0, 3.0]))
    steepest = draw(st.booleans())
    options = {
        "reference": draw(st.sampled_from(["max", "average"])),
        "memory": draw(st.integers(1, 12)),
        "eta": draw(st.sampled_from([0.0, 0.5, 0.85, 1.0])),
        "c1": draw(st.sampled_from([1e-4, 0.1, 0.4])),
        "interpolation": draw(st.sampled_from(["cubic", "quadratic", None])),
        "initial": draw(st.sampled_from([1.0, 10.0, 0.01])),
        "max_evaluations": draw(st.sampled_from([3, 40])),
    }
    return f, g, x0, rng, steepest, options


def descent_direction(rng, gradient, steepest):
    """−g, or −D·g with a random positive diagonal D (always a descent direction)."""
    if steepest:
        return -gradient
    return -rng.uniform(0.05, 20.0, gradient.shape) * gradient


# --------------------------------------------------------------------------- properties


@given(runs())
def test_every_accepted_step_satisfies_the_papers_condition(run):
    """Long sequences of calls; each accepted step checked against the paper's reference,
    and each earlier trial of that call checked to fail it (the search accepts the first
    trial that passes)."""
    f, g, x, rng, steepest, options = run
    search = NonmonotoneArmijo(record_trials=True, **options)
    paper = PaperReference(options["reference"], options["memory"], options["eta"])
    c1 = options["c1"]
    for _ in range(40):
        gradient = g(x)
        if not np.any(gradient):
            break
        d = descent_direction(rng, gradient, steepest)
        value, slope = f(x), float(gradient @ d)
        reference = paper.next(value)
        step = search((f, g), x, d)
        assert np.all(np.isfinite(step.x))
        trials = step.trials
        if step.status is Status.accepted:
            assert step.size > 0.0
            np.testing.assert_array_equal(step.x, x + step.size * d)
            assert step.value == f(step.x)
            assert step.value - reference <= c1 * step.size * slope
            assert trials[-1].size == step.size
            trials = trials[:-1]
        else:
            # Nothing acceptable was found: x stays where it was.
            assert step.size == 0.0 and step.x is x
        for trial in trials:
            assert not trial.value - reference <= c1 * trial.size * slope
        x = step.x


@given(runs(), st.sampled_from([{"memory": 1}, {"reference": "average", "eta": 0.0}]))
def test_monotone_settings_reproduce_armijo_trial_for_trial(run, monotone):
    """memory = 1 (GLL with M = 1) and eta = 0 (C_k = f_k) are Armijo's condition, and the
    trials are Armijo's own: the same sizes and values at every call."""
    f, g, x, rng, steepest, options = run
    options = {**options, **monotone}
    if "reference" not in monotone:
        options["reference"] = "max"
    shared = {key: options[key] for key in ("c1", "interpolation", "initial",
                                            "max_evaluations")}
    nonmonotone = NonmonotoneArmijo(record_trials=True, **options)
    armijo = Armijo(record_trials=True, **shared)
    for _ in range(25):
        gradient = g(x)
        if not np.any(gradient):
            break
        d = descent_direction(rng, gradient, steepest)
        ours, theirs = nonmonotone((f, g), x, d), armijo((f, g), x, d)
        assert ours.trials == theirs.trials
        assert ours.status is theirs.status and ours.size == theirs.size
        x = ours.x


# --------------------------------------------------------------------------- exact cases


def test_first_call_is_armijo_by_hand():
    # First call: R_0 = f(x_0) = 25 for both references. φ(t) = 25(1 − 2t)²: t = 1 gives
    # 25 > 25 − 1e-4·100; the quadratic model gives t = 0.5 and φ = 0 (N&W eq. 3.57).
    x = np.array([3.0, -4.0])
    for reference in ("max", "average"):
        step = NonmonotoneArmijo(reference=reference, record_trials=True)(
            (square, square_gradient), x, -square_gradient(x))
        assert step.status is Status.accepted and step.size == 0.5 and step.value == 0.0
        assert step.evaluations == Evaluations(values=3, gradients=1)
        assert step.trials == (Trial(size=1.0, value=25.0, slope=None),
                               Trial(size=0.5, value=0.0, slope=None))


def test_max_reference_accepts_a_rise_that_armijo_rejects():
    # Call 0 at x = 3 (f = 9) lands on 0. Call 1 at x = 1 (f = 1) with d = −3.5 tries
    # t = 1: f(−2.5) = 6.25 > 1 but ≤ max(9, 1) + 1e-4·1·(−7). One value, accepted.
    search = NonmonotoneArmijo(memory=5)
    search((square, square_gradient), np.array([3.0]), np.array([-3.0]))
    x, d = np.array([1.0]), np.array([-3.5])
    step = search((square, square_gradient), x, d, value=1.0, gradient=np.array([2.0]))
    assert step.status is Status.accepted and step.size == 1.0 and step.value == 6.25
    assert step.evaluations == Evaluations(values=1, gradients=0)
    assert "raised f" in step.message
    armijo = Armijo()((square, square_gradient), x, d, value=1.0, gradient=np.array([2.0]))
    assert armijo.size != 1.0


def test_max_reference_forgets_values_older_than_memory():
    # memory = 2: at call 2 the window holds f_1 and f_2 only, so f_0 = 9 no longer helps.
    search = NonmonotoneArmijo(memory=2, record_trials=True)
    search((square, square_gradient), np.array([3.0]), np.array([-3.0]))  # f_0 = 9 -> 0
    search((square, square_gradient), np.array([0.5]), np.array([-0.5]))  # f_1 = 0.25
    step = search((square, square_gradient), np.array([0.4]), np.array([-2.0]))  # f_2 = 0.16
    # t = 1: f(−1.6) = 2.56 > max(0.25, 0.16): rejected, so the first trial is not taken.
    assert step.trials[0] == Trial(size=1.0, value=pytest.approx(2.56), slope=None)
    assert step.size < 1.0


def test_average_reference_by_hand():
    # eta = 0.5. Call 0 at x = 3: C_0 = 9, lands on 0. Call 1 at x = 2 (f_1 = 4):
    # Q_1 = 0.5·1 + 1 = 1.5, C_1 = (0.5·1·9 + 4)/1.5 = 17/3 ≈ 5.667. With d = −4.2:
    # t = 1 gives f(−2.2) = 4.84 ≤ 17/3 − 1e-4·16.8 (accepted, above f_1 = 4).
    search = NonmonotoneArmijo(reference="average", eta=0.5)
    search((square, square_gradient), np.array([3.0]), np.array([-3.0]))
    step = search((square, square_gradient), np.array([2.0]), np.array([-4.2]))
    assert step.status is Status.accepted and step.size == 1.0
    assert step.value == pytest.approx(4.84)
    # With d = −4.6, f(−2.6) = 6.76 > C_1: the first trial is rejected.
    search.reset()
    search((square, square_gradient), np.array([3.0]), np.array([-3.0]))
    step = search((square, square_gradient), np.array([2.0]), np.array([-4.6]))
    assert step.size < 1.0


def test_reset_forgets_the_reference_values():
    search = NonmonotoneArmijo(memory=5)
    search((square, square_gradient), np.array([3.0]), np.array([-3.0]))
    search.reset()
    # Now R = f(x) = 1 and the rise to 6.25 is rejected.
    step = search((square, square_gradient), np.array([1.0]), np.array([-3.5]))
    assert step.size != 1.0 and step.value < 1.0


def test_not_descent_calls_leave_the_reference_untouched():
    search = NonmonotoneArmijo(memory=2)
    search((square, square_gradient), np.array([3.0]), np.array([-3.0]))  # f_0 = 9
    step = search((square, square_gradient), np.array([1.0]), np.array([1.0]))
    assert step.status is Status.not_descent
    # f_0 = 9 is still in the window of two: the rise to 6.25 is accepted.
    step = search((square, square_gradient), np.array([1.0]), np.array([-3.5]))
    assert step.size == 1.0


def test_budget_spent_leaves_x_unchanged():
    # φ(t) = (1 − 2t)² from x = 1, d = −2, first trial 1000: f = 3996001; the next trial
    # is at least 0.1·1000 = 100, also far too long. Two trials, then the budget is gone.
    x = np.array([1.0])
    step = NonmonotoneArmijo(initial=1000.0, max_evaluations=2)(
        (square, square_gradient), x, np.array([-2.0]))
    assert step.status is Status.max_evaluations
    assert step.x is x and step.size == 0.0 and step.value == 1.0
    assert step.evaluations == Evaluations(values=3, gradients=1)


def test_budget_spent_after_a_rise_in_history_still_leaves_x_unchanged():
    search = NonmonotoneArmijo(initial=1000.0, max_evaluations=2)
    search((square, square_gradient), np.array([30.0]), np.array([-30.0]))  # f_0 = 900
    x = np.array([1.0])
    step = search((square, square_gradient), x, np.array([-2.0]))
    assert step.status is Status.max_evaluations and step.x is x


def test_non_finite_values_shrink_by_at_least_ten():
    def f(x):
        return float(x @ x) if abs(x[0]) < 2.0 else math.inf

    step = NonmonotoneArmijo(initial=10.0, record_trials=True)(
        (f, square_gradient), np.array([1.0]), np.array([-2.0]))
    # t = 10 → x = −19: inf. Next t = 10·min(0.5, 0.1) = 1 → x = −1, f = 1 ≤ 1 − 2e-4? No.
    # The quadratic model through φ(0) = 1, φ'(0) = −4, φ(1) = 1 gives t = 0.5: f = 0.
    assert [trial.size for trial in step.trials] == [10.0, 1.0, 0.5]
    assert step.status is Status.accepted and step.value == 0.0


def test_nothing_finite_is_non_finite_with_x_unchanged():
    x = np.array([1.0])
    step = NonmonotoneArmijo(max_evaluations=5)(
        (lambda x: math.nan, square_gradient), x, np.array([-2.0]), value=1.0)
    assert step.status is Status.non_finite and step.x is x


def test_repr_rebuilds():
    search = NonmonotoneArmijo(memory=4, reference="average", eta=0.7, c1=0.2)
    text = repr(search)
    assert text.startswith("NonmonotoneArmijo(memory=4, reference='average', eta=0.7, c1=0.2")
    rebuilt = eval(text, {"NonmonotoneArmijo": NonmonotoneArmijo})  # noqa: S307
    assert repr(rebuilt) == text
