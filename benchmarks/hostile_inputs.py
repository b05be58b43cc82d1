"""A battery of hostile library inputs and faults, each classified by what the user gets.

Every case calls the public library (controllers, directions, stopping rules,
`descend`, `Objective`, and `linestep.jax` when JAX is installed) with a bad
argument, a misbehaving objective or a numerically hostile problem, and sorts the
outcome into one of five classes:

* ``clear error``: TypeError/ValueError whose message names the argument (in
  backticks, or Python's own "unexpected keyword argument 'name'");
* ``documented status``: a result whose status/verdict is documented for the
  case and passes the case's oracle (x finite, of x's shape and dtype, never
  worse than the true f(x) for a monotone search, a converged verdict where the
  case expects one); an exception raised by the user's own callable and passed
  through unchanged (documented in `Objective`) counts here too;
* ``generic crash``: any other exception, or an error that does not name the
  argument;
* ``silently wrong``: a result that fails its oracle, or a bad argument that is
  accepted;
* ``lost/duplicated data``: a `Run` whose history or counts disagree with
  themselves (entries per iteration, cumulative evaluations, totals).

The objectives are invented (quadratics, a Rosenbrock valley, a seeded
least-squares fit). Run: ``python benchmarks/hostile_inputs.py [-v]``; ``-v``
lists every case that is not a clear error or a documented status.
"""

from __future__ import annotations

import math
import sys
import warnings
from collections import Counter
from collections.abc import Callable
from typing import Any

import numpy as np

import linestep
from linestep import (
    LBFGS,
    Armijo,
    Fallback,
    Fixed,
    Goldstein,
    HagerZhang,
    MoreThuente,
    NonlinearCG,
    Objective,
    Status,
    SteepestDescent,
    Wolfe,
    descend,
    stopping,
)
from linestep.rules.barzilai_borwein import BarzilaiBorwein
from linestep.rules.polyak import Polyak
from linestep.rules.schedule import Schedule
from linestep.searches.nonmonotone import NonmonotoneArmijo
from linestep.stopping import Kind

CLEAR, STATUS, CRASH, WRONG, LOST = (
    "clear error", "documented status", "generic crash", "silently wrong",
    "lost/duplicated data")


class UserFault(Exception):
    """Raised by a test objective: must reach the caller unchanged."""


class Wrong(AssertionError):
    """An oracle found a silently wrong result."""


class Lost(AssertionError):
    """An oracle found lost or duplicated data."""


# ------------------------------------------------------------------ invented problems


def square(x):
    return float(np.sum(x * x))


def square_gradient(x):
    return 2.0 * x


PAIR = (square, square_gradient)
X = np.array([1.0, 2.0])
D = -square_gradient(X)


def rosenbrock(x):
    return float(100.0 * (x[1] - x[0] ** 2) ** 2 + (1.0 - x[0]) ** 2)


def rosenbrock_gradient(x):
    return np.array([-400.0 * x[0] * (x[1] - x[0] ** 2) - 2.0 * (1.0 - x[0]),
                     200.0 * (x[1] - x[0] ** 2)])


def least_squares(dtype):
    rng = np.random.default_rng(0)
    a = rng.standard_normal((50, 20)).astype(dtype)
    b = rng.standard_normal(50).astype(dtype)
    return (lambda x: 0.5 * float(np.sum((a @ x - b) ** 2)), lambda x: a.T @ (a @ x - b))


# Controllers: name -> (factory, monotone: never returns a point above f(x)).
CONTROLLERS: dict[str, tuple[Callable[[], Any], bool]] = {
    "Armijo": (Armijo, True),
    "Goldstein": (Goldstein, True),
    "Wolfe": (Wolfe, True),
    "MoreThuente": (MoreThuente, True),
    "HagerZhang": (HagerZhang, True),
    "NonmonotoneArmijo": (NonmonotoneArmijo, True),  # first call: reference f(x)
    "Fixed": (lambda: Fixed(0.1), False),
    "Schedule": (lambda: Schedule.exponential(0.1, rate=0.9), False),
    "BarzilaiBorwein": (BarzilaiBorwein, True),  # first call globalized from f(x)
    "BarzilaiBorwein(pure)": (lambda: BarzilaiBorwein(globalize=None, first=0.1), False),
    "Polyak(f_min)": (lambda: Polyak(f_min=0.0), False),
    "Fallback": (lambda: Fallback(Fixed(0.1), Armijo()), True),
}


