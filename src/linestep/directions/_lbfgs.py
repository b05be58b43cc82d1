"""Limited-memory BFGS directions (Liu & Nocedal 1989; Nocedal & Wright Alg. 7.4)."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from linestep import _array, _validate
from linestep.directions._base import (
    _as_output,
    _check_same_problem,
    _flat_pair,
    _is_descent,
    _Previous,
    _Rebuildable,
)


class LBFGS(_Rebuildable):
    """Limited-memory BFGS: d = −H_k·∇f from the last `memory` curvature pairs.

    Each call forms the pair s = x_k − x_{k−1}, y = ∇f_k − ∇f_{k−1} from the
    previous call and keeps the newest `memory` pairs. H_k·∇f is computed by the
    two-loop recursion (Nocedal & Wright Alg. 7.4) with the initial matrix
    H0 = γ·I, γ = sᵀy / yᵀy of the newest pair (N&W eq. 7.20). Cost per call:
    about 4·m·n multiply-adds; memory: 2·m·n numbers, in x's dtype, allocated
    once in ring buffers (n = x.size, any shape is flattened and reshaped back).

    Rules:

    * With no pairs stored (the first call after construction or `reset`, and
      after a restart) the direction is −∇f, scaled by min(1, 1/‖∇f‖₂) when
      `scale_first` is true: nothing is known of the curvature yet, so a unit
      trial step moves x by at most 1 (the first step of Liu & Nocedal's 1989
      driver; common practice). On badly scaled starts the raw −∇f sends the unit
      trial far away, often into another basin.
    * A pair is *skipped* when sᵀy ≤ `curvature_tolerance`·‖s‖·‖y‖, i.e. when the
      cosine between s and y is not positive to working precision; BFGS needs
      sᵀy > 0 to keep H positive definite (N&W eq. 6.7). Skipping is common
      practice; the scale-free form mirrors the SR1 safeguard of N&W eq. 6.26. A
      search that enforces the curvature condition (Wolfe) guarantees sᵀy > 0;
      Armijo does not. The default floor is the machine epsilon of x's dtype, not
      a fixed 1e-8: on a quadratic with Hessian condition number κ the cosine
      between s and y = H·s can be as small as 2√κ/(1 + κ) (the Kantorovich
      bound), and badly scaled problems reach κ ≈ 1e18 (Powell's badly scaled
      function at its minimiser, MGH problem 3), where a floor of 1e-8 rejects
      most of the valid pairs and L-BFGS slows to a crawl.
    * When x did not move (s = 0, a rejected step), nothing is updated and the
      same H is applied to the gradient given.
    * When −H·∇f is not a descent direction (∇fᵀd ≥ 0) or not finite, the pairs
      are dropped, −∇f is returned and ``restarted`` is True for that call.

    Parameters
    ----------
    memory : int
        Number of curvature pairs kept, >= 1 (3 to 20 is common practice,
        N&W §7.2).
    curvature_tolerance : float or None
        Cosine floor of the skip rule above, >= 0; None (the default) uses the
        machine epsilon of x's dtype (2.2e-16 for float64, 1.2e-7 for float32).
    scale_first : bool
        Scale the steepest-descent direction used while no pairs are stored.

    Attributes
    ----------
    restarted : bool
        The last call fell back to steepest descent.
    stored : int
        Pairs currently held.
    skipped : int
        Pairs skipped by the curvature rule since the last reset.

    References
    ----------
    J. Nocedal, "Updating quasi-Newton matrices with limited storage",
    Math. Comp. 35(151):773–782, 1980.
    D. C. Liu and J. Nocedal, "On the limited memory BFGS method for large scale
    optimization", Math. Programming 45:503–528, 1989.
    J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., 2006,
    Alg. 7.4, eq. 7.20, §6.1.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep.directions import LBFGS
    >>> direction = LBFGS(memory=5)
    >>> direction
    LBFGS(memory=5, curvature_tolerance=None, scale_first=True)

    On f(x) = ½·xᵀ·diag(1, 4)·x the first call scales −∇f to unit length, and
    the first pair gives γ = sᵀy/yᵀy:

    >>> A = np.diag([1.0, 4.0])
    >>> np.round(direction(np.array([1.0, 1.0]), A @ [1.0, 1.0]), 4)
    array([-0.2425, -0.9701])
    >>> d = direction(np.array([0.5, -1.0]), A @ [0.5, -1.0])
    >>> bool(d @ (A @ [0.5, -1.0]) < 0), direction.stored, direction.restarted
    (True, 1, False)
    """

    _fields = ("memory", "curvature_tolerance", "scale_first")

    def __init__(self, memory: int = 10, *,
                 curvature_tolerance: float | None = None,
                 scale_first: bool = True) -> None:
        self.scale_first = bool(scale_first)
        self.memory = _validate.integer("memory", memory, minimum=1)
        if curvature_tolerance is not None:
            curvature_tolerance = _validate.nonnegative("curvature_tolerance",
                                                        curvature_tolerance)
        self.curvature_tolerance = curvature_tolerance
        self.reset()

    def reset(self) -> None:
        """Forget the pairs and the previous point."""
        self.restarted = False
        self.stored = 0
        self.skipped = 0
        self._previous: _Previous | None = None
        self._s: np.ndarray | None = None
        self._y: np.ndarray | None = None
        self._rho: np.ndarray | None = None
        self._newest = -1  # ring-buffer slot of the newest pair

    def __call__(self, x: Any, gradient: Any) -> Any:
        _check_same_problem("LBFGS", self._previous, x)
        x_flat, g = _flat_pair("LBFGS", x, gradient)
        if self._previous is None or self._s is None:
            self._allocate(x_flat.size, x_flat.dtype)
        else:
            with np.errstate(over="ignore", invalid="ignore"):  # overflow → skipped pair
                self._update(x_flat - self._previous.x, g - self._previous.gradient)
        self.restarted = False
        if self.stored == 0:
            d = self._steepest(g)
        else:
            with np.errstate(over="ignore", invalid="ignore"):  # overflow → restart below
                d = -self._inverse_hessian_times(g)
            if not _is_descent(g, d) and g.any():
                self.stored = 0
                self.restarted = True
                d = self._steepest(g)
        self._previous = _Previous(x_flat, g, None, _array.shape(x))
        return _as_output(x, d)

    # -- internals ----------------------------------------------------------------
    def _steepest(self, g: np.ndarray) -> np.ndarray:
        if not self.scale_first:
            return -g
        with np.errstate(over="ignore"):  # an overflowing norm leaves −g unscaled
            norm = math.sqrt(float(g @ g))
        return -g / norm if norm > 1.0 and math.isfinite(norm) else -g

    def _allocate(self, size: int, dtype: np.dtype) -> None:
        self._s = np.zeros((self.memory, size), dtype=dtype)
        self._y = np.zeros((self.memory, size), dtype=dtype)
        self._rho = np.zeros(self.memory, dtype=dtype)
        self._floor = skip_floor(self.curvature_tolerance, dtype)
        self.stored = 0
        self._newest = -1

    def _update(self, s: np.ndarray, y: np.ndarray) -> None:
        if not s.any():
            return  # x did not move: no new curvature information
        curvature = float(s @ y)
        s_norm, y_norm = math.sqrt(float(s @ s)), math.sqrt(float(y @ y))
        if not (curvature > self._floor * s_norm * y_norm
                and math.isfinite(curvature) and math.isfinite(s_norm * y_norm)):
            self.skipped += 1
            return
        slot = (self._newest + 1) % self.memory
        self._s[slot] = s
        self._y[slot] = y
        self._rho[slot] = 1.0 / curvature
        self._newest = slot
        self.stored = min(self.stored + 1, self.memory)

    def _order(self) -> list[int]:
        """Ring-buffer slots from the oldest pair to the newest."""
        first = self._newest - self.stored + 1
        return [(first + i) % self.memory for i in range(self.stored)]

    def _inverse_hessian_times(self, g: np.ndarray) -> np.ndarray:
        newest = self._newest
        s, y = self._s[newest], self._y[newest]
        gamma = float(s @ y) / float(y @ y)
        return _two_loop(g, self._s, self._y, self._rho, self._order(), gamma)


def skip_floor(tolerance: float | None, dtype: Any) -> float:
    """The L-BFGS skip rule's cosine floor: `tolerance`, or the dtype's machine epsilon."""
    return float(np.finfo(dtype).eps) if tolerance is None else tolerance


def _two_loop(g: np.ndarray, s: np.ndarray, y: np.ndarray, rho: np.ndarray,
              order: list[int], gamma: float) -> np.ndarray:
    """H·g by the two-loop recursion (N&W Alg. 7.4) with H0 = gamma·I.

    `s`, `y` hold pairs in rows, `rho` their 1/sᵀy, and `order` lists the rows to
    use from the oldest pair to the newest.
    """
    q = g.copy()
    alpha = [0.0] * len(order)
    for j in range(len(order) - 1, -1, -1):  # newest to oldest
        i = order[j]
        alpha[j] = rho[i] * float(s[i] @ q)
        q -= alpha[j] * y[i]
    r = q
    r *= gamma
    for j, i in enumerate(order):  # oldest to newest
        beta = rho[i] * float(y[i] @ r)
        r += (alpha[j] - beta) * s[i]
    return r
