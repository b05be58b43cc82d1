"""Does the set-up `advise` recommends solve problems from a start it never saw, and how
does its cost compare with the best steepest-descent controller of an exhaustive grid?

Problem set: the 35 Moré–Garbow–Hillstrom (1981) problems at their standard sizes;
the MGH problems whose size may vary, at n = 100 where a published optimal value
applies at that size (the others have no reference to judge a run by); the
scalable functions of the ``large`` bench suite at n = 100 that are not already in
the set at that size under their MGH name (the extended forms of Andrei 2008, and
Penalty I with its derived optimum); the invented ill-conditioned quadratics of the bench suite at
n = 100 (κ = 10..10⁶); and the three logistic-regression problems of the bench
suite (n = 30, the data's size; they need scikit-learn, which ships the data).

For each problem and each `loop`, `advise` runs with its defaults (5 starts: the
standard start and 4 perturbed ones with seeds 0..3, the default budget) and the
recommended set-up then runs from a *fresh* start, ``Start.perturbed(0.1)`` with
seed 1000, with `stopping.default` and a cap of `--cap` evaluations. A problem
counts as solved when the final value is within 1e-4·max(1, |f*|) of a known
optimal value (`Problem.solved`). Where no set-up solved within the study's budget
but some made progress, `advise` gives the closest as a tentative recommendation
(`Advice.tentative`, marked "(closest)" in the table); it runs from the fresh start
like any other, and the summary says how many of the solved problems came from one.

The grid (loop="steepest" only): every steepest-descent controller from that same
fresh start under the same stopping rule: Armijo (unit and previous-step initial
trials), Wolfe (strong, weak), MoreThuente, HagerZhang, NonmonotoneArmijo (max
and average references), BarzilaiBorwein (long, short, alternate; also without
globalisation), Polyak with the known f*, and Fixed rates t = 2^(−k/2)·2/L for
k = 1..12, L = max |eigenvalue| of a dense finite-difference Hessian at the start.
The cost ratio is evaluations(recommended)/min evaluations(grid) on the problems
both solve. The grid's own count (a problem counts when any of its controllers
solves it from the fresh start) is the most that steepest descent reached here
with hindsight; it is run on the problems where `advise` found nothing, too.

Targets: solved >= 90% of the set from the fresh start; for loop="steepest", the
ratio at most 2 (reported as median and geometric mean, with the fraction of
problems within 2×).

Run: ``python benchmarks/advice.py [--loops any,steepest] [--cap N] [--quick]
[--fresh-seed S]``
"""

from __future__ import annotations

import argparse
import math
import time

import numpy as np

from linestep import (
    Armijo,
    BarzilaiBorwein,
    Fixed,
    HagerZhang,
    MoreThuente,
    NonmonotoneArmijo,
    Polyak,
    PreviousTrial,
    Wolfe,
    advise,
    descend,
    stopping,
)
from linestep.bench import Start, get_problem, mgh_problems, problem_names
from linestep.bench.suites import (
    has_logistic_data,
    large_problems,
    logistic_problems,
    quadratic_problems,
)

FRESH_SEED = 1000
SCALABLE_DIMENSION = 100


def problem_set(quick: bool) -> list:
    problems = mgh_problems()
    for name in problem_names()[20:]:
        try:
            problem = get_problem(name, dimension=SCALABLE_DIMENSION)
        except ValueError:
            continue
        if problem.optimal_values:
            problems.append(problem)
    present = {(problem.name, problem.dimension) for problem in problems}
    for problem in large_problems(dimension=SCALABLE_DIMENSION):
        # the large suite names its problems "<name>_n<dimension>"
        if (problem.name.rsplit("_n", 1)[0], problem.dimension) not in present:
            problems.append(problem)
    problems += quadratic_problems(dimension=SCALABLE_DIMENSION)
    if has_logistic_data():
        problems += logistic_problems()
    if quick:
        problems = problems[::4]
    return problems


def dense_lipschitz(problem, x: np.ndarray) -> float:
    columns = []
    for i in range(x.size):
        e = np.zeros(x.size)
        e[i] = 1e-5 * max(1.0, abs(x[i]))
        columns.append((problem.gradient(x + e) - problem.gradient(x - e)) / (2 * e[i]))
    matrix = np.array(columns).T
    return float(np.abs(np.linalg.eigvalsh(0.5 * (matrix + matrix.T))).max())


def fresh_run(problem, controller, direction, cap: int,
              seed: int = FRESH_SEED) -> tuple[bool, int]:
    x0 = Start.perturbed(0.1).point(problem, seed)
    stop = stopping.default(max_iterations=cap, max_evaluations=cap)
    try:
        run = descend((problem.value, problem.gradient), x0, controller=controller,
                      direction=direction, stop=stop)
    except Exception:  # a point outside the objective's domain counts as unsolved
        return False, cap
    solved = math.isfinite(run.value) and problem.solved(run.value)
    return solved, run.evaluations.total