# ---------------------------------------------------------------------- oracles


def step_oracle(monotone: bool, objective: Any = PAIR, x: Any = X, *,
                expect: tuple[Status, ...] | None = None) -> Callable[[Any], None]:
    """Check a Step: finite x of x's shape and dtype; never above the true f(x) for a
    monotone controller or a failed step; a status in `expect` when given."""
    fun = objective[0] if isinstance(objective, tuple) else objective

    def check(step: Any) -> None:
        if not isinstance(step.status, Status):
            raise Wrong(f"status {step.status!r} is not a Status")
        x_new = np.asarray(step.x)
        if x_new.shape != np.shape(x) or not np.all(np.isfinite(x_new)):
            raise Wrong(f"x of shape {x_new.shape} or not finite")
        if isinstance(x, np.ndarray) and x_new.dtype != x.dtype:
            raise Wrong(f"dtype {x_new.dtype} instead of {x.dtype}")
        if expect is not None and step.status not in expect:
            raise Wrong(f"status {step.status.value}, expected one of "
                        f"{[s.value for s in expect]}")
        if monotone or not step.ok:
            with np.errstate(all="ignore"):
                before, after = fun(np.asarray(x)), fun(x_new)
            if math.isfinite(before) and not after <= before + 1e-10 * max(1.0, abs(before)):
                raise Wrong(f"f rose from {before!r} to {after!r} ({step.status.value})")

    return check


def run_oracle(fun: Callable[[Any], float], x0: Any, *, kinds: tuple[Kind, ...] = tuple(Kind),
               monotone: bool = True) -> Callable[[Any], None]:
    """Check a Run: consistent history and counts; finite x; not above f(x0) for a
    monotone pairing; a verdict of one of `kinds`."""

    def check(run: Any) -> None:
        history, n = run.history, run.iterations
        lengths = {len(history.value), len(history.gradient_norm), len(history.size),
                   len(history.values), len(history.gradients), len(history.restarted),
                   len(history.status)}
        if lengths != {n + 1}:
            raise Lost(f"history lengths {sorted(lengths)} for {n} iterations")
        if np.any(np.diff(history.values) < 0) or np.any(np.diff(history.gradients) < 0):
            raise Lost("cumulative evaluation counts decrease")
        if (history.values[-1], history.gradients[-1]) != (run.evaluations.values,
                                                           run.evaluations.gradients):
            raise Lost("history's last counts differ from the run's totals")
        if history.value[-1] != run.value:
            raise Lost("history's last value differs from run.value")
        if run.verdict.kind not in kinds:
            raise Wrong(f"verdict {run.verdict.kind.value}: {run.verdict.reason}")
        x = np.asarray(run.x)
        if x.shape != np.shape(x0) or not np.all(np.isfinite(x)):
            raise Wrong("final x of another shape or not finite")
        if monotone:
            before, after = fun(np.asarray(x0)), fun(x)
            if not after <= before + 1e-10 * max(1.0, abs(before)):
                raise Wrong(f"f rose from {before!r} to {after!r}")

    return check


# ------------------------------------------------------------------------- cases

CASES: list[tuple[str, str, Callable[[], Any], Callable[[Any], None] | None]] = []


def case(group: str, name: str, call: Callable[[], Any],
         oracle: Callable[[Any], None] | None = None) -> None:
    """Register a case; without an oracle the case must raise (a return is wrong)."""
    CASES.append((group, name, call, oracle))


def returning(value: Any) -> Callable[[Any], Any]:
    return lambda x: value


def nan_beyond(limit: float) -> Callable[[Any], float]:
    return lambda x: square(x) if float(np.max(np.abs(x))) <= limit else math.nan


def raising(x: Any) -> float:
    raise UserFault("the user's objective failed")


def controller_cases() -> None:
    for name, (make, monotone) in CONTROLLERS.items():
        one_controller(name, make, monotone)


