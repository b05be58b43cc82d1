"""Benchmark problems and tools for comparing step-size controllers.

=================  ==============================================================
Test problems      `Problem`, `mgh_problems`, `problem_names`, `get_problem` (the
                   Moré–Garbow–Hillstrom 1981 set); `suite`, `suite_names` (built-in
                   suites: mgh, quadratics, logistic, default)
Your objective     `as_problems`, `load_objective` (``module:function`` specs),
                   `ObjectiveSpecError`
Studies            `Study`, `Start`, `PerProblem`, `polyak_at_optimum`, `run_study`,
                   `RunRecord`, `Results`
Storage            `ResultStore`, `ResultsFileError` (the SQLite results file)
Profiles           `performance_profile`, `data_profile`, `robustness_score`
Reports            `write_report`, `ranking`, `format_ranking`
=================  ==============================================================

The modules behind the names: `linestep.bench.harness` (re-exporting the study
definition `_study`, the run record `_record`, execution `_execute` and `_results`),
`.storage`, `.suites`, `.user`, `.profiles` and `.report`; `docs/bench/` walks through a study.
"""

from linestep.bench._execute import run_study
from linestep.bench._record import RunRecord
from linestep.bench._results import Results
from linestep.bench._study import PerProblem, Start, Study, polyak_at_optimum
from linestep.bench.problems import Problem, get_problem, mgh_problems, problem_names
from linestep.bench.profiles import data_profile, performance_profile, robustness_score
from linestep.bench.report import format_ranking, ranking, write_report
from linestep.bench.storage import ResultsFileError, ResultStore
from linestep.bench.suites import suite, suite_names
from linestep.bench.user import ObjectiveSpecError, as_problems, load_objective

__all__ = [
    "ObjectiveSpecError",
    "PerProblem",
    "Problem",
    "ResultStore",
    "Results",
    "ResultsFileError",
    "RunRecord",
    "Start",
    "Study",
    "as_problems",
    "data_profile",
    "format_ranking",
    "get_problem",
    "load_objective",
    "mgh_problems",
    "performance_profile",
    "polyak_at_optimum",
    "problem_names",
    "ranking",
    "robustness_score",
    "run_study",
    "suite",
    "suite_names",
    "write_report",
]
