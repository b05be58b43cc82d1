"""Compiled Barzilai–Borwein steps along −∇f, globalised by a (nonmonotone) backtracking search.

The host `linestep.rules.barzilai_borwein.BarzilaiBorwein`, with the previous
point and gradient kept in the `SearchState` instead of on the object. The
state's `calls` says whether there is a previous point (calls > 0) and counts
the BB steps for ``variant="alternate"`` (the host's count: one per call after
the first).

References
----------
J. Barzilai and J. M. Borwein, "Two-point step size gradient methods", IMA J.
Numer. Anal. 8(1):141–148, 1988.
M. Raydan, "The Barzilai and Borwein gradient method for the large scale
unconstrained minimization problem", SIAM J. Optim. 7(1):26–33, 1997.
Y.-H. Dai and R. Fletcher, "Projected Barzilai–Borwein methods for large-scale
box-constrained quadratic programming", Numer. Math. 100(1):21–47, 2005.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import jax
import jax.numpy as jnp

from linestep import _validate
from linestep._constants import DIRECTION_RTOL, NEGATIVE_CURVATURE_GROWTH
from linestep.jax import _tree
from linestep.jax._armijo import Backtracking, NonmonotoneSearch, nonmonotone_armijo
from linestep.jax._line import Line
from linestep.jax._search import CompiledSearch, guarded_step
from linestep.jax._twin import twin, twin_fields
from linestep.rules.barzilai_borwein import BarzilaiBorwein


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class Pair:
    """The previous call's x and ∇f, and the BB step proposed then."""

    x: Any
    gradient: Any
    trial: Any
    reference: Any  # the globalising search's nonmonotone memory, or None


@dataclass(frozen=True, eq=True, repr=False)
class BarzilaiBorweinSearch(CompiledSearch):
    variant: str
    first: Any
    min_size: float
    max_size: float
    globalize: Any
    fused: bool
    _factory = "barzilai_borwein"
    _fields = twin_fields(BarzilaiBorwein, "fused")

    @property
    def _initial(self) -> Any:
        return self.first

    @property
    def _c1(self) -> float:
        return 0.0 if self.globalize is None else self.globalize.c1

    def _begin_method(self, x: Any, dtype: Any) -> Pair:
        reference = None
        if isinstance(self.globalize, NonmonotoneSearch):
            reference = self.globalize._begin_method(x, dtype)
        zeros = _tree.tree_map(jnp.zeros_like, x)
        return Pair(x=zeros, gradient=zeros, trial=jnp.ones((), dtype), reference=reference)

    def _scale(self, line: Line) -> Any:
        """c with d = c·(−∇f), from φ'(0) = −c·‖∇f‖² (the host's check, as data)."""
        squared = _tree.vdot(line.gradient, line.gradient)
        return -line.slope / jnp.where(squared > 0, squared, 1.0)

    def _usable(self, line: Line) -> Any:
        # d must be c·(−∇f) with c > 0; the host raises otherwise, a compiled call
        # reports not_descent.
        scale = self._scale(line)
        residual = _tree.add(line.direction, _tree.scale(scale, line.gradient))
        distance = jnp.sqrt(_tree.vdot(residual, residual))
        return (scale > 0) & (distance <= DIRECTION_RTOL * jnp.sqrt(line.direction_squared))

    def _clip(self, size: Any) -> Any:
        return jnp.minimum(jnp.maximum(size, self.min_size), self.max_size)

    def _propose(self, line: Line, first: Any, pair: Pair, calls: Any) -> Any:
        """The clipped BB step α (`first` on the first call)."""
        s = _tree.subtract(line.x, pair.x)
        y = _tree.subtract(line.gradient, pair.gradient)
        sy = _tree.vdot(s, y)
        long = calls % 2 == 1 if self.variant == "alternate" else self.variant == "long"
        bb = jnp.where(long, _tree.vdot(s, s) / sy, sy / _tree.vdot(y, y))
        good = (sy > 0) & jnp.isfinite(bb) & (bb > 0)
        # sᵀy ≤ 0 with s ≠ 0: not convex along s, the previous trial grows (as the host)
        grow = (sy <= 0) & (_tree.vdot(s, s) > 0)
        held = jnp.where(grow, pair.trial * NEGATIVE_CURVATURE_GROWTH, pair.trial)
        step = jnp.where(good, self._clip(bb), self._clip(held))
        # the first step is capped but not lifted to min_size (as the host)
        return jnp.where(calls > 0, step, jnp.minimum(first, self.max_size)).astype(line.dtype)

    def _search(self, line: Line, first: Any, active: Any, state: Any) -> tuple:
        pair = state.method
        scale = self._scale(line)
        step = self._propose(line, first * scale, pair, state.calls)
        size = step / scale
        reference = line.value
        memory = pair.reference
        if isinstance(self.globalize, NonmonotoneSearch):
            reference, memory = self.globalize.next_reference(pair.reference, line.value)
        new_pair = Pair(x=line.x, gradient=line.gradient, trial=step, reference=memory)
        if self.globalize is None:
            return *guarded_step(line, size, active), new_pair
        return *self.globalize.backtrack(line, size, active, reference), new_pair


