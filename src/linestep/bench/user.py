"""Your own objective in the benchmark: a ``module:function`` spec or a Python object.

A *problem description* is any of:

* a `linestep.bench.Problem`;
* a dict, or an object with attributes, holding
  ``value`` (x → float) and ``gradient`` (x → array), or ``value_and_gradient``
  (x → (float, array), one call for both); ``start`` (an array, or a function of
  a ``numpy.random.Generator`` returning one); and optionally ``name``,
  ``optimal_value`` (f* when known), ``minimizer`` and ``reference``;
* a list or tuple of those (several problems);
* a function taking no arguments that returns one of the above.

A spec ``"package.module:function"`` (or ``"path/to/file.py:function"``) names
such a function. Everything is checked before any run starts: a module that
does not import, a missing attribute, a function that needs arguments, a
description without a gradient, a start that is not a finite vector: each
raises `ObjectiveSpecError` naming the spec and the fix.

With a start function, the problem's standard start is ``start(default_rng(0))``
and the harness's ``Start.drawn()`` draws a new one per seed.

Problems without ``optimal_value`` are judged against the best value any run
reached (computed when results are reported).

Examples
--------
>>> import numpy as np
>>> from linestep.bench.user import as_problems
>>> [bowl] = as_problems({"name": "bowl", "value_and_gradient": lambda x: (float(x @ x), 2 * x),
...                       "start": [3.0, 4.0], "optimal_value": 0.0})
>>> bowl.name, bowl.dimension, bowl.value(bowl.start), bowl.optimal_values
('bowl', 2, 25.0, (0.0,))
"""

from __future__ import annotations

import functools
import importlib
import importlib.util
import inspect
import sys
from collections.abc import Callable, Mapping
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any

import numpy as np

from linestep.bench.problems import Problem

__all__ = ["ObjectiveSpecError", "UserProblem", "as_problems", "load_objective"]

# The standard start of a problem given only a start function: start(default_rng(SEED)).
STANDARD_START_SEED = 0
_KEYS = ("name", "value", "gradient", "value_and_gradient", "start", "optimal_value",
         "minimizer", "reference")


class ObjectiveSpecError(ValueError):
    """A user objective cannot be used; the message names it and says what to fix."""


@dataclass(frozen=True, slots=True, kw_only=True, eq=False, repr=False)
class UserProblem(Problem):
    """A `Problem` built from a user's description.

    Extra fields: `fused` (the fused value-and-gradient callable when one was
    given: runs then call it once per point), `start_function` (draws starting
    points from a Generator) and `source` (``(spec, index)`` when loaded from a
    spec, so worker processes can rebuild the problem by importing the spec).
    """

    fused: Callable[[Any], tuple[float, Any]] | None = None
    start_function: Callable[[np.random.Generator], Any] | None = None
    source: tuple[str, int] | None = None

    def value_and_gradient(self, x: Any) -> tuple[float, np.ndarray]:
        if self.fused is not None:
            return self.fused(x)
        return self.value(x), self.gradient(x)

    def objective(self) -> Any:
        from linestep import Objective

        if self.fused is not None:
            return Objective(self.fused, fused=True)
        return Objective(self.value, self.gradient)


class _FusedValue:
    """value(x) from a fused callable (picklable when the callable is)."""

    def __init__(self, fused: Callable) -> None:
        self.fused = fused

    def __call__(self, x: Any) -> float:
        return self.fused(x)[0]


class _FusedGradient(_FusedValue):
    def __call__(self, x: Any) -> Any:
        return self.fused(x)[1]


def load_objective(spec: str) -> list[UserProblem]:
    """Import ``module:function``, call the function and check the problems it describes.

    Raises
    ------
    ObjectiveSpecError
        With the spec named: malformed spec, import failure, missing attribute,
        not callable without arguments, the call raised, or a bad description.
    """
    return list(_load(spec))


@functools.lru_cache(maxsize=16)
def _load(spec: str) -> tuple[UserProblem, ...]:
    function = _resolve(spec)
    try:
        description = function()
    except Exception as exc:
        raise ObjectiveSpecError(
            f"Calling the objective function {spec!r} raised {type(exc).__name__}: {exc}"
        ) from exc
    problems = as_problems(description, name=spec.rsplit(":", 1)[1], context=repr(spec))
    return tuple(_with_source(problem, (spec, index)) for index, problem in enumerate(problems))


