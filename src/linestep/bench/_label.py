"""Short labels of controllers, directions and stopping rules: one form everywhere.

A label is the constructor call with only the arguments that differ from their
defaults; required arguments that may be given by position are shown by position
(``Fixed(0.05)``, ``Fallback(Fixed(0.05), Armijo())``, ``Wolfe(strong=False)``).
Labels are never cut: when two different objects would share a label,
`distinct_labels` adds a short tag from their identities. The full configuration
(``repr``) stays in the report's solver table. `linestep demo` and the benchmark
harness both use `short_label`.

Examples
--------
>>> from linestep.bench._label import short_label
>>> from linestep import Armijo, Wolfe
>>> from linestep.rules.fallback import Fallback
>>> from linestep.rules.fixed import Fixed
>>> short_label(Fallback(Fixed(0.05), Armijo())), short_label(Wolfe(strong=False))
('Fallback(Fixed(0.05), Armijo())', 'Wolfe(strong=False)')
"""

from __future__ import annotations

import inspect
import re
import types
from collections.abc import Sequence
from typing import Any

__all__ = ["distinct_labels", "short_label"]

# Characters of the identity digest shown to tell apart objects whose labels agree.
TAG_LENGTH = 8


def short_label(thing: Any) -> str:
    """The short, uncut label of a controller, direction or stopping rule."""
    if isinstance(thing, (types.FunctionType, types.BuiltinFunctionType, types.MethodType)):
        return getattr(thing, "__qualname__", None) or thing.__name__
    fields = getattr(thing, "_fields", None)
    if not fields or isinstance(thing, type):
        return _without_addresses(repr(thing))
    cls = type(thing)
    try:
        parameters = inspect.signature(cls).parameters
    except (TypeError, ValueError):
        parameters = {}
    try:
        reference = cls()
    except Exception:  # noqa: BLE001 - classes with required arguments
        reference = None
    shown = []
    positional = True  # still in the leading run of required positional parameters
    for name in fields:
        value = getattr(thing, name, None)
        parameter = parameters.get(name)
        required = parameter is not None and parameter.default is inspect.Parameter.empty
        by_position = (positional and required and parameter.kind in
                       (parameter.POSITIONAL_ONLY, parameter.POSITIONAL_OR_KEYWORD))
        positional = by_position
        if not required:
            if reference is not None and _same(getattr(reference, name, None), value):
                continue
            if parameter is not None and _same(parameter.default, value):
                continue
        text = short_label(value) if hasattr(value, "_fields") else _plain(value)
        shown.append(text if by_position else f"{name}={text}")
    return f"{cls.__name__}({', '.join(shown)})"


def distinct_labels(entries: Sequence[tuple[str, str]]) -> list[str]:
    """Labels for ``(label, identity)`` pairs, tagged where different identities share one.

    Equal identities keep equal labels; the tag is the start of the identity digest,
    so it stays the same from one study to the next.
    """
    identities: dict[str, set[str]] = {}
    for label, identity in entries:
        identities.setdefault(label, set()).add(identity)
    return [label if len(identities[label]) == 1 else f"{label} [{identity[:TAG_LENGTH]}]"
            for label, identity in entries]


def _same(a: Any, b: Any) -> bool:
    try:
        return type(a) is type(b) and repr(a) == repr(b) and "0x" not in repr(a)
    except Exception:  # noqa: BLE001
        return False


def _plain(value: Any) -> str:
    if isinstance(value, (types.FunctionType, types.BuiltinFunctionType, types.MethodType)):
        return getattr(value, "__qualname__", None) or value.__name__
    return _without_addresses(repr(value))


def _without_addresses(text: str) -> str:
    """Memory addresses change from run to run: never part of a label."""
    return re.sub(r" at 0x[0-9a-fA-F]+", "", text)
