"""Records of the compiled path: states, step and run results, status and reason codes.

All records are frozen dataclasses registered as JAX pytrees, so they pass
through `jax.jit`, `jax.vmap` and `lax` loops. Array fields are leaves; the
parameter structure a state was built for is static metadata, compared in
Python while JAX traces (see `_checks.check_state`). `Rebuildable` gives the
frozen option objects (searches, directions, initial strategies) the repr of
the call that rebuilds them.
"""

from __future__ import annotations

import enum
import math
from dataclasses import dataclass, field
from typing import Any

import jax
import numpy as np

from linestep._rebuild import Rebuilds
from linestep._step import MESSAGES, Status
from linestep.stopping import Kind, Verdict

__all__ = ["CompiledRun", "CompiledStep", "DirectionState", "Proposal", "Reason",
           "SearchState", "StatusCode"]


class StatusCode(enum.IntEnum):
    """The `Status` of a compiled step as a small integer (arrays cannot hold enums).

    Members carry the names of `linestep.Status`; compare a record's ``status``
    with them inside compiled code (``step.status == StatusCode.accepted``) and
    convert outside with ``StatusCode(int(step.status)).status``.
    """

    accepted = 0
    max_evaluations = 1
    not_descent = 2
    non_finite = 3
    step_too_small = 4
    interval_too_small = 5
    step_too_large = 6

    @property
    def status(self) -> Status:
        """The matching `linestep.Status` member."""
        return Status[self.name]


class Reason(enum.IntEnum):
    """Why a compiled `descend` stopped, as a small integer.

    ``gradient_norm`` and ``stationary`` are convergence, ``max_iterations`` is
    the budget, ``search_failed`` (the search could not move, even along −∇f)
    and ``non_finite_start`` (f or ∇f not finite at x0) are failures.
    """

    gradient_norm = 0
    stationary = 1
    max_iterations = 2
    search_failed = 3
    non_finite_start = 4

    @property
    def kind(self) -> Kind:
        """converged, budget or failed, as `linestep.stopping.Kind`."""
        if self in (Reason.gradient_norm, Reason.stationary):
            return Kind.converged
        if self is Reason.max_iterations:
            return Kind.budget
        return Kind.failed


class Rebuildable(Rebuilds):
    """repr prints the call that rebuilds the object: ``_factory(field=value, ...)``.

    For frozen dataclasses of options (declare them with ``repr=False``), so
    that ``eval(repr(obj))`` gives an equal, equally hashable object.
    """

    #: The name to call: the factory in `linestep.jax`, or the host strategy class.
    _factory = ""

    def _constructor(self) -> str:
        return self._factory


def _static() -> Any:
    return field(default=None, metadata={"static": True})


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class SearchState:
    """What a compiled search carries from one call to the next.

    Attributes
    ----------
    previous_size : scalar array
        The last accepted step size, NaN before the first (for ``initial`` strategies).
    previous_value : scalar array
        f(x) at the start of that call, NaN before the first.
    calls : int32 array
        Calls that reached the search (not those answered with ``not_descent``);
        the counter k of `schedule`.
    method : pytree or None
        Method-specific memory (the Barzilai–Borwein pair, the nonmonotone
        reference values).
    structure : PyTreeDef, static
        The parameter structure this state was built for.
    """

    previous_size: Any
    previous_value: Any
    calls: Any
    method: Any = None
    structure: Any = _static()


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class CompiledStep:
    """What a compiled search returns: the compiled twin of `linestep.Step`.

    Attributes
    ----------
    size : scalar array
        The step length t; 0 when `x` is unchanged.
    x : pytree
        The new point x + t·d (the given `x` when unchanged).
    value : scalar array
        f at the new point.
    gradient : pytree
        ∇f at the new point (always evaluated: a compiled loop needs it next).
    status : int32 array
        A `StatusCode`.
    values, gradients : int32 arrays
        Evaluations spent in this call. A fused evaluation counts one of each.
    state : SearchState
        Pass it to the next call.
    """

    size: Any
    x: Any
    value: Any
    gradient: Any
    status: Any
    values: Any
    gradients: Any
    state: SearchState

    @property
    def ok(self) -> Any:
        """True where the status is ``accepted`` (a boolean array)."""
        return self.status == StatusCode.accepted


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class DirectionState:
    """What a compiled direction carries from one iteration to the next.

    Attributes
    ----------
    method : pytree or None
        Method-specific memory (the L-BFGS ring buffers; None for steepest descent).
    structure : PyTreeDef, static
        The parameter structure this state was built for.
    """

    method: Any = None
    structure: Any = _static()


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class Proposal:
    """A search direction and the state to pass to the next call.

    Attributes
    ----------
    direction : pytree
        d, of the structure of x.
    restarted : bool array
        The direction fell back to −∇f in this call.
    state : DirectionState
    """

    direction: Any
    restarted: Any
    state: DirectionState


@jax.tree_util.register_dataclass
@dataclass(frozen=True, slots=True, kw_only=True)
class CompiledRun:
    """The result of the compiled `descend`: the compiled twin of `linestep.Run`.

    Attributes
    ----------
    x, value, gradient
        The final point, f and ∇f there.
    iterations : int32 array
    values, gradients : int32 arrays
        Evaluations over the run, the start point included.
    reason : int32 array
        A `Reason` code.
    status : int32 array
        The `StatusCode` of the last step (``accepted`` when no step was taken).
    """

    x: Any
    value: Any
    gradient: Any
    iterations: Any
    values: Any
    gradients: Any
    reason: Any
    status: Any

    @property
    def converged(self) -> Any:
        """True where the run converged (a boolean array)."""
        return (self.reason == Reason.gradient_norm) | (self.reason == Reason.stationary)

    def verdict(self) -> Verdict:
        """The host `stopping.Verdict` of an unbatched run (call outside `jax.jit`)."""
        if np.ndim(self.reason) != 0:
            raise ValueError(
                "verdict() describes one run; this record holds a batch of shape "
                f"{np.shape(self.reason)}. Index it first, e.g. "
                "jax.tree_util.tree_map(lambda a: a[0], run).verdict()."
            )
        reason = Reason(int(self.reason))
        return Verdict(kind=reason.kind, reason=_sentence(self, reason),
                       criterion=f"linestep.jax.descend ({reason.name})")


def _sentence(run: CompiledRun, reason: Reason) -> str:
    iterations = int(run.iterations)
    if reason is Reason.gradient_norm:
        norm = max((float(np.max(np.abs(leaf)))
                    for leaf in jax.tree_util.tree_leaves(run.gradient)), default=0.0)
        return (f"Gradient max-norm {norm:.3g} is at or below the tolerance after "
                f"{iterations} iterations.")
    if reason is Reason.stationary:
        return "The search accepted a zero step: x is stationary."
    if reason is Reason.max_iterations:
        return (f"Stopped after {iterations} iterations, the budget; raise "
                "`max_iterations` or loosen the gradient tolerances.")
    if reason is Reason.search_failed:
        status = StatusCode(int(run.status)).status
        return (f"The search could not move from x, even along -gradient (status "
                f"{status.value}): {MESSAGES[status]}")
    value = float(run.value)
    shown = "not finite" if not math.isfinite(value) else f"{value:.6g}"
    return (f"f or its gradient is not finite at x0 (f = {shown}); start from a point "
            "where the objective is defined.")
