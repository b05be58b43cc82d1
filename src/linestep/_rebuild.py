"""One repr for every configurable object: the call that rebuilds it.

Controllers, directions, initial-step strategies, stopping criteria, schedule
formulas and the compiled JAX searches all derive from `Rebuilds`, so that
``eval(repr(obj))`` builds an equal configuration wherever the arguments'
own reprs are expressions (benchmark tables identify runs exactly by these
strings). A class declares its constructor's arguments as attribute names:
`_positional` for those passed by position, `_fields` for keywords.
"""

from __future__ import annotations

import types
from typing import Any

__all__ = ["Rebuilds", "call"]

_FUNCTIONS = (types.FunctionType, types.BuiltinFunctionType, types.MethodType)


class Rebuilds:
    """Mixin: ``repr(obj)`` is ``Name(positional..., keyword=value, ...)``.

    Override `_constructor` when the object is built by something other than
    its class (a class method such as ``Schedule.cosine``, a factory function
    of `linestep.jax`), and `_arguments` only when the arguments are not
    plain attributes.
    """

    __slots__ = ()

    #: Attributes passed by position, in order.
    _positional: tuple[str, ...] = ()
    #: Attributes passed by keyword, in order.
    _fields: tuple[str, ...] = ()

    def _constructor(self) -> str:
        return type(self).__name__

    def _arguments(self) -> list[tuple[str | None, Any]]:
        """(keyword, value) pairs, with None as the keyword of a positional argument."""
        return ([(None, getattr(self, name)) for name in self._positional]
                + [(name, getattr(self, name)) for name in self._fields])

    def __repr__(self) -> str:
        return call(self._constructor(), self._arguments())


def call(constructor: str, arguments: list[tuple[str | None, Any]]) -> str:
    """The text of the call ``constructor(...)`` with these arguments."""
    parts = [_show(value) if name is None else f"{name}={_show(value)}"
             for name, value in arguments]
    return f"{constructor}({', '.join(parts)})"


def _show(value: Any) -> str:
    # A function has no expression that rebuilds it; its qualified name is the most
    # useful stand-in, without the memory address that would change every run.
    if isinstance(value, _FUNCTIONS):
        name = getattr(value, "__qualname__", None) or getattr(value, "__name__", "?")
        return f"<function {name}>"
    return repr(value)
