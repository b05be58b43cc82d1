"""Which first trial should `descend`'s default Armijo search use along −∇f?

Steepest descent's direction −∇f carries the gradient's units, so the unit first
trial t = 1 moves x by ‖∇f‖: far too far on a steep start (it can jump into a
saturated region of a tanh network and stay there), and too short on a flat one.
Nocedal & Wright (§3.5) suggest scaling the first trial from the gradient and
then reusing what the previous iteration learned. Candidates, all `Armijo` with
its defaults otherwise:

* ``unit``: `UnitTrial` (t = 1 every iteration; the default before this study).
* ``scaled``: `ScaledTrial()` (a move of length 1 in x every iteration, t = 1/‖d‖₂).
* ``previous×2, scaled first``: `PreviousTrial(growth=2, first=ScaledTrial())`
  (first iteration 1/‖d‖₂, then twice the previous accepted step).
* ``quadratic, scaled first``: `QuadraticTrial(first=ScaledTrial())` (N&W eq. 3.60).
* ``previous×2, unit first``: `PreviousTrial(growth=2)`.

Problems: the bench suites `mgh` (35 MGH problems, standard starts),
`quadratics` (κ = 1e1…1e6, n = 50) and `logistic` (three penalties), plus an
INVENTED scenario: a 1-4-1 tanh network fitted to targets made by a seeded
"teacher" network of the same shape (f* = 0; the kind of fit where the unit
trial was reported to jump into saturation), from 10 seeded starts. Direction: steepest descent;
stop: ``stopping.default(max_iterations=ITERATIONS)`` (the command line's budget).
Evaluations are values + gradients, as everywhere in the harness; "solved" is the
harness's test (within 1e-4·max(1, |f*|) of the optimum); the last column is the
median of |f − f*| at the end of the runs.

Run: ``python benchmarks/first_trial.py [--workers N] [--iterations N]``
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from linestep import Armijo, PreviousTrial, QuadraticTrial, ScaledTrial, UnitTrial, stopping
from linestep.bench import Problem, Start, Study, run_study, suite
from linestep.bench.report import ranking
from linestep.directions import SteepestDescent

CANDIDATES = {
    "unit": lambda: Armijo(initial=UnitTrial()),
    "scaled": lambda: Armijo(initial=ScaledTrial()),
    "previous×2, scaled first": lambda: Armijo(
        initial=PreviousTrial(growth=2.0, first=ScaledTrial())),
    "quadratic, scaled first": lambda: Armijo(initial=QuadraticTrial(first=ScaledTrial())),
    "previous×2, unit first": lambda: Armijo(initial=PreviousTrial(growth=2.0)),
}

# The invented network (teacher–student, so the optimum f* = 0 is known): a 1-4-1
# tanh network y = Σ_j v_j tanh(w_j t + b_j) + c with seeded "teacher" weights
# generates 40 targets on t ∈ [−3, 3]; a student of the same shape is fitted to them
# by least squares (½‖r‖², not averaged, so the starting gradients are in the
# hundreds and the unit first trial jumps far) from N(0, 1) starts.
HIDDEN = 4
SAMPLES = 40
_T = np.linspace(-3.0, 3.0, SAMPLES)


def _network_output(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    w, b, v, c = p[:HIDDEN], p[HIDDEN:2 * HIDDEN], p[2 * HIDDEN:3 * HIDDEN], p[-1]
    hidden = np.tanh(np.outer(_T, w) + b)            # SAMPLES × HIDDEN
    return hidden, hidden @ v + c


_Y = _network_output(np.random.default_rng(5).normal(0.0, 1.0, 3 * HIDDEN + 1))[1]


def network_value_and_gradient(p: np.ndarray) -> tuple[float, np.ndarray]:
    hidden, output = _network_output(p)
    residual = output - _Y
    slope = (1.0 - hidden**2) * p[2 * HIDDEN:3 * HIDDEN]   # ∂ output / ∂ pre-activation
    gradient = np.concatenate([(residual * _T) @ slope, residual @ slope,
                               hidden.T @ residual, [residual.sum()]])
    return 0.5 * float(residual @ residual), gradient


def network_start(rng: np.random.Generator) -> np.ndarray:
    return rng.normal(0.0, 1.0, 3 * HIDDEN + 1)


def network_problem() -> Problem:
    from linestep.bench import as_problems

    return as_problems({"name": "tanh_network_invented",
                        "value_and_gradient": network_value_and_gradient,
                        "start": network_start, "optimal_value": 0.0})[0]


def _table(title: str, results) -> None:
    print(f"\n{title}")
    print(f"  {'first trial':<26} {'runs':>4} {'solved':>6} {'failed':>6} "
          f"{'median evals':>12} {'total evals':>11} {'score':>6} {'median final gap':>16}")
    totals: dict[str, int] = {}
    gaps: dict[str, list[float]] = {}
    for record in results:
        totals[record.controller] = totals.get(record.controller, 0) + record.evaluations
        gap = results.gap(record)
        gaps.setdefault(record.controller, []).append(np.inf if gap is None else abs(gap))
    for row in ranking(results):
        median = "-" if row["median"] is None else f"{row['median']:.0f}"
        print(f"  {row['solver']:<26} {row['runs']:>4} {row['solved']:>6} {row['failed']:>6} "
              f"{median:>12} {totals[row['solver']]:>11} {row['score']:>6.3f} "
              f"{np.median(gaps[row['solver']]):>16.2e}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--iterations", type=int, default=2000)
    args = parser.parse_args()
    stop = stopping.default(max_iterations=args.iterations)
    studies = {
        "MGH (35 problems, standard starts)": Study(problems=suite("mgh"),
                                                     controllers=CANDIDATES, stop=stop,
                                                     directions=[SteepestDescent()]),
        "quadratics (κ = 1e1 … 1e6, n = 50)": Study(problems=suite("quadratics"),
                                                     controllers=CANDIDATES, stop=stop),
        "logistic regression (3 penalties)": Study(problems=suite("logistic"),
                                                    controllers=CANDIDATES, stop=stop),
        "INVENTED 1-4-1 tanh network (f* = 0), 10 drawn starts": Study(
            problems=[network_problem()], controllers=CANDIDATES, stop=stop,
            starts=[Start.drawn()], seeds=range(10)),
    }
    everything = []
    for title, study in studies.items():
        started = time.perf_counter()
        results = run_study(study, workers=args.workers)
        everything.extend(results)
        _table(f"{title}  [{time.perf_counter() - started:.0f} s]", results)
    from linestep.bench import Results

    _table("all suites together", Results(everything))


if __name__ == "__main__":
    main()
