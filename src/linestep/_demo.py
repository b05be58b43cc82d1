"""`linestep demo`: an invented calibration fit that shows why step control matters.

The scenario is invented for this demo: a bench technician calibrates a
temperature probe whose reading (volts) maps to degrees through a quadratic
response, fitted by least squares with plain gradient descent. The data are
generated from a seeded random number generator, not measured.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from linestep import stopping
from linestep._descend import Run, descend
from linestep._objective import Objective
from linestep.rules.fallback import Fallback
from linestep.rules.fixed import Fixed
from linestep.searches.armijo import Armijo

# The learning rate a trial-and-error user might pick: above 2/L for this fit.
TOO_LARGE_RATE = 1.0


@dataclass(frozen=True, slots=True, kw_only=True)
class Calibration:
    """The invented least-squares problem: features, targets and its exact optimum."""

    features: np.ndarray
    targets: np.ndarray
    optimum: np.ndarray
    optimal_value: float
    lipschitz: float

    def objective(self) -> Objective:
        features, targets, count = self.features, self.targets, len(self.targets)

        def value_and_gradient(w: np.ndarray) -> tuple[float, np.ndarray]:
            residual = features @ w - targets
            return 0.5 * float(residual @ residual) / count, features.T @ residual / count

        return Objective(value_and_gradient, fused=True)


def make_calibration(seed: int = 7, count: int = 200) -> Calibration:
    """Invented probe readings and reference temperatures (seeded)."""
    rng = np.random.default_rng(seed)
    volts = rng.uniform(0.2, 4.8, count)
    degrees = 18.0 + 9.5 * volts - 0.35 * volts**2 + rng.normal(0.0, 0.2, count)
    scaled = (volts - volts.mean()) / volts.std()
    features = np.column_stack([np.ones(count), scaled, scaled**2])
    optimum = np.linalg.lstsq(features, degrees, rcond=None)[0]
    residual = features @ optimum - degrees
    hessian = features.T @ features / count
    return Calibration(features=features, targets=degrees, optimum=optimum,
                       optimal_value=0.5 * float(residual @ residual) / count,
                       lipschitz=float(np.linalg.eigvalsh(hessian).max()))


def _controllers(problem: Calibration) -> list[tuple[str, Callable[[], object]]]:
    """(label, factory) pairs; labels in the benchmark's short form (`short_label`)."""
    from linestep.bench._label import short_label
    from linestep.rules.schedule import Schedule

    safe = float(f"{1.0 / problem.lipschitz:.3g}")  # 3 digits: the label stays readable
    builds: list[Callable[[], object]] = [
        lambda: Fixed(TOO_LARGE_RATE),
        lambda: Fallback(Fixed(TOO_LARGE_RATE), Armijo()),
        lambda: Armijo(),
        lambda: Schedule.robbins_monro(safe, rate=0.01),
    ]
    return [(short_label(build()), build) for build in builds]


def run_demo(print_line: Callable[[str], object] = print) -> list[tuple[str, Run]]:
    """Run the comparison and print the table; returns the runs for tests."""
    problem = make_calibration()
    print_line("linestep demo: fitting an INVENTED probe calibration (seeded synthetic data)")
    # both numbers printed to 4 decimals from the same L, so 2/L is visibly 2 divided by L
    print_line(f"  3 parameters, {len(problem.targets)} readings. The fit's Hessian has largest "
               f"eigenvalue L = {problem.lipschitz:.4f}")
    print_line(f"  (computed exactly), so a fixed rate converges only below 2/L = "
               f"{2 / problem.lipschitz:.4f}; {TOO_LARGE_RATE:g} is above it.")
    print_line("")
    results = []
    for label, build in _controllers(problem):
        stop = stopping.default(gradient_atol=1e-8, max_iterations=5000)
        run = descend(problem.objective(), np.zeros(3), controller=build(), stop=stop)
        results.append((label, run))
    width = max(len(label) for label, _ in results)
    print_line(f"  {'controller':<{width}}  {'verdict':<9}  {'iters':>5}  {'f evals':>7}  "
               f"{'g evals':>7}  {'final f - f*':>12}")
    for label, run in results:
        gap = run.value - problem.optimal_value
        gap_text = f"{gap:12.3g}" if np.isfinite(gap) else f"{'diverged':>12}"
        print_line(f"  {label:<{width}}  {run.verdict.kind.value:<9}  {run.iterations:>5}  "
                   f"{run.evaluations.values:>7}  {run.evaluations.gradients:>7}  {gap_text}")
    print_line("")
    for label, run in results:
        print_line(f"  {label}: {run.verdict.reason}")
    from linestep.advice import diagnose

    diagnosis = diagnose(results[0][1])  # the diverging fixed rate's history
    print_line("")
    print_line(f"  diagnose(run) of {results[0][0]}: {diagnosis.kind}. {diagnosis.reason}")
    return results