def barzilai_borwein(*, variant: str = "alternate", first: Any = None,
                     min_size: float = 1e-10, max_size: float = 1e10,
                     globalize: Any = "default", fused: bool = True) -> BarzilaiBorweinSearch:
    """Compiled Barzilai–Borwein steps for d = c·(−∇f), c > 0 (normally d = −∇f).

    The compiled twin of `linestep.rules.barzilai_borwein.BarzilaiBorwein`:
    with s = x_k − x_{k−1}, y = ∇f_k − ∇f_{k−1} from the previous call (kept in
    the state), α = sᵀs/sᵀy (``"long"``), sᵀy/yᵀy (``"short"``) or the two in
    turn (``"alternate"``), clipped to [`min_size`, `max_size`]; when sᵀy ≤ 0
    with s ≠ 0 the previous α is doubled, when s = 0 or α is not finite it is
    reused. The first call takes its step from `first`, capped at `max_size`.
    The step α is the first trial of the globalising search.

    Parameters
    ----------
    variant, first, min_size, max_size
        As for the host class (`first` None means ``ScaledTrial()``: t = 1/‖d‖₂).
    globalize : compiled search or None
        ``"default"`` is ``nonmonotone_armijo(reference="max", memory=10)``
        (Raydan 1997); pass `armijo(...)` or `nonmonotone_armijo(...)` for another
        backtracking search, or None for the pure BB step (one guard evaluation).
        The globalising search contributes its acceptance options; its own
        `initial` and `fused` are not used.
    fused : bool
        As for `armijo`.

    Returns
    -------
    BarzilaiBorweinSearch
        Statuses as for the globalising search (or, with None, ``accepted`` /
        ``non_finite`` as for `fixed`). A direction that is not c·(−∇f), which the
        host rejects with ValueError, gives ``not_descent``: x unchanged, nothing
        evaluated, state kept.

    References
    ----------
    Barzilai & Borwein, IMA J. Numer. Anal. 8(1):141–148, 1988. Raydan, SIAM J.
    Optim. 7(1):26–33, 1997. Dai & Fletcher, Numer. Math. 100(1):21–47, 2005.
    """
    if isinstance(globalize, str) and globalize == "default":
        globalize = nonmonotone_armijo(reference="max", memory=10)
    elif globalize is not None and not isinstance(globalize, Backtracking):
        raise TypeError(
            "`globalize` must be a compiled backtracking search, linestep.jax.armijo() or "
            f"linestep.jax.nonmonotone_armijo(), or None for the pure BB step; got "
            f"{globalize!r}."
        )
    host = BarzilaiBorwein(variant=variant, first=first, min_size=min_size,
                           max_size=max_size, globalize=None)
    return twin(BarzilaiBorweinSearch, host, globalize=globalize,
                fused=_validate.flag("fused", fused))
