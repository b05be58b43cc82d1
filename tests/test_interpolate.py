"""Tests for the pure interpolation minimisers in `linestep._interpolate`.

Each model must be exact on a polynomial of its own degree, and must decline
(return None) when the data give it no usable minimiser. Formulas:
Nocedal & Wright, *Numerical Optimization*, 2nd ed., 2006, §3.5, eq. 3.57
(quadratic from φ(0), φ'(0), φ(α₀)), eq. 3.58 (cubic through φ(0), φ'(0) and
two trial values) and eq. 3.59 (cubic from two values and two slopes); equation
numbers as cited in `linestep._interpolate`, recalled from memory.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from linestep._interpolate import (
    clip,
    cubic_backtrack,
    cubic_from_slopes,
    quadratic_from_slope,
    quadratic_from_slopes,
)

moderate = st.floats(-10.0, 10.0, allow_nan=False)
positive = st.floats(0.1, 10.0)


def _cubic(m: float, other: float, alpha: float, k: float):
    """p with p'(t) = 3α(t − m)(t − other) + p(0) = k; returns (p, p')."""

    def p(t: float) -> float:
        return alpha * (t**3 - 1.5 * (m + other) * t**2 + 3.0 * m * other * t) + k

    def dp(t: float) -> float:
        return 3.0 * alpha * (t - m) * (t - other)

    return p, dp


# --------------------------------------------------------------------------- quadratic


def test_quadratic_from_slope_matches_nw_eq_3_57_by_hand():
    # N&W eq. 3.57: α₁ = −φ'(0)α₀² / (2[φ(α₀) − φ(0) − φ'(0)α₀]);
    # φ(0)=1, φ'(0)=−2, α₀=1, φ(1)=2 gives 2 / (2·3) = 1/3 (worked by hand).
    assert quadratic_from_slope(0.0, 1.0, -2.0, 1.0, 2.0) == pytest.approx(1.0 / 3.0, rel=1e-15)


@given(a=moderate, width=st.floats(0.01, 10.0), sign=st.sampled_from([-1.0, 1.0]),
       m=moderate, c=positive, k=moderate)
def test_quadratic_from_slope_is_exact_on_quadratics(a, width, sign, m, c, k):
    # q(t) = c(t − m)² + k is its own quadratic model, so the model's minimiser is m.
    b = a + sign * width

    def q(t):
        return c * (t - m) ** 2 + k

    t = quadratic_from_slope(a, q(a), 2.0 * c * (a - m), b, q(b))
    assert t is not None
    # Rounding in the curvature fb − fa − da·h scales with the values involved.
    scale = (abs(a) + abs(m) + width) ** 2 / width**2
    assert t == pytest.approx(m, abs=1e-9 * scale)


@pytest.mark.parametrize(
    "args",
    [
        pytest.param((0.0, 1.0, -1.0, 1.0, -1.0), id="concave: fb below the tangent line"),
        pytest.param((0.0, 1.0, -1.0, 1.0, 0.0), id="linear: zero curvature"),
        pytest.param((0.0, 1.0, -1.0, 0.0, 1.0), id="equal points, equal values"),
        pytest.param((0.0, math.nan, -1.0, 1.0, 2.0), id="nan value"),
        pytest.param((0.0, 1.0, math.nan, 1.0, 2.0), id="nan slope"),
    ],
)
def test_quadratic_from_slope_declines_degenerate_input(args):
    assert quadratic_from_slope(*args) is None


def test_quadratic_from_slope_declines_equal_points_with_different_values():
    assert quadratic_from_slope(1.0, 1.0, -1.0, 1.0, 3.0) is None


@given(a=moderate, width=st.floats(0.01, 10.0), m=moderate, c=positive)
def test_secant_is_exact_on_quadratics(a, width, m, c):
    # The slope of a quadratic is linear, so the secant of φ' finds its zero exactly.
    b = a + width
    t = quadratic_from_slopes(a, 2.0 * c * (a - m), b, 2.0 * c * (b - m))
    assert t == pytest.approx(m, abs=1e-9 * (1.0 + abs(a) + abs(m) + width) / width)


@pytest.mark.parametrize("args", [(0.0, -1.0, 1.0, -1.0), (0.0, math.nan, 1.0, 1.0),
                                  (0.0, -1.0, math.nan, 1.0)])
def test_secant_declines_degenerate_input(args):
    assert quadratic_from_slopes(*args) is None


def test_secant_declines_equal_points_with_different_slopes():
    assert quadratic_from_slopes(1.0, -1.0, 1.0, 2.0) is None


# --------------------------------------------------------------------------- cubic


@st.composite
def cubic_with_minimiser_between(draw):
    """A cubic with a strict local minimiser m strictly inside (a, b) (or (b, a))."""
    a = draw(st.floats(-5.0, 5.0))
    width = draw(st.floats(0.1, 5.0))
    b = a + width
    m = a + width * draw(st.floats(0.05, 0.95))
    # The other critical point lies outside [a, b]; α's sign makes m the minimum.
    side = draw(st.sampled_from([-1.0, 1.0]))
    other = (a - draw(st.floats(0.1, 5.0))) if side < 0 else (b + draw(st.floats(0.1, 5.0)))
    alpha = draw(st.floats(0.1, 5.0)) * (1.0 if m > other else -1.0)
    k = draw(moderate)
    if draw(st.booleans()):
        a, b = b, a  # the formula must not care about the order of the two points
    return a, b, m, other, alpha, k


@given(cubic_with_minimiser_between())
def test_cubic_from_slopes_is_exact_on_cubics(case):
    # N&W eq. 3.59: the cubic matching φ, φ' at two points is φ itself for a cubic.
    a, b, m, other, alpha, k = case
    p, dp = _cubic(m, other, alpha, k)
    t = cubic_from_slopes(a, p(a), dp(a), b, p(b), dp(b))
    assert t is not None
    assert t == pytest.approx(m, abs=1e-7 * (1.0 + abs(a) + abs(b)))


@given(a=moderate, width=st.floats(0.1, 10.0), m=moderate, c=positive, k=moderate)
def test_cubic_from_slopes_is_exact_on_quadratics(a, width, m, c, k):
    # A quadratic is a cubic with zero leading coefficient.
    b = a + width

    def q(t):
        return c * (t - m) ** 2 + k

    t = cubic_from_slopes(a, q(a), 2 * c * (a - m), b, q(b), 2 * c * (b - m))
    assert t == pytest.approx(m, abs=1e-7 * (1.0 + abs(a) + abs(m) + width))


@pytest.mark.parametrize(
    "args",
    [
        # p(t) = t³ + t is increasing with no critical point: negative discriminant.
        pytest.param((0.0, 0.0, 1.0, 1.0, 2.0, 4.0), id="monotone cubic"),
        # p(t) = −t² is concave: its only critical point is a maximum.
        pytest.param((0.0, 0.0, 0.0, 1.0, -1.0, -2.0), id="concave"),
        pytest.param((1.0, 0.0, -1.0, 1.0, 2.0, 1.0), id="equal points"),
        pytest.param((0.0, math.nan, -1.0, 1.0, 2.0, 1.0), id="nan value"),
        pytest.param((0.0, 0.0, -1.0, 1.0, 2.0, math.nan), id="nan slope"),
        pytest.param((0.0, 0.0, 0.0, 1.0, 0.0, 0.0), id="flat"),
    ],
)
def test_cubic_from_slopes_declines_degenerate_input(args):
    assert cubic_from_slopes(*args) is None


@st.composite
def backtracking_cubic(draw):
    """A cubic with φ'(0) < 0 and a local minimiser m in (0, max(a, b))."""
    m = draw(st.floats(0.05, 5.0))
    # p'(t) = 3α(t − m)(t − other) with p'(0) = 3α·m·other < 0:
    # either α > 0 and other < 0, or α < 0 and other > m.
    if draw(st.booleans()):
        alpha, other = draw(st.floats(0.1, 5.0)), -draw(st.floats(0.1, 5.0))
    else:
        alpha, other = -draw(st.floats(0.1, 5.0)), m + draw(st.floats(0.1, 5.0))
    a = m * draw(st.floats(1.2, 3.0))  # older, longer trial
    b = draw(st.floats(0.1, 0.9)) * a  # newer, shorter trial, well apart from a
    k = draw(moderate)
    return a, b, m, other, alpha, k