def grid(problem, cap: int, seed: int = FRESH_SEED) -> tuple[float, str]:
    from linestep import SteepestDescent

    entries = {"Armijo()": Armijo(), "Armijo(previous)": Armijo(initial=PreviousTrial(growth=2.0)),
               "Wolfe()": Wolfe(), "Wolfe(strong=False)": Wolfe(strong=False),
               "MoreThuente()": MoreThuente(), "HagerZhang()": HagerZhang(),
               "NonmonotoneArmijo()": NonmonotoneArmijo(),
               "NonmonotoneArmijo(average)": NonmonotoneArmijo(reference="average"),
               **{f"BB({v})": BarzilaiBorwein(variant=v) for v in ("long", "short",
                                                                    "alternate")},
               "BB(long, pure)": BarzilaiBorwein(variant="long", globalize=None)}
    if problem.optimal_values:
        entries["Polyak(f*)"] = Polyak(f_min=min(problem.optimal_values))
    x0 = Start.perturbed(0.1).point(problem, seed)
    lipschitz = dense_lipschitz(problem, x0)
    for k in range(1, 13):
        entries[f"Fixed(2^-{k}/2·2/L)"] = Fixed(2.0 ** (-k / 2) * 2.0 / lipschitz)
    best, label = math.inf, "-"
    for name, controller in entries.items():
        solved, cost = fresh_run(problem, controller, SteepestDescent(), cap)
        if solved and cost < best:
            best, label = cost, name
    return best, label


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--loops", default="any,steepest")
    parser.add_argument("--cap", type=int, default=20_000)
    parser.add_argument("--quick", action="store_true", help="every 4th problem only")
    parser.add_argument("--fresh-seed", type=int, default=FRESH_SEED,
                        help="seed of the fresh start (the study's starts use 0..3)")
    args = parser.parse_args()
    problems = problem_set(args.quick)
    print(f"{len(problems)} problems; fresh start perturbed(0.1), seed {args.fresh_seed}; "
          f"cap {args.cap} evaluations\n")
    for loop in args.loops.split(","):
        started = time.perf_counter()
        solved_count, ratios, study_cost, grid_solved = 0, [], [], 0
        leads = leads_solved = 0  # tentative advice: nothing solved within the study's budget
        print(f"loop={loop!r}")
        print(f"{'problem':<34} {'n':>4} {'recommended':<44} {'solved':>6} {'evals':>7}"
              + (f" {'grid best':>9} {'ratio':>6}  grid winner" if loop == "steepest" else ""))
        for problem in problems:
            advice = advise(problem, loop=loop, progress=False)
            study_cost.append(advice.evaluations)
            if advice.controller is None:
                line = f"{problem.name:<34} {problem.dimension:>4} {'(none found)':<44}"
                if loop == "steepest":
                    best, winner = grid(problem, args.cap, args.fresh_seed)
                    grid_solved += math.isfinite(best)
                    line += f" {'-':>6} {'-':>7} {best:>9.0f} {'-':>6}  {winner}"
                print(line, flush=True)
                continue
            solved, cost = fresh_run(problem, advice.controller, advice.direction, args.cap,
                                     args.fresh_seed)
            solved_count += solved
            leads += advice.tentative
            leads_solved += advice.tentative and solved
            code = ("(closest) " if advice.tentative else "") + advice.code
            line = (f"{problem.name:<34} {problem.dimension:>4} {code[:44]:<44} "
                    f"{'yes' if solved else 'no':>6} {cost:>7}")
            if loop == "steepest":
                best, winner = grid(problem, args.cap, args.fresh_seed)
                grid_solved += math.isfinite(best)
                if solved and math.isfinite(best):
                    ratios.append(cost / best)
                    line += f" {best:>9.0f} {cost / best:>6.2f}  {winner}"
                else:
                    line += f" {best:>9.0f} {'-':>6}  {winner}"
            print(line, flush=True)
        share = solved_count / len(problems)
        print(f"loop={loop!r}: solved {solved_count} of {len(problems)} ({share:.0%}) from the "
              f"fresh start (target >= 90%); median study cost "
              f"{np.median(study_cost):.0f} evaluations; {time.perf_counter() - started:.0f} s")
        print(f"of these, {leads_solved} came from a tentative recommendation (the closest "
              f"set-up where none solved within the study's budget; {leads} such problems)")
        if loop == "steepest":
            print(f"the grid, taking for each problem whichever controller did best from the "
                  f"fresh start (hindsight no single recommendation has), solved "
                  f"{grid_solved} of {len(problems)} ({grid_solved / len(problems):.0%})")
        if ratios:
            ratios_array = np.array(ratios)
            print(f"cost ratio to the grid's best (on {len(ratios)} problems both solve): "
                  f"median {np.median(ratios_array):.2f}, geometric mean "
                  f"{np.exp(np.mean(np.log(ratios_array))):.2f}, within 2x on "
                  f"{np.mean(ratios_array <= 2):.0%} (target: at most 2)")
        print()


if __name__ == "__main__":
    main()
