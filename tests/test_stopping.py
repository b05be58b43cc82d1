"""Tests for `linestep.stopping`: each criterion on hand-built progress sequences."""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from linestep import stopping
from linestep.stopping import (
    AnyOf,
    Criterion,
    Divergence,
    GradientNorm,
    Kind,
    MaxEvaluations,
    MaxIterations,
    Progress,
    Stall,
    StepLength,
    TimeLimit,
    ValueChange,
    Verdict,
)


def snapshot(
    iteration=0,
    *,
    value=1.0,
    gradient=(1.0, 1.0),
    x=(0.0, 0.0),
    start_value=None,
    start_gradient=None,
    values=None,
    gradients=None,
    elapsed=0.0,
    step=None,
):
    """A Progress with harmless defaults; the start defaults to this snapshot."""
    gradient = None if gradient is None else np.asarray(gradient, dtype=float)
    return Progress(
        iteration=iteration,
        evaluations=SimpleNamespace(
            values=iteration + 1 if values is None else values,
            gradients=iteration + 1 if gradients is None else gradients,
        ),
        x=np.asarray(x, dtype=float),
        value=value,
        gradient=gradient,
        step=step,
        start_value=value if start_value is None else start_value,
        start_gradient=gradient if start_gradient is None else np.asarray(start_gradient),
        elapsed=elapsed,
    )


def feed(criterion, snapshots):
    """Call `criterion` on each snapshot; return the verdicts in order."""
    return [criterion(progress) for progress in snapshots]


def first_firing(verdicts):
    """Index of the first non-None verdict, or None."""
    return next((i for i, v in enumerate(verdicts) if v is not None), None)


ALL_CRITERIA = [
    GradientNorm(),
    ValueChange(),
    StepLength(),
    MaxIterations(3),
    MaxEvaluations(10),
    TimeLimit(5.0),
    Divergence(),
    Stall(),
]


# ------------------------------------------------------------------ records


def test_kind_members_are_lower_case_strings():
    assert [k.value for k in Kind] == ["converged", "budget", "failed"]
    assert [k.name for k in Kind] == ["converged", "budget", "failed"]
    assert Kind.converged == "converged"
    assert isinstance(Kind.budget, str)
    assert f"{Kind.failed}" == "failed"
    assert repr(Kind.failed) == "Kind.failed"


def test_records_are_frozen_keyword_only_and_slotted():
    verdict = Verdict(kind=Kind.budget, reason="r.", criterion="c")
    with pytest.raises(AttributeError):
        verdict.kind = Kind.failed  # type: ignore[misc]
    with pytest.raises(TypeError):
        Verdict(Kind.budget, "r.", "c")  # type: ignore[misc]
    assert not hasattr(verdict, "__dict__")
    progress = snapshot()
    with pytest.raises(AttributeError):
        progress.value = 2.0  # type: ignore[misc]
    assert not hasattr(progress, "__dict__")


# ---------------------------------------------------------------- GradientNorm


def test_gradient_norm_fires_at_equality_with_atol():
    criterion = GradientNorm(atol=0.5, rtol=0.0)
    start = (4.0, 4.0)
    assert criterion(snapshot(3, gradient=(0.5000001, 0.0), start_gradient=start)) is None
    verdict = criterion(snapshot(4, gradient=(-0.5, 0.25), start_gradient=start))
    assert verdict is not None
    assert verdict.kind is Kind.converged
    assert verdict.criterion == "GradientNorm(atol=0.5, rtol=0.0, norm=inf)"
    assert verdict.reason == "Gradient max-norm 0.5 is at or below the tolerance 0.5 (atol=0.5)."