@given(backtracking_cubic())
def test_cubic_backtrack_is_exact_on_cubics(case):
    # N&W eq. 3.58: the cubic through φ(0), φ'(0), φ(a), φ(b) is φ itself for a cubic.
    a, b, m, other, alpha, k = case
    p, dp = _cubic(m, other, alpha, k)
    t = cubic_backtrack(p(0.0), dp(0.0), a, p(a), b, p(b))
    assert t is not None
    assert t == pytest.approx(m, rel=1e-6, abs=1e-9)


def test_cubic_backtrack_on_a_quadratic_uses_the_quadratic_branch():
    # φ(t) = (t − 1)²: c3 = 0 exactly, so the minimiser is −φ'(0)/(2·c2) = 1.
    def q(t):
        return (t - 1.0) ** 2

    assert cubic_backtrack(q(0.0), -2.0, 4.0, q(4.0), 2.0, q(2.0)) == pytest.approx(1.0)


@pytest.mark.parametrize(
    "args",
    [
        pytest.param((0.0, -1.0, 1.0, 2.0, 1.0, 2.0), id="equal points"),
        pytest.param((0.0, -1.0, 0.0, 0.0, 1.0, 2.0), id="a at the origin"),
        pytest.param((0.0, -1.0, 1.0, 2.0, 0.0, 0.0), id="b at the origin"),
        pytest.param((0.0, -1.0, 2.0, math.nan, 1.0, 2.0), id="nan value"),
        # φ(t) = −t − t²: c3 = 0 and c2 < 0, concave, no minimiser.
        pytest.param((0.0, -1.0, 2.0, -6.0, 1.0, -2.0), id="concave quadratic"),
        # φ(t) = −t − t³: c2 = 0, c3 < 0; φ' < 0 everywhere, negative discriminant.
        pytest.param((0.0, -1.0, 2.0, -10.0, 1.0, -2.0), id="monotone cubic"),
    ],
)
def test_cubic_backtrack_declines_degenerate_input(args):
    assert cubic_backtrack(*args) is None


# --------------------------------------------------------------------------- clip


@pytest.mark.parametrize(
    ("t", "expected"),
    [(0.3, 0.3), (0.05, 0.1), (0.9, 0.5), (0.1, 0.1), (0.5, 0.5), (None, 0.3),
     (math.nan, 0.3), (math.inf, 0.3), (-math.inf, 0.3)],
)
def test_clip_moves_into_the_interval_and_bisects_on_missing_models(t, expected):
    assert clip(t, 0.1, 0.5) == expected
