"""Invented test problems shared by the test files (import as ``from _problems import ...``).

Every builder takes a seeded ``numpy.random.Generator`` (where it needs randomness) and
returns ``(f, g)``: the value as a Python float and the gradient as an array. Callers
that need a start point draw it from the same generator afterwards, so a seed fixes
the whole problem.
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import assume
from hypothesis import strategies as st


def square(x):
    """f(x) = ‖x‖², summed over every entry (x may have any shape)."""
    return float(np.sum(x * x))


def square_gradient(x):
    """∇‖x‖² = 2x."""
    return 2.0 * x


def random_spd(rng, n, log10_condition):
    """A = Q·diag(λ)·Qᵀ with random orthogonal Q and λ log-spaced in [1, 10^log10_condition]."""
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    return (q * np.logspace(0.0, log10_condition, n)) @ q.T


def quadratic(rng, n, log10_condition):
    """f(x) = ½xᵀAx − bᵀx with A from `random_spd` and b standard normal (drawn after A)."""
    a = random_spd(rng, n, log10_condition)
    b = rng.standard_normal(n)

    def f(x):
        return float(0.5 * x @ a @ x - b @ x)

    def g(x):
        return a @ x - b

    return f, g


def separable_sines(rng, n, weight=0.1):
    """f(x) = Σ sin(aᵢxᵢ) + weight·‖x‖², aᵢ ~ U(0.5, 5): smooth, nonconvex, bounded below."""
    a = rng.uniform(0.5, 5.0, n)

    def f(x):
        return float(np.sum(np.sin(a * x)) + weight * x @ x)

    def g(x):
        return a * np.cos(a * x) + 2.0 * weight * x

    return f, g


def sines_plus_quadratic(rng, n):
    """f(x) = Σₖ cₖ·sin(wₖ·x) + s‖x‖² with three random waves wₖ: many local minima."""
    w = rng.standard_normal((3, n))
    amplitude = rng.uniform(0.0, 3.0, 3)
    weight = rng.uniform(0.05, 1.0)

    def f(x):
        return float(amplitude @ np.sin(w @ x)) + weight * float(x @ x)

    def g(x):
        return (amplitude * np.cos(w @ x)) @ w + 2.0 * weight * x

    return f, g


def extended_rosenbrock():
    """f(x) = Σᵢ 100(xᵢ₊₁ − xᵢ²)² + (1 − xᵢ)², the Rosenbrock valley chained over n ≥ 2."""

    def f(x):
        return float(np.sum(100.0 * (x[1:] - x[:-1] ** 2) ** 2 + (1.0 - x[:-1]) ** 2))

    def g(x):
        out = np.zeros_like(x)
        inner = x[1:] - x[:-1] ** 2
        out[:-1] += -400.0 * x[:-1] * inner - 2.0 * (1.0 - x[:-1])
        out[1:] += 200.0 * inner
        return out

    return f, g


# --------------------------------------------------------------------------- strategies


@st.composite
def objectives(draw, kinds=("quadratic", "sines")):
    """(f, g, rng, n): one of `kinds` (κ ≤ 1e6 for quadratics), n ≤ 20, and its generator."""
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    kind = draw(st.sampled_from(kinds))
    n = draw(st.integers(2 if kind == "rosenbrock" else 1, 20))
    if kind == "quadratic":
        f, g = quadratic(rng, n, draw(st.floats(0.0, 6.0)))
    elif kind == "sines":
        f, g = separable_sines(rng, n)
    else:
        f, g = extended_rosenbrock()
    return f, g, rng, n


@st.composite
def descent_problems(draw, kinds=("quadratic", "sines")):
    """(f, g, x, d): an `objectives` problem, x at scale 0.1–10, d steepest or random descent."""
    f, g, rng, n = draw(objectives(kinds))
    x = rng.standard_normal(n) * draw(st.sampled_from([0.1, 1.0, 10.0]))
    gradient = g(x)
    d = -gradient if draw(st.booleans()) else rng.standard_normal(n)
    if d @ gradient > 0:
        d = -d
    d = d * 10.0 ** draw(st.floats(-3.0, 3.0))
    assume(d @ gradient < 0)
    return f, g, x, d


# -- one-dimensional test functions of Moré & Thuente 1994, §5 (eqs. 5.1–5.4) ----------
# Each builder returns φ(a) -> (φ(a), φ'(a)).
def rational(beta: float):
    """(5.1) φ(a) = −a/(a² + β)."""
    def phi(a: float) -> tuple[float, float]:
        return -a / (a * a + beta), (a * a - beta) / (a * a + beta) ** 2
    return phi


def quintic(beta: float):
    """(5.2) φ(a) = (a + β)⁵ − 2(a + β)⁴."""
    def phi(a: float) -> tuple[float, float]:
        s = a + beta
        return s**5 - 2.0 * s**4, s**3 * (5.0 * s - 8.0)
    return phi


def wiggly(beta: float, l: int):  # noqa: E741 - the paper's name
    """(5.3) a kinked-quadratic φ0 plus 2(1 − β)/(lπ)·sin(lπa/2)."""
    def phi(a: float) -> tuple[float, float]:
        if a <= 1.0 - beta:
            base, slope = 1.0 - a, -1.0
        elif a >= 1.0 + beta:
            base, slope = a - 1.0, 1.0
        else:
            base, slope = (a - 1.0) ** 2 / (2.0 * beta) + beta / 2.0, (a - 1.0) / beta
        w = l * math.pi / 2.0
        return (base + 2.0 * (1.0 - beta) / (l * math.pi) * math.sin(w * a),
                slope + (1.0 - beta) * math.cos(w * a))
    return phi


def yanai_ozawa_kaneko(beta1: float, beta2: float):
    """(5.4) φ(a) = γ(β1)·√((1 − a)² + β2²) + γ(β2)·√(a² + β1²), γ(b) = √(1 + b²) − b."""
    def gamma(b: float) -> float:
        return math.sqrt(1.0 + b * b) - b

    g1, g2 = gamma(beta1), gamma(beta2)

    def phi(a: float) -> tuple[float, float]:
        r1 = math.sqrt((1.0 - a) ** 2 + beta2 * beta2)
        r2 = math.sqrt(a * a + beta1 * beta1)
        return g1 * r1 + g2 * r2, -g1 * (1.0 - a) / r1 + g2 * a / r2
    return phi
