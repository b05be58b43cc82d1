"""Search directions for `descend`: steepest descent, L-BFGS and nonlinear CG.

A direction object is called as ``direction(x, gradient) -> d`` once per
iteration, with the current point and gradient. It keeps what it needs from
earlier calls itself (L-BFGS pairs, the previous CG direction), so the driver
only passes the present. Every direction checks that its d is a descent
direction (∇f·d < 0) and otherwise returns the steepest-descent direction −∇f,
setting ``restarted = True`` for that call; `descend` records that in the
history. ``reset()`` forgets all memory.
"""

from __future__ import annotations

import math
from typing import Any, Protocol, runtime_checkable

import numpy as np

from linestep import _array, _validate

__all__ = ["LBFGS", "Direction", "NonlinearCG", "SteepestDescent"]

# Hager–Zhang truncation constant η in η_k = −1/(‖d‖·min(η, ‖g_prev‖)) (HZ 2005 use 0.01).
DEFAULT_HZ_ETA = 0.01
# Powell's (1977) restart threshold ν in |g_kᵀg_{k−1}| ≥ ν·‖g_k‖², recalled from memory;
# offered as the suggested value for `orthogonality_restart` (it is off by default).
POWELL_ORTHOGONALITY = 0.2

_BETAS = ("pr+", "hager_zhang")


class _Rebuildable:
    """repr prints the constructor call that rebuilds the object (from `_fields`)."""

    _fields: tuple[str, ...] = ()

    def __repr__(self) -> str:
        arguments = ", ".join(f"{name}={getattr(self, name)!r}" for name in self._fields)
        return f"{type(self).__name__}({arguments})"


@runtime_checkable
class Direction(Protocol):
    """The protocol `descend` uses for search directions."""

    restarted: bool

    def __call__(self, x: Any, gradient: Any) -> Any: ...

    def reset(self) -> None: ...


class SteepestDescent:
    """d = −∇f(x).

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import SteepestDescent
    >>> SteepestDescent()(np.zeros(2), np.array([1.0, -2.0]))
    array([-1.,  2.])
    """

    restarted = False

    def __repr__(self) -> str:
        return "SteepestDescent()"

    def __call__(self, x: Any, gradient: Any) -> Any:
        return -gradient

    def reset(self) -> None:
        """Nothing to forget."""


# ----------------------------------------------------------------------- shared plumbing


class _Previous:
    """The point, gradient and direction of the previous call, flattened numpy copies."""

    __slots__ = ("x", "gradient", "direction", "shape")

    def __init__(self, x: np.ndarray, gradient: np.ndarray, direction: np.ndarray | None,
                 shape: tuple[int, ...]) -> None:
        self.x = x
        self.gradient = gradient
        self.direction = direction
        self.shape = shape


def _flat_pair(owner: str, x: Any, gradient: Any) -> tuple[np.ndarray, np.ndarray]:
    """Flattened numpy copies of x and ∇f, both in x's floating dtype."""
    x_np = np.array(x, copy=True)
    if x_np.dtype.kind == "c":
        raise TypeError(f"{owner} works with real arrays; got `x` of dtype {x_np.dtype}.")
    if x_np.dtype.kind != "f":
        x_np = x_np.astype(np.float64)
    g_np = np.asarray(gradient)
    if g_np.shape != x_np.shape:
        raise ValueError(
            f"`gradient` must have the shape of `x`; got {g_np.shape} for `gradient` and "
            f"{x_np.shape} for `x`."
        )
    if g_np.dtype.kind == "c":
        raise TypeError(f"{owner} works with real arrays; got `gradient` of dtype {g_np.dtype}.")
    return x_np.reshape(-1), np.array(g_np, dtype=x_np.dtype, copy=True).reshape(-1)


def _check_same_problem(owner: str, previous: _Previous | None, x: Any) -> None:
    shape = _array.shape(x)
    if previous is not None and previous.shape != shape:
        raise ValueError(
            f"`x` has shape {shape} but the previous call to {owner} had shape "
            f"{previous.shape}; call reset() before starting on a new problem."
        )


