"""What every direction shares: the protocol, the rebuilding repr and the flat-copy plumbing."""

from __future__ import annotations

import math
from typing import Any, Protocol, runtime_checkable

import numpy as np

from linestep import _array
from linestep._rebuild import Rebuilds

# Directions take their repr from the one mechanism of the package.
_Rebuildable = Rebuilds


@runtime_checkable
class Direction(Protocol):
    """The protocol `descend` uses for search directions."""

    restarted: bool

    def __call__(self, x: Any, gradient: Any) -> Any: ...

    def reset(self) -> None: ...


class _Previous:
    """The point, gradient and direction of the previous call, flattened numpy copies."""

    __slots__ = ("x", "gradient", "direction", "shape")

    def __init__(self, x: np.ndarray, gradient: np.ndarray, direction: np.ndarray | None,
                 shape: tuple[int, ...]) -> None:
        self.x = x
        self.gradient = gradient
        self.direction = direction
        self.shape = shape


def _flat_views(owner: str, x: Any, gradient: Any) -> tuple[np.ndarray, np.ndarray]:
    """x and ∇f as flat numpy arrays in x's floating dtype, copied only when they must be.

    A numpy caller's 1-D arrays come back as they are (read in place); a JAX or other
    array is converted to numpy once.
    """
    if (x.__class__ is gradient.__class__ is np.ndarray and x.ndim == 1
            and x.dtype is gradient.dtype and x.dtype.kind == "f" and x.shape == gradient.shape):
        return x, gradient  # the common call from a loop
    x_np = np.asarray(x)
    if x_np.dtype.kind == "c":
        raise TypeError(f"{owner} works with real arrays; got `x` of dtype {x_np.dtype}.")
    if x_np.dtype.kind != "f":
        x_np = x_np.astype(np.float64)
    g_np = np.asarray(gradient)
    if g_np.shape != x_np.shape:
        raise ValueError(
            f"`gradient` must have the shape of `x`; got {g_np.shape} for `gradient` and "
            f"{x_np.shape} for `x`."
        )
    if g_np.dtype.kind == "c":
        raise TypeError(f"{owner} works with real arrays; got `gradient` of dtype {g_np.dtype}.")
    if g_np.dtype != x_np.dtype:
        g_np = g_np.astype(x_np.dtype)
    return x_np.reshape(-1), g_np.reshape(-1)


def _flat_pair(owner: str, x: Any, gradient: Any) -> tuple[np.ndarray, np.ndarray]:
    """Flattened numpy copies of x and ∇f, both in x's floating dtype (kept across calls)."""
    x_flat, g_flat = _flat_views(owner, x, gradient)
    return x_flat.copy(), g_flat.copy()


def _check_same_problem(owner: str, previous: _Previous | None, x: Any) -> None:
    shape = _array.shape(x)
    if previous is not None and previous.shape != shape:
        raise ValueError(
            f"`x` has shape {shape} but the previous call to {owner} had shape "
            f"{previous.shape}; call reset() before starting on a new problem."
        )


def _is_descent(g: np.ndarray, d: np.ndarray) -> bool:
    """gᵀd < 0 with d finite (a NaN or inf entry makes the inner product non-finite)."""
    slope = float(g @ d)
    return slope < 0.0 and math.isfinite(slope) and math.isfinite(float(d @ d))


def _as_output(x: Any, d: np.ndarray) -> Any:
    """d shaped like x and of x's array library."""
    return _array.same_kind(x, d.reshape(_array.shape(x)))
