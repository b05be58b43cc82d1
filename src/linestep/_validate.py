"""Argument checks shared by every public class.

Each check raises at once with the argument named in backticks, the bad value
and the fix. Numeric trouble met during a search is never raised: it becomes a
`Status`.
"""

from __future__ import annotations

import math
import numbers
from typing import Any


def real(name: str, value: Any) -> float:
    """Return `value` as a float, or raise TypeError naming `name`."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise TypeError(f"`{name}` must be a real number; got {value!r}.")
    return float(value)


def integer(name: str, value: Any, *, minimum: int = 1) -> int:
    """Return `value` as an int >= `minimum`."""
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        hint = ""
        if isinstance(value, float) and value.is_integer():
            hint = f" Write {int(value)} instead."
        raise TypeError(f"`{name}` must be an integer; got {value!r}.{hint}")
    if value < minimum:
        raise ValueError(f"`{name}` must be >= {minimum}; got {name}={int(value)!r}.")
    return int(value)


def within(name: str, value: Any, low: float, high: float, *, include_low: bool = False,
           include_high: bool = False) -> float:
    """A real number in the interval from `low` to `high`, each end open unless included."""
    value = real(name, value)
    above = value >= low if include_low else value > low
    below = value <= high if include_high else value < high
    if not (above and below):
        left, right = ("<=" if include_low else "<"), ("<=" if include_high else "<")
        raise ValueError(f"`{name}` must satisfy {low:g} {left} {name} {right} {high:g}; "
                         f"got {name}={value!r}.")
    return value


def open_unit(name: str, value: Any) -> float:
    """A number strictly inside (0, 1)."""
    return within(name, value, 0.0, 1.0)


def positive(name: str, value: Any, *, allow_inf: bool = False) -> float:
    """A number > 0 (finite unless `allow_inf`)."""
    value = real(name, value)
    if not value > 0.0 or (math.isinf(value) and not allow_inf):
        kind = "a positive number" if allow_inf else "a finite positive number"
        raise ValueError(f"`{name}` must be {kind}; got {name}={value!r}.")
    return value


def nonnegative(name: str, value: Any) -> float:
    """A finite number >= 0."""
    value = real(name, value)
    if not (value >= 0.0 and math.isfinite(value)):
        raise ValueError(f"`{name}` must be a finite number >= 0; got {name}={value!r}.")
    return value


def curvature_pair(c1: Any, c2: Any) -> tuple[float, float]:
    """Check 0 < c1 <= c2 < 1 (c1 = c2 is legal: Moré–Thuente 1994 use it)."""
    c1 = open_unit("c1", c1)
    c2 = open_unit("c2", c2)
    if c1 > c2:
        raise ValueError(f"`c2` must satisfy c1 <= c2 < 1; got c1={c1!r}, c2={c2!r}.")
    return c1, c2


def flag(name: str, value: Any) -> bool:
    """True or False, nothing else (1, "yes" and None are refused)."""
    if not isinstance(value, bool):
        raise TypeError(f"`{name}` must be True or False; got {value!r}.")
    return value


def choice(name: str, value: Any, options: tuple[str, ...]) -> str:
    """One of a fixed set of option strings."""
    if value not in options:
        listed = ", ".join(repr(o) for o in options)
        raise ValueError(f"`{name}` must be one of {listed}; got {value!r}.")
    return value


def finite_scalar(name: str, value: Any) -> float:
    """A finite float (used for values supplied by the caller)."""
    result = real_scalar(f"`{name}`", value, f"pass a float such as `{name}=5.0`")
    if not math.isfinite(result):
        raise ValueError(f"`{name}` must be finite; got {name}={result!r}.")
    return result

def real_scalar(what: str, value: Any, fix: str) -> float:
    """`value` as a float, for a real scalar (0-d arrays included); `what` names it in
    the message ("`value`", "The objective `f`") and `fix` says what to do instead.

    Strings, booleans, None, complex numbers and arrays with more than one entry or
    any dimension are refused with TypeError (a string is never parsed: "1.5" is a
    bug, not a number); an integer too large for a float with ValueError.
    """
    if value.__class__ is float:
        return value
    problem = None
    kind = getattr(getattr(value, "dtype", None), "kind", "")  # numpy and JAX scalars
    if value is None or isinstance(value, (str, bytes, bool)) or kind == "b":
        problem = f"{value!r} ({type(value).__name__})"
    elif isinstance(value, complex) or kind == "c":
        problem = f"the complex number {value!r}"
    elif getattr(value, "shape", ()) != ():
        problem = f"an array of shape {tuple(value.shape)}"
    elif not isinstance(value, numbers.Real) and not hasattr(value, "__float__"):
        problem = f"{value!r} ({type(value).__name__})"
    if problem is None:
        try:
            return float(value)
        except OverflowError:
            shown = repr(value) if len(repr(value)) <= 40 else f"a {len(str(value))}-digit integer"
            raise ValueError(f"{what} is {shown}, too large for a float; {fix}.") from None
        except (TypeError, ValueError):
            problem = f"{value!r} ({type(value).__name__})"
    raise TypeError(f"{what} must be a real scalar; got {problem}. Fix: {fix}.")


def negative_gradient_multiple(owner: str, gradient: Any, direction: Any, slope: float,
                               *, rtol: float = 1e-6) -> float:
    """Check that `direction` = c·(−gradient) with c > 0 and return c.

    For rules defined only along the negative gradient (Barzilai–Borwein, Polyak).
    `slope` is gradient·direction; the gradient must be nonzero. Up to `rtol`
    relative to ‖direction‖ the direction may differ from c·(−gradient) (rounding).
    """
    from linestep import _array

    # Scaled by ‖gradient‖∞ so that gradient·gradient cannot underflow to 0.
    size = _array.max_abs(gradient)
    unit = gradient / size
    scale = -(slope / size) / (_array.dot(unit, unit) * size)
    if scale > 0.0:
        residual = _array.norm2(direction + scale * gradient)
        if residual <= rtol * _array.norm2(direction):
            return scale
    raise not_negative_gradient(owner)


def not_negative_gradient(owner: str) -> ValueError:
    """The error for a direction that is not a positive multiple of −gradient."""
    return ValueError(
        f"{owner} is defined for the negative gradient: `direction` must be a positive "
        "multiple of -gradient, such as `-gradient` itself. For other directions "
        "(L-BFGS, nonlinear CG) use a line search such as NonmonotoneArmijo() or Armijo()."
    )


# --- command-line option types (argparse `type=`): the same messages in every command --


def option_positive_int(text: str) -> int:
    """A command-line option's text as a positive integer, or argparse's usage error."""
    import argparse

    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {text!r}")
    return value


def option_positive_float(text: str) -> float:
    """A command-line option's text as a positive number, or argparse's usage error."""
    import argparse

    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive number, got {text!r}") from None
    if not value > 0:
        raise argparse.ArgumentTypeError(f"expected a positive number, got {text!r}")
    return value