def _is_descent(g: np.ndarray, d: np.ndarray) -> bool:
    """gᵀd < 0 with d finite (a NaN or inf entry makes the inner product non-finite)."""
    slope = float(g @ d)
    return slope < 0.0 and math.isfinite(slope) and math.isfinite(float(d @ d))


def _as_output(x: Any, d: np.ndarray) -> Any:
    """d shaped like x and of x's array library."""
    return _array.same_kind(x, d.reshape(_array.shape(x)))


# ---------------------------------------------------------------------------------- L-BFGS


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


# ---------------------------------------------------------------------- nonlinear CG


class NonlinearCG(_Rebuildable):
    """Nonlinear conjugate gradients: d_k = −∇f_k + β_k·d_{k−1}.

    With y = ∇f_k − ∇f_{k−1} and d = d_{k−1}:

    * ``beta="pr+"``, Polak–Ribière+ (Gilbert & Nocedal 1992; N&W eq. 5.45):
      β = max(0, ∇f_kᵀy / ‖∇f_{k−1}‖²).
    * ``beta="hager_zhang"`` (Hager & Zhang 2005):
      β_N = (y − 2·d·‖y‖²/dᵀy)ᵀ∇f_k / dᵀy, truncated from below:
      β = max(β_N, η_k), η_k = −1/(‖d‖·min(`eta`, ‖∇f_{k−1}‖)).
      It needs dᵀy > 0, which the Wolfe curvature condition guarantees; when
      dᵀy ≤ 0 (possible after an Armijo step) the call restarts.

    Cost per call: a few inner products; memory: 3·n numbers (previous x, ∇f, d).
    On a strictly convex quadratic with exact line searches both choices
    reproduce linear CG (N&W §5.2), finishing in at most n iterations.

    Restarts (d = −∇f, ``restarted`` True for that call) happen when

    * the new d is not a descent direction (∇f_kᵀd ≥ 0) or is not finite;
    * β is undefined (‖∇f_{k−1}‖ = 0 for PR+, dᵀy ≤ 0 for Hager–Zhang);
    * `restart_every` iterations have passed since the last steepest step
      (restarting every n iterations is common practice, N&W §5.2);
    * `orthogonality_restart` = ν is set and |∇f_kᵀ∇f_{k−1}| ≥ ν·‖∇f_k‖²: successive
      gradients are far from orthogonal (Powell 1977, who used ν = 0.2; N&W
      eq. 5.52 suggest ν = 0.1; values recalled from memory).

    The first call after construction or `reset` returns −∇f without counting as a
    restart. When x did not move (a rejected step) the previous d is returned again
    (still checked for descent).

    Pair it with a search that enforces the strong Wolfe conditions (c2 < 1/2 for
    PR+, N&W §5.2); Armijo steps work but restart more often.

    Parameters
    ----------
    beta : {"pr+", "hager_zhang"}
        The β formula.
    eta : float
        Hager–Zhang truncation constant η > 0 (0.01 in Hager & Zhang 2005); unused
        by PR+.
    restart_every : int or None
        Restart after this many iterations (>= 1); None never restarts on a count.
    orthogonality_restart : float or None
        ν > 0 of Powell's restart test; None switches the test off.

    Attributes
    ----------
    restarted : bool
        The last call fell back to steepest descent.

    References
    ----------
    J. C. Gilbert and J. Nocedal, "Global convergence properties of conjugate
    gradient methods for optimization", SIAM J. Optim. 2(1):21–42, 1992.
    W. W. Hager and H. Zhang, "A new conjugate gradient method with guaranteed
    descent and an efficient line search", SIAM J. Optim. 16(1):170–192, 2005,
    eq. 1.5 and its truncation.
    M. J. D. Powell, "Restart procedures for the conjugate gradient method",
    Math. Programming 12:241–254, 1977.
    J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., 2006, §5.2.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep.directions import NonlinearCG
    >>> NonlinearCG("pr+", restart_every=50)
    NonlinearCG(beta='pr+', eta=0.01, restart_every=50, orthogonality_restart=None)
    >>> direction = NonlinearCG()
    >>> direction(np.array([1.0, 1.0]), np.array([1.0, 4.0]))
    array([-1., -4.])
    >>> d = direction(np.array([0.5, -1.0]), np.array([0.5, -4.0]))
    >>> bool(d @ [0.5, -4.0] < 0), direction.restarted
    (True, False)
    """

    _fields = ("beta", "eta", "restart_every", "orthogonality_restart")

    def __init__(self, beta: str = "hager_zhang", *, eta: float = DEFAULT_HZ_ETA,
                 restart_every: int | None = None,
                 orthogonality_restart: float | None = None) -> None:
        self.beta = _validate.choice("beta", beta, _BETAS)
        self.eta = _validate.positive("eta", eta)
        self.restart_every = (None if restart_every is None
                              else _validate.integer("restart_every", restart_every))
        self.orthogonality_restart = (
            None if orthogonality_restart is None
            else _validate.positive("orthogonality_restart", orthogonality_restart))
        self.reset()

    def reset(self) -> None:
        """Forget the previous point, gradient and direction."""
        self.restarted = False
        self._previous: _Previous | None = None
        self._since_steepest = 0  # iterations since the last steepest-descent direction

    def __call__(self, x: Any, gradient: Any) -> Any:
        _check_same_problem("NonlinearCG", self._previous, x)
        x_flat, g = _flat_pair("NonlinearCG", x, gradient)
        previous = self._previous
        self.restarted = False
        moved = previous is not None and bool((x_flat - previous.x).any())
        if previous is None or not g.any():
            d = -g  # the first direction, or a stationary point (d = 0)
        else:
            if moved:
                with np.errstate(over="ignore", invalid="ignore"):  # overflow → restart below
                    d = self._conjugate(g, previous)
            else:
                d = previous.direction  # a rejected step: nothing new to learn
            if d is None or not _is_descent(g, d):
                d = -g
                self.restarted = True
        if previous is None or self.restarted:
            self._since_steepest = 1
        elif moved:
            self._since_steepest += 1
        # A copy, so that a caller scaling the returned d in place cannot change β's input.
        self._previous = _Previous(x_flat, g, d.copy(), _array.shape(x))
        return _as_output(x, d)

    def _conjugate(self, g: np.ndarray, previous: _Previous) -> np.ndarray | None:
        """d = −g + β·d_prev, or None when a restart rule fires or β is undefined."""
        if self.restart_every is not None and self._since_steepest >= self.restart_every:
            return None
        g_prev, d_prev = previous.gradient, previous.direction
        g_squared = float(g @ g)
        if (self.orthogonality_restart is not None
                and abs(float(g @ g_prev)) >= self.orthogonality_restart * g_squared):
            return None
        y = g - g_prev
        if self.beta == "pr+":
            beta = _beta_pr_plus(g, y, float(g_prev @ g_prev))
        else:
            beta = _beta_hager_zhang(g, y, d_prev, math.sqrt(float(g_prev @ g_prev)),
                                     self.eta)
        if beta is None:
            return None
        return beta * d_prev - g


def _beta_pr_plus(g: np.ndarray, y: np.ndarray, g_prev_squared: float) -> float | None:
    """max(0, gᵀy/‖g_prev‖²) (Gilbert & Nocedal 1992; N&W eq. 5.45); None if undefined."""
    if not (g_prev_squared > 0.0 and math.isfinite(g_prev_squared)):
        return None
    beta = float(g @ y) / g_prev_squared
    return max(0.0, beta) if math.isfinite(beta) else None


def _beta_hager_zhang(g: np.ndarray, y: np.ndarray, d: np.ndarray, g_prev_norm: float,
                      eta: float) -> float | None:
    """The truncated Hager–Zhang β (HZ 2005, eq. 1.5 and its truncation); None if dᵀy ≤ 0."""
    dy = float(d @ y)
    if not (dy > 0.0 and math.isfinite(dy)):
        return None
    beta_n = (float(y @ g) - 2.0 * float(y @ y) * float(d @ g) / dy) / dy
    d_norm = math.sqrt(float(d @ d))
    floor = -1.0 / (d_norm * min(eta, g_prev_norm)) if d_norm * g_prev_norm > 0.0 else -math.inf
    beta = max(beta_n, floor)
    return beta if math.isfinite(beta) else None
