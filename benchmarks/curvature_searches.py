"""Curvature-condition searches on the Moré–Garbow–Hillstrom set, against scipy.

Part 1 (evaluations): L-BFGS (m = 10) driven by `descend` with each of
`Wolfe`, `MoreThuente` and `HagerZhang`, next to the same driver using
`scipy.optimize.line_search` as its step controller, and next to
`scipy.optimize.minimize(method="L-BFGS-B")`. Every run stops at
‖g‖∞ ≤ 1e-8·max(1, ‖g₀‖∞) or 5000 iterations; a problem counts as solved when
that gradient test holds and f is within 1e-4·max(1, |f*|) of a published
optimal value.

Part 2 (per-call time): each search against `scipy.optimize.line_search` on
invented n = 10 quadratics in the same process, timed alternately per round:
(a) a well-scaled case where the unit step is accepted, (b) an ill-conditioned
case (eigenvalues 1–100, steepest-descent direction) needing several trials.

Run: ``python benchmarks/curvature_searches.py [--quick] [--no-timing] [--per-problem]``
"""

from __future__ import annotations

import argparse
import statistics
import time
import warnings

import numpy as np
from scipy.optimize import line_search
from scipy_peers import ScipyLineSearch, lbfgsb, lbfgsb_settings, scipy_driver_settings

from linestep import (
    LBFGS,
    Evaluations,
    HagerZhang,
    MoreThuente,
    Objective,
    Wolfe,
    descend,
    stopping,
)
from linestep.bench.problems import mgh_problems

GRADIENT_RTOL = 1e-8
MAX_ITERATIONS = 5000
VALUE_RTOL = 1e-4


def stop_rule(problem):
    g0 = np.max(np.abs(problem.gradient(problem.start)))
    return (stopping.GradientNorm(atol=GRADIENT_RTOL * max(1.0, g0), rtol=0.0)
            | stopping.MaxIterations(MAX_ITERATIONS))


def solved(problem, x, value):
    g0 = np.max(np.abs(problem.gradient(problem.start)))
    small = np.max(np.abs(problem.gradient(x))) <= GRADIENT_RTOL * max(1.0, g0)
    return bool(small and problem.solved(value, rtol=VALUE_RTOL))


def run_linestep(problem, controller):
    run = descend(Objective(problem.value, problem.gradient), problem.start.copy(),
                  controller=controller, direction=LBFGS(10), stop=stop_rule(problem))
    return solved(problem, run.x, run.value), run.evaluations


def run_lbfgsb(problem):
    g0 = np.max(np.abs(problem.gradient(problem.start)))
    objective = Objective(problem.value, problem.gradient)
    result = lbfgsb(objective, problem.start.copy(), GRADIENT_RTOL * max(1.0, g0),
                    MAX_ITERATIONS)
    return solved(problem, result.x, result.fun), objective.evaluations


def evaluation_table(problems):
    driver = ScipyLineSearch()
    methods = {
        "Wolfe()": lambda p: run_linestep(p, Wolfe()),
        "MoreThuente()": lambda p: run_linestep(p, MoreThuente()),
        "HagerZhang()": lambda p: run_linestep(p, HagerZhang()),
        "scipy line_search driver": lambda p: run_linestep(p, driver),
        "scipy L-BFGS-B": run_lbfgsb,
    }
    outcome = {name: {} for name in methods}
    for problem in problems:
        for name, method in methods.items():
            with np.errstate(all="ignore"), warnings.catch_warnings():
                warnings.simplefilter("ignore")
                outcome[name][problem.name] = method(problem)
    print(f"Part 1: L-BFGS(m=10) on {len(problems)} MGH problems, stop at "
          f"‖g‖∞ ≤ 1e-8·max(1,‖g0‖∞) or {MAX_ITERATIONS} iterations")
    print(f"  linestep: descend + LBFGS(10) + each search at its defaults; solved = gradient "
          f"test and |f − f*| ≤ {VALUE_RTOL:g}·max(1,|f*|)")
    print(f"  {scipy_driver_settings()}; evaluations the adapter added: {driver.recomputed}")
    print(f"  {lbfgsb_settings('1e-8·max(1,‖g0‖∞)', MAX_ITERATIONS)}")
    references = ("scipy line_search driver", "scipy L-BFGS-B")
    print(f"  {'method':<26} {'solved':>6}  " + "  ".join(
        f"{'evals/ratio vs ' + ('driver' if r.endswith('driver') else 'L-BFGS-B'):>28}"
        for r in references))
    for name, results in outcome.items():
        count = sum(ok for ok, _ in results.values())
        cells = []
        for reference_name in references:
            reference = outcome[reference_name]
            both = [p for p in results if results[p][0] and reference[p][0]]
            ours = sum(results[p][1].total for p in both)
            theirs = sum(reference[p][1].total for p in both)
            cells.append(f"{ours:>7} / {theirs:<7} = {ours / theirs:4.2f} ({len(both):>2})")
        print(f"  {name:<26} {count:>6}  " + "  ".join(f"{c:>28}" for c in cells))
    print("  (evaluations = values + gradients, summed over the problems both solve; "
          "their count in brackets)")
    unsolved = {name: sorted(p for p, (ok, _) in results.items() if not ok)
                for name, results in outcome.items()}
    for name, names in unsolved.items():
        print(f"  not solved by {name}: {', '.join(names) or '-'}")
    return outcome


