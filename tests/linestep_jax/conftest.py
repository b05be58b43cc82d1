"""Configuration for the JAX tests: float64 on, for the tests in this directory only.

``jax_enable_x64`` is a *global* JAX switch: it changes the default dtype of
every array created afterwards in the process. The host and compiled paths are
compared here to ~1e-10, which needs float64, so the autouse fixture below turns
it on for each test module in ``tests/linestep_jax`` and restores the previous setting
after that module (module scope is the one pytest tears down reliably for a
directory without ``__init__.py``). The directory is not called ``jax``: pytest
puts ``tests/`` on ``sys.path``, where a ``jax`` directory would shadow JAX
itself, and without JAX installed ``importorskip("jax")`` would then find the
directory instead of skipping. The rest of the suite and the doctests
run with JAX's default. Test modules here create no JAX arrays at import time,
before the fixture runs. Float32 tests create float32 arrays explicitly;
`x64_off` switches float64 off for a test that checks JAX's default precision.
"""

from __future__ import annotations

import pytest

jax = pytest.importorskip("jax", reason="the jax extra is not installed")


@pytest.fixture(autouse=True, scope="module")
def x64():
    previous = jax.config.read("jax_enable_x64")
    jax.config.update("jax_enable_x64", True)
    yield
    jax.config.update("jax_enable_x64", previous)


@pytest.fixture
def x64_off():
    """JAX's default precision (float32 everywhere) for one test."""
    jax.config.update("jax_enable_x64", False)
    yield
    jax.config.update("jax_enable_x64", True)
