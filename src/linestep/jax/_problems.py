"""A few Moré–Garbow–Hillstrom problems written with `jax.numpy`, for tests and benchmarks.

Each is f(x) = Σ F_i(x)², the same residuals as `linestep.bench._mgh` (checked
against those numpy versions in ``tests/linestep_jax/test_compiled.py``); the gradient
comes from autodiff.

References
----------
J. J. Moré, B. S. Garbow and K. E. Hillstrom, "Testing unconstrained
optimization software", ACM Trans. Math. Software 7(1):17-41, 1981
(problems 1, 5, 14 and 21).
"""

from __future__ import annotations

import math
from typing import Any

import jax.numpy as jnp

__all__ = ["beale", "extended_rosenbrock", "rosenbrock", "wood"]


def rosenbrock(x: Any) -> Any:
    """Problem 1, n = 2."""
    return jnp.sum(jnp.stack([10.0 * (x[1] - x[0] ** 2), 1.0 - x[0]]) ** 2)


def beale(x: Any) -> Any:
    """Problem 5, n = 2, m = 3."""
    i = jnp.arange(1, 4, dtype=x.dtype)
    y = jnp.asarray([1.5, 2.25, 2.625], x.dtype)
    return jnp.sum((y - x[0] * (1.0 - x[1] ** i)) ** 2)


def wood(x: Any) -> Any:
    """Problem 14, n = 4, m = 6."""
    x1, x2, x3, x4 = x[0], x[1], x[2], x[3]
    r90, r10 = math.sqrt(90.0), math.sqrt(10.0)
    residual = jnp.stack([
        10.0 * (x2 - x1 ** 2), 1.0 - x1, r90 * (x4 - x3 ** 2), 1.0 - x3,
        r10 * (x2 + x4 - 2.0), (x2 - x4) / r10,
    ])
    return jnp.sum(residual ** 2)


def extended_rosenbrock(x: Any) -> Any:
    """Problem 21, n even."""
    odd, even = x[0::2], x[1::2]
    return jnp.sum((10.0 * (even - odd ** 2)) ** 2) + jnp.sum((1.0 - odd) ** 2)