def one_controller(name: str, make: Callable[[], Any], monotone: bool) -> None:
    """The cases of one controller (a function, so each closure binds its own `make`)."""
    group = f"controller {name}"
    ok = step_oracle(monotone)
    bad_calls = {
        "complex x": (PAIR, X.astype(complex), D, {}),
        "x with NaN": (PAIR, np.array([math.nan, 1.0]), D, {}),
        "x a string": (PAIR, "ab", D, {}),
        "direction of another shape": (PAIR, X, np.ones(3), {}),
        "direction (2, 1) for x (2,)": (PAIR, X, D.reshape(2, 1), {}),
        "direction with inf": (PAIR, X, np.array([-math.inf, 1.0]), {}),
        "value '5.0' (fast path)": (PAIR, X, D, {"value": "5.0", "gradient": -D}),
        "value array([5.0])": (PAIR, X, D, {"value": np.array([5.0]), "gradient": -D}),
        "value complex": (PAIR, X, D, {"value": 5.0 + 0j}),
        "value NaN": (PAIR, X, D, {"value": math.nan}),
        "gradient of another shape": (PAIR, X, D, {"gradient": np.ones(3)}),
        "gradient complex": (PAIR, X, D, {"gradient": (-D).astype(complex)}),
        "objective not callable": (3.0, X, D, {}),
        "objective returns a string": ((returning("1.5"), square_gradient), X, D, {}),
        "objective returns None": ((returning(None), square_gradient), X, D, {}),
        "objective returns an array": ((lambda x: x * x, square_gradient), X, D, {}),
        "objective returns complex": ((returning(1 + 1j), square_gradient), X, D, {}),
        "objective returns 10**400": ((returning(10**400), square_gradient), X, D, {}),
        "fused objective returns a float": (Objective(returning(5.0), fused=True), X, D,
                                            {}),
        "fused objective returns a 3-tuple": (
            Objective(lambda x: (square(x), 2 * x, 0), fused=True), X, D, {}),
        "trial gradient of another shape": (
            (square, lambda x: 2 * x if np.array_equal(x, X) else np.ones(3)), X, D,
            {"value": 5.0, "gradient": -D}),
        "trial gradient (2, 1)": (
            (square, lambda x: 2 * x if np.array_equal(x, X) else (2 * x).reshape(2, 1)),
            X, D, {"value": 5.0, "gradient": -D}),
    }
    for label, (objective, x, d, keywords) in bad_calls.items():
        # Rules that evaluate nothing at x (Fixed, Schedule) may never see a bad
        # objective: then a finite step is the documented answer.
        lenient = label.startswith(("objective returns", "fused", "trial"))
        oracle = step_oracle(False, x=x) if lenient and name in (
            "Fixed", "Schedule") else None
        if label.startswith("trial") and name not in WITH_TRIAL_GRADIENTS:
            # Value-only controllers never ask for a gradient along the ray (`descend`
            # checks the one it asks for at the new point): the step must carry none.
            oracle = carries_no_gradient(monotone, x)
        case(group, label, lambda o=objective, x=x, d=d, k=keywords: make()(o, x, d, **k),
             oracle)
    # Numeric trouble: a status, never an exception, never a worse point.
    case(group, "NaN beyond |x| > 1.5", lambda: make()((nan_beyond(1.5), square_gradient),
                                                        X, D), step_oracle(monotone))
    case(group, "value inf away from x", lambda: make()(
        (lambda x: 5.0 if np.array_equal(x, X) else math.inf, square_gradient), X, D),
        step_oracle(monotone))
    case(group, "gradient NaN away from x", lambda: make()(
        (square, lambda x: 2 * x if np.array_equal(x, X) else np.full(2, math.nan)),
        X, D), step_oracle(monotone))
    # Fixed and Schedule use no gradient unless given one: an ascent direction is
    # taken as asked (documented); given the gradient, they report not_descent.
    expected = (Status.not_descent, Status.accepted) if name in (
        "Fixed", "Schedule") else (Status.not_descent,)
    ascent = None if name.startswith(("BarzilaiBorwein", "Polyak")) else step_oracle(
        monotone, expect=expected)
    case(group, "ascent direction", lambda: make()(PAIR, X, -D), ascent)
    case(group, "zero gradient", lambda: make()(PAIR, np.zeros(2), np.zeros(2)),
         step_oracle(monotone, x=np.zeros(2)))
    tiny = np.full(3, 1e-170)
    case(group, "slope underflows (x = 1e-170)", lambda: make()(PAIR, tiny, -2 * tiny),
         step_oracle(monotone, x=tiny))
    case(group, "slope overflows (d = 1e300)", lambda: make()(PAIR, X, 1e300 * D),
         step_oracle(monotone))
    case(group, "huge direction 1e160", lambda: make()(PAIR, X, 1e160 * D),
         step_oracle(monotone))
    case(group, "tiny direction 1e-160", lambda: make()(PAIR, X, 1e-160 * D),
         step_oracle(monotone))
    case(group, "objective raises", lambda: make()((raising, square_gradient), X, D,
                                                     gradient=-D))
    case(group, "int list x", lambda: make()(PAIR, [1, 2], [-2, -4]),
         step_oracle(monotone, x=np.array([1.0, 2.0])))
    x32 = X.astype(np.float32)
    case(group, "float32 x keeps its dtype", lambda: make()(
        (square, lambda x: (2 * x).astype(np.float32)), x32, -2 * x32),
        step_oracle(monotone, x=x32))
    m = np.array([[1.0, 2.0], [3.0, -1.0]])
    case(group, "2-D x", lambda: make()(PAIR, m, -2 * m), step_oracle(monotone, x=m))
    if monotone and name not in ("Fixed", "Schedule"):
        case(group, "value= far above f(x)", lambda: make()(PAIR, X, D, value=1e6,
                                                             gradient=-D), ok)
    case(group, "reused on another problem", lambda: reuse(make), step_oracle(
        monotone, objective=(rosenbrock, rosenbrock_gradient), x=np.array([-1.2, 1.0])))


