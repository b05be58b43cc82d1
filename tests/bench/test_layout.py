"""The harness package's layout: small private modules behind re-exporting names."""

from __future__ import annotations

from pathlib import Path

import linestep.bench
from linestep.bench import harness

# Issue 12: no source module over this many lines (the MGH data module aside).
MODULE_LINE_LIMIT = 700


def test_no_bench_module_is_over_the_line_limit() -> None:
    folder = Path(linestep.bench.__file__).parent
    sizes = {path.name: len(path.read_text(encoding="utf-8").splitlines())
             for path in folder.glob("*.py") if path.name != "_mgh.py"}
    assert {name: n for name, n in sizes.items() if n > MODULE_LINE_LIMIT} == {}


def test_the_harness_module_re_exports_the_public_names() -> None:
    for name in harness.__all__:
        assert getattr(harness, name) is getattr(linestep.bench, name, getattr(harness, name))
    assert harness.Study is linestep.bench.Study
    assert harness.run_study is linestep.bench.run_study