def test_gradient_norm_relative_to_start():
    # max(atol, rtol * |g0|) = max(1e-3, 0.25 * 8) = 2.
    criterion = GradientNorm(atol=1e-3, rtol=0.25)
    start = (8.0, -2.0)
    assert criterion(snapshot(0, gradient=start)) is None
    assert criterion(snapshot(1, gradient=(2.0000001, 0.0), start_gradient=start)) is None
    verdict = criterion(snapshot(2, gradient=(0.0, -2.0), start_gradient=start))
    assert verdict.kind is Kind.converged
    assert "tolerance 2 (atol=0.001, rtol*|g0|=2)" in verdict.reason


def test_gradient_norm_rtol_zero_switches_relative_test_off():
    criterion = GradientNorm(atol=1e-8, rtol=0.0)
    assert criterion(snapshot(1, gradient=(1e-6,), start_gradient=(1e6,))) is None
    assert criterion(snapshot(2, gradient=(1e-8,), start_gradient=(1e6,))) is not None


@pytest.mark.parametrize(
    ("norm", "boundary"),
    [(math.inf, 4.0), (np.inf, 4.0), (2, 5.0), (2.0, 5.0), (1, 7.0)],
)
def test_gradient_norm_choice_of_norm(norm, boundary):
    gradient = (3.0, -4.0)  # max-norm 4, 2-norm 5, 1-norm 7
    assert GradientNorm(atol=boundary, rtol=0.0, norm=norm)(snapshot(1, gradient=gradient))
    below = np.nextafter(boundary, 0.0)
    assert GradientNorm(atol=below, rtol=0.0, norm=norm)(snapshot(1, gradient=gradient)) is None


def test_gradient_norm_handles_any_shape_and_non_finite():
    criterion = GradientNorm(atol=1e-3, rtol=0.0)
    matrix = np.full((3, 4, 2), 1e-4)
    assert criterion(snapshot(1, gradient=matrix, x=np.zeros((3, 4, 2)))) is not None
    assert criterion(snapshot(1, gradient=5e-4)) is not None  # 0-d gradient
    assert criterion(snapshot(1, gradient=(np.nan, 0.0))) is None
    assert criterion(snapshot(1, gradient=None)) is None
    # A non-finite start gradient gives no relative scale instead of firing.
    relative = GradientNorm(atol=0.0, rtol=0.5)
    assert relative(snapshot(1, gradient=(1.0,), start_gradient=(np.inf,))) is None


# ----------------------------------------------------------------- ValueChange


def test_value_change_window_one_at_equality():
    criterion = ValueChange(atol=0.25, rtol=0.0)
    verdicts = feed(criterion, [snapshot(0, value=2.0), snapshot(1, value=1.0)])
    assert verdicts == [None, None]
    verdict = criterion(snapshot(2, value=0.75))  # |0.75 - 1| = 0.25
    assert verdict.kind is Kind.converged
    assert verdict.reason == (
        "The value changed by 0.25 over the last iteration, at or below the tolerance 0.25."
    )


def test_value_change_relative_uses_larger_magnitude():
    # |2 - 4| = 2 <= 0.5 * max(|2|, |4|) = 2.
    criterion = ValueChange(atol=0.0, rtol=0.5)
    assert feed(criterion, [snapshot(0, value=4.0), snapshot(1, value=2.0)])[1] is not None
    criterion.reset()
    # |-1 - 1| = 2 > 0.5 * 1.
    assert feed(criterion, [snapshot(0, value=1.0), snapshot(1, value=-1.0)]) == [None, None]


def test_value_change_both_zero_fires():
    # tiny keeps the relative scale positive, so 0 == 0 counts as no change.
    criterion = ValueChange(atol=0.0, rtol=1e-12)
    assert feed(criterion, [snapshot(0, value=0.0), snapshot(1, value=0.0)])[1] is not None


def test_value_change_compares_window_iterations_back():
    criterion = ValueChange(atol=0.5, rtol=0.0, window=3)
    values = [10.0, 9.9, 9.8, 9.7, 9.6, 9.5, 9.49]
    verdicts = feed(criterion, [snapshot(k, value=v) for k, v in enumerate(values)])
    # k=3: |9.7 - 10| = 0.3 <= 0.5: the first iteration with 3 values back.
    assert first_firing(verdicts) == 3
    assert "over the last 3 iterations" in verdicts[3].reason


