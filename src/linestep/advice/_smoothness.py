"""`estimate_smoothness`: the largest Hessian eigenvalue near x from gradients only."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from linestep import _validate
from linestep._objective import as_objective
from linestep._step import Evaluations

__all__ = ["Smoothness", "estimate_smoothness"]

# Gradient evaluations the probe may spend by default (the one at x included).
DEFAULT_MAX_EVALUATIONS = 30
# Stop when the Ritz residual is below this fraction of |θ|: some eigenvalue then lies
# within that fraction of the estimate.
DEFAULT_RTOL = 0.02
# Forward and central difference products agreeing to this relative tolerance mean the
# gradient is linear at the probe's scale: forward differences (1 gradient each) suffice.
LINEARITY_RTOL = 1e-4
# A Lanczos vector shorter than this, relative to the Hessian's scale, ends the iteration:
# the Krylov space is invariant (every eigenvalue it holds is exact).
BREAKDOWN_RTOL = 1e-10

_STATUSES = ("converged", "not_converged", "negative_curvature", "undetermined")


@dataclass(frozen=True, slots=True, kw_only=True)
class Smoothness:
    """The local smoothness of f near x: L̂ ≈ max |eigenvalue of ∇²f(x)|.

    Attributes
    ----------
    lipschitz : float or None
        L̂, the largest |Ritz value| found: the Lipschitz constant of ∇f near x
        (None when `status` is ``undetermined``).
    safe_rate : float or None
        1/L̂: the fixed rate that takes the steepest curvature to its minimum in one step.
    limit_rate : float or None
        2/L̂: fixed rates above it diverge on a quadratic with this curvature.
    lowest : float or None
        The smallest Ritz value (negative when negative curvature was found).
    residual : float or None
        The Ritz residual ‖H·u − θ·u‖ of the L̂ estimate (an eigenvalue of the
        finite-difference Hessian lies within it of ±L̂).
    iterations : int
        Lanczos iterations (Hessian-vector products).
    central : bool
        Whether central differences were used (the gradient was not linear at the
        probe's scale).
    evaluations : Evaluations
        Evaluations spent by the probe.
    status : str
        ``converged`` (residual ≤ rtol·L̂), ``not_converged`` (the budget ran out
        first: L̂ is then a lower estimate), ``negative_curvature`` (every Ritz value
        is negative: L̂ is the largest |eigenvalue|, and no fixed rate converges from
        here) or ``undetermined`` (a gradient was not finite, or no curvature was
        found).
    message : str
        One sentence saying what was found.
    """

    lipschitz: float | None
    safe_rate: float | None
    limit_rate: float | None
    lowest: float | None
    residual: float | None
    iterations: int
    central: bool
    evaluations: Evaluations
    status: str
    message: str

    @property
    def ok(self) -> bool:
        """True when L̂ is usable for a step size (converged or not_converged)."""
        return self.status in ("converged", "not_converged")


def estimate_smoothness(objective: Any, x: Any, *, seed: int = 0,
                        max_evaluations: int = DEFAULT_MAX_EVALUATIONS,
                        rtol: float = DEFAULT_RTOL, difference: str = "auto",
                        gradient: Any = None) -> Smoothness:
    """Estimate L = max |λ(∇²f)| near `x` by Lanczos on finite-difference Hessian products.

    Each Hessian-vector product is H·v ≈ (∇f(x + h·v) − ∇f(x))/h (forward) or
    (∇f(x + h·v) − ∇f(x − h·v))/(2h) (central), with ‖v‖ = 1 and h scaled to x and
    the dtype: h = √ε·(1 + ‖x‖) forward, ε^(1/3)·(1 + ‖x‖) central. The Lanczos
    vectors are fully reorthogonalised (the iteration count is small). The
    iteration stops when the Ritz residual of the largest |Ritz value| falls
    below ``rtol·L̂``, when the Krylov space becomes invariant, or when the
    gradient budget is spent.

    Parameters
    ----------
    objective : Objective, (fun, grad) or callable
        Needs a gradient.
    x : array_like
        The point (any shape; its floating dtype sets the difference step).
    seed : int
        Seed of the random starting vector.
    max_evaluations : int
        Gradient evaluations allowed, the one at `x` included (>= 3).
    rtol : float
        Relative Ritz residual at which the estimate counts as converged.
    difference : {"auto", "forward", "central"}
        ``"auto"`` compares the first product by both formulas and keeps forward
        differences when they agree (the gradient is linear at the probe's scale),
        central ones otherwise.
    gradient : array_like, optional
        ∇f(x) when the caller has it (saves one evaluation).

    Returns
    -------
    Smoothness
        Never raises for numeric trouble: a non-finite gradient gives status
        ``undetermined`` with the reason.

    Raises
    ------
    ValueError, TypeError
        Bad arguments (non-finite `x`, unknown `difference`, an objective without
        a gradient). Exceptions raised by the objective itself propagate.

    References
    ----------
    C. Lanczos, "An iteration method for the solution of the eigenvalue problem of
    linear differential and integral operators", J. Res. Nat. Bur. Standards
    45(4):255-282, 1950. G. H. Golub and C. F. Van Loan, *Matrix Computations*,
    4th ed., 2013, §10.1 (Lanczos with full reorthogonalisation) and §10.1.4
    (Ritz residuals).

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import estimate_smoothness
    >>> scales = np.array([1.0, 10.0, 100.0])          # invented: f = ½ Σ sᵢ xᵢ²
    >>> f = lambda x: 0.5 * float(scales @ x**2)
    >>> g = lambda x: scales * x
    >>> estimate = estimate_smoothness((f, g), np.ones(3))
    >>> round(estimate.lipschitz, 1), round(estimate.safe_rate, 4), estimate.status
    (100.0, 0.01, 'converged')
    >>> estimate.evaluations.gradients <= 5
    True
    """
    objective = as_objective(objective)
    if not objective.has_gradient:
        raise TypeError("`objective` needs a gradient for estimate_smoothness; pass "
                        "(fun, grad) or Objective(fun_and_grad, fused=True).")
    seed = _validate.integer("seed", seed, minimum=0)
    max_evaluations = _validate.integer("max_evaluations", max_evaluations, minimum=3)
    rtol = _validate.open_unit("rtol", rtol)
    difference = _validate.choice("difference", difference, ("auto", "forward", "central"))
    point = np.asarray(x)
    if point.dtype.kind not in "fiub":
        raise TypeError(f"`x` must be an array of real numbers; got {x!r}.")
    if point.dtype.kind != "f":
        point = point.astype(np.float64)
    if not np.all(np.isfinite(point)):
        raise ValueError("`x` must be finite; it contains NaN or infinity.")
    return _Probe(objective, point, seed, max_evaluations, rtol, difference, gradient).run()


class _Probe:
    """One Lanczos run; holds the point, the counters and the Lanczos basis."""

    def __init__(self, objective: Any, point: np.ndarray, seed: int, max_evaluations: int,
                 rtol: float, difference: str, gradient: Any) -> None:
        self.objective = objective
        self.point = point
        self.shape, self.dtype = point.shape, point.dtype
        self.flat = point.reshape(-1).astype(np.float64)
        self.n = self.flat.size
        self.seed = seed
        self.max_evaluations = max_evaluations
        self.rtol = rtol
        self.difference = difference
        self.given_gradient = gradient
        self.start = objective.evaluations
        epsilon = float(np.finfo(self.dtype).eps)
        scale = 1.0 + float(np.linalg.norm(self.flat))
        self.forward_step = math.sqrt(epsilon) * scale
        self.central_step = epsilon ** (1.0 / 3.0) * scale
        self.central = difference == "central"

    def gradient_at(self, flat: np.ndarray) -> np.ndarray | None:
        """∇f at a flat point (None when not finite)."""
        value = self.objective.gradient(flat.reshape(self.shape).astype(self.dtype))
        array = np.asarray(value, dtype=np.float64).reshape(-1)
        if array.size != self.n or not np.all(np.isfinite(array)):
            return None
        return array

    def used(self) -> int:
        return (self.objective.evaluations - self.start).gradients

    def product(self, v: np.ndarray) -> np.ndarray | None:
        """H·v by the chosen difference formula."""
        if self.central:
            h = self.central_step
            plus, minus = self.gradient_at(self.flat + h * v), self.gradient_at(self.flat - h * v)
            if plus is None or minus is None:
                return None
            return (plus - minus) / (2.0 * h)
        h = self.forward_step
        plus = self.gradient_at(self.flat + h * v)
        return None if plus is None else (plus - self.g0) / h

    def first_product(self, v: np.ndarray) -> np.ndarray | None:
        """H·v₁; in auto mode also decides between forward and central differences."""
        if self.difference != "auto":
            return self.product(v)
        h = self.central_step
        plus, minus = self.gradient_at(self.flat + h * v), self.gradient_at(self.flat - h * v)
        if plus is None or minus is None:
            return None
        central = (plus - minus) / (2.0 * h)
        forward = (plus - self.g0) / h
        size = float(np.linalg.norm(central))
        self.central = float(np.linalg.norm(forward - central)) > LINEARITY_RTOL * max(size, 1e-300)
        return central

    def run(self) -> Smoothness:
        if self.given_gradient is not None:
            g0 = np.asarray(self.given_gradient, dtype=np.float64).reshape(-1)
            if g0.size != self.n:
                raise ValueError(f"`gradient` has {g0.size} entries; `x` has {self.n}: give "
                                 "the gradient at `x`, or leave it out.")
            self.g0 = g0 if np.all(np.isfinite(g0)) else None
        else:
            self.g0 = self.gradient_at(self.flat)
        if self.g0 is None:
            return self.undetermined(0, "The gradient at x is not finite, so no curvature "
                                        "can be measured there.")
        rng = np.random.default_rng(self.seed)
        v = rng.standard_normal(self.n)
        v /= np.linalg.norm(v)
        basis = [v]
        alphas: list[float] = []
        betas: list[float] = []
        theta = residual = lowest = highest = 0.0
        while True:
            w = self.first_product(v) if not alphas else self.product(v)
            if w is None:
                found = f" (the estimate so far was {abs(theta):.4g})" if alphas else ""
                return self.undetermined(len(alphas), "A gradient evaluated near x was not "
                                         f"finite, so the curvature probe stopped{found}.")
            alpha = float(v @ w)
            alphas.append(alpha)
            w = w - alpha * v - (betas[-1] * basis[-2] if betas else 0.0)
            stacked = np.array(basis)
            w -= stacked.T @ (stacked @ w)  # full reorthogonalisation, twice is enough
            w -= stacked.T @ (stacked @ w)
            beta = float(np.linalg.norm(w))
            theta, residual, lowest, highest = _ritz(alphas, betas, beta)
            scale = max(abs(theta), abs(lowest), 1e-300)
            invariant = beta <= BREAKDOWN_RTOL * scale or len(alphas) >= self.n
            converged = residual <= self.rtol * abs(theta)
            spent = self.used() + (2 if self.central else 1) > self.max_evaluations
            if invariant or converged or spent:
                return self.finish(theta, residual, lowest, highest, len(alphas),
                                   invariant or converged)
            betas.append(beta)
            v = w / beta
            basis.append(v)

    def evaluations(self) -> Evaluations:
        return self.objective.evaluations - self.start

    def undetermined(self, iterations: int, message: str) -> Smoothness:
        return Smoothness(lipschitz=None, safe_rate=None, limit_rate=None, lowest=None,
                          residual=None, iterations=iterations, central=self.central,
                          evaluations=self.evaluations(), status="undetermined",
                          message=message)

    def finish(self, theta: float, residual: float, lowest: float, highest: float,
               iterations: int, converged: bool) -> Smoothness:
        lipschitz = abs(theta)
        if not lipschitz > 0.0 or not math.isfinite(lipschitz):
            return self.undetermined(iterations, "No curvature was found near x (the "
                                     "gradient does not change along the probed directions).")
        kind = "central" if self.central else "forward"
        if highest <= 0.0:
            status = "negative_curvature"
            message = (f"Only negative curvature was found near x (largest |eigenvalue| ≈ "
                       f"{lipschitz:.4g}, {iterations} Lanczos steps, {kind} differences): "
                       "x is near a maximum or saddle, so no fixed rate converges from here; "
                       "L̂ is the largest |eigenvalue|.")
        elif converged:
            status = "converged"
            message = (f"L̂ ≈ {lipschitz:.4g} (Ritz residual {residual:.2g} after {iterations} "
                       f"Lanczos steps, {kind} differences): fixed rates below "
                       f"{2 / lipschitz:.4g} are stable near x.")
        else:
            status = "not_converged"
            message = (f"L̂ ≈ {lipschitz:.4g} after {iterations} Lanczos steps (Ritz residual "
                       f"{residual:.2g} is still above {self.rtol:g}·L̂; the gradient budget "
                       "ran out): the true L may be somewhat larger.")
        if theta < 0.0 < highest:
            message += f" The largest |eigenvalue| is negative ({theta:.4g})."
        return Smoothness(lipschitz=lipschitz, safe_rate=1.0 / lipschitz,
                          limit_rate=2.0 / lipschitz, lowest=lowest, residual=residual,
                          iterations=iterations, central=self.central,
                          evaluations=self.evaluations(), status=status, message=message)


def _ritz(alphas: list[float], betas: list[float],
          beta: float) -> tuple[float, float, float, float]:
    """The Ritz value of largest magnitude, its residual β_k·|last entry of its vector|,
    and the smallest and largest Ritz values."""
    k = len(alphas)
    tridiagonal = np.diag(alphas)
    if k > 1:
        off = np.array(betas[: k - 1])
        tridiagonal += np.diag(off, 1) + np.diag(off, -1)
    values, vectors = np.linalg.eigh(tridiagonal)
    index = int(np.argmax(np.abs(values)))
    return (float(values[index]), abs(beta * float(vectors[-1, index])), float(values[0]),
            float(values[-1]))
