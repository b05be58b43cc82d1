"""Collection rules for the whole repository (tests, doctests in src/ and docs/).

Doctests of `linestep.jax` need JAX, an optional extra: without it, its modules
and docs/jax.md are not collected (the tests under tests/linestep_jax skip with their reason), so
``pip install -e ".[test]" && python -m pytest`` passes without the extra.
"""

from __future__ import annotations

import importlib.util



def _installed(name: str) -> bool:
    try:
        return importlib.util.find_spec(name) is not None
    except (ImportError, ValueError):
        return False


collect_ignore_glob: list[str] = []
if not _installed("jax"):
    collect_ignore_glob += ["src/linestep/jax/*.py", "docs/jax.md"]