def test_value_change_needs_a_full_window():
    criterion = ValueChange(atol=1.0, rtol=0.0, window=4)
    verdicts = feed(criterion, [snapshot(k, value=5.0) for k in range(4)])
    assert verdicts == [None] * 4
    assert criterion(snapshot(4, value=5.0)) is not None


def test_value_change_reset_and_repeated_snapshot():
    criterion = ValueChange(atol=0.5, rtol=0.0)
    criterion(snapshot(0, value=10.0))
    # Seeing iteration 0 again replaces its value rather than counting twice.
    assert criterion(snapshot(0, value=10.0)) is None
    assert criterion(snapshot(1, value=9.0)) is None
    criterion.reset()
    assert criterion(snapshot(5, value=9.2)) is None  # nothing stored after reset
    # Iteration numbers going back start a new run.
    assert criterion(snapshot(0, value=9.1)) is None


def test_value_change_ignores_non_finite_values():
    criterion = ValueChange(atol=1.0, rtol=0.0)
    values = [math.inf, math.inf, math.nan, math.nan]
    assert feed(criterion, [snapshot(k, value=v) for k, v in enumerate(values)]) == [None] * 4


# ------------------------------------------------------------------ StepLength


def test_step_length_at_equality_and_never_at_first_snapshot():
    criterion = StepLength(atol=0.5, rtol=0.0, norm=2)
    assert criterion(snapshot(0, x=(0.0, 0.0))) is None
    verdict = criterion(snapshot(1, x=(0.3, 0.4)))  # length exactly 0.5
    assert verdict.kind is Kind.converged
    assert verdict.reason == (
        "The last step's length (2-norm) 0.5 is at or below the tolerance 0.5."
    )
    assert criterion(snapshot(2, x=(1.0, 0.4))) is None  # step of 0.7


def test_step_length_relative_to_x_and_max_norm_default():
    # max-norm: step 0.25, ||x|| = 1, rtol * ||x|| = 0.25.
    criterion = StepLength(atol=0.0, rtol=0.25)
    verdicts = feed(criterion, [snapshot(0, x=(0.75, -0.5)), snapshot(1, x=(1.0, -0.5))])
    assert first_firing(verdicts) == 1


def test_step_length_copies_x_against_in_place_updates():
    criterion = StepLength(atol=1e-9, rtol=0.0)
    x = np.zeros(3)
    criterion(snapshot(0, x=x))
    x += 1.0  # a driver updating in place
    assert criterion(snapshot(1, x=x)) is None


def test_step_length_reset_and_repeat():
    criterion = StepLength(atol=0.1, rtol=0.0)
    criterion(snapshot(0, x=(0.0,)))
    criterion(snapshot(1, x=(1.0,)))
    # A repeat of iteration 1 still measures from iteration 0.
    assert criterion(snapshot(1, x=(1.0,))) is None
    criterion.reset()
    assert criterion(snapshot(2, x=(1.0,))) is None
    assert criterion(snapshot(3, x=(1.05,))) is not None


# ---------------------------------------------------------------------- budgets


def test_max_iterations_fires_at_n():
    criterion = MaxIterations(3)
    verdicts = feed(criterion, [snapshot(k) for k in range(5)])
    assert first_firing(verdicts) == 3
    assert verdicts[3].kind is Kind.budget
    assert verdicts[3].reason == (
        "Stopped after 3 iterations, the budget of 3; raise `n` or loosen the "
        "convergence tolerances."
    )
    assert MaxIterations(0)(snapshot(0)) is not None


def test_max_evaluations_counts_values_and_gradients():
    criterion = MaxEvaluations(10)
    assert criterion(snapshot(2, values=6, gradients=3)) is None
    verdict = criterion(snapshot(3, values=6, gradients=4))
    assert verdict.kind is Kind.budget
    assert verdict.reason.startswith("Used 10 evaluations (6 values + 4 gradients)")


