"""Search directions for `descend`: steepest descent, L-BFGS and nonlinear CG.

A direction object is called as ``direction(x, gradient) -> d`` once per
iteration, with the current point and gradient. It keeps what it needs from
earlier calls itself (L-BFGS pairs, the previous CG direction), so the driver
only passes the present. Every direction checks that its d is a descent
direction (∇f·d < 0) and otherwise returns the steepest-descent direction −∇f,
setting ``restarted = True`` for that call; `descend` records that in the
history. ``reset()`` forgets all memory.
"""

from __future__ import annotations

from typing import Any, Protocol, runtime_checkable

__all__ = ["Direction", "SteepestDescent"]


@runtime_checkable
class Direction(Protocol):
    """The protocol `descend` uses for search directions."""

    restarted: bool

    def __call__(self, x: Any, gradient: Any) -> Any: ...

    def reset(self) -> None: ...


class SteepestDescent:
    """d = −∇f(x).

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import SteepestDescent
    >>> SteepestDescent()(np.zeros(2), np.array([1.0, -2.0]))
    array([-1.,  2.])
    """

    restarted = False

    def __repr__(self) -> str:
        return "SteepestDescent()"

    def __call__(self, x: Any, gradient: Any) -> Any:
        return -gradient

    def reset(self) -> None:
        """Nothing to forget."""
