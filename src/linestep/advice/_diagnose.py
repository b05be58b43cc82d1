"""`diagnose`: read a loss history from any loop and say whether its step size fits."""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["Diagnosis", "diagnose"]

# Fewest finite values a history needs before anything is said.
MIN_VALUES = 3
# Fewest significant decreases the pace test of a too-small rate needs.
MIN_DECREASES = 4
# The last iterations the rise and oscillation tests look at.
WINDOW = 20
# A rise counts only above this fraction of the loss's overall range (rounding noise).
NOISE_RTOL = 1e-9
# Fraction of the window's iterations that must rise for "oscillates without decreasing".
RISE_FRACTION = 0.3
# Rates below this fraction of 1/L̂ are too small (DESIGN.md §2: rate < 0.1/L̂).
SMALL_FRACTION = 0.1
# Rates above this multiple of 1/L̂ diverge on a quadratic with curvature L̂.
LIMIT_FRACTION = 2.0
# The pace test: iterations whose decrease shrinks by less than this factor each time, from
# the very first one, move like a rate below 0.1/L on a 1-D quadratic: (1 − 0.1)² = 0.81.
SLOW_PACE = (1.0 - SMALL_FRACTION) ** 2
# The last rises the growth factor of a diverging loss is read from.
GROWTH_ITERATIONS = 6
# The iterations the pace test averages over, from the start.
PACE_ITERATIONS = 5
# The reduction the projected iteration count in the reason refers to.
STATED_REDUCTION = 1e-3
# A suggestion from the loss's pace alone never exceeds this multiple of the current rate.
MAX_GROWTH = 10.0

_KINDS = ("too_large", "too_small", "fits", "undetermined")


@dataclass(frozen=True, slots=True, kw_only=True)
class Diagnosis:
    """What a loss history says about its step size.

    Attributes
    ----------
    kind : str
        ``too_large`` (the loss rose, oscillated without decreasing or turned
        non-finite, or the rate exceeds 2/L̂), ``too_small`` (a monotone decrease
        with rate < 0.1/L̂, or, without L̂, a decrease that from the first
        iteration on shrank no faster than such a rate's), ``fits`` or
        ``undetermined`` (too little or unusable data; `reason` says what is missing).
    lipschitz : float or None
        L̂: the largest secant estimate ‖Δg‖/‖Δx‖ over the history when points and
        gradients are given (or gradients and rates, read as plain gradient
        steps); else, with `rates`, a curvature read from the loss's pace
        (`evidence["lipschitz_from"]` says which); None when unknown.
    suggested_rate : float or None
        About 1/L̂ and never above 2/L̂; from the loss's pace alone it is also
        at most 10 times the current rate. None when no rate can be suggested.
    reason : str
        One sentence quoting the numbers.
    evidence : dict
        The figures behind the verdict (counts, rates, estimates).
    """

    kind: str
    lipschitz: float | None
    suggested_rate: float | None
    reason: str
    evidence: dict[str, Any] = field(default_factory=dict)


def diagnose(values: Any, *, rates: Any = None, xs: Any = None,
             gradients: Any = None) -> Diagnosis:
    """Say whether the step size behind a loss history is too large, too small or fits.

    Parameters
    ----------
    values : sequence of float, or a linestep `Run`
        The loss after each iteration, the start first (one entry per iteration).
        A `Run` from `linestep.descend` gives its history's values and step sizes.
    rates : float or sequence of float, optional
        The step size (learning rate): one number for a fixed rate, or one per
        step (len(values) − 1 entries, or len(values) with the first ignored).
    xs : sequence of arrays, optional
        The point at each iteration (same length as `values`).
    gradients : sequence of arrays, optional
        The gradient at each iteration (same length as `values`). With `xs`, or
        with `rates` (steps read as x_{k+1} = x_k − rate_k·g_k), the secant
        estimates ‖g_{k+1} − g_k‖/‖x_{k+1} − x_k‖ give L̂.

    Returns
    -------
    Diagnosis
        Too little data, or a first value that is not finite, gives ``undetermined``
        with the reason; non-finite values after finite ones are read as divergence.

    Raises
    ------
    TypeError
        Entries that are not numbers, or arrays that are not numeric.
    ValueError
        An empty history, mismatched lengths, or rates that are not positive.

    Examples
    --------
    A pasted history whose loss climbs (invented numbers):

    >>> from linestep import diagnose
    >>> d = diagnose([3.0, 2.1, 2.5, 4.0, 7.9, 15.2, 31.0], rates=0.5)
    >>> d.kind
    'too_large'
    >>> print(d.reason)  # doctest: +NORMALIZE_WHITESPACE
    The loss rose in 5 of the last 6 iterations, to 31 from 3 at the start; its growth
    (×2.92 per iteration) puts the stable limit at 2/L̂ = 0.369, below your rate 0.5.
    >>> round(d.suggested_rate, 3)
    0.185
    """
    values, rates, xs, gradients, note = _unpack(values, rates, xs, gradients)
    values = _numbers("values", values)
    count = values.size
    if count == 0:
        raise ValueError("`values` is empty: pass the loss after each iteration, the start "
                         "first.")
    rate_array = None if rates is None else _rates(rates, count)
    points = None if xs is None else _arrays("xs", xs, count)
    grads = None if gradients is None else _arrays("gradients", gradients, count)
    if points is not None and grads is not None and points.shape != grads.shape:
        raise ValueError(f"`xs` and `gradients` entries must have the same size; got "
                         f"{points.shape[1]} and {grads.shape[1]}.")
    return _Reader(values, rate_array, points, grads, note).verdict()


