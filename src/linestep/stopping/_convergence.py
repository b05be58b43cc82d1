"""Convergence tests: `GradientNorm`, `ValueChange`, `StepLength`."""

from __future__ import annotations

import math
from collections import deque
from typing import Any

import numpy as np

from linestep import _validate
from linestep.stopping._base import (
    DEFAULT_GRADIENT_ATOL,
    DEFAULT_GRADIENT_RTOL,
    DEFAULT_VALUE_RTOL,
    NORM_NAMES,
    TINY,
    Criterion,
    Kind,
    Progress,
    _History,
    _norm_order,
    _relative,
    _scalar,
    _vector_norm,
)

# ------------------------------------------------------------- convergence tests


class GradientNorm(Criterion):
    """Converged when the gradient is small, absolutely or relative to the start.

    Fires when ``||g_k|| <= max(atol, rtol * ||g_0||)``.

    Parameters
    ----------
    atol : float, default 1e-6
        Absolute tolerance, >= 0.
    rtol : float, default 1e-8
        Tolerance relative to the gradient norm at the start, in [0, 1);
        0 switches the relative test off.
    norm : {inf, 2, 1}, default inf
        The vector norm; the max-norm by default, which does not grow with
        the number of variables.
    """

    __slots__ = ("atol", "rtol", "norm")

    def __init__(
        self,
        *,
        atol: float = DEFAULT_GRADIENT_ATOL,
        rtol: float = DEFAULT_GRADIENT_RTOL,
        norm: float = math.inf,
    ) -> None:
        self.atol = _validate.nonnegative("atol", atol)
        self.rtol = _relative("rtol", rtol)
        self.norm = _norm_order(norm)

    _fields = ("atol", "rtol", "norm")

    def _relative_part(self, start_gradient: Any) -> float:
        if self.rtol == 0.0 or start_gradient is None:
            return 0.0
        start = _vector_norm(start_gradient, self.norm)
        # A non-finite start gradient gives no usable scale.
        return self.rtol * start if math.isfinite(start) else 0.0

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        if progress.gradient is None:
            return None
        size = _vector_norm(progress.gradient, self.norm)
        relative = self._relative_part(progress.start_gradient)
        tolerance = max(self.atol, relative)
        if not size <= tolerance:  # also False for NaN
            return None
        detail = f"atol={self.atol:.3g}"
        if relative > 0.0:
            detail += f", rtol*|g0|={relative:.3g}"
        reason = (
            f"Gradient {NORM_NAMES[self.norm]} {size:.3g} is at or below the tolerance "
            f"{tolerance:.3g} ({detail})."
        )
        return Kind.converged, reason


class ValueChange(_History):
    """Converged when the value has stopped changing over a window of iterations.

    Fires at iteration k >= window when
    ``|f_k - f_{k-w}| <= max(atol, rtol * max(|f_k|, |f_{k-w}|, tiny))``
    with w = `window` and tiny the smallest normal double.

    Parameters
    ----------
    atol : float, default 0.0
        Absolute tolerance, >= 0.
    rtol : float, default 1e-12
        Relative tolerance in [0, 1).
    window : int, default 1
        Compare with the value this many iterations back; a window above 1
        keeps one short step from ending the run.
    """

    __slots__ = ("atol", "rtol", "window", "_values")

    def __init__(
        self, *, atol: float = 0.0, rtol: float = DEFAULT_VALUE_RTOL, window: int = 1
    ) -> None:
        super().__init__()
        self.atol = _validate.nonnegative("atol", atol)
        self.rtol = _relative("rtol", rtol)
        self.window = _validate.integer("window", window, minimum=1)
        self._values: deque[float] = deque(maxlen=self.window + 1)

    _fields = ("atol", "rtol", "window")

    def reset(self) -> None:
        """Forget the stored values."""
        super().reset()
        self._values.clear()

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        value = _scalar(progress.value)
        if self._advance(progress.iteration) or not self._values:
            self._values.append(value)
        else:
            self._values[-1] = value
        if len(self._values) <= self.window:
            return None
        old = self._values[0]
        change = abs(value - old)
        scale = max(abs(value), abs(old), TINY)
        tolerance = max(self.atol, self.rtol * scale)
        if not change <= tolerance:
            return None
        span = "iteration" if self.window == 1 else f"{self.window} iterations"
        reason = (
            f"The value changed by {change:.3g} over the last {span}, at or below the "
            f"tolerance {tolerance:.3g}."
        )
        return Kind.converged, reason


class StepLength(_History):
    """Converged when the last step was short.

    Fires when ``||x_k - x_{k-1}|| <= max(atol, rtol * ||x_k||)``, with x_{k-1}
    the point stored at the previous iteration; never at the first snapshot.

    Parameters
    ----------
    atol : float, default 1e-12
        Absolute tolerance, >= 0; needed when the solution is at or near 0.
    rtol : float, default 1e-10
        Tolerance relative to the size of x, in [0, 1).
    norm : {inf, 2, 1}, default inf
        The vector norm, as for `GradientNorm`.
    """

    __slots__ = ("atol", "rtol", "norm", "_previous", "_current")

    def __init__(self, *, atol: float = 1e-12, rtol: float = 1e-10, norm: float = math.inf) -> None:
        super().__init__()
        self.atol = _validate.nonnegative("atol", atol)
        self.rtol = _relative("rtol", rtol)
        self.norm = _norm_order(norm)
        self._previous: np.ndarray | None = None
        self._current: np.ndarray | None = None

    _fields = ("atol", "rtol", "norm")

    def reset(self) -> None:
        """Forget the stored points."""
        super().reset()
        self._previous = None
        self._current = None

    def _test(self, progress: Progress) -> tuple[Kind, str] | None:
        # A copy: the caller may update x in place.
        x = np.array(np.ravel(np.asarray(progress.x)), dtype=float)
        if self._advance(progress.iteration):
            self._previous = self._current
        self._current = x
        if self._previous is None or self._previous.shape != x.shape:
            return None
        with np.errstate(over="ignore", invalid="ignore"):
            length = _vector_norm(x - self._previous, self.norm)
        tolerance = max(self.atol, self.rtol * _vector_norm(x, self.norm))
        if not length <= tolerance:
            return None
        reason = (
            f"The last step's length ({NORM_NAMES[self.norm]}) {length:.3g} is at or "
            f"below the tolerance {tolerance:.3g}."
        )
        return Kind.converged, reason
