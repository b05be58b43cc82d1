"""Initial trial-step strategies (the ``initial=`` argument of the searches).

A strategy is called with the controller's memory of its previous call and the
current ray, and returns the first step size to try. Strategies hold no state of
their own: the controller owns its `Memory` and `reset()` clears it.

References
----------
J. Nocedal and S. J. Wright, *Numerical Optimization*, 2nd ed., 2006, §3.5,
"Initial step length" (eqs. 3.59, 3.60).
"""

from __future__ import annotations

import math
from typing import Any

from linestep import _array, _validate
from linestep._rebuild import Rebuilds

__all__ = ["PreviousTrial", "QuadraticTrial", "ScaledTrial", "UnitTrial"]


class Memory:
    """What a controller remembers of its previous accepted call."""

    __slots__ = ("size", "start_value", "slope")

    def __init__(self) -> None:
        self.size: float | None = None  # accepted step size
        self.start_value: float | None = None  # f at that call's x
        self.slope: float | None = None  # φ'(0) at that call


class UnitTrial(Rebuilds):
    """Always try t = 1 first: the natural scale of Newton and quasi-Newton directions.

    Examples
    --------
    >>> from linestep import Armijo, UnitTrial
    >>> Armijo(initial=UnitTrial())
    Armijo(c1=0.0001, shrink=0.5, interpolation='cubic', shrink_limits=(0.1, 0.5), initial=UnitTrial(), max_evaluations=40, record_trials=False)
    """  # noqa: E501

    def __eq__(self, other: object) -> bool:
        return type(other) is type(self)

    __hash__ = object.__hash__

    def guess(self, memory: Memory, ray: Any) -> float:
        return 1.0


class ConstantTrial:
    """A fixed first trial (what a plain number passed as ``initial=`` means).

    Its repr is the number itself, since the number is what rebuilds it.
    """

    __slots__ = ("size",)

    def __init__(self, size: float, *, name: str = "initial") -> None:
        self.size = _validate.positive(name, size)

    def __repr__(self) -> str:
        return repr(self.size)

    def guess(self, memory: Memory, ray: Any) -> float:
        return self.size


class ScaledTrial(Rebuilds):
    """First trial of length `length` in x: t = length / ‖d‖₂.

    With d = −∇f this is the "scaled first step from ‖g₀‖" used when nothing is
    known about the problem's scale yet (common practice).

    Parameters
    ----------
    length : float
        Distance in x that the first trial moves.

    Examples
    --------
    >>> import numpy as np
    >>> from linestep import Armijo, ScaledTrial
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> x = np.array([3.0, -4.0])
    >>> step = Armijo(initial=ScaledTrial(length=0.5))((f, g), x, -g(x))
    >>> step.size   # 0.5 / ‖d‖₂ = 0.5 / 10: x moves by a distance of 0.5
    0.05
    """

    def __init__(self, length: float = 1.0) -> None:
        self.length = _validate.positive("length", length)

    _fields = ("length",)

    def guess(self, memory: Memory, ray: Any) -> float:
        norm = _array.norm2(ray.direction)
        return self.length / norm if norm > 0 else 1.0


class PreviousTrial(Rebuilds):
    """Start from the previous accepted step, times `growth`.

    `growth` > 1 lets the step recover after backtracking shrank it (the
    step-growing reset of Vaswani et al. 2019 uses this with stochastic batches).

    Parameters
    ----------
    growth : float
        Factor applied to the previous accepted step.
    first : float or strategy
        Used before any step has been accepted.
    max_size : float
        Upper bound on the trial.

    Examples
    --------
    The second call starts from the step the first one accepted:

    >>> import numpy as np
    >>> from linestep import Armijo, PreviousTrial
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> search = Armijo(initial=PreviousTrial(), record_trials=True)
    >>> x = np.array([3.0, -4.0])
    >>> [trial.size for trial in search((f, g), x, -g(x)).trials]
    [1.0, 0.5]
    >>> x = np.array([4.0, -3.0])
    >>> [trial.size for trial in search((f, g), x, -g(x)).trials]
    [0.5]
    """

    def __init__(self, *, growth: float = 1.0, first: Any = 1.0,
                 max_size: float = math.inf) -> None:
        self.growth = _validate.positive("growth", growth)
        self.first = resolve(first, name="first")
        self.max_size = _validate.positive("max_size", max_size, allow_inf=True)

    _fields = ("growth", "first", "max_size")

    def guess(self, memory: Memory, ray: Any) -> float:
        if memory.size is None:
            return self.first.guess(memory, ray)
        return min(self.growth * memory.size, self.max_size)


class QuadraticTrial(Rebuilds):
    """Nocedal & Wright eq. 3.60: t₀ = 2 (f_k − f_{k−1}) / φ'(0), capped.

    The quadratic through f_{k−1}, f_k and φ'(0), assuming the decrease repeats.
    With ``cap=1.0`` (min(1, 1.01·t₀)) it suits quasi-Newton directions where the
    unit step should be tried once close to the solution.

    Parameters
    ----------
    first : float or strategy
        Used before any step has been accepted.
    cap : float
        Upper bound on the trial (``inf`` for none).

    Examples
    --------
    After f fell from 25 to 16 with φ'(0) = −6.4, the next first trial is
    1.01·2·(16 − 25)/(−6.4):

    >>> import numpy as np
    >>> from linestep import Armijo, QuadraticTrial
    >>> f = lambda x: float(x @ x)
    >>> g = lambda x: 2 * x
    >>> search = Armijo(initial=QuadraticTrial(), record_trials=True)
    >>> x = np.array([3.0, -4.0])
    >>> first = search((f, g), x, -0.1 * g(x))
    >>> first.trials[0].size, first.value
    (1.0, 16.0)
    >>> [round(trial.size, 4) for trial in search((f, g), first.x, -0.1 * g(first.x)).trials]
    [2.8406]
    """

    # N&W §3.5 recommend a slight enlargement so the unit step is eventually tried.
    ENLARGE = 1.01

    def __init__(self, *, first: Any = 1.0, cap: float = math.inf) -> None:
        self.first = resolve(first, name="first")
        self.cap = _validate.positive("cap", cap, allow_inf=True)

    _fields = ("first", "cap")

    def guess(self, memory: Memory, ray: Any) -> float:
        if memory.start_value is None:
            return self.first.guess(memory, ray)
        decrease = ray.origin.value - memory.start_value
        slope = ray.origin.slope
        if slope is None or not decrease < 0.0:
            return self.first.guess(memory, ray) if memory.size is None else memory.size
        guess = self.ENLARGE * 2.0 * decrease / slope
        if not (math.isfinite(guess) and guess > 0.0):
            return memory.size or 1.0
        return min(guess, self.cap)


def resolve(initial: Any, *, name: str = "initial") -> Any:
    """Turn the ``initial=`` (or ``first=``) argument into a strategy object."""
    if hasattr(initial, "guess"):
        return initial
    if isinstance(initial, (int, float)) and not isinstance(initial, bool):
        return ConstantTrial(initial, name=name)
    raise TypeError(
        f"`{name}` must be a positive number or a trial strategy such as UnitTrial(), "
        f"PreviousTrial(), QuadraticTrial() or ScaledTrial(); got {initial!r}."
    )
