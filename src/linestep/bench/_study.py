"""The study definition: starting points, per-problem controllers, labels and `Study`.

A `Study` is the product problems × controllers × directions × starts (× seeds
for random starts); `Study.tasks` lists its runs, each with fresh copies of
the controller, the direction and the stopping rule and with its identity
(see `linestep.bench._identity`).
"""

from __future__ import annotations

import copy
import functools
import inspect
import types
import zlib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from linestep import _validate, stopping
from linestep.bench import _identity
from linestep.bench._label import _without_addresses, distinct_labels, short_label
from linestep.bench.problems import SOLVE_RTOL, Problem
from linestep.bench.user import as_problems
from linestep.directions import SteepestDescent

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
        return cls(f"x{_exact(factor)}", scale=factor)

    @classmethod
    def perturbed(cls, noise: float) -> Start:
        """x_s plus seeded Gaussian noise of relative size `noise`."""
        noise = _validate.positive("noise", noise)
        return cls(f"perturbed({_exact(noise)})", noise=noise)

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


def _exact(number: float) -> str:
    """The short form of `number` when it reads back exactly, else the full one:
    starts that differ must never share a label (x10 and x10.0000001)."""
    short = f"{number:g}"
    return short if float(short) == number else repr(number)


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


def unsupported_direction(controller: Any, direction: Any) -> bool:
    """True when `controller` is a rule defined for the negative gradient only
    (``negative_gradient_only``: Barzilai–Borwein, Polyak) and `direction` is another
    direction: such runs could only raise. `Study`'s default `exclude`.
    """
    return (getattr(controller, "negative_gradient_only", False)
            and not isinstance(direction, SteepestDescent))


# --- the study ----------------------------------------------------------------------------


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


def _fresh(item: Any, what: str = "controller") -> Any:
    """A new object from a spec: a class or factory is called, an instance deep-copied."""
    return item() if _is_factory(item) else _copy(item, what)


def _copy(item: Any, what: str) -> Any:
    """A deep copy for one run, or a TypeError saying how to give the object instead."""
    try:
        return copy.deepcopy(item)
    except Exception as exc:  # noqa: BLE001 - any copy failure gets the same advice
        raise TypeError(
            f"The {what} {_without_addresses(repr(item))[:80]} cannot be copied for each run "
            f"({type(exc).__name__}: {exc}). Runs never share state, so each needs its own "
            f"copy; pass a class or a factory function that builds a fresh {what} instead."
        ) from None


