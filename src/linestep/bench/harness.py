"""Define a benchmark study, run it (locally, on a pool, or on a cluster), collect tidy results.

A `Study` is the product problems × controllers × directions × starts (× seeds
for random starts). `run_study` runs every combination with `linestep.descend`
and returns `Results`: one `RunRecord` per run, with the verdict, the final
value, the gap to the known optimum, evaluation counts, times and the
per-iteration history.

Each run gets its own copy of the controller, the direction and the stopping
rule (a deep copy of the object given, or a fresh one from a factory):
controllers carry state between calls, so runs never share one.

With ``out=``, each run is written to ``out/results.sqlite`` as soon as it
finishes (see `linestep.bench.storage`); running the same study again skips the
finished runs. Runs go to a local process pool by default, to any
`concurrent.futures`-style executor given, or to a Dask cluster given its
scheduler address. A run whose objective raises, or whose worker process dies,
is recorded as failed with the error text; the study goes on.

Examples
--------
>>> import numpy as np
>>> from linestep import Armijo, stopping
>>> from linestep.bench import Study, get_problem, run_study
>>> from linestep.rules.fixed import Fixed
>>> study = Study(problems=[get_problem("rosenbrock"), get_problem("beale")],
...               controllers=[Armijo(), Fixed(1e-3)],
...               stop=stopping.default(max_iterations=200))
>>> len(study)
4
>>> results = run_study(study, workers=1)
>>> [(r.problem, r.controller, r.kind) for r in results][:2]
[('rosenbrock', 'Armijo()', 'budget'), ('rosenbrock', 'Fixed(size=0.001)', 'budget')]
"""

from __future__ import annotations

import copy
import dataclasses
import functools
import inspect
import math
import os
import pickle
import time
import traceback
import types
import zlib
from collections import deque
from collections.abc import Callable, Iterator, Mapping, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from linestep import _validate, stopping
from linestep._descend import History, descend
from linestep.bench import storage
from linestep.bench.problems import SOLVE_RTOL, Problem, close_to_optimum, optimum_below
from linestep.bench.user import UserProblem, as_problems, from_file, resolve_source
from linestep.directions import SteepestDescent

__all__ = [
    "PerProblem",
    "Results",
    "RunRecord",
    "Start",
    "Study",
    "incompatible",
    "polyak_at_optimum",
    "run_study",
]

# Final points with more entries than this are not stored (they would bloat the file).
STORED_POINT_LIMIT = 10_000
# Tracebacks longer than this are cut (keeping the end, where the error is).
ERROR_TEXT_LIMIT = 4_000
# Runs kept in flight per worker: enough to keep workers busy, few enough to
# lose little on Ctrl-C.
IN_FLIGHT_PER_WORKER = 2


# --- starting points ----------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Start:
    """How to get a run's starting point from a problem's standard start x_s.

    x0 = scale · x_s + noise · max(1, ‖x_s‖∞) · z, with z standard normal drawn
    from a generator seeded by the run's seed and the problem's name and
    dimension. Use the constructors: `standard`, `scaled` (Moré, Garbow and
    Hillstrom's 10·x_s and 100·x_s), `perturbed` and `drawn` (the problem's own
    start function, for user problems that give one).

    Starts with noise or drawn are *random*: they run once per seed of the
    study; the others run once, with seed None.

    Examples
    --------
    >>> from linestep.bench import Start, get_problem
    >>> Start.scaled(10).point(get_problem("rosenbrock"), None)
    array([-12.,  10.])
    >>> Start.perturbed(0.1).label, Start.perturbed(0.1).random
    ('perturbed(0.1)', True)
    """

    label: str
    scale: float = 1.0
    noise: float = 0.0
    drawn_from_problem: bool = False

    @classmethod
    def standard(cls) -> Start:
        """The problem's standard start."""
        return cls("standard")

    @classmethod
    def scaled(cls, factor: float) -> Start:
        """factor · x_s (MGH use factors 10 and 100)."""
        factor = _validate.finite_scalar("factor", factor)
        if factor == 0:
            raise ValueError("`factor` must be non-zero; got factor=0.0.")
        return cls(f"x{factor:g}", scale=factor)

    @classmethod
    def perturbed(cls, noise: float) -> Start:
        """x_s plus seeded Gaussian noise of relative size `noise`."""
        noise = _validate.positive("noise", noise)
        return cls(f"perturbed({noise:g})", noise=noise)

    @classmethod
    def drawn(cls) -> Start:
        """start(rng) from the problem's start function (user problems that give one)."""
        return cls("drawn", drawn_from_problem=True)

    @property
    def random(self) -> bool:
        """Whether the point depends on the seed."""
        return self.noise > 0 or self.drawn_from_problem

    def point(self, problem: Problem, seed: int | None) -> np.ndarray:
        """The starting point of `problem` for `seed` (ignored when not random)."""
        if self.drawn_from_problem:
            draw = getattr(problem, "start_function", None)
            if draw is None:
                raise ValueError(
                    f"Start.drawn() needs problems with a start function; {problem.name!r} "
                    "has only a fixed start. Use Start.perturbed(...) for it."
                )
            return np.array(draw(_generator(problem, seed)), dtype=float).reshape(-1)
        x = self.scale * np.array(problem.start, dtype=float)
        if self.noise > 0:
            size = max(1.0, float(np.max(np.abs(problem.start))))
            x = x + self.noise * size * _generator(problem, seed).standard_normal(x.shape)
        return x