def test_max_evaluations_accepts_an_evaluations_record():
    from linestep._step import Evaluations

    progress = Progress(
        iteration=1,
        evaluations=Evaluations(values=2, gradients=1),
        x=np.zeros(2),
        value=0.0,
        gradient=np.zeros(2),
        start_value=1.0,
        start_gradient=np.ones(2),
    )
    assert MaxEvaluations(3)(progress) is not None
    assert MaxEvaluations(4)(progress) is None


def test_time_limit_fires_at_the_limit():
    criterion = TimeLimit(2.5)
    assert criterion(snapshot(4, elapsed=2.4999)) is None
    verdict = criterion(snapshot(5, elapsed=2.5))
    assert verdict.kind is Kind.budget
    assert "time limit of 2.5 s" in verdict.reason


# -------------------------------------------------------------------- Divergence


@pytest.mark.parametrize(
    ("changes", "fragment"),
    [
        ({"value": math.nan}, "The value is nan at iteration 7"),
        ({"value": math.inf}, "The value is inf at iteration 7"),
        ({"value": -math.inf}, "The value is -inf at iteration 7"),
        ({"gradient": (0.0, math.inf)}, "The gradient has non-finite entries"),
        ({"x": (math.nan, 0.0)}, "x has non-finite entries"),
        ({"value": -2e100}, "|value| = 2e+100 exceeds the bound 1e+100"),
    ],
)
def test_divergence_fails_with_a_reason(changes, fragment):
    verdict = Divergence()(snapshot(7, start_value=1.0, **changes))
    assert verdict.kind is Kind.failed
    assert fragment in verdict.reason
    assert verdict.reason.endswith("use a line search or a smaller step.")


def test_divergence_bound_is_strict():
    criterion = Divergence(bound=100.0)
    assert criterion(snapshot(1, value=100.0)) is None
    assert criterion(snapshot(1, value=-100.0)) is None
    assert criterion(snapshot(1, value=100.00001)) is not None


def test_divergence_growth():
    # Start 4: limit 4 + 0.5 * max(1, 4) = 6. Start 0.1: limit 0.1 + 2 * 1 = 2.1.
    criterion = Divergence(growth=0.5)
    assert criterion(snapshot(3, value=6.0, start_value=4.0)) is None
    verdict = criterion(snapshot(3, value=6.5, start_value=4.0))
    assert verdict.kind is Kind.failed
    assert "rose above the limit 6 (start 4, growth=0.5)" in verdict.reason
    small = Divergence(growth=2.0)
    assert small(snapshot(1, value=2.0, start_value=0.1)) is None
    assert small(snapshot(1, value=2.2, start_value=0.1)) is not None
    # Without growth a rising value is not a failure.
    assert Divergence()(snapshot(1, value=1e50, start_value=1.0)) is None


def test_divergence_passes_healthy_and_gradient_free_snapshots():
    assert Divergence()(snapshot(0)) is None
    assert Divergence()(snapshot(2, gradient=None)) is None


# ------------------------------------------------------------------------- Stall


def test_stall_fires_after_n_iterations_without_improvement():
    criterion = Stall(iterations=3)
    values = [5.0, 4.0, 4.0, 4.5, 4.0]
    verdicts = feed(criterion, [snapshot(k, value=v) for k, v in enumerate(values)])
    # Best 4 from iteration 1; iterations 2, 3, 4 bring nothing.
    assert first_firing(verdicts) == 4
    assert verdicts[4].kind is Kind.failed
    assert verdicts[4].reason == (
        "The best value 4 (iteration 1) has not improved for 3 iterations; the value is now "
        "4, 0 above it, and did not keep rising. x may already be as good as this precision "
        "allows: loosen the convergence tolerances to stop earlier, or check the gradient, "
        "the direction and the step controller."
    )


