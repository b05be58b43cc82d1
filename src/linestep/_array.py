"""The one funnel through which linestep touches user arrays.

numpy arrays take a fast path. Any other array that follows the Array API
standard (it has ``__array_namespace__``, as JAX arrays do) is handled through
its own namespace, so the array type and dtype of ``x`` are kept. Nothing here
imports an array library other than numpy.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

_FLOAT_KINDS = "fc"


def namespace(x: Any) -> Any:
    """Return the array namespace of `x` (numpy for numpy arrays and plain sequences)."""
    if isinstance(x, np.ndarray):
        return np
    get = getattr(x, "__array_namespace__", None)
    if get is None:
        return np
    return get()


def as_point(name: str, x: Any) -> Any:
    """Return `x` as a floating array (numpy unless it is already a foreign array).

    Integer or boolean input becomes float64; floating dtypes are kept.
    """
    if isinstance(x, np.ndarray):
        if x.dtype.kind in _FLOAT_KINDS:
            return x
        if x.dtype.kind not in "iub":
            raise TypeError(f"`{name}` must hold real numbers; got dtype {x.dtype}.")
        return x.astype(np.float64)
    if hasattr(x, "__array_namespace__"):
        xp = x.__array_namespace__()
        if not xp.isdtype(x.dtype, "real floating"):
            x = xp.astype(x, xp.float64 if _has_float64(xp) else xp.float32)
        return x
    try:
        array = np.asarray(x)
    except (TypeError, ValueError):
        raise TypeError(f"`{name}` must be an array of real numbers; got {x!r}.") from None
    if array.dtype.kind not in _FLOAT_KINDS + "iub":
        raise TypeError(f"`{name}` must be an array of real numbers; got {x!r}.")
    if array.dtype.kind not in _FLOAT_KINDS:
        array = array.astype(np.float64)
    return array


def _has_float64(xp: Any) -> bool:
    try:
        return xp.asarray(0.0, dtype=xp.float64).dtype == xp.float64
    except Exception:  # noqa: BLE001 - libraries without float64 (JAX x64 off) raise or warn
        return False


def dot(a: Any, b: Any) -> float:
    """The inner product of two arrays of the same shape, as a Python float."""
    if isinstance(a, np.ndarray) and isinstance(b, np.ndarray):
        if a.ndim == 1:
            return float(a.dot(b))  # ndarray.dot is about twice as fast as @ for small n
        return float(np.vdot(a, b))
    xp = namespace(a)
    return float(xp.sum(a * b))


def all_finite(a: Any) -> bool:
    """True when every entry of `a` is finite."""
    if isinstance(a, np.ndarray):
        # Summing is much cheaper than isfinite().all(); only a non-finite sum needs the
        # exact check (a finite array can overflow its sum).
        total = float(np.sum(a)) if a.dtype.kind == "f" else math.nan
        if math.isfinite(total):
            return True
        return bool(np.isfinite(a).all())
    xp = namespace(a)
    return bool(xp.all(xp.isfinite(a)))


def max_abs(a: Any) -> float:
    """The max-norm ‖a‖∞ as a float (0.0 for an empty array)."""
    if isinstance(a, np.ndarray):
        return float(np.max(np.abs(a))) if a.size else 0.0
    xp = namespace(a)
    return float(xp.max(xp.abs(a))) if a.size else 0.0


def norm2(a: Any) -> float:
    """The Euclidean norm of `a` flattened."""
    if isinstance(a, np.ndarray):
        flat = a.ravel()
        return math.sqrt(float(flat @ flat))
    xp = namespace(a)
    return math.sqrt(float(xp.sum(a * a)))


def shape(a: Any) -> tuple[int, ...]:
    """The shape of `a` as a tuple."""
    return tuple(a.shape)


def same_kind(template: Any, a: Any) -> Any:
    """Return `a` as an array of `template`'s library (numpy input to numpy, JAX to JAX)."""
    if isinstance(template, np.ndarray):
        return a if isinstance(a, np.ndarray) else np.asarray(a)
    xp = namespace(template)
    return xp.asarray(a)
