"""The initial trial-step strategies of `linestep._initial`, as traceable functions.

The compiled searches accept the host strategy objects (`UnitTrial`,
`PreviousTrial`, `QuadraticTrial`, `ScaledTrial` or a number) and translate
them here into frozen, hashable twins whose ``guess`` reads the memory from a
`SearchState` instead of a mutable `Memory`. NaN in the state stands for the
host's None ("no accepted step yet").

References
----------
J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., 2006, §3.5,
"Initial step length" (eq. 3.60).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import jax.numpy as jnp

from linestep import _initial
from linestep.jax._records import Rebuildable

# Imported, not copied, so both paths enlarge the quadratic guess alike.
ENLARGE = _initial.QuadraticTrial.ENLARGE


@dataclass(frozen=True, repr=False)
class Unit(Rebuildable):
    _factory = "UnitTrial"

    def guess(self, state: Any, origin: Any) -> Any:
        return jnp.ones((), origin.dtype)


@dataclass(frozen=True)
class Constant:
    size: float

    def __repr__(self) -> str:
        return repr(self.size)

    def guess(self, state: Any, origin: Any) -> Any:
        return jnp.asarray(self.size, origin.dtype)


@dataclass(frozen=True, repr=False)
class Scaled(Rebuildable):
    length: float
    _factory = "ScaledTrial"
    _fields = ("length",)

    def guess(self, state: Any, origin: Any) -> Any:
        norm = jnp.sqrt(origin.direction_squared)
        return jnp.where(norm > 0, self.length / jnp.where(norm > 0, norm, 1.0), 1.0)


@dataclass(frozen=True, repr=False)
class Previous(Rebuildable):
    growth: float
    first: Any
    max_size: float
    _factory = "PreviousTrial"
    _fields = ("growth", "first", "max_size")

    def guess(self, state: Any, origin: Any) -> Any:
        size = state.previous_size
        grown = jnp.minimum(self.growth * size, self.max_size)
        return jnp.where(jnp.isnan(size), self.first.guess(state, origin), grown)


@dataclass(frozen=True, repr=False)
class Quadratic(Rebuildable):
    first: Any
    cap: float
    _factory = "QuadraticTrial"
    _fields = ("first", "cap")

    def guess(self, state: Any, origin: Any) -> Any:
        size = state.previous_size
        first = self.first.guess(state, origin)
        decrease = origin.value - state.previous_value
        guess = ENLARGE * 2.0 * decrease / origin.slope
        usable = jnp.isfinite(guess) & (guess > 0)
        fallback = jnp.where(jnp.isnan(size) | (size == 0), 1.0, size)
        guess = jnp.where(usable, jnp.minimum(guess, self.cap), fallback)
        guess = jnp.where(decrease < 0, guess, jnp.where(jnp.isnan(size), first, size))
        return jnp.where(jnp.isnan(state.previous_value), first, guess)


def resolve(initial: Any) -> Any:
    """The compiled twin of an ``initial=`` argument (a number or a host strategy)."""
    if isinstance(initial, (Unit, Constant, Scaled, Previous, Quadratic)):
        return initial
    strategy = _initial.resolve(initial)
    if isinstance(strategy, _initial.UnitTrial):
        return Unit()
    if isinstance(strategy, _initial.ConstantTrial):
        return Constant(strategy.size)
    if isinstance(strategy, _initial.ScaledTrial):
        return Scaled(strategy.length)
    if isinstance(strategy, _initial.PreviousTrial):
        return Previous(strategy.growth, resolve(strategy.first), strategy.max_size)
    if isinstance(strategy, _initial.QuadraticTrial):
        return Quadratic(resolve(strategy.first), strategy.cap)
    raise TypeError(
        "`initial` must be a positive number or one of UnitTrial(), PreviousTrial(), "
        "QuadraticTrial(), ScaledTrial() for the compiled searches (a custom strategy "
        f"runs Python code on each call and cannot be compiled); got {initial!r}."
    )


def first_trial(strategy: Any, state: Any, origin: Any) -> Any:
    """The strategy's guess, replaced by 1 unless 0 < guess < inf (as the host base does)."""
    guess = strategy.guess(state, origin)
    return jnp.where((guess > 0) & (guess < jnp.inf), guess, 1.0).astype(origin.dtype)
