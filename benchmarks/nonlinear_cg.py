"""Nonlinear conjugate gradients on the MGH set and the large set, against scipy (issue 14).

linestep: `descend` with ``NonlinearCG()`` (Hager–Zhang β) and ``HagerZhang()``
with the ``HagerZhangStart()`` first trial (CG_DESCENT's pairing: its line search
and its initial-step rules I0/I1/I2). Peers, configured as a competent user
would:

* scipy CG: ``minimize(method="CG")`` (Polak–Ribière with scipy's own Wolfe
  search), ``gtol`` at the same max-norm tolerance (``norm=inf``, scipy's
  default), ``maxiter`` as ours; its ``c2 = 0.4`` default kept (the value its
  documentation gives for CG).
* scipy L-BFGS-B, m = 10, as configured in ``scipy_peers.py``.

MGH set: stop at ‖g‖∞ ≤ 1e-8·max(1, ‖g₀‖∞) or 5000 iterations; solved when that
holds and f is within 1e-4·max(1, |f*|) of a published optimal value. Large set
(n = 1000 by default): stop at ‖g‖∞ ≤ 1e-6·max(1, ‖g₀‖∞) or 20000 iterations;
solved when the gradient test holds and, where f* is known, f is within
1e-4·max(1, |f*|) of it. Evaluations are values + gradients (a fused call counts
one of each), summed over the problems both methods solve.

Run: ``python benchmarks/nonlinear_cg.py [--dimension N] [--only mgh|large]``
"""

from __future__ import annotations

import argparse
import warnings

import numpy as np
from scipy.optimize import minimize
from scipy_peers import lbfgsb, lbfgsb_settings

from linestep import HagerZhang, NonlinearCG, Objective, descend, stopping
from linestep.bench.problems import mgh_problems
from linestep.bench.suites import large_problems
from linestep.searches.hager_zhang import HagerZhangStart

VALUE_RTOL = 1e-4
SETS = {  # name: (gradient rtol, iteration budget)
    "mgh": (1e-8, 5000),
    "large": (1e-6, 20000),
}


def linestep_cg():
    return NonlinearCG(), HagerZhang(initial=HagerZhangStart())


def tolerance(problem, rtol):
    return rtol * max(1.0, float(np.max(np.abs(problem.gradient(problem.start)))))


def solved(problem, x, value, atol):
    small = float(np.max(np.abs(problem.gradient(x)))) <= atol
    return bool(small and problem.solved(value, rtol=VALUE_RTOL))


def run_linestep(problem, atol, iterations):
    direction, controller = linestep_cg()
    stop = stopping.GradientNorm(atol=atol, rtol=0.0) | stopping.MaxIterations(iterations)
    run = descend(Objective(problem.value, problem.gradient), problem.start.copy(),
                  controller=controller, direction=direction, stop=stop)
    return solved(problem, run.x, run.value, atol), run.evaluations.total


def run_scipy_cg(problem, atol, iterations):
    objective = Objective(problem.value, problem.gradient)
    result = minimize(objective.value_and_gradient, problem.start.copy(), jac=True,
                      method="CG", options={"gtol": atol, "norm": np.inf,
                                            "maxiter": iterations})
    return solved(problem, result.x, result.fun, atol), objective.evaluations.total


def run_lbfgsb(problem, atol, iterations):
    objective = Objective(problem.value, problem.gradient)
    result = lbfgsb(objective, problem.start.copy(), atol, iterations)
    return solved(problem, result.x, result.fun, atol), objective.evaluations.total


METHODS = {"linestep CG": run_linestep, "scipy CG": run_scipy_cg,
           "scipy L-BFGS-B": run_lbfgsb}


def table(label, problems, rtol, iterations):
    outcome = {name: {} for name in METHODS}
    for problem in problems:
        atol = tolerance(problem, rtol)
        for name, method in METHODS.items():
            with np.errstate(all="ignore"), warnings.catch_warnings():
                warnings.simplefilter("ignore")
                outcome[name][problem.name] = method(problem, atol, iterations)
    print(f"\n{label}: {len(problems)} problems, stop at ‖g‖∞ ≤ {rtol:g}·max(1,‖g0‖∞) "
          f"or {iterations} iterations")
    print(f"  {'method':<16} {'solved':>6}   {'evals vs scipy CG':>24}   "
          f"{'evals vs L-BFGS-B':>24}")
    for name, results in outcome.items():
        cells = []
        for reference in ("scipy CG", "scipy L-BFGS-B"):
            theirs = outcome[reference]
            both = [p for p in results if results[p][0] and theirs[p][0]]
            ours = sum(results[p][1] for p in both)
            ref = sum(theirs[p][1] for p in both)
            cells.append(f"{ours:>7}/{ref:<7}= {ours / ref:4.2f} ({len(both)})")
        count = sum(ok for ok, _ in results.values())
        print(f"  {name:<16} {count:>6}   {cells[0]:>24}   {cells[1]:>24}")
    for name, results in outcome.items():
        missed = sorted(p for p, (ok, _) in results.items() if not ok)
        print(f"  not solved by {name}: {', '.join(missed) or '-'}")
    return outcome


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dimension", type=int, default=1000, help="n of the large set")
    parser.add_argument("--only", choices=sorted(SETS), help="run one set only")
    args = parser.parse_args()
    direction, controller = linestep_cg()
    print(f"linestep: descend + {direction!r} + {controller!r}")
    print("scipy CG: minimize(method='CG'), gtol = the same max-norm tolerance "
          "(norm=inf), c1 = 1e-4, c2 = 0.4 (scipy's defaults), maxiter = the budget")
    print(lbfgsb_settings("the same max-norm tolerance", SETS["mgh"][1]).replace(
        "maxiter = 5000, maxfun = 50000", "maxiter = the budget, maxfun = 10·budget"))
    print("evaluations = values + gradients over the problems both methods solve "
          "(their count in brackets)")
    if args.only in (None, "mgh"):
        table("MGH set", mgh_problems(), *SETS["mgh"])
    if args.only in (None, "large"):
        table(f"large set, n = {args.dimension}", large_problems(args.dimension),
              *SETS["large"])


if __name__ == "__main__":
    main()