def _generator(problem: Problem, seed: int | None) -> np.random.Generator:
    # crc32, not hash(): Python's string hash changes between processes
    name = zlib.crc32(problem.name.encode("utf-8"))
    return np.random.default_rng([0 if seed is None else int(seed), name, problem.dimension])


# --- controllers that depend on the problem -----------------------------------------------


@dataclass(frozen=True, slots=True)
class PerProblem:
    """A controller built from the problem it runs on, under one `label`.

    ``build(problem)`` returns a fresh controller, or None to skip the problem.
    `polyak_at_optimum` is the typical use.
    """

    label: str
    build: Callable[[Problem], Any]


def _polyak_build(problem: Problem) -> Any:
    from linestep.rules.polyak import Polyak

    if not problem.optimal_values:
        return None
    return Polyak(f_min=min(problem.optimal_values))


def polyak_at_optimum() -> PerProblem:
    """``Polyak(f_min=f*)`` with each problem's known optimal value (others are skipped)."""
    return PerProblem("Polyak(f_min=f*)", _polyak_build)


def incompatible(controller: Any, direction: Any) -> bool:
    """True for rules defined for the negative gradient only (``negative_gradient_only``:
    Barzilai–Borwein, Polyak) paired with another direction: such runs could only raise.
    `Study`'s default `exclude`.
    """
    return (getattr(controller, "negative_gradient_only", False)
            and not isinstance(direction, SteepestDescent))


# --- the study ----------------------------------------------------------------------------


def _short_label(thing: Any) -> str:
    """The constructor call with only the arguments that differ from their defaults.

    ``Wolfe(strong=False)``, ``Fallback(rule=Fixed(size=0.05), search=Armijo())``;
    objects without ``_fields`` (the rebuilding-repr convention) keep their repr.
    """
    fields = getattr(thing, "_fields", None)
    if fields is None or isinstance(thing, type):
        return repr(thing)
    cls = type(thing)
    try:
        defaults = {name: parameter.default for name, parameter
                    in inspect.signature(cls).parameters.items()}
    except (TypeError, ValueError):
        defaults = {}
    try:
        reference = cls()
    except Exception:  # classes with required arguments
        reference = None
    shown = []
    for name in fields:
        value = getattr(thing, name, None)
        if reference is not None and repr(getattr(reference, name, None)) == repr(value):
            continue
        default = defaults.get(name, inspect.Parameter.empty)
        if default is not inspect.Parameter.empty and repr(default) == repr(value):
            continue
        shown.append(f"{name}={_short_label(value)}")
    return f"{cls.__name__}({', '.join(shown)})"


def _entries(argument: str, given: Any) -> tuple[tuple[str | None, Any], ...]:
    if isinstance(given, Mapping):
        entries = tuple((str(label), item) for label, item in given.items())
    elif isinstance(given, (str, bytes)) or not isinstance(given, Sequence):
        entries = ((None, given),)
    else:
        entries = tuple((None, item) for item in given)
    if not entries:
        raise ValueError(f"`{argument}` must not be empty.")
    return entries


def _is_factory(item: Any) -> bool:
    """Classes and plain functions build objects; instances are copied."""
    return isinstance(item, (type, types.FunctionType, types.MethodType, functools.partial,
                             types.BuiltinFunctionType))


def _fresh(item: Any) -> Any:
    """A new object from a spec: a class or factory is called, an instance deep-copied."""
    return item() if _is_factory(item) else copy.deepcopy(item)


def _stop_fresh(stop: Any) -> Any:
    if stop is None:
        return stopping.default()
    if _is_factory(stop):
        try:
            inspect.signature(stop).bind()
        except (TypeError, ValueError):
            return stop  # a plain function criterion, called with a Progress: stateless
        return stop()
    return copy.deepcopy(stop)


@dataclass(frozen=True, slots=True, kw_only=True)
class _Task:
    """One run, as shipped to a worker (everything in it must pickle)."""

    key: str
    header: dict[str, Any]
    problem: Problem | None
    source: tuple[str, int] | None
    slot: int | None = None  # index into the problems a pool's workers received at start
    controller: Any
    direction: Any
    stop: Any
    x0: np.ndarray
    solve_rtol: float


