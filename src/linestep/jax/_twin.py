"""Compiled twins read their options from the host controller they mirror.

A compiled search (`linestep.jax.armijo`, ...) takes the same options as its
host class (`linestep.Armijo`, ...). Rather than copying each option by hand,
the factory builds the host controller, which validates every argument with
the host's own messages, and `twin` copies the options the compiled class
declares from it. `twin_fields` derives the compiled class's repr fields from
the host's declared constructor fields, so the two cannot drift apart.
"""

from __future__ import annotations

import dataclasses
from typing import Any

from linestep.jax import _initial

# Host options with no compiled counterpart: a compiled step records no trials.
_HOST_ONLY = ("record_trials",)


def twin_fields(host: type, *extra: str) -> tuple[str, ...]:
    """The host class's constructor fields (those a compiled search has), then `extra`."""
    return tuple(name for name in host._fields if name not in _HOST_ONLY) + extra


def twin(compiled: type, host: Any, **extra: Any) -> Any:
    """The compiled search of class `compiled` with the options of the controller `host`.

    Every dataclass field of `compiled` is read from `host` (initial-step strategies
    turned into their compiled forms), except those given in `extra`.
    """
    options = {}
    for field in dataclasses.fields(compiled):
        name = field.name
        if name in extra:
            options[name] = extra[name]
        elif name in ("initial", "first"):
            options[name] = _initial.resolve(getattr(host, name))
        else:
            options[name] = getattr(host, name)
    return compiled(**options)
