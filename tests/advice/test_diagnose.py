"""diagnose on hand-worked histories, a generated table of fixed-rate runs, and bad input."""

from __future__ import annotations

from collections import Counter

import numpy as np
import pytest
from tests.advice._histories import gradient_descent, history_table

from linestep import Armijo, Fixed, descend, diagnose, stopping

# --- hand-worked cases: f(x) = 2x² (L = 4), x₀ = 1, x_{k+1} = (1 − 4·rate)·x_k -------------


def one_dimensional(rate, iterations=12):
    return gradient_descent(lambda x: 2.0 * float(x @ x), lambda x: 4.0 * x, np.ones(1), rate,
                            iterations)


def test_hand_worked_fitting_rate():
    # rate 0.1: x_k = 0.6^k, f_k = 2·0.36^k; secant L̂ = 4 exactly, 0.1·4 = 0.4 in [0.1, 2]
    values, xs, grads = one_dimensional(0.1)
    assert values[:3] == pytest.approx([2.0, 0.72, 0.2592])
    d = diagnose(values, rates=0.1, xs=xs, gradients=grads)
    assert d.kind == "fits"
    assert d.lipschitz == pytest.approx(4.0)
    assert d.suggested_rate == pytest.approx(0.25)
    assert "0.4/L̂" in d.reason


def test_hand_worked_diverging_rate_read_from_the_loss_alone():
    # rate 0.6: x_k = (−1.4)^k, f grows ×1.96 per step; L̂ = (1 + √1.96)/0.6 = 4. The
    # growth is read from the gap to the lowest value, 2·(1.96^k − 1), over the last 6
    # rises: (1.96^12 − 1)/(1.96^6 − 1) to the 1/6 is 1.96 within 0.3%.
    values, _, _ = one_dimensional(0.6)
    d = diagnose(values, rates=0.6)
    assert d.kind == "too_large"
    assert d.evidence["growth_per_iteration"] == pytest.approx(1.96, rel=3e-3)
    assert d.lipschitz == pytest.approx(4.0, rel=2e-3)
    assert d.suggested_rate == pytest.approx(0.25, rel=2e-3)
    assert "rose in 12 of the last 12 iterations" in d.reason
    assert "below your rate 0.6" in d.reason


def test_hand_worked_small_rate():
    # rate 0.01: x_k = 0.96^k, decreases shrink by 0.96² = 0.9216 per step (> 0.81)
    values, xs, grads = one_dimensional(0.01)
    from_values = diagnose(values, rates=0.01)
    assert from_values.kind == "too_small"
    assert from_values.evidence["pace"] == pytest.approx(0.9216)
    assert from_values.suggested_rate == pytest.approx(0.1)  # 10 × the rate, below 1/L̂
    secant = diagnose(values, rates=0.01, xs=xs, gradients=grads)
    assert secant.kind == "too_small"
    assert secant.lipschitz == pytest.approx(4.0)
    assert secant.evidence["rate_times_lipschitz"] == pytest.approx(0.04)


def test_gradients_and_rates_without_points_read_as_gradient_steps():
    values, _, grads = one_dimensional(0.6)
    d = diagnose(values, rates=0.6, gradients=grads)
    assert d.kind == "too_large"
    assert d.lipschitz == pytest.approx(4.0)
    assert d.evidence["lipschitz_from"] == "secant from gradient steps"


def test_oscillation_without_decrease_is_too_large():
    values = [5.0, 4.0, 5.0, 4.0, 5.0, 4.0, 5.0, 4.0, 5.0]  # invented
    d = diagnose(values)
    assert d.kind == "too_large"
    assert "without decreasing overall" in d.reason


def test_fast_convergence_fits():
    d = diagnose([10.0, 1.0, 1e-3, 1e-9, 1e-9, 1e-9], rates=0.5)  # invented
    assert d.kind == "fits"


def test_pasted_history_quotes_its_numbers():
    d = diagnose([3.0, 2.1, 2.5, 4.0, 7.9, 15.2, 31.0], rates=0.5)  # invented
    assert d.kind == "too_large"
    assert "31" in d.reason and "0.5" in d.reason
    assert d.suggested_rate < d.evidence["limit_rate"] < 0.5


