"""Identities of runs, built from content: never from a repr or a memory address.

A run's identity is a digest of everything that determines what it computes:

* the problem's *fingerprint*: its name and dimension, the starting point's bytes,
  f(x0) and ∇f(x0) (evaluated once, in the process that builds the study), the
  known optimal values and the ``solve_rtol`` in force;
* the *description* of the controller, the direction and the stopping rule
  (`describe`): the class's qualified name and every declared parameter, walked
  recursively; schedules and other objects without declared parameters by their
  state after ``reset()``; user functions by their qualified name and a digest of
  their code, constants, defaults, closure and the plain data they read from
  their module.

Two configurations that compute the same thing get the same identity however
often they are built; two that differ in any parameter get different ones.
Objects that cannot be described (no parameters, no state, and not picklable) are
refused with `UnidentifiableError`, which says how to name them: define a method
``linestep_identity()`` returning a string (or numbers, tuples, ...) that changes
whenever the object's behaviour does.

Examples
--------
>>> from linestep.bench._identity import digest
>>> from linestep.rules.fixed import Fixed
>>> digest(Fixed(0.1)) == digest(Fixed(0.1)), digest(Fixed(0.1)) == digest(Fixed(0.2))
(True, False)
"""

from __future__ import annotations

import copy
import dataclasses
import enum
import functools
import hashlib
import json
import math
import pickle
import re
import types
from typing import Any

import numpy as np

__all__ = ["UnidentifiableError", "describe", "digest", "digest_description", "fingerprint_problem"]

# Objects nested deeper than this are refused (a description must stay finite).
MAX_DEPTH = 40
# Modules whose classes are described by parameters only, not by their methods' code:
# a new linestep or numpy release must not make every stored run look stale.
LIBRARY_MODULES = ("linestep", "numpy", "builtins", "functools", "collections", "math")
# Hook a user object may define to name itself.
IDENTITY_HOOK = "linestep_identity"


class UnidentifiableError(TypeError):
    """An object in a study cannot be identified from its content."""


def digest(thing: Any, *, what: str = "object") -> str:
    """SHA-256 hex digest of `describe(thing)`."""
    return digest_description(describe(thing, what=what))