# Controllers that evaluate ∇f at trial points (given f and ∇f at x).
WITH_TRIAL_GRADIENTS = ("Wolfe", "MoreThuente", "HagerZhang")


def carries_no_gradient(monotone: bool, x: Any) -> Callable[[Any], None]:
    base = step_oracle(monotone, x=x)

    def check(step: Any) -> None:
        base(step)
        if step.gradient is not None and np.shape(step.gradient) != np.shape(x):
            raise Wrong(f"a gradient of shape {np.shape(step.gradient)} on the step")

    return check


def reuse(make: Callable[[], Any]) -> Any:
    controller = make()
    x = np.array([3.0, 1.0])
    for _ in range(5):
        x = controller(PAIR, x, -2 * x).x
    start = np.array([-1.2, 1.0])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return controller((rosenbrock, rosenbrock_gradient), start, -rosenbrock_gradient(start))


def constructor_cases() -> None:
    group = "constructor"
    bad = {
        "Armijo(c1=2)": lambda: Armijo(c1=2),
        "Armijo(c1='a')": lambda: Armijo(c1="a"),
        "Armijo(shrink=1)": lambda: Armijo(shrink=1.0),
        "Armijo(max_evaluations=0)": lambda: Armijo(max_evaluations=0),
        "Armijo(max_evaluations=2.0)": lambda: Armijo(max_evaluations=2.0),
        "Armijo(initial=-1)": lambda: Armijo(initial=-1.0),
        "Armijo(initial=nan)": lambda: Armijo(initial=math.nan),
        "Armijo(interpolation='x')": lambda: Armijo(interpolation="x"),
        "Armijo(c3=0.1)": lambda: Armijo(c3=0.1),
        "Armijo(0.1) positional": lambda: Armijo(0.1),
        "Goldstein(c=0.5)": lambda: Goldstein(c=0.5),
        "Wolfe(c1=0.9, c2=0.1)": lambda: Wolfe(c1=0.9, c2=0.1),
        "Wolfe(c2=1)": lambda: Wolfe(c2=1.0),
        "Wolfe(strong='yes')": lambda: Wolfe(strong="yes"),
        "MoreThuente(c2=-1)": lambda: MoreThuente(c2=-1.0),
        "HagerZhang(max_evaluations=-3)": lambda: HagerZhang(max_evaluations=-3),
        "NonmonotoneArmijo(memory=0)": lambda: NonmonotoneArmijo(memory=0),
        "NonmonotoneArmijo(reference='min')": lambda: NonmonotoneArmijo(reference="min"),
        "Fixed(-1)": lambda: Fixed(-1.0),
        "Fixed(nan)": lambda: Fixed(math.nan),
        "Fixed('0.1')": lambda: Fixed("0.1"),
        "Schedule(5)": lambda: Schedule(5),
        "Schedule.exponential(1, rate=2)": lambda: Schedule.exponential(1.0, rate=2.0),
        "BarzilaiBorwein(variant='x')": lambda: BarzilaiBorwein(variant="x"),
        "BarzilaiBorwein(globalize=Fixed)": lambda: BarzilaiBorwein(globalize=Fixed(0.1)),
        "BarzilaiBorwein(globalize=Polyak)": lambda: BarzilaiBorwein(globalize=Polyak(f_min=0)),
        "BarzilaiBorwein(globalize=Armijo class)": lambda: BarzilaiBorwein(globalize=Armijo),
        "BarzilaiBorwein(min_size > max_size)": lambda: BarzilaiBorwein(min_size=2.0,
                                                                        max_size=1.0),
        "Polyak(f_min='0')": lambda: Polyak(f_min="0"),
        "Polyak(f_min=inf)": lambda: Polyak(f_min=math.inf),
        "Fallback(Fixed, Armijo()) class": lambda: Fallback(Fixed, Armijo()),
        "Fallback(Fixed(0.1), 'armijo')": lambda: Fallback(Fixed(0.1), "armijo"),
        "LBFGS(memory=0)": lambda: LBFGS(memory=0),
        "NonlinearCG(beta='x')": lambda: NonlinearCG(beta="x"),
        "GradientNorm(atol=-1)": lambda: stopping.GradientNorm(atol=-1.0),
        "GradientNorm(norm=3)": lambda: stopping.GradientNorm(norm=3),
        "ValueChange(window=0)": lambda: stopping.ValueChange(window=0),
        "MaxIterations(-1)": lambda: stopping.MaxIterations(-1),
        "MaxEvaluations(1.5)": lambda: stopping.MaxEvaluations(1.5),
        "TimeLimit(-1)": lambda: stopping.TimeLimit(-1.0),
        "Divergence(bound=0)": lambda: stopping.Divergence(bound=0.0),
        "Stall(iterations=0)": lambda: stopping.Stall(iterations=0),
        "AnyOf()": lambda: stopping.AnyOf(),
        "AnyOf(5)": lambda: stopping.AnyOf(5),
        "default(gradient_rtol=1)": lambda: stopping.default(gradient_rtol=1.0),
        "default(gtol=1e-6)": lambda: stopping.default(gtol=1e-6),
        "Objective(5)": lambda: Objective(5),
        "Objective(f, grad=5)": lambda: Objective(square, 5),
        "Objective(f, fused='no')": lambda: Objective(square, fused="no"),
        "Objective(f, g, fused=True)": lambda: Objective(square, square_gradient, fused=True),
    }
    for label, call in bad.items():
        case(group, label, call)


