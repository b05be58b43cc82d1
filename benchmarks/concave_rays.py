"""Trials per call of each curvature search on random concave rays (issue 14, §3).

Along a concave stretch no step satisfies a curvature condition: a search must
extrapolate until its step cap and report ``step_too_large``. How fast it gets
there is the quality of its extrapolation. Each invented ray is
f(x) = bᵀx − ½·xᵀDx in n = 5 (D diagonal, eigenvalues log-uniform in
[1e-3, 1e3]), from a random x0 along a random direction d with ∇f(x0)ᵀd < 0
(the sign of d flipped when needed), so φ(t) = f(x0 + t·d) is a concave
quadratic falling without bound. Every search runs with ``max_size=1e6`` and a
budget of 60 trials; the script prints the median and the largest number of
trials per search and how many calls ended at the cap.

Run: ``python benchmarks/concave_rays.py [--rays N] [--seed S]``
"""

from __future__ import annotations

import argparse
import statistics

import numpy as np

from linestep import HagerZhang, MoreThuente, Objective, Wolfe
from linestep._step import Status

N = 5
MAX_SIZE = 1e6
BUDGET = 60


def concave_ray(rng: np.random.Generator):
    """One invented concave quadratic, its start and a descent direction."""
    eigenvalues = 10.0 ** rng.uniform(-3.0, 3.0, N)
    b = rng.standard_normal(N)

    def fun(x):
        return float(b @ x - 0.5 * x @ (eigenvalues * x))

    def grad(x):
        return b - eigenvalues * x

    x0 = rng.standard_normal(N)
    d = rng.standard_normal(N)
    if grad(x0) @ d > 0.0:
        d = -d
    return fun, grad, x0, d


def searches():
    common = {"max_size": MAX_SIZE, "max_evaluations": BUDGET}
    return {
        "Wolfe()": Wolfe(**common),
        "Wolfe(strong=False)": Wolfe(strong=False, **common),
        "MoreThuente()": MoreThuente(**common),
        "HagerZhang()": HagerZhang(**common),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rays", type=int, default=300)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args()
    rng = np.random.default_rng(args.seed)
    rays = [concave_ray(rng) for _ in range(args.rays)]
    print(f"{args.rays} random concave rays (n = {N}), max_size = {MAX_SIZE:g}, "
          f"budget {BUDGET} trials")
    print(f"  {'search':<22} {'median':>7} {'max':>5} {'at cap':>8}")
    for name, search in searches().items():
        trials, at_cap = [], 0
        for fun, grad, x0, d in rays:
            search.reset()
            objective = Objective(fun, grad)
            step = search(objective, x0, d)
            # The evaluation at x0 (the search was given no value or gradient) is not a trial.
            trials.append(step.evaluations.values - 1)
            at_cap += step.status is Status.step_too_large and step.size == MAX_SIZE
        print(f"  {name:<22} {statistics.median(trials):>7g} {max(trials):>5} "
              f"{at_cap:>4}/{len(rays)}")


if __name__ == "__main__":
    main()