@dataclass(frozen=True, kw_only=True)
class Study:
    """Problems × controllers × directions × starts (× seeds for random starts).

    Parameters
    ----------
    problems : sequence
        `Problem` objects, problem descriptions (dicts, objects, functions; see
        `linestep.bench.user`) or ``"module:function"`` specs.
    controllers : sequence or mapping
        Built controllers (deep-copied for every run), classes or factories
        (called for every run), or `PerProblem` entries. A mapping gives each a
        label; otherwise the label is the constructor call with only the
        arguments that differ from their defaults (``Wolfe(strong=False)``).
    directions : sequence or mapping
        Direction objects or factories, labelled the same way. Default:
        steepest descent.
    starts : sequence of Start
        Default: the standard start only.
    seeds : sequence of int
        Seeds of the random starts (deterministic starts run once).
    stop : criterion or factory, optional
        The stopping rule, deep-copied per run. Default: ``stopping.default()``.
    exclude : callable or None
        ``exclude(controller, direction) -> bool``: pairs to leave out. The default,
        `incompatible`, leaves out rules defined for −∇f only (Barzilai–Borwein,
        Polyak) with other directions; None runs every pair.
    solve_rtol : float
        A run is *solved* when |f − f*| <= solve_rtol · max(1, |f*|).

    Raises
    ------
    ValueError, TypeError
        At construction, for empty or malformed arguments;
        `linestep.bench.user.ObjectiveSpecError` for user objectives that cannot
        be used.
    """

    problems: Sequence[Any]
    controllers: Sequence[Any] | Mapping[str, Any]
    directions: Sequence[Any] | Mapping[str, Any] = (SteepestDescent,)
    starts: Sequence[Start] = (Start.standard(),)
    seeds: Sequence[int] = (0,)
    stop: Any = None
    exclude: Callable[[Any, Any], bool] | None = incompatible
    solve_rtol: float = SOLVE_RTOL

    def __post_init__(self) -> None:
        given = self.problems
        if isinstance(given, (str, Problem, Mapping)) or not isinstance(given, Sequence):
            given = [given]
        problems: list[Problem] = []
        for item in given:
            problems += as_problems(item)
        if not problems:
            raise ValueError("`problems` must not be empty.")
        names = [(p.name, p.dimension) for p in problems]
        duplicates = sorted({name for name in names if names.count(name) > 1})
        if duplicates:
            raise ValueError(
                f"`problems` has several problems with the same name and dimension: "
                f"{duplicates}. Give each a distinct name: results are keyed by it."
            )
        object.__setattr__(self, "problems", tuple(problems))
        object.__setattr__(self, "controllers", _entries("controllers", self.controllers))
        object.__setattr__(self, "directions", _entries("directions", self.directions))
        starts = tuple(self.starts) if isinstance(self.starts, Sequence) else (self.starts,)
        if not starts or not all(isinstance(s, Start) for s in starts):
            raise TypeError(f"`starts` must be a non-empty sequence of Start; got {starts!r}.")
        object.__setattr__(self, "starts", starts)
        seeds = tuple(_validate.integer("seeds", s, minimum=0) for s in self.seeds)
        if not seeds:
            raise ValueError("`seeds` must not be empty.")
        object.__setattr__(self, "seeds", seeds)
        object.__setattr__(self, "solve_rtol", _validate.open_unit("solve_rtol", self.solve_rtol))
        if any(start.drawn_from_problem for start in starts):
            lacking = [p.name for p in problems if getattr(p, "start_function", None) is None]
            if lacking:
                raise ValueError(
                    f"Start.drawn() needs a start function on every problem; "
                    f"{lacking} have none."
                )

    def tasks(self) -> list[_Task]:
        """Every run of the study, each with fresh controller, direction and stop."""
        tasks: list[_Task] = []
        for problem in self.problems:
            for start in self.starts:
                for seed in self.seeds if start.random else (None,):
                    x0 = start.point(problem, seed)
                    for direction_label, direction_spec in self.directions:
                        for controller_label, controller_spec in self.controllers:
                            task = self._task(problem, start, seed, x0, controller_label,
                                              controller_spec, direction_label, direction_spec)
                            if task is not None:
                                tasks.append(task)
        return tasks

    def _task(self, problem: Problem, start: Start, seed: int | None, x0: np.ndarray,
              controller_label: str | None, controller_spec: Any,
              direction_label: str | None, direction_spec: Any) -> _Task | None:
        if isinstance(controller_spec, PerProblem):
            controller = controller_spec.build(problem)
            if controller is None:
                return None
            controller_label = controller_label or controller_spec.label
        else:
            controller = _fresh(controller_spec)
        direction = _fresh(direction_spec)
        if self.exclude is not None and self.exclude(controller, direction):
            return None
        stop = _stop_fresh(self.stop)
        header = {
            "problem": problem.name, "dimension": problem.dimension,
            "controller": controller_label or _short_label(controller),
            "controller_repr": repr(controller),
            "direction": direction_label or _short_label(direction),
            "start": start.label, "seed": seed, "stop": repr(stop),
        }
        key = storage.run_key(problem=problem.name, dimension=problem.dimension,
                              controller_repr=header["controller_repr"],
                              direction=repr(direction), start=start.label, seed=seed,
                              stop=header["stop"])
        return _Task(key=key, header=header, problem=problem, source=None,
                     controller=controller, direction=direction, stop=stop, x0=x0,
                     solve_rtol=self.solve_rtol)

    def __len__(self) -> int:
        return len(self.tasks())