def _stop_fresh(stop: Any) -> Any:
    if stop is None:
        return stopping.default()
    if _is_factory(stop):
        try:
            inspect.signature(stop).bind()
        except (TypeError, ValueError):
            return stop  # a plain function criterion, called with a Progress: stateless
        return stop()
    return _copy(stop, "stopping rule")


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
        `unsupported_direction`, leaves out rules defined for −∇f only (Barzilai–Borwein,
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
    exclude: Callable[[Any, Any], bool] | None = unsupported_direction
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
        labels = [start.label for start in starts]
        repeated = sorted({label for label in labels if labels.count(label) > 1})
        if repeated:
            raise ValueError(
                f"`starts` lists the start(s) {repeated} more than once; each start must "
                "be given once (results are grouped by the start's label)."
            )
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
        """Every run of the study, each with fresh controller, direction and stop.

        Raises
        ------
        linestep.bench._identity.UnidentifiableError
            A controller, direction or stopping rule cannot be identified by content.
        ValueError
            Two runs of the study have one identity (the same computation listed
            twice): refused before any work starts.
        """
        tasks: list[_Task] = []
        for problem in self.problems:
            for start in self.starts:
                for seed in self.seeds if start.random else (None,):
                    x0 = start.point(problem, seed)
                    fingerprint = self._fingerprint(problem, start, seed, x0)
                    for direction_label, direction_spec in self.directions:
                        for controller_label, controller_spec in self.controllers:
                            task = self._task(problem, start, seed, x0, fingerprint,
                                              controller_label, controller_spec,
                                              direction_label, direction_spec)
                            if task is not None:
                                tasks.append(task)
        _refuse_collisions(tasks)
        return _with_distinct_labels(tasks)

    def _fingerprint(self, problem: Problem, start: Start, seed: int | None,
                     x0: np.ndarray) -> str:
        """The problem's fingerprint at this start (f and ∇f evaluated once per study)."""
        cache = self.__dict__.setdefault("_fingerprints", {})
        slot = (id(problem), start, seed)
        if slot not in cache:
            cache[slot] = _identity.digest_description(_identity.fingerprint_problem(
                problem, x0, solve_rtol=self.solve_rtol))
        return cache[slot]

    def _task(self, problem: Problem, start: Start, seed: int | None, x0: np.ndarray,
              fingerprint: str, controller_label: str | None, controller_spec: Any,
              direction_label: str | None, direction_spec: Any) -> _Task | None:
        if isinstance(controller_spec, PerProblem):
            controller = controller_spec.build(problem)
            if controller is None:
                return None
            controller_label = controller_label or controller_spec.label
            # Built per problem: one solver (one controller_id, which results group by)
            # whatever each build's parameters are; the slot still holds the build's.
            family = _identity.digest(controller_spec.build, what="controller")
        else:
            controller = _fresh(controller_spec)
            family = None
        direction = _fresh(direction_spec, "direction")
        if self.exclude is not None and self.exclude(controller, direction):
            return None
        stop = _stop_fresh(self.stop)
        identities = {
            "controller_id": _identity.digest(controller, what="controller"),
            "direction_id": _identity.digest(direction, what="direction"),
            "stop_id": _identity.digest(stop, what="stopping rule"),
        }
        # The configuration on this named problem instance; a row with the same slot
        # but another problem fingerprint is a stale result (the problem changed).
        slot = _identity.digest_description([problem.name, problem.dimension, start.label, seed,
                                *identities.values()])
        if family is not None:
            identities["controller_id"] = family
        header = {
            "problem": problem.name, "dimension": problem.dimension,
            "controller": controller_label or short_label(controller),
            "controller_repr": _full_repr(controller),
            "direction": direction_label or short_label(direction),
            "start": start.label, "seed": seed, "stop": short_label(stop),
            **identities, "slot": slot, "problem_fingerprint": fingerprint,
            "optimal_values": [float(v) for v in getattr(problem, "optimal_values", ())],
            "solve_rtol": self.solve_rtol,
        }
        key = _identity.digest_description([slot, fingerprint])
        return _Task(key=key, header=header, problem=problem, source=None,
                     controller=controller, direction=direction, stop=stop, x0=x0,
                     solve_rtol=self.solve_rtol)

    def __len__(self) -> int:
        return len(self.tasks())


def _full_repr(thing: Any) -> str:
    """The full configuration for the solver table (memory addresses removed)."""
    return _without_addresses(repr(thing))


def _refuse_collisions(tasks: list[_Task]) -> None:
    """Two runs with one identity would be one computation stored once: refuse them."""
    seen: dict[str, _Task] = {}
    for task in tasks:
        other = seen.setdefault(task.key, task)
        if other is not task:
            a, b = other.header, task.header
            raise ValueError(
                f"Two runs of this study are the same computation: {a['controller']!r} and "
                f"{b['controller']!r} with direction {a['direction']!r} on problem "
                f"{a['problem']!r} (start {a['start']!r}, seed {a['seed']}). A run is "
                "identified by its content (every parameter of the controller, direction "
                "and stopping rule, and the problem's data), so these would be stored as "
                "one. List each configuration once."
            )


def _with_distinct_labels(tasks: list[_Task]) -> list[_Task]:
    """Tag labels that different controllers (or directions) share, so none merge."""
    for name, identity in (("controller", "controller_id"), ("direction", "direction_id")):
        labels = distinct_labels([(t.header[name], t.header[identity]) for t in tasks])
        for task, label in zip(tasks, labels, strict=True):
            task.header[name] = label
    return tasks
