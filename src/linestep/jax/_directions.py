"""Compiled search directions: steepest descent and L-BFGS with fixed-size ring buffers.

The twins of `linestep.directions.SteepestDescent` and `linestep.directions.LBFGS`:
same rules (skip rule, restart to −∇f when −H·∇f is not a descent direction,
no update when x did not move), with the pairs kept in a `DirectionState`
instead of on the object. Parameters may be any pytree; the pairs are stored
leaf by leaf with a leading axis of length `memory`.

References
----------
J. Nocedal, "Updating quasi-Newton matrices with limited storage", Math. Comp.
35(151):773–782, 1980.
D. C. Liu and J. Nocedal, "On the limited memory BFGS method for large scale
optimization", Math. Programming 45:503–528, 1989.
J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., 2006, Alg. 7.4, eq. 7.20.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import jax
import jax.numpy as jnp

from linestep import _validate
from linestep.directions import LBFGS, skip_floor
from linestep.jax import _tree
from linestep.jax._checks import check_like, check_parameters, check_state
from linestep.jax._records import DirectionState, Proposal, Rebuildable


def _check(x: Any, gradient: Any, state: Any) -> None:
    structure = check_state(state, DirectionState, x, returned_by="proposal")
    check_like("gradient", gradient, x, structure)


@dataclass(frozen=True, repr=False)
class SteepestDirection(Rebuildable):
    """d = −∇f."""

    _factory = "steepest_descent"

    def begin(self, x: Any) -> DirectionState:
        """A state for parameters shaped like `x` (steepest descent keeps nothing)."""
        return DirectionState(method=None, structure=check_parameters(x))

    def reset(self, state: DirectionState, *, when: Any = True) -> DirectionState:
        """The state with its memory forgotten (nothing to forget here)."""
        return state

    def propose(self, x: Any, gradient: Any, state: DirectionState) -> Proposal:
        """−∇f, never restarted."""
        _check(x, gradient, state)
        return Proposal(direction=_tree.negative(gradient),
                        restarted=jnp.zeros((), bool), state=state)


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class Pairs:
    """L-BFGS memory: ring buffers of s and y (leading axis `memory`), 1/sᵀy, bookkeeping."""

    s: Any
    y: Any
    rho: Any
    newest: Any  # slot of the newest pair, -1 when none was ever stored
    stored: Any  # pairs in use
    skipped: Any  # pairs skipped by the curvature rule since the last reset
    previous_x: Any
    previous_gradient: Any
    has_previous: Any


@dataclass(frozen=True, repr=False)
class LBFGSDirection(Rebuildable):
    memory: int
    curvature_tolerance: float | None
    scale_first: bool
    _factory = "lbfgs"
    _fields = ("memory", "curvature_tolerance", "scale_first")

    def begin(self, x: Any) -> DirectionState:
        """Empty ring buffers for parameters shaped like `x`."""
        structure = check_parameters(x)
        dtype = _tree.scalar_dtype(x)
        buffers = _tree.tree_map(lambda u: jnp.zeros((self.memory, *jnp.shape(u)), u.dtype), x)
        zeros = _tree.tree_map(jnp.zeros_like, x)
        pairs = Pairs(s=buffers, y=buffers, rho=jnp.zeros((self.memory,), dtype),
                      newest=jnp.asarray(-1, jnp.int32), stored=jnp.zeros((), jnp.int32),
                      skipped=jnp.zeros((), jnp.int32), previous_x=zeros,
                      previous_gradient=zeros, has_previous=jnp.zeros((), bool))
        return DirectionState(method=pairs, structure=structure)

    def reset(self, state: DirectionState, *, when: Any = True) -> DirectionState:
        """The state with every pair and the previous point forgotten (the host's reset()).

        `when` (a boolean, possibly traced) resets only where it holds. Only the
        bookkeeping changes: the buffers keep their (now unused) contents, so a
        conditional reset inside a loop costs O(1), not O(memory·n).
        """
        pairs = state.method
        cleared = Pairs(s=pairs.s, y=pairs.y, rho=pairs.rho,
                        newest=jnp.where(when, -1, pairs.newest).astype(jnp.int32),
                        stored=jnp.where(when, 0, pairs.stored).astype(jnp.int32),
                        skipped=jnp.where(when, 0, pairs.skipped).astype(jnp.int32),
                        previous_x=pairs.previous_x,
                        previous_gradient=pairs.previous_gradient,
                        has_previous=pairs.has_previous & ~jnp.asarray(when))
        return DirectionState(method=cleared, structure=state.structure)

    def propose(self, x: Any, gradient: Any, state: DirectionState) -> Proposal:
        """d = −H·∇f from the stored pairs, after adding the pair from the previous call.

        Returns
        -------
        Proposal
            `restarted` is True when −H·∇f was not a descent direction (or not
            finite) and −∇f was returned instead; the pairs are then dropped.
        """
        _check(x, gradient, state)
        for name, buffer in (("s", state.method.s), ("y", state.method.y)):
            for leaf, u in zip(_tree.tree_leaves(buffer), _tree.tree_leaves(x), strict=True):
                if jnp.shape(leaf) != (self.memory, *jnp.shape(u)):
                    raise ValueError(
                        f"`state` holds L-BFGS buffers ({name}) of leaf shape "
                        f"{jnp.shape(leaf)[1:]} where `x` has {jnp.shape(u)}; call "
                        "begin(x) on the new parameters."
                    )
        g = _tree.like(gradient, x)
        pairs = self._update(state.method, x, g)
        descent_direction = _tree.negative(self._inverse_hessian_times(pairs, g))
        slope = _tree.vdot(g, descent_direction)
        descent = (slope < 0) & jnp.isfinite(slope) & jnp.isfinite(
            _tree.vdot(descent_direction, descent_direction))
        have = pairs.stored > 0
        restarted = have & ~descent & _tree.any_nonzero(g)
        use_pairs = have & ~restarted
        direction = _tree.select(use_pairs, descent_direction, self._steepest(g))
        pairs = Pairs(s=pairs.s, y=pairs.y, rho=pairs.rho, newest=pairs.newest,
                      stored=jnp.where(restarted, 0, pairs.stored), skipped=pairs.skipped,
                      previous_x=x, previous_gradient=g, has_previous=jnp.ones((), bool))
        return Proposal(direction=direction, restarted=restarted,
                        state=DirectionState(method=pairs, structure=state.structure))

    # -- internals ----------------------------------------------------------------
    def _steepest(self, g: Any) -> Any:
        """−∇f, divided by ‖∇f‖₂ when that exceeds 1 and `scale_first` (no pairs yet)."""
        if not self.scale_first:
            return _tree.negative(g)
        norm = jnp.sqrt(_tree.vdot(g, g))
        shrink = (norm > 1.0) & jnp.isfinite(norm)
        divisor = jnp.where(shrink, norm, 1.0)
        return _tree.tree_map(lambda u: -u / divisor.astype(u.dtype), g)

    def _update(self, pairs: Pairs, x: Any, g: Any) -> Pairs:
        """Store (s, y) from the previous call unless x did not move or the skip rule fires."""
        s = _tree.subtract(x, pairs.previous_x)
        y = _tree.subtract(g, pairs.previous_gradient)
        moved = pairs.has_previous & _tree.any_nonzero(s)
        curvature = _tree.vdot(s, y)
        norms = jnp.sqrt(_tree.vdot(s, s)) * jnp.sqrt(_tree.vdot(y, y))
        floor = skip_floor(self.curvature_tolerance, pairs.rho.dtype)
        good = ((curvature > floor * norms) & jnp.isfinite(curvature)
                & jnp.isfinite(norms))
        store = moved & good
        slot = (pairs.newest + 1) % self.memory

        def put(buffer: Any, new: Any) -> Any:
            # Write one row (the old row again when not storing): O(n), not O(m·n).
            return _tree.tree_map(
                lambda b, u: b.at[slot].set(jnp.where(store, u, b[slot])), buffer, new)

        rho = jnp.where(store, pairs.rho.at[slot].set(
            1.0 / jnp.where(store, curvature, 1.0).astype(pairs.rho.dtype)), pairs.rho)
        return Pairs(s=put(pairs.s, s), y=put(pairs.y, y), rho=rho,
                     newest=jnp.where(store, slot, pairs.newest),
                     stored=jnp.where(store, jnp.minimum(pairs.stored + 1, self.memory),
                                      pairs.stored),
                     skipped=pairs.skipped + (moved & ~good).astype(jnp.int32),
                     previous_x=pairs.previous_x, previous_gradient=pairs.previous_gradient,
                     has_previous=pairs.has_previous)

    def _inverse_hessian_times(self, pairs: Pairs, g: Any) -> Any:
        """H·g by the two-loop recursion (N&W Alg. 7.4), H0 = γ·I from the newest pair."""
        memory = self.memory
        newest = jnp.maximum(pairs.newest, 0)

        def row(buffer: Any, slot: Any) -> Any:
            return _tree.tree_map(lambda b: b[slot], buffer)

        s_new, y_new = row(pairs.s, newest), row(pairs.y, newest)
        yy = _tree.vdot(y_new, y_new)
        gamma = _tree.vdot(s_new, y_new) / jnp.where(yy > 0, yy, 1.0)

        def newest_to_oldest(k: Any, carry: tuple) -> tuple:
            q, alphas = carry
            slot = (pairs.newest - k) % memory
            valid = k < pairs.stored
            alpha = pairs.rho[slot] * _tree.vdot(row(pairs.s, slot), q)
            q = _tree.select(valid, _tree.subtract(q, _tree.scale(alpha, row(pairs.y, slot))), q)
            return q, alphas.at[k].set(jnp.where(valid, alpha, 0.0))

        alphas = jnp.zeros((memory,), pairs.rho.dtype)
        q, alphas = jax.lax.fori_loop(0, memory, newest_to_oldest, (g, alphas))
        r = _tree.scale(gamma, q)

        def oldest_to_newest(j: Any, r: Any) -> Any:
            k = memory - 1 - j
            slot = (pairs.newest - k) % memory
            valid = k < pairs.stored
            beta = pairs.rho[slot] * _tree.vdot(row(pairs.y, slot), r)
            return _tree.select(valid, _tree.add(r, _tree.scale(alphas[k] - beta,
                                                                row(pairs.s, slot))), r)

        return jax.lax.fori_loop(0, memory, oldest_to_newest, r)


def steepest_descent() -> SteepestDirection:
    """Compiled d = −∇f: the twin of `linestep.SteepestDescent`.

    Returns
    -------
    SteepestDirection
        With ``begin(x) -> DirectionState``, ``propose(x, gradient, state) ->
        Proposal`` and ``reset(state)``.
    """
    return SteepestDirection()


def lbfgs(memory: int = 10, *, curvature_tolerance: float | None = None,
          scale_first: bool = True) -> LBFGSDirection:
    """Compiled limited-memory BFGS directions: the twin of `linestep.directions.LBFGS`.

    d = −H·∇f by the two-loop recursion over the newest `memory` pairs
    s = x_k − x_{k−1}, y = ∇f_k − ∇f_{k−1}, H0 = γ·I with γ = sᵀy/yᵀy of the
    newest pair. A pair is skipped when sᵀy ≤ `curvature_tolerance`·‖s‖·‖y‖;
    nothing is stored when x did not move; when −H·∇f is not a descent
    direction the pairs are dropped and −∇f is returned (``restarted``). The
    ring buffers hold 2·memory copies of the parameters, allocated by `begin`.

    Parameters
    ----------
    memory : int
        Pairs kept, >= 1.
    curvature_tolerance : float or None
        Cosine floor of the skip rule, >= 0; None (the default) uses the machine
        epsilon of the parameters' dtype, as on the host.
    scale_first : bool
        Scale the steepest-descent direction used while no pair is stored.

    Returns
    -------
    LBFGSDirection
        With ``begin``, ``propose`` and ``reset`` as for `steepest_descent`.

    References
    ----------
    Nocedal, Math. Comp. 35(151):773–782, 1980. Liu & Nocedal, Math. Programming
    45:503–528, 1989. Nocedal & Wright, 2006, Alg. 7.4, eq. 7.20.

    Examples
    --------
    >>> import jax.numpy as jnp
    >>> import linestep.jax as lj
    >>> direction = lj.lbfgs(memory=5)
    >>> x = jnp.array([1.0, 1.0]); scale = jnp.array([1.0, 4.0])
    >>> first = direction.propose(x, scale * x, direction.begin(x))
    >>> [round(float(u), 4) for u in first.direction]   # −∇f/‖∇f‖₂: no pair yet
    [-0.2425, -0.9701]
    >>> x = jnp.array([0.5, -1.0])
    >>> second = direction.propose(x, scale * x, first.state)
    >>> int(second.state.method.stored), bool(second.restarted)
    (1, False)
    """
    options = LBFGS(memory, curvature_tolerance=curvature_tolerance,
                    scale_first=_validate.flag("scale_first", scale_first))
    return LBFGSDirection(memory=options.memory,
                          curvature_tolerance=options.curvature_tolerance,
                          scale_first=options.scale_first)
