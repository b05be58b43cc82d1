"""Arithmetic on parameter pytrees.

Parameters may be any pytree of floating arrays (a dict of weight matrices, a
list of vectors, one flat array). Inner products are accumulated leaf by leaf,
in each leaf's dtype, and summed; nothing is raveled, so no copy of the
parameters is made. The checks of their structure are in `linestep.jax._checks`.
"""

from __future__ import annotations

from typing import Any

import jax
import jax.numpy as jnp
import numpy as np

tree_map = jax.tree_util.tree_map
tree_leaves = jax.tree_util.tree_leaves


def vdot(a: Any, b: Any) -> jax.Array:
    """Σ over leaves of Σ a·b: the inner product of two pytrees of one structure."""
    products = [jnp.sum(u * v) for u, v in zip(tree_leaves(a), tree_leaves(b), strict=True)]
    return sum(products[1:], products[0])


def axpy(size: Any, d: Any, x: Any) -> Any:
    """x + size·d, leaf by leaf, in each leaf's dtype (`size` is cast to it)."""
    return tree_map(lambda u, v: u + size.astype(u.dtype) * v, x, d)


def add(a: Any, b: Any) -> Any:
    return tree_map(jnp.add, a, b)


def subtract(a: Any, b: Any) -> Any:
    return tree_map(jnp.subtract, a, b)


def scale(factor: Any, a: Any) -> Any:
    return tree_map(lambda u: factor.astype(u.dtype) * u, a)


def negative(a: Any) -> Any:
    return tree_map(jnp.negative, a)


def like(tree: Any, x: Any) -> Any:
    """`tree` with each leaf cast to the dtype of the matching leaf of `x`."""
    return tree_map(lambda u, v: jnp.asarray(u, v.dtype), tree, x)


def select(condition: Any, a: Any, b: Any) -> Any:
    """`a` where the scalar `condition` holds, else `b`, for every leaf."""
    return tree_map(lambda u, v: jnp.where(condition, u, v), a, b)


def max_abs(a: Any) -> jax.Array:
    """‖a‖∞ over all leaves (0 for leaves of size 0)."""
    return _reduce(jnp.max, [jnp.max(jnp.abs(u), initial=0) for u in tree_leaves(a)])


def all_finite(a: Any) -> jax.Array:
    return _reduce(jnp.all, [jnp.all(jnp.isfinite(u)) for u in tree_leaves(a)])


def any_nonzero(a: Any) -> jax.Array:
    return _reduce(jnp.any, [jnp.any(u != 0) for u in tree_leaves(a)])


def _reduce(combine: Any, parts: list[Any]) -> jax.Array:
    return combine(jnp.stack(parts))


def scalar_dtype(x: Any) -> Any:
    """The floating dtype in which the scalars of a search on `x` are computed."""
    leaves = tree_leaves(x)
    dtype = jnp.result_type(*leaves) if leaves else jnp.result_type(float)
    if not jnp.issubdtype(dtype, jnp.floating):
        dtype = jnp.result_type(float)
    return dtype


def epsilon(x: Any) -> float:
    """Machine epsilon of the scalar dtype of `x`."""
    return float(np.finfo(scalar_dtype(x)).eps)

