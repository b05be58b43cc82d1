"""linestep for JAX: compiled step-size searches for training loops written in JAX.

Importing this module imports JAX (``import linestep`` never does). Two uses:

* **Host path.** Every `linestep` controller already accepts JAX arrays as it
  accepts numpy arrays (type and dtype kept). `objective` wraps a JAX function
  as an `linestep.Objective` whose gradient comes from autodiff.
* **Compiled path.** Searches and directions whose state is an explicit pytree,
  built on `lax.while_loop`, for use inside `jax.jit` and `jax.vmap`:
  ``state = search.begin(x)``, then
  ``out = search.step(fun, x, direction, value=f, gradient=g, state=state)``,
  which returns a `CompiledStep` carrying the next state. `descend` runs a
  whole minimisation in one compiled loop.

=========================  ============================================================
Searches (compiled)        `fixed`, `schedule`, `armijo`, `nonmonotone_armijo`,
                           `wolfe`, `barzilai_borwein`
Directions (compiled)      `steepest_descent`, `lbfgs`
Loop                       `descend` -> `CompiledRun`
Records                    `SearchState`, `CompiledStep`, `DirectionState`, `Proposal`,
                           `CompiledRun`, `StatusCode`, `Reason`
Host path                  `objective`
=========================  ============================================================

Parameters may be any pytree of floating arrays (dicts, lists, tuples of
arrays); float32 parameters stay float32, and the search's scalars are then
float32 too. See docs/jax.md for a worked training loop and the differences
from the host path.
"""

from __future__ import annotations

from linestep.jax._armijo import armijo, nonmonotone_armijo
from linestep.jax._barzilai_borwein import barzilai_borwein
from linestep.jax._directions import lbfgs, steepest_descent
from linestep.jax._loop import descend
from linestep.jax._objective import objective
from linestep.jax._records import (
    CompiledRun,
    CompiledStep,
    DirectionState,
    Proposal,
    Reason,
    SearchState,
    StatusCode,
)
from linestep.jax._simple import fixed, schedule
from linestep.jax._wolfe import wolfe

__all__ = [
    "CompiledRun", "CompiledStep", "DirectionState", "Proposal", "Reason", "SearchState",
    "StatusCode", "armijo", "barzilai_borwein", "descend", "fixed", "lbfgs",
    "nonmonotone_armijo", "objective", "schedule", "steepest_descent", "wolfe",
]
