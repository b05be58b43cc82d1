"""Search directions for `descend`: steepest descent, L-BFGS and nonlinear CG.

A direction object is called as ``direction(x, gradient) -> d`` once per
iteration, with the current point and gradient. It keeps what it needs from
earlier calls itself (L-BFGS pairs, the previous CG direction), so the driver
only passes the present. Every direction checks that its d is a descent
direction (∇f·d < 0) and otherwise returns the steepest-descent direction −∇f,
setting ``restarted = True`` for that call; `descend` records that in the
history. ``reset()`` forgets all memory.
"""

from linestep.directions._base import Direction
from linestep.directions._lbfgs import LBFGS, _two_loop, skip_floor  # noqa: F401  (for the JAX twin and tests)
from linestep.directions._nonlinear_cg import (  # noqa: F401  (named constants, for docs and tests)
    DEFAULT_HZ_ETA,
    POWELL_ORTHOGONALITY,
    NonlinearCG,
)
from linestep.directions._steepest import SteepestDescent

__all__ = ["LBFGS", "Direction", "NonlinearCG", "SteepestDescent"]

# The classes live in private modules; show them under the public module name.
for _name in __all__:
    globals()[_name].__module__ = __name__
del _name