# --- input -------------------------------------------------------------------------------


def _unpack(values: Any, rates: Any, xs: Any, gradients: Any) -> tuple:
    """A linestep Run gives its history's values and step sizes."""
    history = getattr(values, "history", None)
    if history is None or not hasattr(history, "value"):
        return values, rates, xs, gradients, None
    note = None
    if getattr(values, "verdict", None) is not None:
        note = values.verdict.reason
    if rates is None:
        rates = np.asarray(history.size, dtype=float)
    return np.asarray(history.value, dtype=float), rates, xs, gradients, note


def _numbers(name: str, data: Any) -> np.ndarray:
    if isinstance(data, (str, bytes)):
        raise TypeError(f"`{name}` must be a sequence of numbers; got a string {data!r}.")
    if isinstance(data, numbers.Real):
        data = [data]
    try:
        raw = np.asarray(data)
        if raw.dtype.kind not in "fiub":
            raise TypeError
        array = raw.astype(float)
    except (TypeError, ValueError):
        raise TypeError(f"`{name}` must hold numbers only; entry {_first_bad(data)} is not a "
                        "number. Pass floats (e.g. loss.item() for a tensor).") from None
    if array.ndim != 1:
        raise ValueError(f"`{name}` must be one number per iteration (1-D); got shape "
                         f"{array.shape}.")
    return array


def _first_bad(data: Any) -> str:
    try:
        for index, item in enumerate(data):
            if not isinstance(item, (numbers.Real, np.number)) or isinstance(item, bool):
                return f"{index} ({item!r})"
    except TypeError:
        return repr(data)
    return "?"


def _rates(rates: Any, count: int) -> np.ndarray:
    array = _numbers("rates", rates)
    if array.size == 1:
        array = np.full(max(count - 1, 1), float(array[0]))
    elif array.size == count:
        array = array[1:]
    elif array.size != count - 1:
        raise ValueError(f"`rates` must be one number, or one per step ({count - 1} or "
                         f"{count} entries for {count} values); got {array.size}.")
    if not np.all(np.isfinite(array)) or np.any(array < 0):
        raise ValueError(f"`rates` must be finite and >= 0; got {array.tolist()[:5]}….")
    return array


def _arrays(name: str, data: Any, count: int) -> np.ndarray:
    try:
        length = len(data)
    except TypeError:
        raise TypeError(f"`{name}` must be a sequence with one array per iteration; got "
                        f"{type(data).__name__}.") from None
    if length != count:
        raise ValueError(f"`{name}` has {length} entries but `values` has {count}: give one "
                         "per iteration, the start first.")
    try:
        rows = [np.asarray(item, dtype=float).reshape(-1) for item in data]
    except (TypeError, ValueError):
        raise TypeError(f"`{name}` must hold numeric arrays.") from None
    sizes = {row.size for row in rows}
    if len(sizes) != 1:
        raise ValueError(f"`{name}` entries must all have the same size; got sizes "
                         f"{sorted(sizes)}.")
    return np.array(rows)


