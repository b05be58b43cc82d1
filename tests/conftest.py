"""Shared test configuration: hypothesis profiles.

``default`` keeps the suite quick on shared machines; ``thorough`` is for long
runs (``HYPOTHESIS_PROFILE=thorough python -m pytest``). Both switch the
per-example deadline off because timing on shared machines is noisy.
"""

from __future__ import annotations

import os

from hypothesis import settings

settings.register_profile("default", max_examples=40, deadline=None)
settings.register_profile("thorough", max_examples=400, deadline=None)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "default"))
