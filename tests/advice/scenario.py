"""Invented objectives for the advise tests (module level, so worker processes can load them).

A greenhouse controller fits 4 heater gains to invented temperature logs (seeded data).
"""

from __future__ import annotations

import numpy as np

_RNG = np.random.default_rng(11)
FEATURES = _RNG.standard_normal((60, 4)) * np.array([0.3, 1.0, 2.0, 6.0])
TARGETS = FEATURES @ np.array([1.0, -2.0, 0.5, 0.25]) + 0.05 * _RNG.standard_normal(60)


def value(w):
    residual = FEATURES @ w - TARGETS
    return 0.5 * float(residual @ residual) / len(TARGETS)


def gradient(w):
    return FEATURES.T @ (FEATURES @ w - TARGETS) / len(TARGETS)


def make_problem():
    """The description `linestep advise tests.advice.scenario:make_problem` loads."""
    return {"name": "greenhouse", "value": value, "gradient": gradient, "start": np.zeros(4)}


def make_two():
    return [make_problem(), {**make_problem(), "name": "other"}]


def fragile_value(w):
    """The greenhouse loss, but the invented sensor model raises far from the start."""
    if np.max(np.abs(w)) > 3.0:
        raise ValueError("sensor model undefined beyond 3")
    return value(w)


def fragile_gradient(w):
    if np.max(np.abs(w)) > 3.0:
        raise ValueError("sensor model undefined beyond 3")
    return gradient(w)