def digest_description(description: Any) -> str:
    """SHA-256 hex digest of a JSON-able description (`describe`, `fingerprint_problem`)."""
    text = json.dumps(description, separators=(",", ":"), sort_keys=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def describe(thing: Any, *, what: str = "object") -> Any:
    """A JSON-able description of `thing` that is equal exactly for equal content.

    `what` names the object in errors ("controller", "stopping rule", ...).

    Raises
    ------
    UnidentifiableError
        Some part of `thing` can be identified neither by parameters, state, code
        nor pickling.
    """
    return _Describer(what).walk(thing, 0)


def fingerprint_problem(problem: Any, x0: np.ndarray, *, solve_rtol: float) -> dict[str, Any]:
    """The problem's fingerprint at start `x0` (see the module docstring).

    f and ∇f are evaluated once at `x0` in this process; an objective that raises
    there is fingerprinted by its error (the run will fail the same way).
    """
    x0 = np.ascontiguousarray(x0, dtype=float)
    try:
        fused = getattr(problem, "fused", None)
        if fused is not None:
            value, gradient = fused(x0.copy())
        else:
            value, gradient = problem.value(x0.copy()), problem.gradient(x0.copy())
        probe: Any = [_number(value), _array(gradient)]
    except Exception as exc:  # noqa: BLE001 - the run will record the same failure
        probe = ["raised", type(exc).__qualname__, str(exc)[:200]]
    return {
        "name": str(problem.name),
        "dimension": int(problem.dimension),
        "x0": _array(x0),
        "probe": probe,
        "optimal_values": [float(v).hex() for v in getattr(problem, "optimal_values", ())],
        "solve_rtol": float(solve_rtol).hex(),
    }


def _number(value: Any) -> Any:
    try:
        return float(value).hex()
    except (TypeError, ValueError, OverflowError):
        return ["unusable", type(value).__qualname__]


def _array(value: Any) -> Any:
    try:
        array = np.ascontiguousarray(value)
    except Exception:  # noqa: BLE001 - the run reports the bad gradient itself
        return ["unusable", type(value).__qualname__]
    if array.dtype == object:
        return ["unusable", "object array"]
    return [array.dtype.str, list(array.shape), hashlib.sha256(array.tobytes()).hexdigest()]


class _Describer:
    def __init__(self, what: str) -> None:
        self.what = what
        self.active: list[int] = []  # ids on the current path (cycles)
        self.functions: dict[int, Any] = {}  # described functions (shared helpers once)

    def refuse(self, thing: Any, why: str) -> UnidentifiableError:
        return UnidentifiableError(
            f"The {self.what} cannot be identified: {type(thing).__qualname__} object "
            f"{_safe_repr(thing)} {why}. Runs are identified by content so that stored "
            f"results are never mixed up; give its class a `_fields` tuple naming its "
            f"parameters, or a method `{IDENTITY_HOOK}()` returning a string that changes "
            "whenever its behaviour does, or use a module-level function."
        )

    def walk(self, thing: Any, depth: int) -> Any:
        if depth > MAX_DEPTH:
            raise self.refuse(thing, f"is nested more than {MAX_DEPTH} levels deep")
        if thing is None or isinstance(thing, (bool, str)):
            return thing
        if isinstance(thing, int):
            return ["int", str(thing)]
        if isinstance(thing, float):
            return ["float", thing.hex() if math.isfinite(thing) else repr(thing)]
        if isinstance(thing, complex):
            return ["complex", thing.real.hex(), thing.imag.hex()]
        if isinstance(thing, (bytes, bytearray)):
            return ["bytes", hashlib.sha256(bytes(thing)).hexdigest()]
        if isinstance(thing, np.ndarray):
            if thing.dtype == object:
                return ["object-array", list(thing.shape),
                        [self.walk(item, depth + 1) for item in thing.ravel().tolist()]]
            return ["array", *_array(thing)]
        if isinstance(thing, np.generic):
            return ["numpy", thing.dtype.str, thing.tobytes().hex()]
        if isinstance(thing, enum.Enum):
            return ["enum", _qualified(type(thing)), thing.name]
        if isinstance(thing, type):
            return ["type", _qualified(thing)]
        if isinstance(thing, types.ModuleType):
            return ["module", thing.__name__]
        if id(thing) in self.active:
            return ["cycle", len(self.active) - self.active.index(id(thing))]
        self.active.append(id(thing))
        try:
            return self._compound(thing, depth)
        finally:
            self.active.pop()

    def _compound(self, thing: Any, depth: int) -> Any:
        step = depth + 1
        if isinstance(thing, (list, tuple)):
            return [type(thing).__name__, [self.walk(item, step) for item in thing]]
        if isinstance(thing, dict):
            items = [[self.walk(k, step), self.walk(v, step)] for k, v in thing.items()]
            return ["dict", sorted(items, key=json.dumps)]
        if isinstance(thing, (set, frozenset)):
            return ["set", sorted((self.walk(item, step) for item in thing), key=json.dumps)]
        hook = getattr(type(thing), IDENTITY_HOOK, None)
        if callable(hook):
            return ["named", _qualified(type(thing)), self.walk(hook(thing), step)]
        if isinstance(thing, functools.partial):
            return ["partial", self.walk(thing.func, step), self.walk(thing.args, step),
                    self.walk(thing.keywords, step)]
        if isinstance(thing, types.MethodType):
            return ["method", self.walk(thing.__self__, step), self.walk(thing.__func__, step)]
        if isinstance(thing, types.FunctionType):
            return self._function(thing, step)
        if isinstance(thing, types.CodeType):
            return self._code(thing, step)
        if isinstance(thing, (types.BuiltinFunctionType, types.BuiltinMethodType,
                              types.WrapperDescriptorType, types.MethodDescriptorType,
                              np.ufunc)):
            owner = getattr(thing, "__self__", None)
            name = getattr(thing, "__qualname__", None) or getattr(thing, "__name__", None)
            if name is None:
                raise self.refuse(thing, "has no name")
            bound = None if owner is None or isinstance(owner, types.ModuleType) \
                else self.walk(owner, step)
            return ["builtin", getattr(thing, "__module__", None), name, bound]
        return self._object(thing, step)

    def _function(self, function: types.FunctionType, step: int) -> Any:
        if id(function) not in self.functions:
            self.functions[id(function)] = self._function_uncached(function, step)
        return self.functions[id(function)]

    def _function_uncached(self, function: types.FunctionType, step: int) -> Any:
        closure = [self.walk(cell.cell_contents, step) if _filled(cell) else ["empty"]
                   for cell in function.__closure__ or ()]
        return ["function", function.__module__, function.__qualname__,
                self._code(function.__code__, step),
                self.walk(function.__defaults__, step),
                self.walk(function.__kwdefaults__, step), closure,
                self._globals(function, step)]

    def _code(self, code: types.CodeType, step: int) -> Any:
        constants = [self._code(c, step) if isinstance(c, types.CodeType)
                     else self.walk(c, step) for c in code.co_consts]
        return ["code", hashlib.sha256(code.co_code).hexdigest(), constants,
                list(code.co_names), code.co_argcount, code.co_kwonlyargcount]

    def _globals(self, function: types.FunctionType, step: int) -> Any:
        """Plain data and functions of its own module that the function reads by name."""
        found = []
        names = set(function.__code__.co_names)
        for const in function.__code__.co_consts:  # names read by nested functions
            if isinstance(const, types.CodeType):
                names.update(const.co_names)
        for name in sorted(names):
            if name not in function.__globals__:
                continue
            value = function.__globals__[name]
            if isinstance(value, (int, float, complex, str, bytes, tuple, frozenset,
                                  np.ndarray, np.generic)):
                found.append([name, self.walk(value, step)])
            elif isinstance(value, types.FunctionType) and value is not function \
                    and value.__module__ == function.__module__:
                found.append([name, self.walk(value, step)])
        return found

    def _object(self, thing: Any, step: int) -> Any:
        cls = type(thing)
        fields = getattr(cls, "_fields", None)
        if isinstance(fields, tuple) and fields and all(isinstance(f, str) for f in fields):
            return ["object", _qualified(cls), self._class_code(cls, step),
                    [[name, self.walk(getattr(thing, name, None), step)] for name in fields]]
        if dataclasses.is_dataclass(thing):
            return ["object", _qualified(cls), self._class_code(cls, step),
                    [[f.name, self.walk(getattr(thing, f.name, None), step)]
                     for f in dataclasses.fields(thing)]]
        state = _state(thing)
        if state is None:
            try:
                data = pickle.dumps(thing, protocol=4)
            except Exception as exc:  # noqa: BLE001 - any failure means: cannot identify
                raise self.refuse(thing, f"has no parameters or state to read and does "
                                         f"not pickle ({type(exc).__name__})") from None
            return ["pickled", _qualified(cls), hashlib.sha256(data).hexdigest()]
        return ["object", _qualified(cls), self._class_code(cls, step),
                [[name, self.walk(value, step)] for name, value in state]]

    def _class_code(self, cls: type, step: int) -> Any:
        """The code of a user class's own methods (library classes: name only)."""
        if cls.__module__.split(".")[0] in LIBRARY_MODULES:
            return None
        methods = []
        for klass in cls.__mro__:
            if klass.__module__.split(".")[0] in LIBRARY_MODULES:
                break
            for name, member in sorted(vars(klass).items()):
                if isinstance(member, (staticmethod, classmethod)):
                    member = member.__func__
                if isinstance(member, types.FunctionType):
                    methods.append([klass.__qualname__, name,
                                    self._code(member.__code__, step)])
        return methods


def _state(thing: Any) -> list[tuple[str, Any]] | None:
    """The object's attributes after ``reset()`` (on a copy), or None when it has none."""
    probe = thing
    if callable(getattr(thing, "reset", None)):
        try:
            probe = copy.deepcopy(thing)
            probe.reset()
        except Exception:  # noqa: BLE001 - describe it as it is
            probe = thing
    names: list[str] = []
    for klass in type(probe).__mro__:
        slots = vars(klass).get("__slots__", ())
        names += [slots] if isinstance(slots, str) else list(slots)
    attributes = dict(getattr(probe, "__dict__", {}) or {})
    for name in names:
        if name not in ("__dict__", "__weakref__") and hasattr(probe, name):
            attributes.setdefault(name, getattr(probe, name))
    if not attributes:
        if getattr(probe, "__dict__", None) is not None or names:
            return []  # a stateless object: its class is its identity
        return None
    return sorted(attributes.items())


def _filled(cell: Any) -> bool:
    try:
        cell.cell_contents  # noqa: B018 - raises ValueError when empty
    except ValueError:
        return False
    return True


def _qualified(cls: Any) -> str:
    return f"{getattr(cls, '__module__', '?')}.{getattr(cls, '__qualname__', repr(cls))}"


def _safe_repr(thing: Any) -> str:
    try:
        text = re.sub(r" at 0x[0-9a-fA-F]+", "", repr(thing))
    except Exception:  # noqa: BLE001
        text = "<unprintable>"
    return text if len(text) <= 80 else text[:77] + "..."
