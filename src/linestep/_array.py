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

_FLOAT_KINDS = "f"
_COMPLEX_FIX = (
    "linestep minimises real functions of real variables: split a complex variable "
    "into its real and imaginary parts, e.g. np.concatenate([z.real, z.imag])."
)


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

    Integer or boolean input becomes float64 (for another array library, its default
    floating dtype: float32 for JAX unless x64 is enabled); floating dtypes are kept.
    A traced JAX value (inside jax.jit, vmap or grad) raises TypeError pointing to
    linestep.jax.
    """
    if isinstance(x, np.ndarray):
        if x.dtype.kind in _FLOAT_KINDS:
            return x
        if x.dtype.kind not in "iub":
            fix = f" {_COMPLEX_FIX}" if x.dtype.kind == "c" else ""
            raise TypeError(f"`{name}` must hold real numbers; got dtype {x.dtype}.{fix}")
        return x.astype(np.float64)
    if hasattr(x, "__array_namespace__"):
        if _is_traced(x):
            raise TypeError(
                f"`{name}` is a traced JAX value: the linestep controllers run Python "
                "control flow on concrete numbers and cannot run inside jax.jit, "
                "jax.vmap or jax.grad. Call them outside the transformation, or use "
                "the compiled searches of linestep.jax (e.g. linestep.jax.armijo())."
            )
        xp = x.__array_namespace__()
        if xp.isdtype(x.dtype, "complex floating"):
            raise TypeError(f"`{name}` must hold real numbers; got dtype {x.dtype}. "
                            f"{_COMPLEX_FIX}")
        if not xp.isdtype(x.dtype, "real floating"):
            x = xp.astype(x, _default_float(xp))
        return x
    try:
        array = np.asarray(x)
    except (TypeError, ValueError):
        raise TypeError(f"`{name}` must be an array of real numbers; got {x!r}.") from None
    if array.dtype.kind not in _FLOAT_KINDS + "iub":
        fix = f" {_COMPLEX_FIX}" if array.dtype.kind == "c" else ""
        raise TypeError(f"`{name}` must be an array of real numbers; got {x!r}.{fix}")
    if array.dtype.kind not in _FLOAT_KINDS:
        array = array.astype(np.float64)
    return array


def _default_float(xp: Any) -> Any:
    """The namespace's default real floating dtype (float32 for JAX unless x64 is on)."""
    info = getattr(xp, "__array_namespace_info__", None)
    if info is not None:
        try:
            return info().default_dtypes()["real floating"]
        except Exception:  # noqa: BLE001 - an incomplete info object: fall back below
            pass
    return xp.asarray(0.0).dtype


def _is_traced(x: Any) -> bool:
    """True for a JAX tracer (a value inside jax.jit/vmap/grad), found without importing JAX."""
    return any(cls.__name__ == "Tracer" and cls.__module__.startswith("jax")
               for cls in type(x).__mro__)


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
        if a.dtype.kind == "f":
            # a·a is finite only if every entry is, and costs a fraction of
            # isfinite().all(); an overflowing square falls back to the exact test.
            square = float(a.dot(a)) if a.ndim == 1 else float(np.vdot(a, a))
            if math.isfinite(square):
                return True
        return bool(np.isfinite(a).all())
    xp = namespace(a)
    return bool(xp.all(xp.isfinite(a)))


def max_abs(a: Any) -> float:
    """The max-norm ‖a‖∞ as a float (0.0 for an empty array)."""
    if isinstance(a, np.ndarray):
        return float(np.abs(a).max()) if a.size else 0.0
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