# --- records ------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True, kw_only=True)
class RunRecord:
    """One finished run.

    Attributes
    ----------
    key : str
        The run key (see `linestep.bench.storage.run_key`).
    problem, dimension
        The problem's name and n.
    controller : str
        Its label (groups runs in reports); `controller_repr` rebuilds it exactly.
    direction : str
        The direction's label.
    start : str
        The start's label ("standard", "x10", "perturbed(0.1)", ...).
    seed : int or None
        The seed of a random start; None for deterministic starts.
    stop : str
        The stopping rule's repr.
    kind, reason : str
        The verdict: ``converged``, ``budget`` or ``failed``, and why. A run that
        raised, or whose worker died, is ``failed`` and has `error` set.
    value, initial_value : float or None
        f at the end and at the start (None when the run raised before).
    optimum : float or None
        The known optimal value the gap is measured from (None when unknown).
    gap : float or None
        ``value − optimum`` (may be slightly negative: published optima are rounded).
        For problems without a known optimum, `Results.gap` measures from the
        best value any run reached.
    solved : bool or None
        |value − optimum| <= solve_rtol·max(1, |optimum|); None when no optimum is
        known (see `Results.is_solved`).
    iterations, value_evaluations, gradient_evaluations : int
    seconds : float
        Wall time of the run inside the worker.
    objective_seconds : float
        The part of `seconds` spent inside the objective's callables.
    error : str or None
        The traceback when the run raised or its worker died.
    x : ndarray or None
        The final point (None above `STORED_POINT_LIMIT` entries or on error).
    history : linestep.History or None
        Per-iteration value, gradient norm, step size and cumulative evaluations.
    """

    key: str
    problem: str
    dimension: int
    controller: str
    controller_repr: str
    direction: str
    start: str
    seed: int | None
    stop: str
    kind: str
    reason: str
    value: float | None
    initial_value: float | None
    optimum: float | None
    gap: float | None
    solved: bool | None
    iterations: int
    value_evaluations: int
    gradient_evaluations: int
    seconds: float
    objective_seconds: float
    error: str | None
    x: np.ndarray | None
    history: History | None

    @property
    def evaluations(self) -> int:
        """Value plus gradient evaluations (a fused call counts one of each)."""
        return self.value_evaluations + self.gradient_evaluations

    @property
    def instance(self) -> tuple[str, int, str, int | None]:
        """(problem, dimension, start, seed): the problem instance the run solved."""
        return (self.problem, self.dimension, self.start, self.seed)

    def to_row(self, *, history: bool = True) -> dict[str, Any]:
        """A plain dict: numbers, strings, lists (the storage and export form)."""
        row = {field.name: getattr(self, field.name) for field in dataclasses.fields(self)}
        row["x"] = None if self.x is None else self.x.tolist()
        if history:
            row["history"] = _history_to_json(self.history)
        else:
            del row["history"]
        return row

    @classmethod
    def from_row(cls, row: Mapping[str, Any]) -> RunRecord:
        """Rebuild a record from `to_row`'s form (or a stored row)."""
        values = dict(row)
        values["x"] = None if values.get("x") is None else np.asarray(values["x"], dtype=float)
        values["history"] = _history_from_json(values.get("history"))
        names = {field.name for field in dataclasses.fields(cls)}
        return cls(**{name: values.get(name) for name in names})


def _history_to_json(history: History | None) -> dict[str, list] | None:
    if history is None:
        return None
    return {
        "value": np.asarray(history.value, dtype=float).tolist(),
        "gradient_norm": np.asarray(history.gradient_norm, dtype=float).tolist(),
        "size": np.asarray(history.size, dtype=float).tolist(),
        "values": np.asarray(history.values, dtype=int).tolist(),
        "gradients": np.asarray(history.gradients, dtype=int).tolist(),
        "restarted": np.asarray(history.restarted, dtype=bool).tolist(),
        "status": list(history.status),
    }


def _history_from_json(data: Any) -> History | None:
    if data is None:
        return None
    if isinstance(data, History):
        return data
    return History(value=np.asarray(data["value"], dtype=float),
                   gradient_norm=np.asarray(data["gradient_norm"], dtype=float),
                   size=np.asarray(data["size"], dtype=float),
                   values=np.asarray(data["values"], dtype=int),
                   gradients=np.asarray(data["gradients"], dtype=int),
                   restarted=np.asarray(data["restarted"], dtype=bool),
                   status=tuple(data["status"]))


# --- running one task (in a worker) -------------------------------------------------------


class _Timed:
    """Wraps a callable and adds up the seconds spent in it."""

    __slots__ = ("function", "seconds")

    def __init__(self, function: Callable) -> None:
        self.function = function
        self.seconds = 0.0

    def __call__(self, x: Any) -> Any:
        started = time.perf_counter()
        try:
            return self.function(x)
        finally:
            self.seconds += time.perf_counter() - started


def _timed_objective(problem: Problem) -> tuple[Any, list[_Timed]]:
    from linestep import Objective

    fused = getattr(problem, "fused", None)
    if fused is not None:
        timer = _Timed(fused)
        return Objective(timer, fused=True), [timer]
    value, gradient = _Timed(problem.value), _Timed(problem.gradient)
    return Objective(value, gradient), [value, gradient]


