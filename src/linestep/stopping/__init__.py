"""Stopping rules: when a descent loop should end, and why.

A criterion is a small object called once per iteration with a `Progress`
snapshot. It returns None (go on) or a `Verdict` whose `kind` says how the run
ended (`Kind.converged`, `Kind.budget` or `Kind.failed`) and whose `reason` is
one sentence, with the numbers, that a person can act on.

Criteria combine with ``|``: ``a | b`` stops as soon as either stops, and when
both would stop at the same iteration the one written first wins. Any callable
taking a `Progress` and returning a `Verdict` or None is a criterion, so user
rules mix freely with the ones here.

Criteria that compare with earlier iterations (`ValueChange`, `StepLength`,
`Stall`) keep state. A driver calls ``reset()`` before each run; as a safety
net, an iteration number lower than the last one seen also starts afresh, and a
repeated snapshot of the same iteration is not counted twice.

=================  =========  ===================================================
Criterion          Kind       Stops when
=================  =========  ===================================================
`GradientNorm`     converged  ||g_k|| <= max(atol, rtol * ||g_0||)
`ValueChange`      converged  |f_k - f_{k-w}| <= max(atol, rtol * scale)
`StepLength`       converged  ||x_k - x_{k-1}|| <= max(atol, rtol * ||x_k||)
`MaxIterations`    budget     k >= n
`MaxEvaluations`   budget     values + gradients >= n
`TimeLimit`        budget     elapsed seconds >= limit
`Divergence`       failed     x, f or g non-finite, |f| > bound, or f grew
`Stall`            failed     the best f has not improved for N iterations
=================  =========  ===================================================

`default()` returns a fresh combination suited to most runs.

Examples
--------
>>> import numpy as np
>>> from types import SimpleNamespace
>>> from linestep.stopping import GradientNorm, MaxIterations, Progress
>>> stop = GradientNorm(atol=1e-6, rtol=0.0) | MaxIterations(50)
>>> stop
GradientNorm(atol=1e-06, rtol=0.0, norm=inf) | MaxIterations(50)
>>> snapshot = Progress(
...     iteration=7, evaluations=SimpleNamespace(values=8, gradients=8),
...     x=np.array([1.0, 2.0]), value=0.5, gradient=np.array([4e-7, -2e-7]),
...     start_value=3.0, start_gradient=np.array([2.0, 1.0]))
>>> verdict = stop(snapshot)
>>> verdict.kind
Kind.converged
>>> verdict.reason
'Gradient max-norm 4e-07 is at or below the tolerance 1e-06 (atol=1e-06).'
"""

from linestep.stopping._base import (  # noqa: F401  (the defaults, for the docs and the CLI)
    DEFAULT_BOUND,
    DEFAULT_GRADIENT_ATOL,
    DEFAULT_GRADIENT_RTOL,
    DEFAULT_GROWTH,
    DEFAULT_MAX_ITERATIONS,
    DEFAULT_STALL_ITERATIONS,
    DEFAULT_VALUE_RTOL,
    DEFAULT_VALUE_WINDOW,
    AnyOf,
    Criterion,
    Kind,
    Progress,
    Verdict,
)
from linestep.stopping._budgets import MaxEvaluations, MaxIterations, TimeLimit
from linestep.stopping._convergence import GradientNorm, StepLength, ValueChange
from linestep.stopping._default import default
from linestep.stopping._failures import Divergence, Stall

__all__ = [
    "AnyOf",
    "Criterion",
    "Divergence",
    "GradientNorm",
    "Kind",
    "MaxEvaluations",
    "MaxIterations",
    "Progress",
    "Stall",
    "StepLength",
    "TimeLimit",
    "ValueChange",
    "Verdict",
    "default",
]

# The classes live in private modules; show them under the public module name.
for _name in __all__:
    _obj = globals()[_name]
    if isinstance(_obj, type) or callable(_obj):
        _obj.__module__ = __name__
del _name, _obj