def resolve_source(source: tuple[str, int]) -> UserProblem:
    """Rebuild a problem from its ``(spec, index)`` (used in worker processes)."""
    spec, index = source
    return _load(spec)[index]


def from_file(source: tuple[str, int]) -> bool:
    """Whether the spec of `source` names a file path (``path/to/file.py:function``).

    Such a module is registered under a private name in this process only, so
    other processes cannot import it by name: they rebuild the problem from the spec.
    """
    return source[0].rpartition(":")[0].endswith(".py")


def _accepts(function: Callable, *arguments: Any) -> bool:
    """False when the signature of `function` rules out ``function(*arguments)``.

    True when it allows the call, and when there is no signature to check (some
    builtins and numpy ufuncs): the call itself will tell.
    """
    try:
        inspect.signature(function).bind(*arguments)
    except TypeError:
        return False
    except ValueError:
        pass
    return True


def _resolve(spec: str) -> Callable[[], Any]:
    if not isinstance(spec, str) or spec.count(":") < 1:
        raise ObjectiveSpecError(
            f"An objective spec must look like 'package.module:function' or "
            f"'path/to/file.py:function'; got {spec!r}."
        )
    module_name, _, attribute = spec.rpartition(":")
    if not module_name or not attribute:
        raise ObjectiveSpecError(
            f"An objective spec must name a module and a function, as in "
            f"'my_model:make_problem'; got {spec!r}."
        )
    module = _import(module_name, spec)
    try:
        function = getattr(module, attribute)
    except AttributeError:
        names = sorted(n for n in vars(module) if not n.startswith("_"))
        raise ObjectiveSpecError(
            f"Module {module_name!r} has no attribute {attribute!r} (from the objective "
            f"{spec!r}). It defines: {', '.join(names) or 'nothing public'}."
        ) from None
    if not callable(function):
        raise ObjectiveSpecError(
            f"{spec!r} must name a function returning a problem description; "
            f"{attribute!r} is a {type(function).__name__}."
        )
    if not _accepts(function):
        raise ObjectiveSpecError(
            f"{spec!r} must be callable with no arguments (it returns the problem "
            f"description); its signature is {attribute}{inspect.signature(function)}. "
            "Give the parameters defaults or wrap it in a function without parameters."
        )
    return function


def _import(module_name: str, spec: str) -> Any:
    try:
        if module_name.endswith(".py"):
            path = Path(module_name).resolve()
            if not path.is_file():
                raise FileNotFoundError(f"no file {str(path)!r}")
            name = f"_linestep_user_{path.stem}_{abs(hash(str(path))):x}"
            if name in sys.modules:
                return sys.modules[name]
            loader_spec = importlib.util.spec_from_file_location(name, path)
            module = importlib.util.module_from_spec(loader_spec)
            sys.modules[name] = module
            try:
                loader_spec.loader.exec_module(module)
            except BaseException:
                del sys.modules[name]
                raise
            return module
        return importlib.import_module(module_name)
    except Exception as exc:
        raise ObjectiveSpecError(
            f"Cannot import {module_name!r} for the objective {spec!r}: "
            f"{type(exc).__name__}: {exc}. Check that it is on the Python path "
            "(PYTHONPATH, or run from the folder that holds it), or give a file path "
            "such as 'path/to/file.py:function'."
        ) from exc


