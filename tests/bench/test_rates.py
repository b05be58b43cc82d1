"""The per-problem fixed rate rule (`linestep.bench.rates`)."""

from __future__ import annotations

import pytest

from linestep.bench import as_problems
from linestep.bench.rates import fixed_at_smoothness, lipschitz_at_start


def _quadratic(scale: float):
    # invented: f(x) = scale·‖x‖², Hessian 2·scale·I
    return as_problems({"name": "edited", "value": lambda x: scale * float(x @ x),
                        "gradient": lambda x: 2.0 * scale * x, "start": [1.0, 2.0]})[0]


def test_an_edited_objective_of_the_same_name_gets_a_fresh_estimate() -> None:
    # The estimate is cached by the problem's content, not by its name and start: a
    # stale L would silently give the edited problem the old problem's rate.
    assert lipschitz_at_start(_quadratic(1.0)) == pytest.approx(2.0, rel=1e-6)
    assert lipschitz_at_start(_quadratic(5.0)) == pytest.approx(10.0, rel=1e-6)
    assert fixed_at_smoothness().build(_quadratic(5.0)).size == pytest.approx(0.1, rel=1e-6)
