"""Per-call overhead of `Armijo` when its first trial is accepted (n = 10 quadratic).

Times, alternately in each round so that drift in machine speed cancels in the
ratios:

* one call of ``Armijo()`` with ``value=`` and ``gradient=`` supplied, where the
  unit step is accepted (one value evaluation inside the call);
* the objective evaluations that call makes (one value at the trial point);
* one value + gradient evaluation (the reference cost);
* ``scipy.optimize.line_search`` on the same problem, for context.

Overhead = call time − its own evaluations. Target (foundation issue): at most
1.5 × one f+g evaluation.

Run: ``python benchmarks/armijo_overhead.py [--rounds N]``
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np
from scipy.optimize import line_search

from linestep import Armijo, Objective


def make_problem(n: int = 10, seed: int = 0):
    """An invented well-conditioned SPD quadratic where t = 1 along −g satisfies Armijo."""
    rng = np.random.default_rng(seed)
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    a = q @ np.diag(np.linspace(0.6, 1.0, n)) @ q.T
    b = rng.standard_normal(n)

    def fun(x):
        return 0.5 * float(x @ (a @ x)) - float(b @ x)

    def grad(x):
        return a @ x - b

    return fun, grad, rng.standard_normal(n)


def per_call(fn, repeat: int) -> float:
    start = time.perf_counter()
    for _ in range(repeat):
        fn()
    return (time.perf_counter() - start) / repeat


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=30)
    parser.add_argument("--repeat", type=int, default=2000)
    args = parser.parse_args()

    fun, grad, x = make_problem()
    objective = Objective(fun, grad)
    value, gradient = fun(x), grad(x)
    direction = -gradient
    armijo = Armijo()
    step = armijo(objective, x, direction, value=value, gradient=gradient)
    assert step.ok and step.size == 1.0 and step.evaluations.values == 1, step
    trial = x + direction

    def call_armijo():
        armijo(objective, x, direction, value=value, gradient=gradient)

    def own_evaluations():
        fun(x + 1.0 * direction)

    def value_and_gradient():
        fun(trial)
        grad(trial)

    def call_scipy():
        line_search(fun, grad, x, direction, gfk=gradient, old_fval=value)

    timings = {name: [] for name in ("armijo", "own", "fg", "scipy")}
    for _ in range(args.rounds):
        timings["armijo"].append(per_call(call_armijo, args.repeat))
        timings["own"].append(per_call(own_evaluations, args.repeat))
        timings["fg"].append(per_call(value_and_gradient, args.repeat))
        timings["scipy"].append(per_call(call_scipy, args.repeat // 10))
    ratios = [(a - o) / fg for a, o, fg
              in zip(timings["armijo"], timings["own"], timings["fg"], strict=True)]
    scipy_ratio = [s / a for s, a in zip(timings["scipy"], timings["armijo"], strict=True)]
    median = {name: statistics.median(values) for name, values in timings.items()}

    print("n = 10 quadratic, first trial accepted; medians over "
          f"{args.rounds} alternating rounds of {args.repeat} calls")
    print(f"  Armijo call                    {median['armijo'] * 1e6:8.2f} us")
    print(f"  its own evaluations (1 value)  {median['own'] * 1e6:8.2f} us")
    print(f"  one f+g evaluation             {median['fg'] * 1e6:8.2f} us")
    print(f"  scipy.optimize.line_search     {median['scipy'] * 1e6:8.2f} us   "
          "(its defaults: c1=1e-4, c2=0.9, unit first trial, strong Wolfe)")
    print(f"  overhead / (f+g), per round median: {statistics.median(ratios):.2f}  "
          "(target <= 1.5)")
    print(f"  scipy time / Armijo time, per round median: {statistics.median(scipy_ratio):.1f}")


if __name__ == "__main__":
    main()
