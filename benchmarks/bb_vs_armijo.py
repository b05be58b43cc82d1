"""Barzilai–Borwein against backtracking and fixed rates on ill-conditioned quadratics.

Problem (invented): f(x) = ½ Σᵢ λᵢ xᵢ², n = 1000, with eigenvalues λᵢ log-spaced
in [1, κ] for κ = 1e2, 1e4, 1e6. The Hessian is *diagonal*: every method here is
invariant under an orthogonal change of variables (they only use inner products
of x, ∇f and their differences), so a random rotation would change nothing but
the ∞-norm in the stopping test and the cost of a matrix product. The start x₀
has N(0, 1) entries drawn with seed 0 (the same start for every method).

Direction: steepest descent, d = −∇f(x), in a self-contained loop. A run stops
when ‖∇f(x)‖∞ <= 1e-6·‖∇f(x₀)‖∞ ("reached"), when the evaluations reach the cap
(default 300 000 values + gradients: "not reached"), or when the controller
cannot move ("failed").

Evaluations are counted by `Objective` (values + gradients, including the value
and gradient at x₀). The loop passes f and ∇f at the current point to each
call, and reuses a gradient the controller has already evaluated.

Methods: `BarzilaiBorwein` (each variant, default Raydan globalisation, and the
long step without globalisation); `NonmonotoneArmijo` and `Armijo`, each with
the unit first trial (default) and with the previous step grown by 2; the best
`Fixed` rate from the grid t = γ/λ_max, γ ∈ {0.25, 0.5, 1, 1.5, 1.9, 1.99} (steepest
descent with a fixed step converges iff t < 2/λ_max).

Target: at κ = 1e4, BB needs at least 10× fewer evaluations than monotone Armijo
steepest descent (the better of its two configurations).

Part 2 repeats the comparison on the Moré–Garbow–Hillstrom (1981) set, from the
standard starts, with steepest descent, stopping at
‖∇f‖∞ <= 1e-5·max(1, ‖∇f(x₀)‖∞) or at `--mgh-cap` evaluations; the best fixed rate
per problem is picked from the grid t ∈ {1, 1e-1, …, 1e-6} (the problems'
curvatures are unknown, so the grid is absolute).

Run: ``python benchmarks/bb_vs_armijo.py [--cap N] [--kappa 1e4 ...] [--mgh-cap N]``
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from linestep import Armijo, Fixed, Objective, PreviousTrial
from linestep.rules.barzilai_borwein import BarzilaiBorwein
from linestep.searches.nonmonotone import NonmonotoneArmijo

N = 1000
TOLERANCE = 1e-6
GRID = (0.25, 0.5, 1.0, 1.5, 1.9, 1.99)


def problem(condition: float, n: int = N, seed: int = 0):
    eigenvalues = np.logspace(0.0, np.log10(condition), n)

    def fun(x):
        return 0.5 * float(x @ (eigenvalues * x))

    def grad(x):
        return eigenvalues * x

    return fun, grad, np.random.default_rng(seed).standard_normal(n), eigenvalues[-1]


def solve(controller, fun, grad, x0, cap: int) -> tuple[str, int, int, float]:
    """Steepest descent with `controller`.

    Returns (outcome, evaluations, iterations, final ‖∇f‖∞ / ‖∇f(x₀)‖∞).
    """
    objective = Objective(fun, grad)
    x = x0
    value, gradient = objective.value(x), objective.gradient(x)
    start = float(np.max(np.abs(gradient)))
    iterations = 0
    outcome = "reached"
    while float(np.max(np.abs(gradient))) > TOLERANCE * start:
        if objective.values + objective.gradients >= cap:
            outcome = "not reached"
            break
        step = controller(objective, x, -gradient, value=value, gradient=gradient)
        if step.size == 0.0:
            outcome = f"failed ({step.status.name})"
            break
        iterations += 1
        x, value = step.x, step.value
        gradient = step.gradient if step.gradient is not None else objective.gradient(x)
    residual = float(np.max(np.abs(gradient))) / start
    return outcome, objective.values + objective.gradients, iterations, residual


def methods(largest: float = 1.0):
    grow = PreviousTrial(growth=2.0)
    named = [
        ("BB long", BarzilaiBorwein(variant="long")),
        ("BB short", BarzilaiBorwein(variant="short")),
        ("BB alternate", BarzilaiBorwein(variant="alternate")),
        ("BB long, no globalisation", BarzilaiBorwein(variant="long", globalize=None)),
        ("NonmonotoneArmijo (t0 = 1)", NonmonotoneArmijo()),
        ("NonmonotoneArmijo (t0 = 2·t_prev)", NonmonotoneArmijo(initial=grow)),
        ("Armijo (t0 = 1)", Armijo()),
        ("Armijo (t0 = 2·t_prev)", Armijo(initial=grow)),
    ]
    fixed = [(f"Fixed({gamma}/λmax)", Fixed(gamma / largest)) for gamma in GRID]
    return named, fixed


MGH_TOLERANCE = 1e-5
MGH_GRID = tuple(10.0 ** -k for k in range(7))


def solve_mgh(controller, problem, cap: int) -> tuple[bool, int]:
    """Steepest descent on an MGH problem; (reached, evaluations)."""
    objective = Objective(problem.value, problem.gradient)
    x = problem.start.copy()
    value, gradient = objective.value(x), objective.gradient(x)
    limit = MGH_TOLERANCE * max(1.0, float(np.max(np.abs(gradient))))
    with np.errstate(all="ignore"):
        while float(np.max(np.abs(gradient))) > limit:
            if objective.values + objective.gradients >= cap or not np.isfinite(value):
                return False, objective.values + objective.gradients
            step = controller(objective, x, -gradient, value=value, gradient=gradient)
            if step.size == 0.0 or not np.all(np.isfinite(step.gradient if step.gradient
                                                            is not None else step.x)):
                return False, objective.values + objective.gradients
            x, value = step.x, step.value
            gradient = step.gradient if step.gradient is not None else objective.gradient(x)
            if not (np.isfinite(value) and np.all(np.isfinite(gradient))):
                return False, objective.values + objective.gradients
    return True, objective.values + objective.gradients


def mgh_table(cap: int) -> None:
    from linestep.bench.problems import mgh_problems

    problems = mgh_problems()
    names = [name for name, _ in methods()[0]] + ["best fixed (grid)"]
    results: dict[str, dict[str, tuple[bool, int]]] = {name: {} for name in names}
    for problem in problems:
        for name, controller in methods()[0]:  # fresh controllers for every problem
            results[name][problem.name] = solve_mgh(controller, problem, cap)
        fixed = [solve_mgh(Fixed(size), problem, cap) for size in MGH_GRID]
        reached = [evaluations for ok, evaluations in fixed if ok]
        results["best fixed (grid)"][problem.name] = (
            (True, min(reached)) if reached else (False, cap))
    common = [p.name for p in problems if all(results[n][p.name][0] for n in names)]
    print(f"\nMGH set ({len(problems)} problems), steepest descent, stop at "
          f"‖g‖∞ <= {MGH_TOLERANCE:g}·max(1, ‖g0‖∞), cap {cap} evaluations")
    print(f"  {'method':36s} {'reached':>7s} {'median evals (reached)':>23s} "
          f"{'total on the ' + str(len(common)) + ' reached by all':>28s}")
    for name in names:
        rows = results[name]
        counts = [e for ok, e in rows.values() if ok]
        total = sum(rows[p][1] for p in common)
        median = float(np.median(counts)) if counts else float("nan")
        print(f"  {name:36s} {len(counts):7d} {median:23.0f} {total:28d}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cap", type=int, default=300_000,
                        help="evaluation cap per run (values + gradients)")
    parser.add_argument("--kappa", type=float, nargs="*", default=[1e2, 1e4, 1e6])
    parser.add_argument("--mgh-cap", type=int, default=20_000,
                        help="evaluation cap per MGH run (0 skips the MGH part)")
    arguments = parser.parse_args()
    print(f"n = {N}, stop at ‖g‖∞ <= {TOLERANCE:g}·‖g0‖∞, cap {arguments.cap} evaluations")
    summary = {}
    for condition in arguments.kappa:
        fun, grad, x0, largest = problem(condition)
        named, fixed = methods(largest)
        print(f"\nκ = {condition:.0e}")
        print(f"  {'method':36s} {'outcome':12s} {'evaluations':>11s} {'iterations':>10s}"
              f" {'‖g‖∞/‖g0‖∞':>11s} {'seconds':>8s}")
        rows = []
        for name, controller in named:
            start = time.perf_counter()
            result = solve(controller, fun, grad, x0, arguments.cap)
            rows.append((name, *result, time.perf_counter() - start))
        best = None
        for name, controller in fixed:
            start = time.perf_counter()
            result = solve(controller, fun, grad, x0, arguments.cap)
            row = (f"best fixed: {name}", *result, time.perf_counter() - start)
            # Best = reached with fewest evaluations, else the smallest final gradient.
            key = (row[1] != "reached", row[2] if row[1] == "reached" else row[4])
            if best is None or key < best[0]:
                best = (key, row)
        rows.append(best[1])
        for name, outcome, evaluations, iterations, residual, seconds in rows:
            print(f"  {name:36s} {outcome:12s} {evaluations:11d} {iterations:10d}"
                  f" {residual:11.1e} {seconds:8.2f}")
        summary[condition] = {row[0]: row for row in rows}
    if 1e4 in summary:
        rows = summary[1e4]
        bb = min(rows[name][2] for name in ("BB long", "BB short", "BB alternate")
                 if rows[name][1] == "reached")
        armijo = [rows[name] for name in ("Armijo (t0 = 1)", "Armijo (t0 = 2·t_prev)")]
        monotone = min(row[2] for row in armijo)
        reached = all(row[1] == "reached" for row in armijo)
        ratio = monotone / bb
        qualifier = "" if reached else " (Armijo hit the cap: a lower bound)"
        print(f"\nκ = 1e4: best monotone Armijo / best BB = {monotone} / {bb} = "
              f"{ratio:.1f}x{qualifier}; target >= 10x: {'met' if ratio >= 10 else 'NOT met'}")
    if arguments.mgh_cap:
        mgh_table(arguments.mgh_cap)


if __name__ == "__main__":
    main()
