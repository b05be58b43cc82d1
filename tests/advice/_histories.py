"""Invented test problems and fixed-rate gradient-descent histories for the advice tests.

Every problem here is invented (seeded random data), labelled as such.
"""

from __future__ import annotations

import numpy as np

# Rate multiples of 1/L for each expected kind (the table).
RATE_BANDS = {"too_small": (0.02, 0.05), "fits": (0.7, 1.4), "too_large": (3.0, 6.0)}
ITERATIONS = 60


def invented_quadratic(rng: np.random.Generator, n: int, condition: float):
    """½(x − c)ᵀA(x − c), eigenvalues geometric in [L/κ, L] with L drawn in [0.1, 100]."""
    top = float(10 ** rng.uniform(-1, 2))
    basis, _ = np.linalg.qr(rng.standard_normal((n, n)))
    matrix = (basis * np.geomspace(top / condition, top, n)) @ basis.T
    matrix = 0.5 * (matrix + matrix.T)
    center = rng.standard_normal(n)
    value = lambda x: 0.5 * float((x - center) @ matrix @ (x - center))  # noqa: E731
    gradient = lambda x: matrix @ (x - center)  # noqa: E731
    return value, gradient, float(np.linalg.eigvalsh(matrix).max())


def invented_least_squares(rng: np.random.Generator, n: int, m: int):
    """½‖Aw − b‖²/m with invented Gaussian features of uneven scales and noisy targets."""
    features = rng.standard_normal((m, n)) * np.geomspace(0.1, 3.0, n)
    truth = rng.standard_normal(n)
    targets = features @ truth + 0.3 * rng.standard_normal(m)
    value = lambda w: 0.5 * float(np.sum((features @ w - targets) ** 2)) / m  # noqa: E731
    gradient = lambda w: features.T @ (features @ w - targets) / m  # noqa: E731
    return value, gradient, float(np.linalg.eigvalsh(features.T @ features / m).max())


def gradient_descent(value, gradient, x0, rate, iterations=ITERATIONS):
    """A plain fixed-rate loop: values, points and gradients, one entry per iteration."""
    x = np.array(x0, dtype=float)
    values, points, grads = [], [], []
    with np.errstate(over="ignore", invalid="ignore"):
        for _ in range(iterations + 1):
            g = gradient(x)
            values.append(value(x))
            points.append(x.copy())
            grads.append(g)
            x = x - rate * g
    return values, points, grads


def history_table(count: int = 300, seed: int = 0):
    """Rows (expected kind, values, rate, points, gradients, label) drawn at random."""
    rng = np.random.default_rng(seed)
    rows = []
    kinds = list(RATE_BANDS)
    for index in range(count):
        expected = kinds[index % 3]
        if rng.uniform() < 0.5:
            n = int(rng.integers(2, 40))
            condition = float(10 ** rng.uniform(0, 4))
            value, gradient, top = invented_quadratic(rng, n, condition)
            label = f"quadratic n={n} κ={condition:.3g}"
        else:
            n = int(rng.integers(2, 20))
            value, gradient, top = invented_least_squares(rng, n, int(rng.integers(n + 5, 200)))
            label = f"least squares n={n}"
        low, high = RATE_BANDS[expected]
        rate = rng.uniform(low, high) / top
        x0 = 3.0 * rng.standard_normal(n)
        values, points, grads = gradient_descent(value, gradient, x0, rate)
        rows.append((expected, values, rate, points, grads, f"{label}, rate {rate * top:.2f}/L"))
    return rows
