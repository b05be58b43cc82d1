"""Nonlinear conjugate-gradient directions: PR+ and Hager–Zhang β."""

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

# Hager–Zhang truncation constant η in η_k = −1/(‖d‖·min(η, ‖g_prev‖)) (HZ 2005 use 0.01).
DEFAULT_HZ_ETA = 0.01
# Powell's (1977) restart threshold ν in |g_kᵀg_{k−1}| ≥ ν·‖g_k‖², recalled from memory;
# offered as the suggested value for `orthogonality_restart` (it is off by default).
POWELL_ORTHOGONALITY = 0.2

_BETAS = ("pr+", "hager_zhang")


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
    PR+, N&W §5.2); Armijo steps work but restart more often. CG_DESCENT's pairing,
    ``HagerZhang(initial=HagerZhangStart())`` with the Hager–Zhang β, is the one
    `benchmarks/nonlinear_cg.py` measures: its first-trial rule I1 makes steps nearly
    exact where f is close to quadratic, which keeps the directions conjugate.

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