def _error_text(exc: BaseException) -> str:
    text = "".join(traceback.format_exception(type(exc), exc, exc.__traceback__))
    return text if len(text) <= ERROR_TEXT_LIMIT else "…" + text[-ERROR_TEXT_LIMIT:]


def _failed_row(task: _Task, reason: str, error: str, *, seconds: float = 0.0,
                value_evaluations: int = 0, gradient_evaluations: int = 0,
                objective_seconds: float = 0.0) -> dict[str, Any]:
    return {"key": task.key, **task.header, "kind": "failed", "reason": reason,
            "value": None, "initial_value": None, "optimum": None, "gap": None,
            "solved": False, "iterations": 0, "value_evaluations": value_evaluations,
            "gradient_evaluations": gradient_evaluations, "seconds": seconds,
            "objective_seconds": objective_seconds, "error": error, "x": None,
            "history": None}


# Worker side of a local pool: the study's problems, sent once per worker process
# (by the pool's initializer) instead of once per run. Empty in the parent.
_POOL_PROBLEMS: list[Problem] = []


def _install_problems(problems: list[Problem]) -> None:
    _POOL_PROBLEMS[:] = problems


def _problem_of(task: _Task) -> Problem:
    if task.problem is not None:
        return task.problem
    if task.slot is not None:
        return _POOL_PROBLEMS[task.slot]
    return resolve_source(task.source)


def _by_slot(tasks: list[_Task]) -> tuple[list[_Task], list[Problem]]:
    """Replace each task's problem by its index in one shared list (sent once per worker)."""
    problems: list[Problem] = []
    slots: dict[int, int] = {}
    slotted = []
    for task in tasks:
        if task.problem is None:
            slotted.append(task)
            continue
        if id(task.problem) not in slots:
            slots[id(task.problem)] = len(problems)
            problems.append(task.problem)
        slotted.append(dataclasses.replace(task, problem=None, slot=slots[id(task.problem)]))
    return slotted, problems


def execute(task: _Task) -> dict[str, Any]:
    """Run one task and return its row (runs in a worker; never raises for run errors)."""
    started = time.perf_counter()
    objective, timers = None, []
    try:
        problem = _problem_of(task)
        objective, timers = _timed_objective(problem)
        run = descend(objective, task.x0.copy(), controller=task.controller,
                      direction=task.direction, stop=task.stop)
    except Exception as exc:
        return _failed_row(
            task, f"The run raised {type(exc).__name__}: {exc}", _error_text(exc),
            seconds=time.perf_counter() - started,
            value_evaluations=getattr(objective, "values", 0),
            gradient_evaluations=getattr(objective, "gradients", 0),
            objective_seconds=sum(t.seconds for t in timers))
    seconds = time.perf_counter() - started
    value = float(run.value)
    optimum = optimum_below(problem.optimal_values, value) if math.isfinite(value) else None
    x = np.asarray(run.x, dtype=float).reshape(-1)
    return {
        "key": task.key, **task.header, "kind": str(run.verdict.kind.value),
        "reason": run.verdict.reason, "value": value,
        "initial_value": float(run.history.value[0]),
        "optimum": optimum, "gap": None if optimum is None else value - optimum,
        "solved": (problem.solved(value, rtol=task.solve_rtol)
                   if problem.optimal_values else None),
        "iterations": int(run.iterations),
        "value_evaluations": int(run.evaluations.values),
        "gradient_evaluations": int(run.evaluations.gradients),
        "seconds": seconds, "objective_seconds": sum(t.seconds for t in timers),
        "error": None,
        "x": x.tolist() if x.size <= STORED_POINT_LIMIT else None,
        "history": _history_to_json(run.history),
    }


# --- executors ----------------------------------------------------------------------------


class _InlineExecutor:
    """Runs each task at submit time in this process (workers=1): no pickling, no pool."""

    def submit(self, function: Callable, *args: Any) -> Future:
        future: Future = Future()
        try:
            future.set_result(function(*args))
        except BaseException as exc:
            if isinstance(exc, KeyboardInterrupt):
                raise
            future.set_exception(exc)
        return future

    def shutdown(self, wait: bool = True, *, cancel_futures: bool = False) -> None:
        pass


def _picklable(thing: Any) -> str | None:
    """None when `thing` pickles, else the error text."""
    try:
        pickle.dumps(thing)
    except Exception as exc:
        return f"{type(exc).__name__}: {exc}"
    return None


def _shipping_trouble(problem: Problem) -> str | None:
    """Why `problem` cannot travel to another process as it is; None when it can."""
    if isinstance(problem, UserProblem) and problem.source is not None \
            and from_file(problem.source):
        # its functions pickle by reference to a module other processes cannot import
        return "its module was loaded from a file path"
    return _picklable(problem)