def test_stall_at_rounding_noise_does_not_say_the_values_keep_rising():
    # Issue 10 item 8: a run stalled at its optimum, with values jittering at rounding
    # level (invented numbers, 1 ulp apart), ends on a last value just above the best.
    best = 2.0
    values = [3.0, best] + [best + (k % 2) * 4.4e-16 for k in range(1, 6)]
    verdicts = feed(Stall(iterations=5), [snapshot(k, value=v) for k, v in enumerate(values)])
    reason = verdicts[-1].reason
    assert "keep rising" in reason and "did not keep rising" in reason
    assert "step is probably too large" not in reason
    # Values that climb in every idle iteration still get the too-large advice.
    climbing = [3.0, best, 2.5, 3.0, 3.5, 4.0, 4.5]
    verdicts = feed(Stall(iterations=5), [snapshot(k, value=v) for k, v in enumerate(climbing)])
    assert "if the values keep rising, the step is probably too large" in verdicts[-1].reason


def test_stall_improvement_must_exceed_the_threshold():
    # Threshold 0.1 * max(1, |best|): best 10 needs f < 9; best 0.5 needs f < 0.4.
    criterion = Stall(iterations=2, rtol=0.1)
    assert feed(criterion, [snapshot(0, value=10.0), snapshot(1, value=9.0)]) == [None, None]
    assert criterion(snapshot(2, value=9.0)) is not None  # 9 == 10 - 1 is not enough
    criterion.reset()
    values = [0.5, 0.4, 0.4]  # 0.5 - 0.1 is exactly 0.4: not an improvement
    verdicts = feed(criterion, [snapshot(k, value=v) for k, v in enumerate(values)])
    assert first_firing(verdicts) == 2
    criterion.reset()
    values = [0.5, 0.45, 0.3999, 0.38]
    verdicts = feed(criterion, [snapshot(k, value=v) for k, v in enumerate(values)])
    assert verdicts == [None] * 4  # 0.3999 improved at iteration 2


def test_stall_slow_steady_progress_is_not_a_stall():
    criterion = Stall(iterations=2)
    values = [1.0 - 1e-15 * k for k in range(50)]
    assert feed(criterion, [snapshot(k, value=v) for k, v in enumerate(values)]) == [None] * 50


def test_stall_reset_and_non_finite_start():
    criterion = Stall(iterations=2)
    feed(criterion, [snapshot(0, value=1.0), snapshot(1, value=1.0)])
    criterion.reset()
    assert criterion(snapshot(2, value=1.0)) is None  # the clock restarts here
    assert criterion(snapshot(3, value=1.0)) is None
    assert criterion(snapshot(4, value=1.0)) is not None
    criterion.reset()
    values = [math.nan, 3.0, 3.0]
    verdicts = feed(criterion, [snapshot(k, value=v) for k, v in enumerate(values)])
    assert verdicts == [None, None, None]  # a finite value beats a NaN start


# --------------------------------------------------------- composition with `|`


def test_or_builds_a_flat_combination_in_order():
    a, b, c = GradientNorm(), MaxIterations(5), Stall()
    assert (a | b | c).criteria == (a, b, c)
    assert (a | (b | c)).criteria == (a, b, c)
    assert ((a | b) | (c | a)).criteria == (a, b, c, a)
    assert AnyOf(a | b, c).criteria == (a, b, c)


def test_first_in_order_wins():
    progress = snapshot(10, gradient=(0.0, 0.0))
    assert (GradientNorm() | MaxIterations(10))(progress).kind is Kind.converged
    verdict = (MaxIterations(10) | GradientNorm())(progress)
    assert verdict.kind is Kind.budget
    assert verdict.criterion == "MaxIterations(10)"


def test_every_member_sees_every_snapshot():
    # The stall clock keeps running while an earlier member fires.
    stall = Stall(iterations=2)
    combined = MaxIterations(0) | stall
    feed(combined, [snapshot(k, value=1.0) for k in range(2)])
    assert stall(snapshot(2, value=1.0)) is not None


