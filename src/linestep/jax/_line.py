"""The compiled twin of `linestep._ray`: φ(t) = f(x + t·d) and φ'(t) inside `lax` loops.

A `Line` is built while JAX traces one search call; it holds the user's
function, the origin (x, f(x), ∇f(x), φ'(0)) and the direction, and evaluates
trial points. What changes from trial to trial lives in a `Tally`, a pytree
threaded through the loop carries: the evaluation count, whether any finite
value was seen, and the best point with sufficient decrease.

Non-finite handling is the host ray's: a NaN or ±inf value, or a non-finite
φ'(t) when the gradient is evaluated, reads as φ(t) = +inf, so every search
shrinks the step the same way and never returns a non-finite point.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import jax
import jax.numpy as jnp

from linestep.jax import _tree

INF = jnp.inf


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class Point:
    """One trial: size t, x + t·d, φ(t), ∇f there (the origin's when not evaluated), φ'(t)."""

    size: Any
    x: Any
    value: Any
    gradient: Any
    slope: Any


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class Tally:
    """Evaluations so far in this call, and the best sufficient-decrease point."""

    count: Any
    finite_seen: Any
    has_best: Any
    best: Point


def scalar_value(fun: Any, x: Any) -> Any:
    """f(x), checked to be a scalar while tracing."""
    value = fun(x)
    if jnp.shape(value) != ():
        raise TypeError(
            f"`fun` must return a scalar; got an array of shape {jnp.shape(value)}. Reduce "
            "it, e.g. with jnp.sum or jnp.mean."
        )
    return value


def value_and_gradient(fun: Any, x: Any) -> tuple[Any, Any]:
    """(f(x), ∇f(x)) in one reverse-mode pass."""
    return jax.value_and_grad(lambda p: scalar_value(fun, p))(x)


class Line:
    """φ along x + t·d for one call (a trace-time object; never a pytree).

    Parameters
    ----------
    fun : callable
        The scalar function f of the parameter pytree.
    x, direction, gradient : pytrees
        The origin, d and ∇f(x).
    value : scalar
        f(x).
    fused : bool
        Evaluate ∇f with every value (one `jax.value_and_grad` pass per trial).
    c1 : float
        Sufficient-decrease constant for the best point.
    track_best : bool
        Keep the best sufficient-decrease point in the tally (searches that can end
        without accepting a trial, such as Wolfe's, return it).
    """

    def __init__(self, fun: Any, x: Any, direction: Any, value: Any, gradient: Any, *,
                 fused: bool, c1: float, track_best: bool) -> None:
        self.fun = fun
        self.x = x
        self.direction = direction
        self.dtype = _tree.scalar_dtype(x)
        self.value = jnp.asarray(value, self.dtype)
        self.gradient = gradient
        self.slope = _tree.vdot(gradient, direction).astype(self.dtype)
        self.fused = fused
        self.c1 = c1
        self.track_best = track_best
        self._direction_squared = None

    @property
    def direction_squared(self) -> Any:
        """‖d‖₂² (for the scaled first trial)."""
        if self._direction_squared is None:
            self._direction_squared = _tree.vdot(self.direction, self.direction)
        return self._direction_squared

    def origin(self) -> Point:
        zero = jnp.zeros((), self.dtype)
        return Point(size=zero, x=self.x, value=self.value, gradient=self.gradient,
                     slope=self.slope)

    def rounding_size(self) -> Any:
        """The step below which x + t·d differs from x only at rounding level."""
        eps = _tree.epsilon(self.x)
        scale = jnp.maximum(1.0, _tree.max_abs(self.x))
        length = _tree.max_abs(self.direction)
        return jnp.where(length > 0, eps * scale / jnp.where(length > 0, length, 1.0),
                         INF).astype(self.dtype)

    def start(self) -> Tally:
        """The tally before any evaluation."""
        return Tally(count=jnp.zeros((), jnp.int32), finite_seen=jnp.zeros((), bool),
                     has_best=jnp.zeros((), bool), best=self.origin())

    # -- evaluation -------------------------------------------------------------
    def evaluate(self, size: Any, tally: Tally, *, gradient: bool = False) -> tuple[Point, Tally]:
        """The point at `size` (with ∇f and φ' when `gradient` or the line is fused)."""
        size = jnp.asarray(size, self.dtype)
        x_new = _tree.axpy(size, self.direction, self.x)
        if gradient or self.fused:
            value, grad = value_and_gradient(self.fun, x_new)
            value = jnp.asarray(value, self.dtype)
            slope = _tree.vdot(grad, self.direction).astype(self.dtype)
            bad = ~(jnp.isfinite(value) & jnp.isfinite(slope))
        else:
            value = jnp.asarray(scalar_value(self.fun, x_new), self.dtype)
            grad = self.gradient
            slope = jnp.full((), jnp.nan, self.dtype)
            bad = ~jnp.isfinite(value)
        value = jnp.where(bad, INF, value)
        point = Point(size=size, x=x_new, value=value, gradient=grad, slope=slope)
        return point, self._record(point, tally)

    def _record(self, point: Point, tally: Tally) -> Tally:
        finite = point.value < INF
        has_best, best = tally.has_best, tally.best
        if self.track_best:
            decrease = point.value <= self.value + self.c1 * point.size * self.slope
            better = finite & decrease & (~has_best | (point.value < best.value))
            best = _tree.select(better, point, best)
            has_best = has_best | better
        return Tally(count=tally.count + 1, finite_seen=tally.finite_seen | finite,
                     has_best=has_best, best=best)