def direction_cases() -> None:
    for name, make in {"SteepestDescent": SteepestDescent, "LBFGS": LBFGS,
                       "NonlinearCG": NonlinearCG}.items():
        group = f"direction {name}"
        case(group, "gradient of another shape", lambda m=make: m()(X, np.ones(3)))
        case(group, "complex gradient", lambda m=make: m()(X, (-D).astype(complex)))
        case(group, "reused with another shape", lambda m=make: reuse_direction(m),
             lambda d: None if np.shape(d) == (3,) and np.all(np.isfinite(d)) else (
                 _raise(Wrong(f"direction of shape {np.shape(d)}"))))


def _raise(error: Exception) -> None:
    raise error


def reuse_direction(make: Callable[[], Any]) -> Any:
    direction = make()
    x = np.array([3.0, 1.0])
    for _ in range(3):
        d = direction(x, 2 * x)
        x = x + 0.1 * d
    y = np.ones(3)
    return direction(y, 2 * y)


def descend_cases() -> None:
    group = "descend"
    x0 = np.array([3.0, 1.0])
    raise_cases = {
        "controller=Armijo (class)": lambda: descend(PAIR, x0, controller=Armijo),
        "direction=LBFGS (class)": lambda: descend(PAIR, x0, direction=LBFGS),
        "stop=5": lambda: descend(PAIR, x0, stop=5),
        "stop=GradientNorm (class)": lambda: descend(PAIR, x0, stop=stopping.GradientNorm),
        "callback=5": lambda: descend(PAIR, x0, callback=5),
        "controller='armijo'": lambda: descend(PAIR, x0, controller="armijo"),
        "stop returns 'yes'": lambda: descend(PAIR, x0, stop=lambda p: "yes"),
        "callback returns 1": lambda: descend(PAIR, x0, stop=stopping.MaxIterations(5),
                                              callback=lambda p: 1),
        "x0 NaN": lambda: descend(PAIR, np.array([math.nan, 1.0])),
        "x0 complex": lambda: descend(PAIR, x0.astype(complex)),
        "f(x0) NaN": lambda: descend((returning(math.nan), square_gradient), x0),
        "f(x0) a string": lambda: descend((returning("2"), square_gradient), x0),
        "gradient at x0 of another shape": lambda: descend((square, returning(np.ones(3))),
                                                           x0),
        "no gradient": lambda: descend(square, x0),
        "objective raises": lambda: descend((raising, square_gradient), x0),
        "objective raises at its 4th call": lambda: descend(failing_later(), x0),
    }
    for label, call in raise_cases.items():
        case(group, label, call)
    quad = run_oracle(square, x0)
    case(group, "callback returns numpy True", lambda: descend(
        PAIR, x0, controller=Armijo(initial=0.1), callback=lambda p: np.True_), quad)
    case(group, "callback returns numpy False", lambda: descend(
        PAIR, x0, controller=Armijo(initial=0.1), callback=lambda p: np.False_), quad)
    case(group, "stop returns numpy True", lambda: descend(PAIR, x0,
                                                          stop=lambda p: np.bool_(True)), quad)
    f32 = least_squares(np.float32)
    case(group, "float32 least squares", lambda: descend(f32, np.zeros(20, np.float32)),
         run_oracle(f32[0], np.zeros(20, np.float32), kinds=(Kind.converged,)))
    case(group, "float32 least squares, float64 tolerances", lambda: descend(
        f32, np.zeros(20, np.float32), stop=stopping.default()),
        run_oracle(f32[0], np.zeros(20, np.float32), kinds=(Kind.converged,)))
    case(group, "Fixed(10) diverges", lambda: descend(PAIR, x0, controller=Fixed(10.0)),
         run_oracle(square, x0, kinds=(Kind.failed,), monotone=False))
    case(group, "NaN beyond |x| > 3.5 with Fixed(2)", lambda: descend(
        (nan_beyond(3.5), square_gradient), x0, controller=Fixed(2.0)),
        run_oracle(square, x0, kinds=(Kind.failed,), monotone=False))
    case(group, "underflow start", lambda: descend(PAIR, np.full(3, 1e-170)),
         run_oracle(square, np.full(3, 1e-170), kinds=(Kind.converged,)))
    rx = np.array([-1.2, 1.0])
    for cname, (make, monotone) in CONTROLLERS.items():
        for dname, direction in {"steepest": SteepestDescent, "L-BFGS": LBFGS}.items():
            if cname.startswith(("BarzilaiBorwein", "Polyak")) and dname == "L-BFGS":
                continue  # defined for −∇f only: refused with a clear error (tested above)
            case(group, f"Rosenbrock {cname} + {dname}", lambda m=make, d=direction: descend(
                (rosenbrock, rosenbrock_gradient), rx, controller=m(), direction=d(),
                stop=stopping.default(max_iterations=300)),
                run_oracle(rosenbrock, rx, monotone=monotone))
    case(group, "BarzilaiBorwein + L-BFGS", lambda: descend(
        (rosenbrock, rosenbrock_gradient), rx, controller=BarzilaiBorwein(), direction=LBFGS()))
    case(group, "same controller, two runs", lambda: two_runs(),
         run_oracle(rosenbrock, rx))
    case(group, "2-D x0", lambda: descend(PAIR, np.ones((2, 2))),
         run_oracle(square, np.ones((2, 2)), kinds=(Kind.converged,)))