def _prepare_for_processes(tasks: list[_Task], *, strict: bool) -> list[_Task]:
    """Ship user problems by spec when they cannot travel as they are; check everything
    else pickles."""
    verdicts: dict[int, str | None] = {}
    prepared = []
    for task in tasks:
        problem = task.problem
        if id(problem) not in verdicts:
            verdicts[id(problem)] = _shipping_trouble(problem)
        trouble = verdicts[id(problem)]
        if trouble is not None:
            source = problem.source if isinstance(problem, UserProblem) else None
            if source is not None:
                task = dataclasses.replace(task, problem=None, source=source)
            elif strict:
                raise ValueError(
                    f"Problem {problem.name!r} cannot be sent to worker processes ({trouble}). "
                    "Define its functions at module level, load it from a "
                    "'module:function' spec, or run with workers=1."
                )
        for part, what in ((task.controller, "controller"), (task.direction, "direction"),
                           (task.stop, "stopping rule")):
            if strict and id(part) not in verdicts:
                verdicts[id(part)] = _picklable(part)
                if verdicts[id(part)] is not None:
                    raise ValueError(
                        f"The {what} {part!r} cannot be sent to worker processes "
                        f"({verdicts[id(part)]}). Use module-level functions in it, or run "
                        "with workers=1."
                    )
        prepared.append(task)
    return prepared


# --- running a study ----------------------------------------------------------------------


def run_study(study: Study, out: str | Path | None = None, *, workers: int | None = None,
              executor: Any = None, scheduler: Any = None,
              progress: Callable[[int, int, RunRecord], Any] | None = None) -> Results:
    """Run every run of `study` not yet in `out`'s results file; return the study's results.

    Parameters
    ----------
    study : Study
    out : path, optional
        Folder of the results file ``results.sqlite`` (created if needed). Runs
        already there (same run key) are skipped, not repeated. None keeps the
        results in memory only.
    workers : int, optional
        Size of the local process pool; default ``os.cpu_count()``. ``workers=1``
        runs in this process, without a pool (no pickling; a crashing objective
        then takes the study down with it).
    executor : concurrent.futures.Executor-like, optional
        Where to run instead of a new pool: anything with ``submit(fn, *args)``
        returning a future. It is not shut down here.
    scheduler : str or dask.distributed.Client, optional
        A Dask scheduler address (or a connected client): runs go to that cluster
        (needs ``pip install "linestep[dask]"``).
    progress : callable, optional
        ``progress(done, total, record)`` after each run finishes (runs found
        already finished count as done from the start).

    Returns
    -------
    Results
        Every run of the study, in study order, including those found in `out`.

    Raises
    ------
    linestep.bench.storage.ResultsFileError
        `out` holds a results file that is not ours or has another schema.
    KeyboardInterrupt
        Propagated after the pool is shut down; every finished run is already in
        `out`.
    """
    tasks = study.tasks()
    store = None
    if out is not None:
        out = Path(out)
        out.mkdir(parents=True, exist_ok=True)
        store = storage.ResultStore(out / storage.FILE_NAME)
    try:
        finished = {row["key"]: RunRecord.from_row(row)
                    for row in store.rows({t.key for t in tasks})} if store else {}
        pending = [t for t in tasks if t.key not in finished]
        done = len(finished)

        def accept(row: dict[str, Any]) -> None:
            nonlocal done
            if store is not None:
                store.write(row)
            record = RunRecord.from_row(row)
            finished[record.key] = record
            done += 1
            if progress is not None:
                progress(done, len(tasks), record)

        if pending:
            _dispatch(pending, accept, workers=workers, executor=executor, scheduler=scheduler)
    finally:
        if store is not None:
            store.close()
    return Results([finished[t.key] for t in tasks if t.key in finished],
                   solve_rtol=study.solve_rtol)


def _dispatch(tasks: list[_Task], accept: Callable[[dict[str, Any]], None], *,
              workers: int | None, executor: Any, scheduler: Any) -> None:
    if scheduler is not None and executor is not None:
        raise ValueError("Give `executor` or `scheduler`, not both.")
    workers = (os.cpu_count() or 1) if workers is None else _validate.integer("workers", workers)
    if scheduler is not None:
        client, close_client = _dask_client(scheduler)
        try:
            _drain(_prepare_for_processes(tasks, strict=False), accept, client.get_executor(),
                   None, IN_FLIGHT_PER_WORKER * _dask_workers(client))
        finally:
            if close_client:
                client.close()
    elif executor is not None:  # not ours: what cannot travel to it fails per run
        _drain(_prepare_for_processes(tasks, strict=False), accept, executor, None,
               IN_FLIGHT_PER_WORKER * workers)
    elif workers == 1:
        _drain(tasks, accept, None, _InlineExecutor, IN_FLIGHT_PER_WORKER)
    else:
        tasks, problems = _by_slot(_prepare_for_processes(tasks, strict=True))
        make = functools.partial(ProcessPoolExecutor, max_workers=workers,
                                 initializer=_install_problems, initargs=(problems,))
        _drain(tasks, accept, None, make, IN_FLIGHT_PER_WORKER * workers)


