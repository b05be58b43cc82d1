"""Failure tests: `Divergence`, `Stall`."""

from __future__ import annotations

import math

import numpy as np

from linestep import _array, _validate
from linestep.stopping._base import (
    DEFAULT_BOUND,
    DEFAULT_STALL_ITERATIONS,
    Criterion,
    Kind,
    Progress,
    _History,
    _positive_seconds,
    _relative,
    _scalar,
)

# ----------------------------------------------------------------------- failures

# A value counts as risen above the best only by more than this, relative to
# max(1, |best|) (about √ε of float64: far above rounding noise at an optimum).
RISE_RTOL = 1e-8
_DIVERGING_FIX = "the step is probably too large, so use a line search or a smaller step."


class Divergence(Criterion):
    """Failed when the run has blown up.

    Fires, checking in this order, when x, the value or the gradient has a
    non-finite entry; when ``|f_k| > bound``; or, if `growth` is set, when
    ``f_k > f_0 + growth * max(1, |f_0|)``.

    Parameters
    ----------
    bound : float, default 1e100
        Largest acceptable ``|f|``, > 0 (inf switches the test off). Far
        below overflow, so a run that is blowing up stops while its numbers
        can still be printed.
    growth : float or None, default None
        Allowed rise of the value above the start, in units of
        ``max(1, |f_0|)``; None switches the test off. Leave it off for
        nonmonotone methods, whose values may climb for a while.
    """

    __slots__ = ("bound", "growth")

    def __init__(self, *, bound: float = DEFAULT_BOUND, growth: float | None = None) -> None:
        self.bound = _positive_seconds("bound", bound)
        self.growth = None if growth is None else _validate.nonnegative("growth", growth)

    _fields = ("bound", "growth")

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        k = progress.iteration
        value = _scalar(progress.value)
        if not math.isfinite(value):
            return Kind.failed, f"The value is {value} at iteration {k}; {_DIVERGING_FIX}"
        if progress.gradient is not None and not _array.all_finite(np.asarray(progress.gradient)):
            return Kind.failed, (
                f"The gradient has non-finite entries at iteration {k}; {_DIVERGING_FIX}"
            )
        if not _array.all_finite(np.asarray(progress.x)):
            return Kind.failed, f"x has non-finite entries at iteration {k}; {_DIVERGING_FIX}"
        if abs(value) > self.bound:
            return Kind.failed, (
                f"|value| = {abs(value):.3g} exceeds the bound {self.bound:.3g} at "
                f"iteration {k}; {_DIVERGING_FIX}"
            )
        if self.growth is not None:
            start = _scalar(progress.start_value)
            limit = start + self.growth * max(1.0, abs(start))
            if value > limit:
                return Kind.failed, (
                    f"The value {value:.3g} rose above the limit {limit:.3g} "
                    f"(start {start:.3g}, growth={self.growth:.3g}) at iteration {k}; "
                    f"{_DIVERGING_FIX}"
                )
        return None


class Stall(_History):
    """Failed when the best value has not improved for `iterations` iterations.

    The value improves when ``f_k < best - rtol * max(1, |best|)``; `best` then
    becomes f_k. Fires when `iterations` consecutive iterations bring no
    improvement.

    Parameters
    ----------
    iterations : int, default 100
        Iterations without improvement allowed, >= 1.
    rtol : float, default 0.0
        Smallest improvement that counts, relative to ``max(1, |best|)``, in
        [0, 1). The default counts any decrease: a positive `rtol` is
        absolute when ``|best| < 1``, so on problems whose minimum value is 0
        it would call slow but sound convergence a stall.
    """

    __slots__ = ("iterations", "rtol", "_best", "_improved_at", "_previous", "_rises")

    def __init__(self, *, iterations: int = DEFAULT_STALL_ITERATIONS, rtol: float = 0.0) -> None:
        super().__init__()
        self.iterations = _validate.integer("iterations", iterations, minimum=1)
        self.rtol = _relative("rtol", rtol)
        self._best: float | None = None
        self._improved_at = 0
        self._previous: float | None = None  # the value at the last new iteration
        self._rises = 0  # iterations since the last improvement whose value rose

    _fields = ("iterations", "rtol")

    def reset(self) -> None:
        """Forget the best value."""
        super().reset()
        self._best = None
        self._improved_at = 0
        self._previous = None
        self._rises = 0

    def _improves(self, value: float) -> bool:
        if self._best is None:
            return True  # the first value seen is the reference
        if not math.isfinite(value):
            return False
        if not math.isfinite(self._best):
            return True  # any finite value beats a non-finite start
        return value < self._best - self.rtol * max(1.0, abs(self._best))

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        value = _scalar(progress.value)
        k = progress.iteration
        if self._advance(k):
            previous, self._previous = self._previous, value
            if previous is not None and value > previous:
                self._rises += 1
        if self._improves(value):
            self._best = value
            self._improved_at = k
            self._rises = 0
            return None
        idle = k - self._improved_at
        if idle < self.iterations:
            return None
        head = (
            f"The best value {self._best:.3g} (iteration {self._improved_at}) has not "
            f"improved for {idle} iterations"
        )
        if (math.isfinite(value) and value - self._best > RISE_RTOL * max(1.0, abs(self._best))
                and 2 * self._rises >= idle):
            # Values that rose in most idle iterations, well above rounding: a fixed
            # rate that is too large often climbs slowly, so say so.
            reason = (
                f"{head} and the value is now {value:.3g}; if the values keep rising, "
                f"{_DIVERGING_FIX}"
            )
        else:
            spread = value - self._best if math.isfinite(value) else math.inf
            reason = (
                f"{head}; the value is now {value:.3g}, {spread:.3g} above it, and did not "
                "keep rising. x may already be as good as this precision allows: loosen "
                "the convergence tolerances to stop earlier, or check the gradient, the "
                "direction and the step controller."
            )
        return Kind.failed, reason
