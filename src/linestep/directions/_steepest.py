"""Steepest descent: d = −∇f(x)."""

from __future__ import annotations

from typing import Any

from linestep._rebuild import Rebuilds


class SteepestDescent(Rebuilds):
    """d = −∇f(x).

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import SteepestDescent
    >>> SteepestDescent()(np.zeros(2), np.array([1.0, -2.0]))
    array([-1.,  2.])
    """

    restarted = False

    def __call__(self, x: Any, gradient: Any) -> Any:
        return -gradient

    def reset(self) -> None:
        """Nothing to forget."""