def failing_later() -> tuple[Callable[[Any], float], Callable[[Any], Any]]:
    calls = {"n": 0}

    def f(x):
        calls["n"] += 1
        if calls["n"] > 3:
            raise UserFault("fails after three calls")
        return rosenbrock(x)

    return f, rosenbrock_gradient


def two_runs() -> Any:
    controller = Armijo()
    descend(PAIR, np.array([3.0, 1.0]), controller=controller)
    rx = np.array([-1.2, 1.0])
    return descend((rosenbrock, rosenbrock_gradient), rx, controller=controller,
                   stop=stopping.default(max_iterations=300))


def jax_cases() -> None:
    try:
        import jax
        import jax.numpy as jnp
    except ImportError:
        return
    import linestep.jax as lj

    group = "jax"

    def f(x):
        return jnp.sum(x ** 2)

    x = jnp.ones(3)
    for name, make in {"armijo": lj.armijo, "wolfe": lj.wolfe,
                       "barzilai_borwein": lj.barzilai_borwein,
                       "nonmonotone_armijo": lj.nonmonotone_armijo,
                       "fixed": lambda: lj.fixed(0.1)}.items():
        case(group, f"{name}: vector value", lambda m=make: m().step(
            f, x, -2 * x, value=jnp.ones(3), gradient=2 * x, state=m().begin(x)))
        case(group, f"{name}: gradient of another shape", lambda m=make: m().step(
            f, x, -2 * x, value=f(x), gradient=jnp.ones(2), state=m().begin(x)))
        # A fresh state holds no copy of x except Barzilai–Borwein's pair: usable.
        case(group, f"{name}: state for another shape", lambda m=make: m().step(
            f, jnp.ones(4), -2 * jnp.ones(4), value=4.0, gradient=2 * jnp.ones(4),
            state=m().begin(x)), None if name == "barzilai_borwein" else (
                lambda out: None if float(f(out.x)) <= 4.0 else _raise(Wrong("f rose"))))
        case(group, f"{name}: integer parameters", lambda m=make: m().begin(jnp.arange(3)))
        case(group, f"{name}: fun not callable", lambda m=make: m().step(
            5, x, -2 * x, value=f(x), gradient=2 * x, state=m().begin(x)))
    bb = lj.barzilai_borwein()
    state = bb.step(f, x, -2 * x, value=f(x), gradient=2 * x, state=bb.begin(x)).state
    case(group, "barzilai_borwein: carried state for other shapes", lambda: bb.step(
        f, jnp.ones(4), -2 * jnp.ones(4), value=4.0, gradient=2 * jnp.ones(4), state=state))
    case(group, "lbfgs: state for another shape", lambda: lj.lbfgs().propose(
        jnp.ones(4), jnp.ones(4), lj.lbfgs().begin(x)))
    case(group, "host Armijo inside jax.jit", lambda: jax.jit(
        lambda y: Armijo()((f, jax.grad(f)), y, -2 * y).x)(x))
    case(group, "host Armijo with complex JAX x", lambda: Armijo()(
        (f, jax.grad(f)), x.astype(jnp.complex64), -2 * x))
    case(group, "host Wolfe with JAX arrays", lambda: Wolfe()(
        lj.objective(f), jnp.array([1.0, 2.0]), jnp.array([-2.0, -4.0])),
        lambda step: None if step.ok and float(f(step.x)) <= 5.0 else _raise(
            Wrong("JAX host step not ok")))


