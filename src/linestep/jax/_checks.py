"""The argument checks of `linestep.jax`, made in Python (at construction or while JAX traces).

Number-valued options are checked by building the host class (see each
factory), or with `linestep._validate`; what is here is particular to the
compiled path: flags, the user's function, and the structure of parameter
pytrees and states. A structure check runs while JAX traces, so a mismatch
raises at once, naming the argument, instead of failing inside XLA.
"""

from __future__ import annotations

from typing import Any

import jax
import jax.numpy as jnp


def check_function(fun: Any) -> None:
    """Raise TypeError unless `fun` is callable (the objective f)."""
    if not callable(fun):
        raise TypeError(f"`fun` must be a callable f(x) -> scalar; got {fun!r}.")


def check_parameters(x: Any) -> Any:
    """Return the tree structure of `x` after checking that its leaves are real floats."""
    leaves, structure = jax.tree_util.tree_flatten(x)
    if not leaves:
        raise ValueError(f"`x` must hold at least one array; got the empty pytree {x!r}.")
    for leaf in leaves:
        dtype = getattr(leaf, "dtype", None)
        if dtype is None or not jnp.issubdtype(dtype, jnp.floating):
            raise TypeError(
                f"Every leaf of `x` must be a floating-point array; got a leaf of dtype "
                f"{dtype}. Convert the parameters, e.g. with jnp.asarray(x, jnp.float32)."
            )
    return structure


def check_like(name: str, tree: Any, x: Any, structure: Any) -> None:
    """Raise ValueError naming `name` unless `tree` has the structure and leaf shapes of `x`."""
    got = jax.tree_util.tree_structure(tree)
    if got != structure:
        raise ValueError(
            f"`{name}` must have the pytree structure of `x`; got {got} for `{name}` and "
            f"{structure} for `x`."
        )
    for a, b in zip(jax.tree_util.tree_leaves(tree), jax.tree_util.tree_leaves(x), strict=True):
        if jnp.shape(a) != jnp.shape(b):
            raise ValueError(
                f"`{name}` must have the leaf shapes of `x`; got a leaf of shape "
                f"{jnp.shape(a)} where `x` has {jnp.shape(b)}."
            )


def check_state(state: Any, kind: type, x: Any, *, returned_by: str) -> Any:
    """Return the structure of `x` after checking that `state` is a `kind` built for it.

    `returned_by` names the record whose ``.state`` the caller passes on
    (``"step"``, ``"proposal"``), for the message.
    """
    structure = check_parameters(x)
    if not isinstance(state, kind):
        raise TypeError(
            f"`state` must be the {kind.__name__} from begin(x) or from the previous "
            f"{returned_by}'s `.state`; got {type(state).__name__}."
        )
    if state.structure != structure:
        raise ValueError(
            f"`state` was built by begin() for parameters of structure {state.structure}, "
            f"but `x` has structure {structure}. Call begin(x) on the new parameters to get "
            "a fresh state."
        )
    _check_state_shapes(state.method, x)
    return structure


# Fields of a method's memory that hold copies of x or of a gradient (the
# Barzilai–Borwein pair), by how many leading axes they add to each leaf. The L-BFGS
# ring buffers have their own check, in `propose`.
_COPIES_OF_X = {"x": 0, "gradient": 0}


def _check_state_shapes(method: Any, x: Any) -> None:
    """Raise ValueError naming `state` when its copies of x have other leaf shapes.

    A state built for x of one shape and passed with x of another (same pytree
    structure) would otherwise fail deep inside `lax` with a broadcasting error.
    """
    if method is None:
        return
    wanted = [jnp.shape(leaf) for leaf in jax.tree_util.tree_leaves(x)]
    for name, extra in _COPIES_OF_X.items():
        tree = getattr(method, name, None)
        if tree is None:
            continue
        shapes = [jnp.shape(leaf)[extra:] for leaf in jax.tree_util.tree_leaves(tree)]
        if shapes != wanted:
            raise ValueError(
                f"`state` was built by begin() for parameters of leaf shapes {shapes}, but "
                f"`x` has leaf shapes {wanted}. Call begin(x) on the new parameters to get "
                "a fresh state."
            )


def check_value(value: Any) -> None:
    """Raise ValueError naming `value` unless it is a scalar (f(x) is one number)."""
    if value is None:
        return
    shape = jnp.shape(value)
    if shape != ():
        raise ValueError(
            f"`value` must be the scalar f(x); got an array of shape {shape}. Pass the "
            "loss itself (for a per-example loss, its sum or mean), or leave `value` out."
        )
    dtype = getattr(value, "dtype", None)
    if dtype is not None and not jnp.issubdtype(dtype, jnp.floating) \
            and not jnp.issubdtype(dtype, jnp.integer):
        raise TypeError(f"`value` must be a real scalar f(x); got dtype {dtype}.")
