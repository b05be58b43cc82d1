"""Compiled backtracking: Armijo's search and its nonmonotone variants.

The trials are those of the host `Armijo` (quadratic, then cubic, safeguarded
interpolation of φ, or shrinking by `shrink`; a non-finite value shrinks by at
least `NON_FINITE_SHRINK`), with the same defaults; only the loop is `lax`.

References
----------
L. Armijo, "Minimization of functions having Lipschitz continuous first partial
derivatives", Pacific J. Math. 16(1):1–3, 1966.
L. Grippo, F. Lampariello and S. Lucidi, "A nonmonotone line search technique
for Newton's method", SIAM J. Numer. Anal. 23(4):707–716, 1986.
H. Zhang and W. W. Hager, "A nonmonotone line search technique and its
application to unconstrained optimization", SIAM J. Optim. 14(4):1043–1056, 2004.
J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., 2006, Alg. 3.1, §3.5.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import jax
import jax.numpy as jnp

from linestep import _validate
from linestep._constants import NON_FINITE_SHRINK
from linestep.jax import _interpolate
from linestep.jax._line import INF, Line
from linestep.jax._search import ACCEPTED, MAX_EVALUATIONS, STEP_TOO_SMALL, CompiledSearch
from linestep.jax._twin import twin, twin_fields
from linestep.searches.armijo import Armijo
from linestep.searches.nonmonotone import NonmonotoneArmijo

_RUNNING, _ACCEPTED, _TOO_SMALL = 0, 1, 2


@dataclass(frozen=True, eq=True, repr=False)
class Backtracking(CompiledSearch):
    """Options shared by the backtracking searches (see `armijo`)."""

    c1: float
    shrink: float
    interpolation: str | None
    shrink_limits: tuple[float, float]
    initial: Any
    max_evaluations: int
    fused: bool

    def backtrack(self, line: Line, first: Any, active: Any, reference: Any) -> tuple:
        """Backtrack from `first` until φ(t) ≤ reference + c1·t·φ'(0).

        Returns ``(point, has_point, status, tally)``; with reference = φ(0) this is
        the host `Armijo` search.
        """
        f0, d0, c1 = line.value, line.slope, self.c1
        low, high = self.shrink_limits
        rounding = line.rounding_size()
        zero = jnp.zeros((), line.dtype)

        def keep_going(carry: tuple) -> Any:
            outcome, tally = carry[0], carry[5]
            return active & (outcome == _RUNNING) & (tally.count < self.max_evaluations)

        def trial(carry: tuple) -> tuple:
            _, size, older_size, older_value, _, tally = carry
            point, tally = line.evaluate(size, tally)
            value = point.value
            accept = value <= reference + c1 * size * d0
            too_small = ~accept & (size <= rounding)
            finite = value < INF
            if self.interpolation is None:
                interpolated = size * self.shrink
                has_older = jnp.zeros((), bool)
            else:
                model = _interpolate.quadratic_from_slope(zero, f0, d0, size, value)
                if self.interpolation == "cubic":
                    cubic = _interpolate.cubic_backtrack(f0, d0, older_size, older_value,
                                                         size, value)
                    model = jnp.where(jnp.isnan(older_size), model, cubic)
                interpolated = _interpolate.clip(model, low * size, high * size)
                has_older = finite
            next_size = jnp.where(finite, interpolated,
                                  size * min(self.shrink, NON_FINITE_SHRINK))
            older_size = jnp.where(has_older, size, jnp.nan)
            older_value = jnp.where(has_older, value, jnp.nan)
            outcome = jnp.where(accept, _ACCEPTED,
                                jnp.where(too_small, _TOO_SMALL, _RUNNING)).astype(jnp.int32)
            return outcome, next_size, older_size, older_value, point, tally

        nan = jnp.full((), jnp.nan, line.dtype)
        start = (jnp.asarray(_RUNNING, jnp.int32), first, nan, nan, line.origin(), line.start())
        outcome, _, _, _, point, tally = jax.lax.while_loop(keep_going, trial, start)
        status = jnp.select([outcome == _ACCEPTED, outcome == _TOO_SMALL],
                            [ACCEPTED, STEP_TOO_SMALL], MAX_EVALUATIONS).astype(jnp.int32)
        return point, outcome == _ACCEPTED, status, tally


@dataclass(frozen=True, eq=True, repr=False)
class ArmijoSearch(Backtracking):
    _factory = "armijo"
    _fields = twin_fields(Armijo, "fused")

    def _search(self, line: Line, first: Any, active: Any, state: Any) -> tuple:
        point, has_point, status, tally = self.backtrack(line, first, active, line.value)
        return point, has_point, status, tally, state.method


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class Reference:
    """The nonmonotone reference memory: the last values (max) or Q and C (average)."""

    values: Any  # ring buffer of the last `memory` values, -inf where unused
    position: Any  # slot of the next value
    weight: Any  # Q_k, NaN before the first call
    average: Any  # C_k


@dataclass(frozen=True, eq=True, repr=False)
class NonmonotoneSearch(Backtracking):
    memory: int
    reference: str
    eta: float
    _factory = "nonmonotone_armijo"
    _fields = twin_fields(NonmonotoneArmijo, "fused")

    def _begin_method(self, x: Any, dtype: Any) -> Reference:
        return Reference(values=jnp.full((self.memory,), -jnp.inf, dtype),
                         position=jnp.zeros((), jnp.int32),
                         weight=jnp.full((), jnp.nan, dtype), average=jnp.zeros((), dtype))

    def next_reference(self, memory: Reference, value: Any) -> tuple[Any, Reference]:
        """Record f_k = `value`; return R_k (never below f_k) and the new memory."""
        if self.reference == "max":
            values = memory.values.at[memory.position].set(value)
            position = (memory.position + 1) % self.memory
            new = Reference(values=values, position=position, weight=memory.weight,
                            average=memory.average)
            return jnp.max(values), new
        first = jnp.isnan(memory.weight)
        weight = jnp.where(first, 1.0, self.eta * memory.weight + 1.0)
        average = jnp.where(first, value,
                            (self.eta * memory.weight * memory.average + value) / weight)
        new = Reference(values=memory.values, position=memory.position,
                        weight=weight.astype(value.dtype), average=average.astype(value.dtype))
        return jnp.maximum(average, value), new

    def _search(self, line: Line, first: Any, active: Any, state: Any) -> tuple:
        reference, memory = self.next_reference(state.method, line.value)
        point, has_point, status, tally = self.backtrack(line, first, active, reference)
        return point, has_point, status, tally, memory


def armijo(*, c1: float = 1e-4, shrink: float = 0.5, interpolation: str | None = "cubic",
           shrink_limits: tuple[float, float] = (0.1, 0.5), initial: Any = 1.0,
           max_evaluations: int = 40, fused: bool = True) -> ArmijoSearch:
    """Compiled backtracking with the Armijo condition φ(t) ≤ φ(0) + c1·t·φ'(0).

    The compiled twin of `linestep.Armijo`: the same options, defaults, trials
    and statuses. Each failed trial is replaced by the minimiser of a quadratic
    (first backtrack) or cubic (later ones) model of φ kept inside
    ``[shrink_limits[0]·t, shrink_limits[1]·t]``, or multiplied by `shrink`
    with ``interpolation=None``; a non-finite value shrinks by at least 10.

    Parameters
    ----------
    c1, shrink, interpolation, shrink_limits, initial, max_evaluations
        As for `linestep.Armijo` (checked the same way). `initial` takes a number
        or a host strategy (`UnitTrial`, `PreviousTrial`, `QuadraticTrial`,
        `ScaledTrial`); its memory lives in the `SearchState`.
    fused : bool
        Evaluate ∇f together with f at every trial (one `jax.value_and_grad`
        pass), as the host search does with a fused `Objective`: a trial whose
        gradient is not finite counts as non-finite. False evaluates only f at
        the trials and ∇f once at the point returned (cheaper when many trials
        fail; dearer when the first trial is accepted, the usual case).

    Returns
    -------
    ArmijoSearch
        A hashable object with ``begin(x) -> SearchState`` and ``step(fun, x,
        direction, *, value=None, gradient=None, state) -> CompiledStep``. The
        step's status is one of ``accepted`` (`size` satisfies the Armijo
        condition, `x` = x + size·d), ``step_too_small`` (trials fell below
        rounding level; `x` unchanged, size 0), ``max_evaluations`` (budget
        spent; `x` unchanged), ``non_finite`` (every trial non-finite, or f(x)
        or φ'(0) not finite; `x` unchanged), ``not_descent`` (φ'(0) >= 0; `x`
        unchanged, nothing evaluated).

    References
    ----------
    L. Armijo, Pacific J. Math. 16(1):1–3, 1966. Nocedal & Wright, 2006, Alg. 3.1, §3.5.

    Examples
    --------
    >>> import jax, jax.numpy as jnp
    >>> import linestep.jax as lj
    >>> f = lambda p: jnp.sum(p["w"] ** 2) + (p["b"] - 1.0) ** 2
    >>> x = {"w": jnp.array([3.0, -4.0]), "b": jnp.array(0.0)}
    >>> search = lj.armijo()
    >>> value, gradient = jax.value_and_grad(f)(x)
    >>> direction = jax.tree_util.tree_map(lambda g: -g, gradient)
    >>> out = jax.jit(search.step, static_argnums=0)(f, x, direction, value=value,
    ...                                              gradient=gradient, state=search.begin(x))
    >>> lj.StatusCode(int(out.status)).name, float(out.size), float(out.value)
    ('accepted', 0.5, 0.0)
    """
    host = Armijo(c1=c1, shrink=shrink, interpolation=interpolation,
                  shrink_limits=shrink_limits, initial=initial, max_evaluations=max_evaluations)
    return twin(ArmijoSearch, host, fused=_validate.flag("fused", fused))


def nonmonotone_armijo(*, memory: int = 10, reference: str = "max", eta: float = 0.85,
                       c1: float = 1e-4, shrink: float = 0.5,
                       interpolation: str | None = "cubic",
                       shrink_limits: tuple[float, float] = (0.1, 0.5), initial: Any = 1.0,
                       max_evaluations: int = 40, fused: bool = True) -> NonmonotoneSearch:
    """Compiled nonmonotone backtracking: φ(t) ≤ R_k + c1·t·φ'(0), R_k ≥ φ(0).

    The compiled twin of `linestep.NonmonotoneArmijo` (same options, defaults
    and trials): ``reference="max"`` takes R_k as the largest of the last
    `memory` values f at the start of a call (Grippo, Lampariello and Lucidi
    1986); ``reference="average"`` the Zhang–Hager (2004) weighted average with
    weight `eta`. The reference values live in the `SearchState`.

    Parameters
    ----------
    memory, reference, eta, c1, shrink, interpolation, shrink_limits, initial,
    max_evaluations
        As for `linestep.NonmonotoneArmijo`.
    fused : bool
        As for `armijo`.

    Returns
    -------
    NonmonotoneSearch
        As for `armijo`; an ``accepted`` value may lie above f(x).

    References
    ----------
    Grippo, Lampariello and Lucidi, SIAM J. Numer. Anal. 23(4):707–716, 1986.
    Zhang and Hager, SIAM J. Optim. 14(4):1043–1056, 2004.
    """
    host = NonmonotoneArmijo(memory=memory, reference=reference, eta=eta, c1=c1,
                             shrink=shrink, interpolation=interpolation,
                             shrink_limits=shrink_limits, initial=initial,
                             max_evaluations=max_evaluations)
    return twin(NonmonotoneSearch, host, fused=_validate.flag("fused", fused))