# ------------------------------------------------------------------- classification


def classify(call: Callable[[], Any], oracle: Callable[[Any], None] | None) -> tuple[str, str]:
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            with np.errstate(all="ignore"):
                result = call()
    except UserFault:
        return STATUS, "the user's exception passed through unchanged"
    except (TypeError, ValueError) as error:
        message = str(error)
        named = "`" in message or "keyword argument" in message or "positional" in message
        return (CLEAR if named else CRASH), f"{type(error).__name__}: {message[:150]}"
    except Exception as error:  # noqa: BLE001 - the battery classifies everything
        return CRASH, f"{type(error).__name__}: {str(error)[:150]}"
    if oracle is None:
        return WRONG, f"accepted, returned {type(result).__name__}"
    try:
        oracle(result)
    except Lost as error:
        return LOST, str(error)
    except Wrong as error:
        return WRONG, str(error)
    except Exception as error:  # noqa: BLE001 - an oracle tripping is a wrong result
        return WRONG, f"oracle: {type(error).__name__}: {error}"
    return STATUS, ""


def main() -> None:
    verbose = "-v" in sys.argv
    controller_cases()
    constructor_cases()
    direction_cases()
    descend_cases()
    jax_cases()
    counts: Counter[str] = Counter()
    for group, name, call, oracle in CASES:
        kind, detail = classify(call, oracle)
        counts[kind] += 1
        if verbose and kind not in (CLEAR, STATUS):
            print(f"[{kind}] {group}: {name}: {detail}")
    print(f"linestep {linestep.__version__}: {len(CASES)} hostile inputs and faults")
    for kind in (CLEAR, STATUS, CRASH, WRONG, LOST):
        print(f"  {kind:<22} {counts[kind]:4d}")


if __name__ == "__main__":
    main()
