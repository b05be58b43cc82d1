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
        if (getattr(gradient, "shape", None) != getattr(x, "shape", ())
                or getattr(getattr(gradient, "dtype", None), "kind", "f") == "c"):
            gradient = _checked(x, gradient)
        return -gradient

    def reset(self) -> None:
        """Nothing to forget."""


def _checked(x: Any, gradient: Any) -> Any:
    """`gradient` as a real array of x's shape, or a clear error naming it."""
    from linestep import _array

    gradient = _array.as_point("gradient", gradient)
    if _array.shape(gradient) != _array.shape(_array.as_point("x", x)):
        raise ValueError(
            f"`gradient` must have the shape of `x`; got {_array.shape(gradient)} for "
            f"`gradient` and {_array.shape(_array.as_point('x', x))} for `x`."
        )
    return gradient
