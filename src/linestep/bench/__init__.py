"""Benchmark problems and tools for comparing step-size controllers.

Test problems: `Problem`, `mgh_problems`, `problem_names`, `get_problem`
(the Moré–Garbow–Hillstrom 1981 set).
"""

from linestep.bench.problems import Problem, get_problem, mgh_problems, problem_names

__all__ = ["Problem", "get_problem", "mgh_problems", "problem_names"]