def _drain(tasks: list[_Task], accept: Callable[[dict[str, Any]], None], executor: Any,
           make: Callable[[], Any] | None, limit: int) -> None:
    """Keep up to `limit` tasks in flight; isolate and retry tasks that broke a pool.

    Runs on the `executor` given, or, when that is None, on a pool built with
    `make`: that pool is ours, rebuilt when a worker dies and shut down at the end.
    """
    if executor is None:
        executor = make()
    queue: deque[_Task] = deque(tasks)
    suspects: deque[_Task] = deque()  # tasks in flight when a worker died
    in_flight: dict[Future, tuple[_Task, bool]] = {}
    broken = False
    try:
        while queue or suspects or in_flight:
            if broken and not in_flight:  # every task of the dead pool is back
                if make is None:
                    raise RuntimeError(
                        "The executor passed to run_study is broken (a worker process died). "
                        "Finished runs are saved; pass a fresh executor to resume the study."
                    )
                executor.shutdown(wait=False, cancel_futures=True)
                executor, broken = make(), False
            if not broken:
                if suspects and not in_flight:
                    task = suspects.popleft()  # alone, so a second death is its own
                    in_flight[executor.submit(execute, task)] = (task, True)
                while not suspects and queue and len(in_flight) < limit:
                    task = queue.popleft()
                    in_flight[executor.submit(execute, task)] = (task, False)
            finished, _ = wait(list(in_flight), return_when=FIRST_COMPLETED)
            for future in [f for f in in_flight if f in finished]:  # in submission order
                task, isolated = in_flight.pop(future)
                if _settle(future, task, isolated, accept):
                    broken = True
                    if not isolated:
                        suspects.append(task)
    finally:
        if make is not None:
            executor.shutdown(wait=False, cancel_futures=True)


def _settle(future: Future, task: _Task, isolated: bool,
            accept: Callable[[dict[str, Any]], None]) -> bool:
    """Pass a finished task's row to `accept`; True when a worker process died instead.

    A dead worker breaks the whole pool and every task in flight with it, so only
    an `isolated` task (one that ran alone) is recorded as failed; `_drain`
    retries the others one at a time.
    """
    try:
        row = future.result()
    except BrokenProcessPool as exc:
        if isolated:
            accept(_failed_row(
                task, "The worker process running this run died "
                f"({exc or 'no detail'}); the objective may have crashed the "
                "interpreter or run out of memory.", _error_text(exc)))
        return True
    except Exception as exc:  # the executor could not run it (pickling, cluster)
        row = _failed_row(task, f"The executor could not run this run: "
                                f"{type(exc).__name__}: {exc}", _error_text(exc))
    accept(row)
    return False


def _dask_client(scheduler: Any) -> tuple[Any, bool]:
    """A Dask client for `scheduler` (an address or a client), and whether to close it."""
    try:
        from dask.distributed import Client
    except ImportError as exc:
        raise ImportError(
            'Running on a Dask cluster needs dask.distributed: pip install "linestep[dask]".'
        ) from exc
    if isinstance(scheduler, Client):
        return scheduler, False
    return Client(scheduler), True


def _dask_workers(client: Any) -> int:
    """Threads across the cluster's workers (at least 1; the CPU count if unknown)."""
    try:
        return max(1, sum(client.nthreads().values()))
    except Exception:  # noqa: BLE001 - any failure to ask: fall back to a local guess
        return os.cpu_count() or 1


# --- results ------------------------------------------------------------------------------


