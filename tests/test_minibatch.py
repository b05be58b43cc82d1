"""The mini-batch recipe (docs/minibatch.md): `Armijo` on each batch's own loss, with the
first trial grown from the previous accepted step (Vaswani et al., "Painless stochastic
gradient: interpolation, line-search, and convergence rates", NeurIPS 2019: the reset
t₀ = 2^{b/n}·t_prev, so the step can at most double over one epoch; recalled from memory).

The data are invented (seeded Gaussian features) and exactly fit-able, b = A·x_true:
every batch loss is minimised at the same point (the interpolation regime of Vaswani et
al.), where stochastic gradient with an Armijo search converges linearly for strongly
convex losses (their Theorem 1, recalled from memory).
"""

from __future__ import annotations

import numpy as np
import pytest

from linestep import Armijo, PreviousTrial, Status

EXAMPLES, FEATURES, BATCH = 200, 10, 20
C1 = 0.1  # Vaswani et al. use c = 0.1 (recalled from memory)
MAX_SIZE = 10.0
GROWTH = 2.0 ** (BATCH / EXAMPLES)
# Armijo's interpolation keeps each backtrack in [0.1·t, 0.5·t] (shrink_limits default).
LOW = 0.1


def invented_data(seed=20240611):
    rng = np.random.default_rng(seed)
    features = rng.standard_normal((EXAMPLES, FEATURES))
    truth = rng.standard_normal(FEATURES)
    return rng, features, features @ truth


def batch_loss(a, b):
    """Mean squared error ½/|B|·‖A_B x − b_B‖² of one batch, and its gradient."""
    scale = 1.0 / len(b)

    def value(x):
        r = a @ x - b
        return 0.5 * scale * float(r @ r)

    def gradient(x):
        return scale * (a.T @ (a @ x - b))

    return value, gradient


def test_stochastic_armijo_reaches_the_least_squares_solution_with_bounded_steps():
    rng, features, targets = invented_data()
    solution = np.linalg.lstsq(features, targets, rcond=None)[0]
    search = Armijo(c1=C1, initial=PreviousTrial(growth=GROWTH, max_size=MAX_SIZE))
    x = np.zeros(FEATURES)
    previous = None  # the last accepted size, as PreviousTrial sees it
    accepted = 0
    for _epoch in range(8):
        order = rng.permutation(EXAMPLES)
        for start in range(0, EXAMPLES, BATCH):
            rows = order[start:start + BATCH]
            value, gradient = batch_loss(features[rows], targets[rows])
            g = gradient(x)
            step = search((value, gradient), x, -g, gradient=g)
            if step.status is not Status.accepted or step.size == 0.0:
                # Only at rounding level (the batch loss is ~1e-30 there, or its gradient
                # exactly 0): x is kept.
                assert step.status in (Status.step_too_small, Status.accepted)
                np.testing.assert_array_equal(step.x, x)
                continue
            accepted += 1
            # Bounds on every accepted step: above by the first trial (<= MAX_SIZE); below
            # by min(first trial, 2·LOW·(1 − c1)/L_B), because every t <= 2(1 − c1)/L_B
            # satisfies Armijo's condition on an L_B-smooth loss and a backtrack never
            # shrinks by more than LOW.
            first = 1.0 if previous is None else min(GROWTH * previous, MAX_SIZE)
            smoothness = np.linalg.eigvalsh(features[rows].T @ features[rows]).max() / BATCH
            assert step.size <= first <= MAX_SIZE
            assert step.size >= min(first, 2 * LOW * (1 - C1) / smoothness) * (1 - 1e-12)
            previous = step.size
            x = step.x
    assert accepted >= 0.9 * 8 * EXAMPLES // BATCH
    # Measured contraction is about 1e-2 per epoch, so 8 epochs reach ~1e-15 (rounding);
    # 1e-10 leaves five orders of margin for other platforms' rounding.
    assert np.linalg.norm(x - solution) <= 1e-10 * np.linalg.norm(solution)


def test_growth_lets_the_step_recover_after_a_small_one():
    # PreviousTrial(growth=γ) starts each search at γ·t_prev, so after a forced small step
    # the trials climb back geometrically instead of staying small.
    value, gradient = batch_loss(np.eye(2), np.zeros(2))  # f = ¼‖x‖², L = 1/2
    search = Armijo(c1=C1, initial=PreviousTrial(growth=2.0, first=0.01, max_size=MAX_SIZE))
    x, sizes = np.array([1.0, -1.0]), []
    for _ in range(6):
        g = gradient(x)
        step = search((value, gradient), x, -g, gradient=g)
        sizes.append(step.size)
        x = step.x
    assert sizes == pytest.approx([0.01, 0.02, 0.04, 0.08, 0.16, 0.32])