def test_reset_propagates_to_members():
    value_change = ValueChange(atol=1.0, rtol=0.0)
    stall = Stall(iterations=1)
    combined = value_change | (MaxIterations(100) | stall)
    feed(combined, [snapshot(0, value=3.0), snapshot(1, value=3.0)])
    combined.reset()
    assert combined(snapshot(2, value=3.0)) is None


def test_plain_callables_combine_on_either_side():
    def below_one(progress):
        if progress.value < 1.0:
            return Verdict(kind=Kind.converged, reason="Below one.", criterion="below_one")
        return None

    left = below_one | MaxIterations(9)
    right = MaxIterations(9) | below_one
    assert isinstance(left, AnyOf)
    assert left.criteria[0] is below_one
    assert right.criteria[1] is below_one
    assert left(snapshot(9, value=0.5)).reason == "Below one."
    assert right(snapshot(9, value=0.5)).kind is Kind.budget
    left.reset()  # members without reset are skipped


def test_a_member_returning_a_non_verdict_is_an_error():
    combined = GradientNorm() | (lambda progress: "yes")
    with pytest.raises(TypeError, match="must return a Verdict, None"):
        combined(snapshot(1))


@pytest.mark.parametrize("answer", [True, np.True_])
def test_a_member_returning_true_stops_with_a_budget_verdict(answer):
    # Issue 10 item 9: a bool (numpy's too) is an answer; True stops, False goes on.
    combined = GradientNorm(atol=0.0, rtol=0.0) | (lambda progress: answer)
    verdict = combined(snapshot(1))
    assert verdict.kind is Kind.budget and "returned True" in verdict.reason
    assert (GradientNorm(atol=0.0, rtol=0.0) | (lambda progress: np.False_))(snapshot(1)) is None


def test_or_with_a_non_callable_is_a_type_error():
    with pytest.raises(TypeError):
        GradientNorm() | 3  # noqa: B018
    with pytest.raises(TypeError):
        3 | GradientNorm()  # noqa: B018


def test_combination_repr():
    combined = Divergence(bound=10.0) | MaxIterations(4)
    assert repr(combined) == "Divergence(bound=10.0, growth=None) | MaxIterations(4)"
    assert repr(AnyOf(MaxIterations(4))) == "AnyOf(MaxIterations(4))"


# ---------------------------------------------------------------------- default


def test_default_members_and_order():
    stop = stopping.default()
    assert [type(c) for c in stop.criteria] == [
        Divergence,
        GradientNorm,
        ValueChange,
        MaxIterations,
        Stall,
    ]
    assert repr(stop) == (
        "Divergence(bound=1e+100, growth=100000000.0) | GradientNorm(atol=1e-06, rtol=0.0, "
        "norm=inf) | ValueChange(atol=0.0, rtol=1e-12, window=5) | MaxIterations(10000) | "
        "Stall(iterations=100, rtol=0.0)"
    )


def test_default_optional_budgets_and_options():
    stop = stopping.default(max_evaluations=500, seconds=60.0, gradient_atol=1e-3)
    kinds = [type(c) for c in stop.criteria]
    assert kinds.index(MaxIterations) < kinds.index(MaxEvaluations) < kinds.index(TimeLimit)
    assert kinds[-1] is Stall
    assert stop.criteria[1].atol == 1e-3


def test_default_is_fresh_each_call():
    first, second = stopping.default(), stopping.default()
    assert all(a is not b for a, b in zip(first.criteria, second.criteria, strict=True))


def test_default_reports_divergence_before_anything_else():
    # NaN value with a zero gradient at the last allowed iteration: failed wins.
    stop = stopping.default(max_iterations=3)
    verdict = stop(snapshot(3, value=math.nan, gradient=(0.0, 0.0)))
    assert verdict.kind is Kind.failed
    assert verdict.criterion.startswith("Divergence(")


