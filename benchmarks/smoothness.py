"""How close `estimate_smoothness` gets to the largest Hessian eigenvalue, and at what cost.

Part 1, invented quadratics: f(x) = ½ xᵀ H x with H = Q diag(λ) Qᵀ, Q a product of
three seeded Householder reflections (so n = 10⁴ needs no dense matrix), and two
spectra in [1, κ]: log-spaced (geometric) and uniform random (many eigenvalues
crowd the top, the harder case for Lanczos). n ∈ {10, 100, 1000, 10⁴},
κ ∈ {10², 10⁴, 10⁶}, start x ~ N(0, 1) (seed 0). λ_max = κ exactly.
Target: |L̂ − λ_max| <= 10% of λ_max with at most 30 gradient evaluations.

Part 2, the Moré–Garbow–Hillstrom (1981) set at the standard starts (and the
extended Rosenbrock function at n = 100): the reference is max |eigenvalue| of a
dense Hessian by central differences of the analytic gradient (step
1e-5·max(1, |xᵢ|), symmetrised). Target: within 20% on the Rosenbrock-type
problems (rosenbrock, extended_rosenbrock); every problem is reported.

Run: ``python benchmarks/smoothness.py``
"""

from __future__ import annotations

import numpy as np

from linestep import estimate_smoothness
from linestep.bench import get_problem, mgh_problems

DIMENSIONS = (10, 100, 1000, 10_000)
CONDITIONS = (1e2, 1e4, 1e6)
MAX_GRADIENTS = 30


class RotatedQuadratic:
    """½ xᵀ Q diag(λ) Qᵀ x with Q = R₁R₂R₃, Rᵢ = I − 2uᵢuᵢᵀ (invented)."""

    def __init__(self, spectrum: np.ndarray, rng: np.random.Generator) -> None:
        self.spectrum = spectrum
        self.normals = [v / np.linalg.norm(v) for v in rng.standard_normal((3, spectrum.size))]

    def _rotate(self, x: np.ndarray, normals: list) -> np.ndarray:
        for u in normals:
            x = x - 2.0 * u * (u @ x)
        return x

    def gradient(self, x: np.ndarray) -> np.ndarray:
        y = self._rotate(x, self.normals[::-1])  # Qᵀx
        return self._rotate(self.spectrum * y, self.normals)  # Q Λ Qᵀ x

    def value(self, x: np.ndarray) -> float:
        return 0.5 * float(x @ self.gradient(x))


def dense_hessian(gradient, x: np.ndarray, step: float = 1e-5) -> np.ndarray:
    columns = []
    for i in range(x.size):
        e = np.zeros(x.size)
        e[i] = step * max(1.0, abs(x[i]))
        columns.append((gradient(x + e) - gradient(x - e)) / (2.0 * e[i]))
    matrix = np.array(columns).T
    return 0.5 * (matrix + matrix.T)


def quadratics() -> bool:
    print("Part 1: invented quadratics (target: within 10% using <= 30 gradients)")
    print(f"{'spectrum':<10} {'n':>6} {'kappa':>7} {'L_hat/lambda_max':>17} {'gradients':>9} "
          f"{'status':<14}")
    worst_error, worst_cost, passed = 0.0, 0, True
    for kind in ("geometric", "uniform"):
        for n in DIMENSIONS:
            for kappa in CONDITIONS:
                rng = np.random.default_rng([n, int(np.log10(kappa))])
                spectrum = (np.geomspace(1.0, kappa, n) if kind == "geometric" else
                            np.concatenate([[1.0, kappa], rng.uniform(1.0, kappa, n - 2)]))
                problem = RotatedQuadratic(rng.permutation(spectrum), rng)
                x = np.random.default_rng(0).standard_normal(n)
                estimate = estimate_smoothness((problem.value, problem.gradient), x)
                ratio = estimate.lipschitz / kappa
                cost = estimate.evaluations.gradients
                worst_error, worst_cost = max(worst_error, abs(ratio - 1)), max(worst_cost, cost)
                passed &= abs(ratio - 1) <= 0.1 and cost <= MAX_GRADIENTS
                print(f"{kind:<10} {n:>6} {kappa:>7.0e} {ratio:>17.4f} {cost:>9} "
                      f"{estimate.status:<14}")
    print(f"worst relative error {worst_error:.2%}, most gradients {worst_cost}: "
          f"{'PASS' if passed else 'FAIL'}\n")
    return passed


def mgh() -> bool:
    print("Part 2: MGH problems at the standard starts (reference: dense FD Hessian)")
    print(f"{'problem':<34} {'n':>4} {'reference':>11} {'L_hat':>11} {'rel. error':>10} "
          f"{'gradients':>9}")
    problems = mgh_problems() + [get_problem("extended_rosenbrock", dimension=100)]
    within, rosenbrock_ok, errors = 0, True, []
    for problem in problems:
        x = problem.start.copy()
        exact = float(np.abs(np.linalg.eigvalsh(dense_hessian(problem.gradient, x))).max())
        estimate = estimate_smoothness((problem.value, problem.gradient), x)
        if estimate.lipschitz is None:
            print(f"{problem.name:<34} {problem.dimension:>4} {exact:>11.4g} "
                  f"{'-':>11} {'-':>10} {estimate.evaluations.gradients:>9}  {estimate.status}")
            continue
        error = abs(estimate.lipschitz - exact) / exact
        errors.append(error)
        within += error <= 0.2
        if "rosenbrock" in problem.name:
            rosenbrock_ok &= error <= 0.2
        print(f"{problem.name:<34} {problem.dimension:>4} {exact:>11.4g} "
              f"{estimate.lipschitz:>11.4g} {error:>10.2%} {estimate.evaluations.gradients:>9}")
    print(f"within 20%: {within} of {len(problems)}; median error {np.median(errors):.2%}; "
          f"Rosenbrock-type within 20%: {'PASS' if rosenbrock_ok else 'FAIL'}")
    return rosenbrock_ok


if __name__ == "__main__":
    quadratics()
    mgh()