def per_problem_table(outcome):
    """Evaluations per problem and method ('-' where unsolved), with each search's
    difference from the scipy driver: where the totals above come from."""
    names = list(outcome)
    driver = outcome["scipy line_search driver"]
    searches = names[:3]
    print("\n  per problem: evaluations (values + gradients); Δ = search − scipy driver")
    labels = [n.split("(")[0] for n in searches] + ["driver", "L-BFGS-B"]
    print(f"  {'problem':<32}" + "".join(f"{label:>13}" for label in labels)
          + "".join(f"{'Δ ' + label:>15}" for label in labels[:3]))
    for problem in driver:
        cells = [f"{e.total:>13}" if ok else f"{'-':>13}"
                 for ok, e in (outcome[n][problem] for n in names)]
        ok_driver, e_driver = driver[problem]
        deltas = [f"{outcome[n][problem][1].total - e_driver.total:>+15}"
                  if ok_driver and outcome[n][problem][0] else f"{'':>15}" for n in searches]
        print(f"  {problem:<32}" + "".join(cells) + "".join(deltas))


def quadratic(eigenvalues, seed):
    rng = np.random.default_rng(seed)
    n = len(eigenvalues)
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    a = q @ np.diag(eigenvalues) @ q.T

    def fun(x):
        return 0.5 * float(x @ (a @ x))

    def grad(x):
        return a @ x

    return fun, grad, a, rng.standard_normal(n)


def per_call(fn, repeat, batches=3):
    """Seconds per call: the fastest of `batches` batches of `repeat` calls.

    The minimum filters out interference from other processes on a shared machine
    (the estimator the timeit documentation recommends); the ratios are then taken
    per round and their median reported.
    """
    best = float("inf")
    for _ in range(batches):
        start = time.perf_counter()
        for _ in range(repeat):
            fn()
        best = min(best, (time.perf_counter() - start) / repeat)
    return best


def time_case(label, eigenvalues, newton, searches, rounds, repeat):
    """One timing case: every search and scipy, alternately in each round."""
    fun, grad, a, x = quadratic(eigenvalues, seed=3)
    g = grad(x)
    d = -np.linalg.solve(a, g) if newton else -g
    objective = Objective(fun, grad)
    value = fun(x)
    calls = {name: (lambda s=s: s(objective, x, d, value=value, gradient=g))
             for name, s in searches.items()}
    calls["scipy"] = lambda: line_search(fun, grad, x, d, gfk=g, old_fval=value)
    times = {name: [] for name in calls}
    for _ in range(rounds):
        for name, call in calls.items():
            times[name].append(per_call(call, repeat))
    counts = {name: s(Objective(fun, grad), x, d, value=value, gradient=g).evaluations
              for name, s in searches.items()}
    scipy_counts = line_search(fun, grad, x, d, gfk=g, old_fval=value)[1:3]
    print(f"  case: {label}; scipy {statistics.median(times['scipy']) * 1e6:.1f} us, "
          f"{scipy_counts[0]} f + {scipy_counts[1]} g")
    for name in searches:
        ratio = statistics.median(
            t / s for t, s in zip(times[name], times["scipy"], strict=True))
        c: Evaluations = counts[name]
        print(f"    {name:<12} {statistics.median(times[name]) * 1e6:7.1f} us   "
              f"time ratio to scipy {ratio:5.2f}   {c.values} f + {c.gradients} g")


def timing_table(rounds, repeat):
    searches = {"Wolfe": Wolfe(), "MoreThuente": MoreThuente(), "HagerZhang": HagerZhang()}
    print("\nPart 2: per-call time against scipy.optimize.line_search (defaults: c1=1e-4, "
          f"c2=0.9, unit first trial), n = 10, medians of {rounds} alternating rounds")
    time_case("unit step accepted", np.linspace(0.9, 1.1, 10), True, searches, rounds,
              repeat)
    time_case("ill-conditioned (1-100), -g", np.linspace(1.0, 100.0, 10), False, searches,
              rounds, repeat)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer timing rounds")
    parser.add_argument("--no-timing", action="store_true", help="part 1 only")
    parser.add_argument("--per-problem", action="store_true",
                        help="part 1 also per problem, with each search's difference from "
                             "the scipy driver")
    args = parser.parse_args()
    outcome = evaluation_table(mgh_problems())
    if args.per_problem:
        per_problem_table(outcome)
    if not args.no_timing:
        timing_table(rounds=5 if args.quick else 20, repeat=300 if args.quick else 1000)


if __name__ == "__main__":
    main()