def fixed_rate_run(rate, stop):
    """Gradient descent on f = |x|^2 from (3, -4): x is multiplied by 1 - 2 * rate."""
    stop.reset()
    x = np.array([3.0, -4.0])
    start_value, start_gradient = float(x @ x), 2 * x
    for k in range(20_000):
        progress = snapshot(
            k,
            value=float(x @ x),
            gradient=2 * x,
            x=x,
            start_value=start_value,
            start_gradient=start_gradient,
        )
        verdict = stop(progress)
        if verdict is not None:
            return k, verdict
        x = x - rate * (2 * x)
    raise AssertionError("the run never stopped")


def test_default_ends_a_too_large_fixed_rate_as_failed():
    # Rate 3: f = 25·25**k; the growth limit f0 + 1e8·f0 = 2.5e9 + 25 is first passed
    # at k = 6 (25**7 ≈ 6.1e9).
    k, verdict = fixed_rate_run(3.0, stopping.default())
    assert (k, verdict.kind) == (6, Kind.failed)
    assert verdict.criterion.startswith("Divergence(")
    # Without the growth limit only the absolute bound remains: 25**(k + 1) > 1e100 at k = 71.
    k, verdict = fixed_rate_run(3.0, stopping.default(growth=None))
    assert (k, verdict.kind) == (71, Kind.failed)
    assert "exceeds the bound 1e+100 at iteration 71" in verdict.reason


def test_default_ends_a_slowly_climbing_fixed_rate_as_failed():
    # Rate 1.5: f = 25·4**k passes 25 + 1e8·25 at k = 14 (4**14 ≈ 2.7e8).
    k, verdict = fixed_rate_run(1.5, stopping.default())
    assert (k, verdict.kind) == (14, Kind.failed)
    assert verdict.criterion.startswith("Divergence(")
    # With the growth limit off, the stall patience (100) runs out first.
    k, verdict = fixed_rate_run(1.5, stopping.default(growth=None))
    assert (k, verdict.kind) == (100, Kind.failed)
    assert verdict.criterion.startswith("Stall(")
    assert verdict.reason.startswith(
        "The best value 25 (iteration 0) has not improved for 100 iterations and the "
        "value is now 4.02e+61; if the values keep rising, the step is probably too large"
    )
    # Divergence alone reports it once the bound is passed: 25 * 4**k > 1e100 at k = 164.
    k, verdict = fixed_rate_run(1.5, Divergence() | MaxIterations(10_000))
    assert (k, verdict.kind) == (164, Kind.failed)


def test_default_converges_on_a_good_rate():
    stop = stopping.default()
    x = np.array([3.0, -4.0])
    g0 = 2 * x
    for k in range(100):
        verdict = stop(snapshot(k, value=float(x @ x), gradient=2 * x, x=x, start_gradient=g0))
        if verdict is not None:
            break
        x = x - 0.25 * (2 * x)
    # |g|_inf = 8 * 2**-k <= 1e-6 first at k = 23.
    assert (k, verdict.kind) == (23, Kind.converged)


# ------------------------------------------------- shared behaviour of criteria


@pytest.mark.parametrize("criterion", ALL_CRITERIA, ids=lambda c: type(c).__name__)
def test_iteration_zero_without_a_step_does_not_crash(criterion):
    criterion.reset()
    verdict = criterion(snapshot(0, step=None))
    assert verdict is None or isinstance(verdict, Verdict)


class FakeDeviceArray:
    """Stands in for a JAX array: exposes only `__array__`."""

    def __init__(self, data):
        self._data = np.asarray(data, dtype=np.float32)

    def __array__(self, dtype=None, copy=None):
        return self._data if dtype is None else self._data.astype(dtype)


