"""Define a benchmark study, run it (locally, on a pool, or on a cluster), collect tidy results.

A `Study` is the product problems × controllers × directions × starts (× seeds
for random starts). `run_study` runs every combination with `linestep.descend`
and returns `Results`: one `RunRecord` per run, with the verdict, the final
value, the gap to the known optimum, evaluation counts, times and the
per-iteration history.

Each run gets its own copy of the controller, the direction and the stopping
rule (a deep copy of the object given, or a fresh one from a factory):
controllers carry state between calls, so runs never share one.

With ``out=``, each run is written to ``out/results.sqlite`` as soon as it
finishes (see `linestep.bench.storage`); running the same study again skips the
finished runs. Runs go to a local process pool by default, to any
`concurrent.futures`-style executor given, or to a Dask cluster given its
scheduler address. A run whose objective raises, or whose worker process dies,
is recorded as failed with the error text; the study goes on.

Examples
--------
>>> import numpy as np
>>> from linestep import Armijo, stopping
>>> from linestep.bench import Study, get_problem, run_study
>>> from linestep.rules.fixed import Fixed
>>> study = Study(problems=[get_problem("rosenbrock"), get_problem("beale")],
...               controllers=[Armijo(), Fixed(1e-3)],
...               stop=stopping.default(max_iterations=200))
>>> len(study)
4
>>> results = run_study(study, workers=1)
>>> [(r.problem, r.controller, r.kind) for r in results][:2]
[('rosenbrock', 'Armijo()', 'budget'), ('rosenbrock', 'Fixed(0.001)', 'budget')]
"""

from linestep.bench._execute import run_study
from linestep.bench._record import RunRecord
from linestep.bench._results import Results
from linestep.bench._study import (
    PerProblem,
    Start,
    Study,
    polyak_at_optimum,
    unsupported_direction,
)

__all__ = [
    "PerProblem",
    "Results",
    "RunRecord",
    "Start",
    "Study",
    "polyak_at_optimum",
    "run_study",
    "unsupported_direction",
]