class Results(Sequence):
    """The records of a study, with the analysis that needs all runs at once.

    Problem instances without a known optimum are judged against the best value
    any run reached on them (`reference`).

    Parameters
    ----------
    records : iterable of RunRecord
    solve_rtol : float
        Tolerance of the solved test for instances without a known optimum.
    """

    def __init__(self, records: Sequence[RunRecord] | Iterator[RunRecord], *,
                 solve_rtol: float = SOLVE_RTOL) -> None:
        self.records = tuple(records)
        self.solve_rtol = solve_rtol
        self._directions_vary = len({r.direction for r in self.records}) > 1
        self._stops = {stop: i for i, stop in
                       enumerate(dict.fromkeys(r.stop for r in self.records), start=1)}

    @classmethod
    def load(cls, path: str | Path, *, solve_rtol: float = SOLVE_RTOL) -> Results:
        """Read a results file (or the folder holding ``results.sqlite``), read-only."""
        with storage.ResultStore(path, read_only=True) as store:
            return cls([RunRecord.from_row(row) for row in store.rows()], solve_rtol=solve_rtol)

    def __len__(self) -> int:
        return len(self.records)

    def __getitem__(self, index: Any) -> Any:
        return self.records[index]

    def __repr__(self) -> str:
        return f"Results({len(self.records)} runs)"

    # -- grouping -----------------------------------------------------------------------
    def instances(self) -> list[tuple[str, int, str, int | None]]:
        """Problem instances (problem, dimension, start, seed), in first-seen order."""
        return list(dict.fromkeys(record.instance for record in self.records))

    def solver(self, record: RunRecord) -> str:
        """The solver label of a record: the controller, plus the direction and stopping
        rule when the results hold several of those."""
        parts = [record.controller]
        if self._directions_vary:
            parts.append(record.direction)
        if len(self._stops) > 1:
            parts.append(f"stop #{self._stops[record.stop]}")
        return " + ".join(parts)

    def solvers(self) -> list[str]:
        """Solver labels in first-seen order."""
        return list(dict.fromkeys(self.solver(record) for record in self.records))

    # -- judging -------------------------------------------------------------------------
    def reference(self, instance: tuple) -> float | None:
        """The value runs on `instance` are judged against: the known optimum when there
        is one, else the lowest final value of any run (None if no run ended finite)."""
        return self._references.get(instance)

    @functools.cached_property
    def _references(self) -> dict[tuple, float]:
        optima: dict[tuple, float] = {}
        best: dict[tuple, float] = {}
        for record in self.records:
            if record.optimum is not None:
                optima[record.instance] = min(optima.get(record.instance, math.inf),
                                              record.optimum)
            if record.value is not None and math.isfinite(record.value):
                best[record.instance] = min(best.get(record.instance, math.inf), record.value)
        return {**best, **optima}

    def is_solved(self, record: RunRecord) -> bool:
        """The record's solved flag; for unknown optima, within `solve_rtol` of the best."""
        if record.solved is not None:
            return bool(record.solved)
        reference = self.reference(record.instance)
        return (reference is not None and record.value is not None
                and close_to_optimum(record.value, reference, self.solve_rtol))

    def gap(self, record: RunRecord) -> float | None:
        """value − optimum, or value − best value found for unknown optima."""
        if record.gap is not None:
            return record.gap
        reference = self.reference(record.instance)
        if record.value is None or reference is None:
            return None
        return record.value - reference

    def lowest_value(self, instance: tuple) -> float | None:
        """The lowest f in any run's history on `instance`: Moré and Wild's f_L."""
        return self._lowest.get(instance)

    @functools.cached_property
    def _lowest(self) -> dict[tuple, float]:
        lowest: dict[tuple, float] = {}
        for record in self.records:
            if record.history is not None:
                finite = record.history.value[np.isfinite(record.history.value)]
                if finite.size:
                    lowest[record.instance] = min(lowest.get(record.instance, math.inf),
                                                  float(finite.min()))
        return lowest

    # -- matrices for profiles --------------------------------------------------------------
    def cost_matrix(self, measure: str = "evaluations"
                    ) -> tuple[list[tuple], list[str], np.ndarray]:
        """Costs t_{p,s} of solved runs (inf otherwise, or when the run is missing).

        `measure` is ``"evaluations"`` (values + gradients), ``"values"``,
        ``"gradients"``, ``"iterations"`` or ``"seconds"``. Several records of one
        solver on one instance (random starts are separate instances) keep the last.
        """
        cost = _measure(measure)
        tiny = np.finfo(float).tiny
        return self._matrix(lambda record: max(cost(record), tiny)
                            if self.is_solved(record) else None)

    def first_success_matrix(self, tolerance: float
                             ) -> tuple[list[tuple], list[str], np.ndarray, np.ndarray]:
        """Evaluations at which each run first passed Moré and Wild's test with `tolerance`.

        Returns instances, solvers, the matrix (inf when never) and the dimensions.
        """
        from linestep.bench.profiles import first_success

        def cell(record: RunRecord) -> float | None:
            history, f_low = record.history, self.lowest_value(record.instance)
            if history is None or f_low is None:
                return None
            return first_success(history.values + history.gradients, history.value,
                                 f_low=f_low, tolerance=tolerance)

        instances, solvers, matrix = self._matrix(cell)
        dimensions = np.array([instance[1] for instance in instances], dtype=float)
        return instances, solvers, matrix, dimensions

    def _matrix(self, cell: Callable[[RunRecord], float | None]
                ) -> tuple[list[tuple], list[str], np.ndarray]:
        """Instances × solvers of ``cell(record)``; inf where it is None or no run exists."""
        instances, solvers = self.instances(), self.solvers()
        rows = {instance: i for i, instance in enumerate(instances)}
        columns = {solver: j for j, solver in enumerate(solvers)}
        matrix = np.full((len(instances), len(solvers)), np.inf)
        for record in self.records:
            value = cell(record)
            if value is not None:
                matrix[rows[record.instance], columns[self.solver(record)]] = value
        return instances, solvers, matrix

    def to_rows(self, *, history: bool = False) -> list[dict[str, Any]]:
        """One dict per run (tidy form), with `gap` and `solved` filled in for unknown
        optima and the `solver` label added."""
        rows = []
        for record in self.records:
            row = record.to_row(history=history)
            row["gap"] = self.gap(record)
            row["solved"] = self.is_solved(record)
            row["evaluations"] = record.evaluations
            row["solver"] = self.solver(record)
            rows.append(row)
        return rows


# Costs a profile can measure runs by (`Results.cost_matrix`).
_MEASURES: dict[str, Callable[[RunRecord], float]] = {
    "evaluations": lambda r: r.evaluations,
    "values": lambda r: r.value_evaluations,
    "gradients": lambda r: r.gradient_evaluations,
    "iterations": lambda r: max(r.iterations, 1),
    "seconds": lambda r: r.seconds,
}


def _measure(name: str) -> Callable[[RunRecord], float]:
    return _MEASURES[_validate.choice("measure", name, tuple(_MEASURES))]