@pytest.mark.parametrize("criterion", ALL_CRITERIA, ids=lambda c: type(c).__name__)
def test_array_likes_and_shapes(criterion):
    criterion.reset()
    for k in range(3):
        progress = Progress(
            iteration=k,
            evaluations=SimpleNamespace(values=k, gradients=k),
            x=FakeDeviceArray(np.full((2, 3), float(k))),
            value=FakeDeviceArray(2.0 - k),  # a 0-d array-like
            gradient=FakeDeviceArray(np.ones((2, 3))),
            start_value=FakeDeviceArray(2.0),
            start_gradient=FakeDeviceArray(np.ones((2, 3))),
            elapsed=float(k),
        )
        verdict = criterion(progress)
        assert verdict is None or isinstance(verdict, Verdict)


@pytest.mark.parametrize("criterion", ALL_CRITERIA, ids=lambda c: type(c).__name__)
def test_repr_rebuilds_the_criterion(criterion):
    names = {name: getattr(stopping, name) for name in stopping.__all__}
    rebuilt = eval(repr(criterion), {"inf": math.inf, **names})  # noqa: S307
    assert type(rebuilt) is type(criterion)
    assert repr(rebuilt) == repr(criterion)


def test_reprs_exact():
    assert repr(GradientNorm(atol=1e-8, rtol=1e-8)) == (
        "GradientNorm(atol=1e-08, rtol=1e-08, norm=inf)"
    )
    assert repr(GradientNorm(norm=2.0)) == "GradientNorm(atol=1e-06, rtol=1e-08, norm=2)"
    assert repr(ValueChange(window=3)) == "ValueChange(atol=0.0, rtol=1e-12, window=3)"
    assert repr(StepLength()) == "StepLength(atol=1e-12, rtol=1e-10, norm=inf)"
    assert repr(MaxEvaluations(np.int64(7))) == "MaxEvaluations(7)"
    assert repr(TimeLimit(30)) == "TimeLimit(30.0)"
    assert repr(Divergence(growth=1)) == "Divergence(bound=1e+100, growth=1.0)"
    assert repr(Stall(iterations=20, rtol=1e-9)) == "Stall(iterations=20, rtol=1e-09)"


def test_a_subclass_overriding_call_gets_or_and_reset():
    class BelowTarget(Criterion):
        def __init__(self, target):
            self.target = target

        def __call__(self, progress):
            if progress.value <= self.target:
                return Verdict(kind=Kind.converged, reason="Target met.", criterion=repr(self))
            return None

        def __repr__(self):
            return f"BelowTarget({self.target!r})"

    combined = BelowTarget(0.0) | MaxIterations(5)
    assert repr(combined) == "BelowTarget(0.0) | MaxIterations(5)"
    assert combined(snapshot(1, value=-1.0)).criterion == "BelowTarget(0.0)"
    combined.reset()


def test_a_subclass_without_a_hook_says_what_is_missing():
    class Empty(Criterion):
        pass

    with pytest.raises(NotImplementedError, match="must implement `__call__` or `_test`"):
        Empty()(snapshot())


# -------------------------------------------------------------- property test

finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)
shapes = hnp.array_shapes(min_dims=0, max_dims=3, min_side=1, max_side=4)


@given(
    gradient=hnp.arrays(np.float64, shapes, elements=finite),
    start=hnp.arrays(np.float64, shapes, elements=finite),
    atol=st.floats(min_value=0.0, max_value=1e3),
    rtol=st.floats(min_value=0.0, max_value=0.999),
    norm=st.sampled_from([np.inf, 2, 1]),
)
def test_gradient_norm_fires_iff_the_inequality_holds(gradient, start, atol, rtol, norm):
    criterion = GradientNorm(atol=atol, rtol=rtol, norm=norm)
    progress = snapshot(1, gradient=gradient, x=np.zeros(gradient.shape), start_gradient=start)
    size = np.linalg.norm(np.ravel(gradient), norm)
    start_size = np.linalg.norm(np.ravel(start), norm)
    holds = size <= max(atol, rtol * start_size)
    verdict = criterion(progress)
    assert (verdict is not None) == holds
    if verdict is not None:
        assert verdict.kind is Kind.converged
