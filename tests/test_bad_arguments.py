"""Every invalid-argument case of the core classes, in one table.

Each case asserts the exception type and that the message names the offending
argument in backticks (the house rule: name, bad value, fix).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from linestep import (
    Armijo,
    Fallback,
    Fixed,
    Goldstein,
    Objective,
    PreviousTrial,
    QuadraticTrial,
    ScaledTrial,
    descend,
)


def square(x):
    return float(np.sum(x * x))


def square_gradient(x):
    return 2.0 * x


X = np.array([3.0, -4.0])
D = np.array([-6.0, 8.0])
PAIR = (square, square_gradient)


def case(build, error, name, id):
    return pytest.param(build, error, name, id=id)


CONSTRUCTION = [
    # Armijo
    *[case(lambda v=v: Armijo(c1=v), ValueError, "c1", f"Armijo c1={v}")
      for v in (0, 1, -1, math.nan, 1.5)],
    case(lambda: Armijo(c1="a"), TypeError, "c1", "Armijo c1='a'"),
    case(lambda: Armijo(c1=True), TypeError, "c1", "Armijo c1=True"),
    *[case(lambda v=v: Armijo(shrink=v), ValueError, "shrink", f"Armijo shrink={v}")
      for v in (0, 1, 1.5, -0.5, math.nan)],
    case(lambda: Armijo(shrink=None), TypeError, "shrink", "Armijo shrink=None"),
    *[case(lambda v=v: Armijo(shrink_limits=v), ValueError, "shrink_limits",
           f"Armijo shrink_limits={v}")
      for v in ((0.6, 0.5), (0.0, 0.5), (0.1, 1.0), (-0.1, 0.5), (0.1, math.nan))],
    *[case(lambda v=v: Armijo(shrink_limits=v), TypeError, "shrink_limits",
           f"Armijo shrink_limits={v!r}")
      for v in (0.3, (0.1,), (0.1, 0.2, 0.3), ("a", 0.5))],
    case(lambda: Armijo(max_evaluations=0), ValueError, "max_evaluations",
         "Armijo max_evaluations=0"),
    case(lambda: Armijo(max_evaluations=2.5), TypeError, "max_evaluations",
         "Armijo max_evaluations=2.5"),
    case(lambda: Armijo(interpolation="linear"), ValueError, "interpolation",
         "Armijo interpolation='linear'"),
    case(lambda: Armijo(interpolation="Cubic"), ValueError, "interpolation",
         "Armijo interpolation='Cubic'"),
    *[case(lambda v=v: Armijo(initial=v), ValueError, "initial", f"Armijo initial={v}")
      for v in (-1.0, 0, math.inf, math.nan)],
    case(lambda: Armijo(initial="x"), TypeError, "initial", "Armijo initial='x'"),
    case(lambda: Armijo(initial=None), TypeError, "initial", "Armijo initial=None"),
    # Goldstein
    *[case(lambda v=v: Goldstein(c=v), ValueError, "c", f"Goldstein c={v}")
      for v in (0, 0.5, 0.7, -0.1, math.nan)],
    case(lambda: Goldstein(c="a"), TypeError, "c", "Goldstein c='a'"),
    case(lambda: Goldstein(max_size=0.0), ValueError, "max_size", "Goldstein max_size=0"),
    case(lambda: Goldstein(max_evaluations=0), ValueError, "max_evaluations",
         "Goldstein max_evaluations=0"),
    case(lambda: Goldstein(initial=-2.0), ValueError, "initial", "Goldstein initial=-2"),
    # Fixed
    *[case(lambda v=v: Fixed(v), ValueError, "size", f"Fixed size={v}")
      for v in (0, -0.1, math.inf, math.nan)],
    case(lambda: Fixed("0.1"), TypeError, "size", "Fixed size='0.1'"),
    # Fallback
    case(lambda: Fallback(lambda x: x, Armijo()), TypeError, "rule", "Fallback rule=lambda"),
    case(lambda: Fallback(Fixed(0.1), "Armijo"), TypeError, "search",
         "Fallback search='Armijo'"),
    case(lambda: Fallback(Fixed(0.1), None), TypeError, "search", "Fallback search=None"),
    *[case(lambda c=c: Fallback(c, c), ValueError, "rule", f"Fallback same {type(c).__name__}")
      for c in (Armijo(), Fixed(0.1))],
    # Initial-trial strategies
    case(lambda: ScaledTrial(length=0.0), ValueError, "length", "ScaledTrial length=0"),
    case(lambda: PreviousTrial(growth=-1.0), ValueError, "growth", "PreviousTrial growth=-1"),
    case(lambda: PreviousTrial(max_size=0.0), ValueError, "max_size",
         "PreviousTrial max_size=0"),
    case(lambda: QuadraticTrial(cap=0.0), ValueError, "cap", "QuadraticTrial cap=0"),
    pytest.param(lambda: PreviousTrial(first=-1.0), ValueError, "first",
                 id="PreviousTrial first=-1"),
    pytest.param(lambda: QuadraticTrial(first="x"), TypeError, "first",
                 id="QuadraticTrial first='x'"),
    # Objective
    case(lambda: Objective(3.0), TypeError, "fun", "Objective fun=3.0"),
    case(lambda: Objective(square, "grad"), TypeError, "grad", "Objective grad='grad'"),
    case(lambda: Objective(square, square_gradient, fused=True), ValueError, "grad",
         "Objective fused with grad"),
]


@pytest.mark.parametrize(("build", "error", "name"), CONSTRUCTION)
def test_bad_constructor_argument(build, error, name):
    with pytest.raises(error) as caught:
        build()
    assert f"`{name}`" in str(caught.value)


CONTROLLERS = {
    "Armijo": Armijo,
    "Goldstein": Goldstein,
    "Fixed": lambda: Fixed(0.1),
    "Fallback": lambda: Fallback(Fixed(0.1), Armijo()),
}
SEARCHES = ("Armijo", "Goldstein", "Fallback")

# (objective, x, direction, keyword arguments, exception, argument named)
CALLS_ANY = {
    "x has NaN": (PAIR, np.array([math.nan, 1.0]), D, {}, ValueError, "x"),
    "x has inf": (PAIR, np.array([math.inf, 1.0]), D, {}, ValueError, "x"),
    "x not numbers": (PAIR, "ab", D, {}, TypeError, "x"),
    "direction wrong shape": (PAIR, X, np.ones(3), {}, ValueError, "direction"),
    "direction (2,1) for x (2,)": (PAIR, X, D.reshape(2, 1), {}, ValueError, "direction"),
    "direction has NaN": (PAIR, X, np.array([math.nan, 1.0]), {}, ValueError, "direction"),
    "direction has inf": (PAIR, X, np.array([-math.inf, 1.0]), {}, ValueError,
                          "direction"),
    "value nan": (PAIR, X, D, {"value": math.nan}, ValueError, "value"),
    "value inf": (PAIR, X, D, {"value": math.inf}, ValueError, "value"),
    "value not a number": (PAIR, X, D, {"value": "abc"}, TypeError, "value"),
    "value an array": (PAIR, X, D, {"value": np.ones(2)}, TypeError, "value"),
    "gradient has NaN": (PAIR, X, D, {"gradient": np.array([math.nan, 0.0])}, ValueError,
                         "gradient"),
    "gradient has inf": (PAIR, X, D, {"gradient": np.array([6.0, math.inf])}, ValueError,
                         "gradient"),
    "gradient wrong shape": (PAIR, X, D, {"gradient": np.ones(3)}, ValueError, "gradient"),
    "objective not callable": (3.0, X, D, {}, TypeError, "objective"),
}

CALLS_SEARCH = {
    "objective value nan at x": ((lambda x: math.nan, square_gradient), X, D, {}, ValueError,
                                 "x"),
    "objective value inf at x": ((lambda x: math.inf, square_gradient), X, D, {}, ValueError,
                                 "x"),
    "objective gradient nan at x": ((square, lambda x: np.full(2, math.nan)), X, D, {},
                                    ValueError, "x"),
    "objective gradient wrong shape at x": ((square, lambda x: np.ones(5)), X, D, {},
                                            ValueError, "x"),
    "objective without gradient": (square, X, D, {}, TypeError, "gradient="),
}

CALL_CASES = [
    pytest.param(controller, *arguments, id=f"{controller}: {label}")
    for label, arguments in CALLS_ANY.items() for controller in CONTROLLERS
] + [
    pytest.param(controller, *arguments, id=f"{controller}: {label}")
    for label, arguments in CALLS_SEARCH.items() for controller in SEARCHES
]


@pytest.mark.parametrize(("controller", "objective", "x", "direction", "keywords", "error",
                          "name"), CALL_CASES)
def test_bad_call_argument(controller, objective, x, direction, keywords, error, name):
    with pytest.raises(error) as caught:
        CONTROLLERS[controller]()(objective, x, direction, **keywords)
    assert f"`{name}`" in str(caught.value)


def test_missing_gradient_message_says_how_to_pass_one():
    with pytest.raises(TypeError) as caught:
        Armijo()(square, X, D)
    message = str(caught.value)
    assert "Armijo needs the gradient" in message
    assert "`Objective(fun, grad)`" in message and "fused=True" in message


DESCEND = [
    case(lambda: descend(PAIR, np.array([1.0, math.nan])), ValueError, "x0", "x0 has NaN"),
    case(lambda: descend(PAIR, np.array([math.inf])), ValueError, "x0", "x0 has inf"),
    case(lambda: descend((lambda x: math.nan, square_gradient), X), ValueError, "x0",
         "f(x0) nan"),
    case(lambda: descend((lambda x: math.inf, square_gradient), X), ValueError, "x0",
         "f(x0) inf"),
    case(lambda: descend((square, lambda x: np.full(2, math.inf)), X), ValueError, "x0",
         "gradient at x0 inf"),
    case(lambda: descend((square, lambda x: np.ones(3)), X), ValueError, "x0",
         "gradient at x0 wrong shape"),
    case(lambda: descend(square, X), TypeError, "Objective(fun, grad)", "no gradient"),
    case(lambda: descend(PAIR, X, controller="armijo"), TypeError, "controller",
         "controller='armijo'"),
    case(lambda: descend(PAIR, X, direction=np.ones(2)), TypeError, "direction",
         "direction array"),
]


@pytest.mark.parametrize(("build", "error", "name"), DESCEND)
def test_bad_descend_argument(build, error, name):
    with pytest.raises(error) as caught:
        build()
    assert f"`{name}`" in str(caught.value)


@pytest.mark.parametrize("build", [
    lambda: Armijo(c3=0.1),
    lambda: Armijo(0.1),  # options are keyword-only
    lambda: Goldstein(0.25),
    lambda: Goldstein(c1=0.25),
    lambda: Fixed(size=0.1, c1=0.5),
])
def test_unknown_or_positional_options_are_errors(build):
    with pytest.raises(TypeError):
        build()