# --- the generated table ---------------------------------------------------------------------

TABLE = history_table(300, seed=0)


@pytest.mark.parametrize("given", ["values", "values+rates", "gradients+rates", "everything"])
def test_generated_table_kind_right_in_95_percent(given):
    """Fixed-rate gradient descent on invented quadratics and least-squares fits: rates
    0.02-0.05/L should read too_small, 0.7-1.4/L fits, 3-6/L too_large (60 iterations,
    random starts)."""
    wrong = Counter()
    for expected, values, rate, points, grads, label in TABLE:
        arguments = {"values": {}, "values+rates": {"rates": rate},
                     "gradients+rates": {"rates": rate, "gradients": grads},
                     "everything": {"rates": rate, "xs": points, "gradients": grads}}[given]
        kind = diagnose(values, **arguments).kind
        if kind != expected:
            wrong[(expected, kind, label)] += 1
    assert sum(wrong.values()) <= 0.05 * len(TABLE), wrong.most_common(5)


def test_table_suggestions_never_exceed_the_stable_limit():
    for _, values, rate, points, grads, _ in TABLE[:60]:
        d = diagnose(values, rates=rate, xs=points, gradients=grads)
        assert d.suggested_rate <= 2.0 / d.lipschitz * (1 + 1e-12)


# --- linestep runs -----------------------------------------------------------------------------


def test_run_of_a_diverging_fixed_rate():
    f, g = (lambda x: float(x @ x)), (lambda x: 2 * x)
    run = descend((f, g), np.ones(3), controller=Fixed(1.2))
    d = diagnose(run)
    assert d.kind == "too_large"
    assert d.lipschitz == pytest.approx(2.0, rel=1e-3)
    assert d.evidence["run_verdict"] == run.verdict.reason


def test_run_of_a_line_search_fits():
    f, g = (lambda x: float(x @ x) + 0.1 * float(x[0] ** 4)), (lambda x: 2 * x + np.array(
        [0.4 * x[0] ** 3, 0, 0]))
    run = descend((f, g), np.ones(3), controller=Armijo(),
                  stop=stopping.default(max_iterations=30))
    assert diagnose(run).kind == "fits"


# --- bad input ---------------------------------------------------------------------------------


@pytest.mark.parametrize(("values", "words"), [
    ([4.0], "1 value cannot show a trend"),
    ([4.0, 3.0], "2 values cannot show a trend"),
    ([float("nan"), 1.0, 0.5], "The first value is not finite"),
])
def test_too_little_data_is_undetermined(values, words):
    d = diagnose(values)
    assert d.kind == "undetermined"
    assert words in d.reason
    assert d.suggested_rate is None


def test_non_finite_after_finite_values_is_divergence():
    d = diagnose([1.0, 0.8, 3.0, float("inf")], rates=0.3)
    assert d.kind == "too_large"
    assert "non-finite (inf) at iteration 3" in d.reason
    assert d.suggested_rate == pytest.approx(0.03)


@pytest.mark.parametrize(("arguments", "error", "words"), [
    ({"values": []}, ValueError, "`values` is empty"),
    ({"values": [1.0, None, 0.5]}, TypeError, r"entry 1 \(None\) is not a number"),
    ({"values": ["a", "b", "c"]}, TypeError, "`values` must hold numbers only"),
    ({"values": "1,2,3"}, TypeError, "got a string"),
    ({"values": [[1.0, 2.0], [3.0, 4.0]]}, ValueError, "1-D"),
    ({"rates": [0.1, 0.1]}, ValueError, "`rates` must be one number, or one per step"),
    ({"rates": -0.1}, ValueError, "`rates` must be finite and >= 0"),
    ({"xs": [[0.0]] * 3}, ValueError, "`xs` has 3 entries but `values` has 4"),
    ({"gradients": [[0.0], [1.0, 2.0], [0.0], [0.0]]}, ValueError, "same size"),
    ({"gradients": 5}, TypeError, "`gradients` must be a sequence"),
])
def test_bad_input_raises_naming_the_argument(arguments, error, words):
    values = {"values": [4.0, 3.0, 2.5, 2.2], **arguments}
    with pytest.raises(error, match=words):
        diagnose(values.pop("values"), **values)
