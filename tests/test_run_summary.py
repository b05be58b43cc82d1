"""`Run`'s short summary and its plot."""

from __future__ import annotations

import builtins

import numpy as np
import pytest

from linestep import Armijo, Fixed, descend, stopping


def _bowl(x: np.ndarray) -> tuple[float, np.ndarray]:
    return float(x @ x), 2 * x


def test_str_is_a_short_summary_and_repr_keeps_everything() -> None:
    run = descend((lambda x: _bowl(x)[0], lambda x: _bowl(x)[1]),
                  np.full(200, 3.0), controller=Armijo())
    text = str(run)
    assert text.splitlines()[0].startswith(f"Run converged after {run.iterations} iteration")
    assert f"{run.evaluations.total} evaluations" in text
    assert run.verdict.reason in text and len(text.splitlines()) == 3
    assert "array(" not in text and len(text) < 400
    assert "history=History(" in repr(run)


def test_a_failed_run_says_failed_and_why() -> None:
    run = descend((lambda x: float(x @ x), lambda x: 2 * x), np.array([1.0]),
                  controller=Fixed(3.0), stop=stopping.default(max_iterations=500))
    assert str(run).startswith("Run failed after") and run.verdict.reason in str(run)


def test_plot_draws_gap_and_gradient_norm_on_log_axes() -> None:
    pytest.importorskip("matplotlib", reason="plots need matplotlib (linestep[bench])")
    run = descend((lambda x: float(x @ x) + 1.0, lambda x: 2 * x), np.array([3.0, -4.0]),
                  controller=Armijo(initial=0.1))
    figure = run.plot(optimum=1.0)
    value_axes, gradient_axes = figure.axes
    assert [(a.get_xscale(), a.get_yscale()) for a in figure.axes] == [("log", "log")] * 2
    assert value_axes.get_ylabel() == "f − f*" and gradient_axes.get_ylabel() == "‖∇f‖∞"
    np.testing.assert_allclose(value_axes.get_lines()[0].get_ydata()[0], 25.0)
    np.testing.assert_allclose(gradient_axes.get_lines()[0].get_ydata(),
                               run.history.gradient_norm)
    assert run.plot().axes[0].get_ylabel() == "f"


def test_plot_without_matplotlib_says_how_to_get_it(monkeypatch) -> None:
    run = descend((lambda x: float(x @ x), lambda x: 2 * x), np.array([1.0]))
    real_import = builtins.__import__

    def no_matplotlib(name, *args, **kwargs):
        if name.startswith("matplotlib"):
            raise ImportError(f"No module named {name!r}")
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_matplotlib)
    with pytest.raises(ImportError, match=r'Run.plot\(\) needs matplotlib: pip install '
                                          r'"linestep\[bench\]"'):
        run.plot()