def as_problems(description: Any, *, name: str = "objective",
                context: str | None = None) -> list[UserProblem | Problem]:
    """Turn a problem description (see the module docstring) into problems.

    Parameters
    ----------
    description : Problem, dict, object, list/tuple of those, or a function
        returning one.
    name : str
        The name when the description gives none (several unnamed problems get
        ``name_0``, ``name_1``, ...).
    context : str, optional
        How error messages name the description (the spec, say).

    Raises
    ------
    ObjectiveSpecError
        The description is not one of the accepted forms.
    """
    where = context or "The objective description"
    if isinstance(description, str):
        return list(load_objective(description))
    if isinstance(description, Problem):
        return [description]
    if isinstance(description, (list, tuple)):
        if not description:
            raise ObjectiveSpecError(f"{where} returned an empty list of problems.")
        problems: list[UserProblem | Problem] = []
        for index, item in enumerate(description):
            problems += as_problems(item, name=f"{name}_{index}", context=f"{where}[{index}]")
        return problems
    if isinstance(description, Mapping):
        unknown = sorted(set(description) - set(_KEYS))
        if unknown:
            raise ObjectiveSpecError(
                f"{where} has unknown keys {unknown}; the accepted keys are {list(_KEYS)}."
            )
        return [_from_parts(dict(description), name, where)]
    if any(hasattr(description, key) for key in ("value", "value_and_gradient")):
        parts = {key: getattr(description, key) for key in _KEYS if hasattr(description, key)}
        return [_from_parts(parts, name, where)]
    if callable(description):
        if not _accepts(description):
            raise ObjectiveSpecError(
                f"{where} is a function that needs arguments; pass a function without "
                "parameters that returns the problem description, or the description itself."
            )
        return as_problems(description(), name=getattr(description, "__name__", name),
                           context=where)
    raise ObjectiveSpecError(
        f"{where} must be a Problem, a dict with 'value'/'gradient' (or "
        f"'value_and_gradient') and 'start', a list of those, or a function returning one; "
        f"got {type(description).__name__}."
    )


def _from_parts(parts: dict[str, Any], default_name: str, where: str) -> UserProblem:
    name = parts.get("name") or default_name
    fused = parts.get("value_and_gradient")
    value, gradient = parts.get("value"), parts.get("gradient")
    if fused is not None:
        _check_callable(fused, "value_and_gradient", where)
        value = value if value is not None else _FusedValue(fused)
        gradient = gradient if gradient is not None else _FusedGradient(fused)
    if value is None:
        raise ObjectiveSpecError(
            f"{where} gives no 'value' (x -> float) nor 'value_and_gradient' "
            "(x -> (float, gradient))."
        )
    if gradient is None:
        raise ObjectiveSpecError(
            f"{where} gives 'value' but no 'gradient': every controller in the benchmark "
            "needs the gradient. Add 'gradient' (x -> array), or give "
            "'value_and_gradient' instead."
        )
    _check_callable(value, "value", where)
    _check_callable(gradient, "gradient", where)
    if "start" not in parts or parts["start"] is None:
        raise ObjectiveSpecError(
            f"{where} gives no 'start': add a starting point (an array) or a function "
            "taking a numpy.random.Generator and returning one."
        )
    start, start_function = parts["start"], None
    if callable(start):
        start_function = start
        try:
            start = start_function(np.random.default_rng(STANDARD_START_SEED))
        except Exception as exc:
            raise ObjectiveSpecError(
                f"{where}: the start function raised {type(exc).__name__}: {exc} when "
                "called with a numpy.random.Generator."
            ) from exc
    optimal = parts.get("optimal_value")
    minimizer = parts.get("minimizer")
    try:
        return UserProblem(
            name=str(name), value=value, gradient=gradient, start=start,
            optimal_values=() if optimal is None else (optimal,),
            minimizers=() if minimizer is None else (minimizer,),
            reference=str(parts.get("reference") or ""), fused=fused,
            start_function=start_function,
        )
    except (TypeError, ValueError) as exc:
        raise ObjectiveSpecError(f"{where}: {exc}") from exc


def _check_callable(candidate: Any, key: str, where: str) -> None:
    if not callable(candidate):
        raise ObjectiveSpecError(
            f"{where}: {key!r} must be callable, taking x; got {type(candidate).__name__}."
        )
    if not _accepts(candidate, np.zeros(1)):
        raise ObjectiveSpecError(
            f"{where}: {key!r} must take the point x as its one argument; its signature is "
            f"{inspect.signature(candidate)}."
        )


def _with_source(problem: Problem, source: tuple[str, int]) -> UserProblem:
    values = {field.name: getattr(problem, field.name) for field in fields(problem)}
    values["source"] = source
    return UserProblem(**values)
