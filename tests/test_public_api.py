"""The public surface: names from DESIGN.md §2, module identity, and light imports."""

from __future__ import annotations

import subprocess
import sys

import linestep

# DESIGN.md §2 public names that are importable from `linestep` today.
DESIGN_NAMES = {
    "Objective", "Step", "Status", "Evaluations",
    "Fixed", "Schedule", "Armijo", "Goldstein", "Wolfe", "MoreThuente", "HagerZhang",
    "NonmonotoneArmijo", "BarzilaiBorwein", "Polyak", "Fallback",
    "descend", "Run", "SteepestDescent", "LBFGS", "NonlinearCG", "stopping",
    "advise", "diagnose", "estimate_smoothness",
}


def test_all_matches_the_public_names():
    public = {name for name in dir(linestep) if not name.startswith("_")}
    modules = {"stopping", "searches", "rules", "directions", "bench", "cli", "jax", "advice"}
    assert set(linestep.__all__) == public - (modules - {"stopping"}) - {"annotations"}


def test_design_names_are_exported():
    assert DESIGN_NAMES <= set(linestep.__all__)


def test_public_classes_show_linestep_as_their_module():
    for name in linestep.__all__:
        obj = getattr(linestep, name)
        if isinstance(obj, type):
            assert obj.__module__ == "linestep", name


def test_importing_linestep_imports_no_jax_scipy_or_matplotlib():
    code = (
        "import sys, linestep, linestep.stopping; "
        "bad = [m for m in ('jax', 'scipy', 'matplotlib', 'dask') if m in sys.modules]; "
        "print(','.join(bad))"
    )
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                            check=True)
    assert result.stdout.strip() == ""