# --- reading -----------------------------------------------------------------------------


class _Reader:
    """Holds one history and the figures read from it."""

    def __init__(self, values: np.ndarray, rates: np.ndarray | None, points: np.ndarray | None,
                 grads: np.ndarray | None, note: str | None) -> None:
        self.all_values = values
        self.rates = rates
        self.points = points
        self.grads = grads
        self.note = note
        finite = np.isfinite(values)
        self.finite_count = int(np.argmin(finite)) if not finite.all() else values.size
        self.values = values[: self.finite_count]
        self.evidence: dict[str, Any] = {"iterations": values.size - 1,
                                         "first_value": float(values[0])}
        self.rate = None if rates is None or rates.size == 0 else float(
            np.median(rates[-WINDOW:]) if np.any(rates[-WINDOW:] > 0) else 0.0)
        if self.rate is not None:
            self.evidence["rate"] = self.rate

    # -- the verdict ----------------------------------------------------------------------
    def verdict(self) -> Diagnosis:
        if self.finite_count == 0:
            return self.result("undetermined", None, "The first value is not finite "
                               f"({self.all_values[0]!r}), so the history says nothing about "
                               "the step size; check the start point and the loss.")
        lipschitz, source = self.secant()
        self.evidence["lipschitz_from"] = source
        if self.finite_count < self.all_values.size:
            return self.non_finite(lipschitz)
        if self.values.size < MIN_VALUES:
            return self.result("undetermined", lipschitz, f"{self.values.size} value"
                               f"{'s' if self.values.size > 1 else ''} cannot show a trend: "
                               f"pass at least {MIN_VALUES} iterations (5 or more give a firmer "
                               "verdict).")
        rising = self.rising()
        if lipschitz is not None and self.rate is not None and self.rate > 0:
            return self.with_curvature(lipschitz, rising)
        if rising is not None:
            return self.too_large_from_values(rising)
        return self.from_pace()

    def result(self, kind: str, lipschitz: float | None, reason: str,
               suggested: float | None = None) -> Diagnosis:
        if self.note:
            self.evidence["run_verdict"] = self.note
        if lipschitz is not None:
            self.evidence["lipschitz"] = lipschitz
            self.evidence["limit_rate"] = LIMIT_FRACTION / lipschitz
            if suggested is None:
                suggested = 1.0 / lipschitz
            suggested = min(suggested, LIMIT_FRACTION / lipschitz)
        return Diagnosis(kind=kind, lipschitz=lipschitz, suggested_rate=suggested,
                         reason=reason, evidence=dict(self.evidence))

    # -- figures --------------------------------------------------------------------------
    def secant(self) -> tuple[float | None, str | None]:
        """max ‖Δg‖/‖Δx‖ over the history (points from xs, or from gradient steps)."""
        if self.grads is None:
            return None, None
        grads = self.grads
        if self.points is not None:
            steps = np.diff(self.points, axis=0)
            source = "secant"
        elif self.rates is not None:
            steps = -self.rates[:, np.newaxis] * grads[:-1]
            source = "secant from gradient steps"
        else:
            return None, None
        changes = np.diff(grads, axis=0)
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            lengths = np.linalg.norm(steps, axis=1)
            ratios = np.linalg.norm(changes, axis=1) / lengths
        usable = np.isfinite(ratios) & (lengths > 0)
        if not usable.any():
            return None, None
        self.evidence["secant_estimates"] = int(usable.sum())
        return float(ratios[usable].max()), source

    def noise(self) -> float:
        spread = float(np.max(self.values) - np.min(self.values))
        return NOISE_RTOL * max(spread, np.finfo(float).eps * float(np.max(np.abs(self.values))))

    def rising(self) -> dict[str, Any] | None:
        """Evidence that the loss rose or oscillated without decreasing; None if not."""
        values = self.values
        window = values[-(WINDOW + 1):]
        changes = np.diff(window)
        noise = self.noise()
        rises = int(np.sum(changes > noise))
        steps = changes.size
        self.evidence["rises"] = rises
        self.evidence["window"] = steps
        start, last, lowest = float(values[0]), float(values[-1]), float(np.min(values))
        if last > start + noise:
            return {"how": "rose", "rises": rises, "steps": steps}
        if rises >= max(2, RISE_FRACTION * steps) and window[-1] >= window[0] - noise:
            return {"how": "oscillates", "rises": rises, "steps": steps}
        if last > lowest + noise and last - lowest > 0.5 * (start - lowest) and rises >= 2:
            return {"how": "rebounded", "rises": rises, "steps": steps}
        return None

    def growth(self) -> float | None:
        """The loss's growth factor per iteration over its last rises (for L̂ from values):
        the gap to the lowest value, over the final run of consecutive rises (at most
        GROWTH_ITERATIONS), where it dwarfs whatever f* is."""
        values = self.values
        lowest = float(np.min(values))
        end = values.size - 1
        first = end
        while first > 0 and end - first < GROWTH_ITERATIONS and values[first - 1] < values[first]:
            first -= 1
        if end - first < 1:
            return None
        low, high = values[first] - lowest, values[end] - lowest
        if not low > 0.0:
            first += 1
            low = values[first] - lowest
        if end - first < 1 or not low > 0.0 or not high > low:
            return None
        return float((high / low) ** (1.0 / (end - first)))

    def pace(self) -> tuple[float, int] | None:
        """The factor by which each iteration's decrease shrank, from the start (mean of
        the first PACE_ITERATIONS ratios), and the number of decreases used."""
        decreases = -np.diff(self.values)
        noise = max(self.noise(), 1e-12 * float(np.max(np.abs(decreases))))
        if np.any(decreases[:MIN_DECREASES] < -noise):
            return -1.0, int(np.sum(decreases < -noise))  # early rises, yet no net rise
        significant = decreases > noise
        if not significant[:MIN_DECREASES].all():
            # a decrease fell to the noise floor early: the loss converged (or stalled)
            count = int(np.argmin(significant)) if not significant.all() else decreases.size
            return (0.0, count) if count >= 1 else None
        usable = decreases[: min(decreases.size, PACE_ITERATIONS + 1)]
        ratios = usable[1:] / usable[:-1]
        return float(np.exp(np.mean(np.log(ratios)))), usable.size

    # -- verdicts -------------------------------------------------------------------------
    def non_finite(self, lipschitz: float | None) -> Diagnosis:
        index = self.finite_count
        bad = self.all_values[index]
        reason = (f"The loss turned non-finite ({float(bad)!r}) at iteration {index} after "
                  f"{'falling' if self.values[-1] < self.values[0] else 'rising'} from "
                  f"{self.values[0]:.3g} to {self.values[-1]:.3g}: the step overshoots")
        suggested = None
        if lipschitz is not None:
            reason += f"; the secant estimate L̂ ≈ {lipschitz:.3g} puts the stable limit at " \
                      f"{LIMIT_FRACTION / lipschitz:.3g}"
            if self.rate:
                reason += f" (your rate {self.rate:.3g})"
        elif self.rate:
            suggested = self.rate / MAX_GROWTH
            reason += f"; try a rate about 10 times smaller than {self.rate:.3g}, or a line search"
        self.evidence["non_finite_at"] = index
        return self.result("too_large", lipschitz, reason + ".", suggested)

    def with_curvature(self, lipschitz: float, rising: dict[str, Any] | None) -> Diagnosis:
        rate = self.rate
        product = rate * lipschitz
        self.evidence["rate_times_lipschitz"] = product
        limit = LIMIT_FRACTION / lipschitz
        source = "secant estimate" if self.evidence["lipschitz_from"] == "secant" else (
            "secant estimate (from gradient steps)")
        if product > LIMIT_FRACTION or rising is not None:
            start = self._rise_text(rising) if rising is not None else (
                "The loss has not risen yet, but ")
            comparison = "below" if product > LIMIT_FRACTION else "near"
            return self.result("too_large", lipschitz, (
                f"{start}the {source} L̂ ≈ {lipschitz:.3g} puts the stable limit at "
                f"{limit:.3g}, {comparison} your rate {rate:.3g}."))
        if product < SMALL_FRACTION:
            return self.result("too_small", lipschitz, (
                f"The loss fell in every iteration but your rate {rate:.3g} is only "
                f"{product:.2g}/L̂ (the {source} L̂ ≈ {lipschitz:.3g}); rates up to "
                f"{1 / lipschitz:.3g} take the steepest curvature in one step."))
        return self.result("fits", lipschitz, (
            f"Your rate {rate:.3g} is {product:.2g}/L̂ (the {source} L̂ ≈ {lipschitz:.3g}), "
            f"inside the stable range up to {limit:.3g}, and the loss did not rise."),
            suggested=rate if product >= 0.5 else None)

    def _rise_text(self, rising: dict[str, Any]) -> str:
        rises, steps = rising["rises"], rising["steps"]
        values = self.values
        if rising["how"] == "rose":
            return (f"The loss rose in {rises} of the last {steps} iterations, to "
                    f"{values[-1]:.3g} from {values[0]:.3g} at the start; ")
        if rising["how"] == "oscillates":
            return (f"The loss rose in {rises} of the last {steps} iterations without "
                    "decreasing overall; ")
        return (f"The loss rebounded to {values[-1]:.3g} after reaching "
                f"{np.min(values):.3g} (rises in {rises} of the last {steps}); ")

    def too_large_from_values(self, rising: dict[str, Any]) -> Diagnosis:
        text = self._rise_text(rising)
        growth = self.growth()
        if growth is not None:
            self.evidence["growth_per_iteration"] = growth
        if self.rate and growth is not None and growth > 1.0:
            # on a quadratic the top component grows by (rate·L − 1)² per step
            lipschitz = (1.0 + math.sqrt(growth)) / self.rate
            self.evidence["lipschitz_from"] = "growth of the loss"
            return self.result("too_large", lipschitz, (
                f"{text}its growth (×{growth:.3g} per iteration) puts the stable limit at "
                f"2/L̂ = {LIMIT_FRACTION / lipschitz:.3g}, below your rate {self.rate:.3g}."))
        advice = (f"try a rate about 10 times smaller than {self.rate:.3g}, or a line search"
                  if self.rate else "pass `rates=` to get a suggested rate")
        return self.result("too_large", None, text + "the step overshoots; " + advice + ".",
                           self.rate / MAX_GROWTH if self.rate else None)

    def from_pace(self) -> Diagnosis:
        pace = self.pace()
        if pace is None:
            return self.result("undetermined", None, (
                "The loss did not decrease measurably in the first iterations and did not "
                "rise either; pass more iterations, or xs and gradients for a secant "
                "estimate of L."))
        factor, used = pace
        if factor < 0.0:
            drop = self.values[0] - self.values[-1]
            return self.result("fits", None, (
                f"The loss fell by {drop:.3g} overall despite {used} early rise"
                f"{'s' if used > 1 else ''}: the step size works, if noisily."), self.rate)
        self.evidence["pace"] = factor
        if factor == 0.0:
            drop = self.values[0] - self.values[-1]
            return self.result("fits", None, (
                f"The loss fell by {drop:.3g} and settled within {used + 1} iterations: "
                "the step size works."), self.rate)
        if used < MIN_DECREASES and factor >= SLOW_PACE**2:
            return self.result("undetermined", None, (
                f"Only {used} decreases to judge the pace by; pass at least "
                f"{MIN_DECREASES + 1} iterations, or xs and gradients."))
        projected = math.log(STATED_REDUCTION) / math.log(factor) if factor < 1 else math.inf
        self.evidence["iterations_per_1000x"] = projected
        if factor >= SLOW_PACE:
            suggested = None
            lipschitz = None
            if self.rate:
                curvature = (1.0 - math.sqrt(min(factor, 1.0))) / self.rate
                suggested = MAX_GROWTH * self.rate
                if curvature > 0:
                    suggested = min(suggested, 1.0 / curvature)
                self.evidence["path_curvature"] = curvature
            rate_text = f"your rate {self.rate:.3g} is" if self.rate else "the rate is"
            return self.result("too_small", lipschitz, (
                f"From the first iteration on, each decrease of the loss was {factor:.2f} of "
                f"the one before: at that pace the decrease takes {projected:.0f} iterations "
                f"to shrink {1 / STATED_REDUCTION:g}-fold, against "
                f"{math.log(STATED_REDUCTION) / math.log(SLOW_PACE):.0f} at a rate of 0.1/L "
                f"on a one-dimensional quadratic; {rate_text} probably below 0.1/L."),
                suggested)
        return self.result("fits", None, (
            f"The loss fell in every iteration, each early decrease about {factor:.2g} of "
            "the one before: the pace of a rate near 1/L or above."), self.rate)
