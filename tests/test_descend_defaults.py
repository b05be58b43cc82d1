"""`descend`'s default controller: a scaled first trial along −∇f, the unit step otherwise."""

from __future__ import annotations

import numpy as np

from linestep import LBFGS, Armijo, Evaluations, PreviousTrial, ScaledTrial, descend
from linestep._descend import default_controller
from linestep.directions import NonlinearCG, SteepestDescent


def test_steepest_descent_gets_a_scaled_then_grown_first_trial() -> None:
    controller = default_controller(SteepestDescent())
    assert isinstance(controller, Armijo)
    assert isinstance(controller.initial, PreviousTrial)
    assert controller.initial.growth == 2.0 and isinstance(controller.initial.first,
                                                           ScaledTrial)
    for direction in (LBFGS(), NonlinearCG()):
        assert repr(default_controller(direction)) == repr(Armijo())


def test_the_first_trial_moves_x_by_one() -> None:
    # f = ½‖x‖² from x0 = (3, -4): ‖∇f‖₂ = 5, so the first trial is t = 1/5 and moves x
    # by exactly 1 (to (2.4, -3.2)), where Armijo's test holds at once: one value.
    f = lambda x: 0.5 * float(x @ x)  # noqa: E731
    run = descend((f, lambda x: x), np.array([3.0, -4.0]),
                  stop=lambda progress: None if progress.iteration < 1 else _stop())
    np.testing.assert_allclose(run.x, [2.4, -3.2])
    assert run.history.size[1] == 0.2
    assert run.evaluations == Evaluations(values=2, gradients=2)


def _stop():
    from linestep.stopping import Kind, Verdict

    return Verdict(kind=Kind.budget, reason="one iteration", criterion="test")
