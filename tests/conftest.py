"""Shared test configuration: hypothesis profiles.

``default`` keeps the suite quick and deterministic on shared machines;
``thorough`` is for long, randomized runs
(``HYPOTHESIS_PROFILE=thorough python -m pytest``). Both switch the per-example
deadline off because timing on shared machines is noisy.
"""

from __future__ import annotations

import os

from hypothesis import settings

# The default profile is derandomized: CI is a gate, and a fresh clone has no example
# database, so random seeds would make it find new counterexamples at random times.
# The thorough profile stays random to keep exploring; paste what it finds as @example.
settings.register_profile("default", max_examples=40, deadline=None, derandomize=True)
settings.register_profile("thorough", max_examples=400, deadline=None)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "default"))
