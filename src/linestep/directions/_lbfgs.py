"""Limited-memory BFGS directions (Liu & Nocedal 1989), in the compact form of
Byrd, Nocedal & Schnabel 1994."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from linestep import _array, _validate
from linestep.directions._base import _as_output, _flat_views, _Rebuildable


class LBFGS(_Rebuildable):
    """Limited-memory BFGS: d = −H_k·∇f from the last `memory` curvature pairs.

    Each call forms the pair s = x_k − x_{k−1}, y = ∇f_k − ∇f_{k−1} from the
    previous call and keeps the newest `memory` pairs. H_k·∇f is the product with
    the L-BFGS matrix of N&W eq. 7.19 (initial matrix H0 = γ·I, γ = sᵀy / yᵀy of
    the newest pair, N&W eq. 7.20). Cost per call: about 6·m·n multiply-adds;
    memory: 2·(m + 1)·n numbers in x's dtype, allocated once (n = x.size, any
    shape is flattened and reshaped back; see Notes).

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

    Notes
    -----
    The product is computed in the compact form of Byrd, Nocedal and Schnabel
    (1994): one product of the stored pairs with ∇f, one combination of them, and
    O(m²) work on small m×m matrices kept up to date as pairs come and go. It is
    the same matrix as the two-loop recursion (N&W Alg. 7.4), in a few large array
    operations instead of about 4·m small ones.

    References
    ----------
    J. Nocedal, "Updating quasi-Newton matrices with limited storage",
    Math. Comp. 35(151):773–782, 1980.
    D. C. Liu and J. Nocedal, "On the limited memory BFGS method for large scale
    optimization", Math. Programming 45:503–528, 1989.
    R. H. Byrd, J. Nocedal and R. B. Schnabel, "Representations of quasi-Newton
    matrices and their use in limited memory methods", Math. Programming
    63:129–156, 1994.
    J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., 2006,
    Alg. 7.4, eqs. 7.19–7.20, §6.1.

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
        self._shape: tuple[int, ...] | None = None  # x's shape, set by the first call
        self._pairs: np.ndarray | None = None  # the history; allocated by the first call

    def __call__(self, x: Any, gradient: Any) -> Any:
        shape = _array.shape(x)
        if self._shape is not None and self._shape != shape:
            raise ValueError(
                f"`x` has shape {shape} but the previous call to LBFGS had shape "
                f"{self._shape}; call reset() before starting on a new problem."
            )
        x_flat, g = _flat_views("LBFGS", x, gradient)
        with np.errstate(over="ignore", invalid="ignore"):  # overflow → skip or restart
            if self._pairs is None:
                self._allocate(x_flat.size, x_flat.dtype)
                np.copyto(self._columns[1], g)
                products = None
            else:
                products = self._update(x_flat, g)
            np.copyto(self._previous_x, x_flat)
            self._shape = shape
            self.restarted = False
            if self.stored == 0:
                d = self._steepest(g)
            else:
                d = self._direction(g, products)
                # A finite gᵀd proves d finite too (an inf or NaN entry makes it inf or NaN).
                slope = float(g @ d)
                if not (slope < 0.0 and math.isfinite(slope)) and g.any():
                    self._forget()
                    self.restarted = True
                    d = self._steepest(g)
        if x.__class__ is np.ndarray and x.ndim == 1:
            return d  # already x's kind and shape
        return _as_output(x, d)

    # -- internals ----------------------------------------------------------------
    def _steepest(self, g: np.ndarray) -> np.ndarray:
        if not self.scale_first:
            return -g
        norm = math.sqrt(float(g @ g))  # an overflowing norm leaves −g unscaled
        return -g / norm if norm > 1.0 and math.isfinite(norm) else -g

    def _allocate(self, size: int, dtype: np.dtype) -> None:
        """The history, allocated once: every later call works inside these arrays.

        `_pairs` holds s in rows 0..m and y in rows m+1..2m+1: a ring of m + 1 slots,
        one more than the pairs kept, so that a new pair is written into the free slot
        before the skip rule decides on it (no copy, and a skipped pair overwrites
        nothing). The small matrices are indexed by slot, not by age, with zero rows
        and columns for the slots not in use (see `_append`), so no call reorders
        anything; they are float64 whatever x's dtype.
        """
        slots = self.memory + 1
        self._pairs = np.zeros((2 * slots, size), dtype=dtype)
        # Row 0: the new y; row 1: ∇f of the previous call. One product of the history
        # with both rows gives sᵢᵀy, yᵢᵀy (for the update) and sᵢᵀ∇f, yᵢᵀ∇f (for d).
        # (No attribute holds a view into another array: copies and pickles of a
        # direction in mid-run must stay whole.)
        self._columns = np.zeros((2, size), dtype=dtype)
        self._previous_x = np.empty(size, dtype=dtype)
        self._scaled = np.empty(size, dtype=dtype)  # γ·g
        # −N, the negated middle matrix of `_direction`; R⁻¹ (R_ij = s_iᵀy_j for pair i
        # no newer than pair j, zero rows and columns at unused slots); YᵀY; D.
        self._middle = np.zeros((2 * slots, 2 * slots))
        self._inverse_r = np.zeros((slots, slots))
        self._yy = np.zeros((slots, slots))
        self._sy = np.zeros(slots)
        self._core = np.zeros((slots, slots))  # −(D + γ·YᵀY)
        self._floor = skip_floor(self.curvature_tolerance, dtype)
        self._gamma = 1.0
        self._newest = 0  # slot of the newest pair
        self._ages: list[int] = []  # slots in use, oldest first
        self.stored = 0

    @property
    def _s(self) -> np.ndarray | None:
        """The s rows of the history (one per slot), or None before the first call."""
        return None if self._pairs is None else self._pairs[:self.memory + 1]

    def _forget(self) -> None:
        """Drop every pair (the buffers stay allocated)."""
        self.stored = 0
        self._ages = []
        self._inverse_r.fill(0.0)

    def _update(self, x: np.ndarray, g: np.ndarray) -> np.ndarray:
        """Form s and y in the free slot, keep them as the newest pair unless skipped,
        and return the products of the history with [y, g]."""
        slots = self.memory + 1
        free = (self._newest + 1) % slots
        columns = self._columns
        pairs = self._pairs
        s = pairs[free]
        np.subtract(x, self._previous_x, out=s)
        np.subtract(g, columns[1], out=columns[0])  # y; row 1 holds the previous ∇f
        np.copyto(pairs[slots + free], columns[0])
        np.copyto(columns[1], g)
        # Rows of unused slots hold stale pairs; the zero rows and columns of the small
        # matrices at those slots cancel them.
        products = pairs @ columns.T
        ss = float(s @ s)
        if ss == 0.0 and not s.any():
            return products  # x did not move: no new curvature information
        curvature, yy = float(products[free, 0]), float(products[slots + free, 0])
        scale = math.sqrt(ss) * math.sqrt(yy)
        if not (curvature > self._floor * scale
                and math.isfinite(curvature) and math.isfinite(scale)):
            self.skipped += 1
            # Clear the slot so that a non-finite pair cannot reach the products
            # (0·inf in the small products would be NaN).
            s.fill(0.0)
            pairs[slots + free].fill(0.0)
            products[free] = products[slots + free] = 0.0
            return products
        self._append(free, products[:, 0], curvature, yy)
        return products

    def _append(self, free: int, products: np.ndarray, curvature: float, yy: float) -> None:
        """Make the pair in slot `free` the newest; drop the oldest when memory is full.

        In time order R is upper triangular, so appending a pair borders R⁻¹ with one
        column (−R⁻¹c/sᵀy above 1/sᵀy, c the sᵢᵀy of the older pairs), and dropping the
        oldest pair leaves the inverse of R's trailing block, which is R⁻¹'s trailing
        block: in slot indexing its row is cleared (its column holds only the diagonal
        entry). Every slot not in use then has a zero row and column in R⁻¹, which
        cancel whatever stale numbers YᵀY, D and the products hold there.
        """
        slots = self.memory + 1
        inverse_r, yys, ages = self._inverse_r, self._yy, self._ages
        if len(ages) == self.memory:  # drop the oldest pair
            inverse_r[ages.pop(0)] = 0.0
        column = inverse_r @ products[:slots]
        column *= -1.0 / curvature
        inverse_r[:, free] = column
        inverse_r[free, free] = 1.0 / curvature
        row = products[slots:]
        yys[free] = row
        yys[:, free] = row
        yys[free, free] = yy
        self._sy[free] = curvature
        ages.append(free)
        self.stored = len(ages)
        self._newest = free
        gamma = self._gamma = curvature / yy  # N&W eq. 7.20
        # −N = [[R⁻ᵀ·C·R⁻¹, γR⁻ᵀ], [γR⁻¹, 0]] with C = −(D + γ·YᵀY).
        core, middle = self._core, self._middle
        np.multiply(yys, -gamma, out=core)
        core.reshape(-1)[::slots + 1] -= self._sy  # the diagonal, as a view
        np.matmul(inverse_r.T @ core, inverse_r, out=middle[:slots, :slots])
        np.multiply(inverse_r.T, gamma, out=middle[:slots, slots:])
        np.multiply(inverse_r, gamma, out=middle[slots:, :slots])

    def _direction(self, g: np.ndarray, products: np.ndarray | None) -> np.ndarray:
        """−H·g from the compact form (Byrd, Nocedal & Schnabel 1994):

        H = γI + [S Y]·N·[S Y]ᵀ with N = [[R⁻ᵀ(D + γ·YᵀY)R⁻¹, −γR⁻ᵀ], [−γR⁻¹, 0]]
        (their eq. 2.6 with H0 = γI), so −H·g = −γ·g + [S Y]·(−N)·([S Y]ᵀg): the
        product of the history with g (`products`, shared with the update), one small
        product and one combination of the history's rows.
        """
        pairs = self._pairs
        if products is None:
            coefficients = pairs @ g
        else:
            coefficients = products[:, 1]
        weights = self._middle @ coefficients
        if weights.dtype != pairs.dtype:  # float32 history: d in x's dtype
            weights = weights.astype(pairs.dtype)
        d = weights @ pairs
        np.multiply(g, self._gamma, out=self._scaled)
        d -= self._scaled
        return d


def skip_floor(tolerance: float | None, dtype: Any) -> float:
    """The L-BFGS skip rule's cosine floor: `tolerance`, or the dtype's machine epsilon."""
    return float(np.finfo(dtype).eps) if tolerance is None else tolerance


def _two_loop(g: np.ndarray, s: np.ndarray, y: np.ndarray, rho: np.ndarray,
              order: list[int], gamma: float) -> np.ndarray:
    """H·g by the two-loop recursion (N&W Alg. 7.4) with H0 = gamma·I.

    The textbook form of the product `LBFGS` computes in compact form; kept as an
    independent reference for the tests.

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
