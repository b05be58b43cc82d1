"""The benchmark harness: studies, fresh copies, starts, records, resume, failures, suites,
user objectives and reports."""

from __future__ import annotations

import json
import math
import multiprocessing
import os
import sqlite3
import textwrap
from concurrent.futures import ProcessPoolExecutor, ThreadPoolExecutor
from pathlib import Path

import numpy as np
import pytest

from linestep import descend, stopping
from linestep.bench import (
    ObjectiveSpecError,
    PerProblem,
    Results,
    Start,
    Study,
    as_problems,
    get_problem,
    load_objective,
    run_study,
    suite,
    suite_names,
)
from linestep.bench.harness import incompatible
from linestep.bench.suites import quadratic_problem
from linestep.directions import LBFGS, SteepestDescent
from linestep.rules.fixed import Fixed
from linestep.searches.armijo import Armijo

SHORT = stopping.default(max_iterations=300)


def _bowl_value(x: np.ndarray) -> float:
    return float(x @ x)


def _bowl_gradient(x: np.ndarray) -> np.ndarray:
    return 2 * x


def _raising_value(x: np.ndarray) -> float:
    raise RuntimeError("the simulator crashed at this parameter set")


def _raised_bowl_value(x: np.ndarray) -> float:
    return float(x @ x) + 0.5


def _nan_value(x: np.ndarray) -> float:
    return math.nan


def _nan_far_value(x: np.ndarray) -> float:
    return float(x @ x) if np.max(np.abs(x)) < 5 else math.nan


def _dying_value(x: np.ndarray) -> float:
    os._exit(3)  # a worker process that dies (segfault, out-of-memory killer, ...)


def _problem(name: str, value=_bowl_value, gradient=_bowl_gradient, optimal=0.0):
    return as_problems({"name": name, "value": value, "gradient": gradient,
                        "start": [3.0, -4.0], "optimal_value": optimal})[0]


class CountingArmijo(Armijo):
    """Armijo that counts its calls on the instance (not cleared by reset)."""

    def __init__(self) -> None:
        super().__init__()
        self.calls = 0

    def __call__(self, *args, **kwargs):
        self.calls += 1
        return super().__call__(*args, **kwargs)


# --- study definition ---------------------------------------------------------------------


def test_the_study_is_the_product_of_its_parts() -> None:
    study = Study(problems=[get_problem("rosenbrock"), get_problem("beale")],
                  controllers=[Armijo(), Fixed(1e-3)], directions=[SteepestDescent(), LBFGS()],
                  starts=[Start.standard(), Start.scaled(10), Start.perturbed(0.1)],
                  seeds=[0, 1, 2], stop=SHORT)
    # 2 problems × 2 controllers × 2 directions × (1 + 1 + 3 seeded) starts
    assert len(study) == 2 * 2 * 2 * 5
    tasks = study.tasks()
    assert len({task.key for task in tasks}) == len(tasks)
    assert {t.header["seed"] for t in tasks if t.header["start"] == "x10"} == {None}
    assert {t.header["controller"] for t in tasks} == {"Armijo()", "Fixed(size=0.001)"}


def test_labels_from_a_mapping_and_per_problem_controllers() -> None:
    polyak_like = PerProblem("Fixed(1/f*)", lambda p: Fixed(0.1) if p.optimal_values else None)
    unknown = as_problems({"name": "unknown", "value": _bowl_value, "gradient": _bowl_gradient,
                           "start": [1.0, 1.0]})
    study = Study(problems=[get_problem("beale"), *unknown],
                  controllers={"backtracking": Armijo(), "per problem": polyak_like})
    labels = [(t.header["problem"], t.header["controller"]) for t in study.tasks()]
    # the per-problem entry skips the problem without a known optimum
    assert labels == [("beale", "backtracking"), ("beale", "per problem"),
                      ("unknown", "backtracking")]


def test_gradient_only_rules_are_not_paired_with_other_directions() -> None:
    from linestep.rules.barzilai_borwein import BarzilaiBorwein

    assert incompatible(BarzilaiBorwein(), LBFGS())
    assert not incompatible(BarzilaiBorwein(), SteepestDescent())
    assert not incompatible(Armijo(), LBFGS())
    study = Study(problems=[get_problem("beale")], controllers=[BarzilaiBorwein(), Armijo()],
                  directions=[SteepestDescent(), LBFGS()])
    assert len(study) == 3
    every_pair = Study(problems=study.problems, controllers=[BarzilaiBorwein(), Armijo()],
                       directions=[SteepestDescent(), LBFGS()], exclude=None)
    assert len(every_pair) == 4


@pytest.mark.parametrize("arguments, match", [
    ({"problems": []}, "problems"),
    ({"controllers": []}, "controllers"),
    ({"seeds": []}, "seeds"),
    ({"seeds": [-1]}, "`seeds` must be >= 0"),  # numpy's generators take seeds >= 0
    ({"seeds": [1.5]}, "`seeds` must be an integer"),  # never truncated to another seed
    ({"starts": ["standard"]}, "starts"),
    ({"solve_rtol": 2.0}, "solve_rtol"),
    ({"solve_rtol": "0.1"}, "solve_rtol"),
    ({"problems": [get_problem("beale"), get_problem("beale")]}, "same name"),
    ({"starts": [Start.drawn()]}, "start function"),
])
def test_bad_studies_are_rejected_at_construction(arguments: dict, match: str) -> None:
    base = {"problems": [get_problem("beale")], "controllers": [Armijo()]}
    with pytest.raises((ValueError, TypeError), match=match):
        Study(**{**base, **arguments})


# --- fresh copies -------------------------------------------------------------------------


def test_every_run_gets_its_own_controller_copy() -> None:
    original = CountingArmijo()
    study = Study(problems=[get_problem("beale"), get_problem("rosenbrock")],
                  controllers=[original], stop=SHORT)
    results = run_study(study, workers=1)
    assert original.calls == 0  # the object given is a template, never run itself
    assert all(r.iterations > 0 for r in results)


def test_factories_are_called_once_per_run() -> None:
    built = []

    def factory():
        built.append(Armijo())
        return built[-1]

    study = Study(problems=[get_problem("beale"), get_problem("rosenbrock")],
                  controllers=[factory], directions=[SteepestDescent, LBFGS], stop=SHORT)
    run_study(study, workers=1)
    assert len(built) == 4 and len({id(c) for c in built}) == 4


def test_a_record_matches_descend_run_directly() -> None:
    problem = get_problem("rosenbrock")
    study = Study(problems=[problem], controllers=[Armijo()], directions=[LBFGS()],
                  stop=stopping.default())
    [record] = run_study(study, workers=1)
    run = descend(problem.objective(), problem.start, controller=Armijo(), direction=LBFGS())
    assert record.kind == run.verdict.kind.value == "converged"
    assert record.reason == run.verdict.reason
    assert record.value == run.value
    assert (record.value_evaluations, record.gradient_evaluations) == (
        run.evaluations.values, run.evaluations.gradients)
    assert record.iterations == run.iterations
    np.testing.assert_array_equal(record.x, run.x)
    np.testing.assert_array_equal(record.history.value, run.history.value)
    assert record.history.values[-1] == record.value_evaluations
    assert record.solved and record.optimum == 0.0 and record.gap == record.value
    assert record.initial_value == pytest.approx(24.2)  # MGH 1981, problem 1: f(x0) = 24.2
    assert 0 < record.objective_seconds <= record.seconds


# --- starts -------------------------------------------------------------------------------


def test_scaled_starts_follow_mgh() -> None:
    # MGH 1981 test from x0, 10·x0 and 100·x0; Rosenbrock's x0 = (-1.2, 1).
    rosenbrock = get_problem("rosenbrock")
    np.testing.assert_array_equal(Start.scaled(100).point(rosenbrock, None), [-120.0, 100.0])
    assert Start.scaled(100).label == "x100" and not Start.scaled(100).random


@pytest.mark.parametrize("make, match", [
    (lambda: Start.scaled(0), "`factor` must be non-zero"),
    (lambda: Start.scaled(math.inf), "`factor` must be finite"),
    (lambda: Start.perturbed(0.0), "`noise` must be a finite positive number"),
    (lambda: Start.perturbed(math.nan), "`noise` must be a finite positive number"),
])
def test_bad_starts_are_rejected(make, match: str) -> None:
    with pytest.raises(ValueError, match=match):
        make()


def test_perturbed_starts_are_seeded_per_problem() -> None:
    beale, rosenbrock = get_problem("beale"), get_problem("rosenbrock")
    start = Start.perturbed(0.1)
    np.testing.assert_array_equal(start.point(beale, 4), start.point(beale, 4))
    assert not np.array_equal(start.point(beale, 4), start.point(beale, 5))
    assert not np.allclose(start.point(beale, 4) - beale.start,
                           start.point(rosenbrock, 4) - rosenbrock.start)


def test_drawn_starts_use_the_problems_start_function() -> None:
    [problem] = as_problems({"name": "drawn", "value": _bowl_value, "gradient": _bowl_gradient,
                             "start": lambda rng: rng.uniform(-1, 1, size=3)})
    np.testing.assert_array_equal(problem.start,
                                  np.random.default_rng(0).uniform(-1, 1, size=3))
    study = Study(problems=[problem], controllers=[Armijo()], starts=[Start.drawn()],
                  seeds=[1, 2], stop=SHORT)
    starts = [task.x0 for task in study.tasks()]
    assert len(starts) == 2 and not np.array_equal(*starts)


# --- storage and resume -------------------------------------------------------------------


def _study() -> Study:
    return Study(problems=[get_problem("rosenbrock"), get_problem("beale"),
                           get_problem("helical_valley")],
                 controllers=[Armijo(), Fixed(1e-3)], directions=[LBFGS()], stop=SHORT)


def _summary(results: Results) -> list[tuple]:
    return [(r.key, r.kind, r.value, r.evaluations) for r in results]


def test_results_go_to_the_file_and_come_back(tmp_path: Path) -> None:
    results = run_study(_study(), tmp_path, workers=1)
    loaded = Results.load(tmp_path)
    assert _summary(loaded) == _summary(results)
    for a, b in zip(results, loaded, strict=True):
        np.testing.assert_array_equal(a.history.value, b.history.value)
        np.testing.assert_array_equal(a.x, b.x)


class _Interrupt:
    """A progress callback that presses Ctrl-C after `after` finished runs."""

    def __init__(self, after: int) -> None:
        self.after = after

    def __call__(self, done: int, total: int, record) -> None:
        if done >= self.after:
            raise KeyboardInterrupt


@pytest.mark.parametrize("workers", [1, 2])
def test_resume_after_an_interruption_loses_and_duplicates_nothing(tmp_path: Path,
                                                                   workers: int) -> None:
    study = _study()
    with pytest.raises(KeyboardInterrupt):
        run_study(study, tmp_path, workers=workers, progress=_Interrupt(after=2))
    with sqlite3.connect(tmp_path / "results.sqlite") as connection:
        saved = connection.execute("SELECT COUNT(*) FROM runs").fetchone()[0]
    assert saved == 2  # each run was committed the moment it finished

    seen = []
    resumed = run_study(study, tmp_path, workers=workers,
                        progress=lambda done, total, record: seen.append(done))
    assert seen[0] == 3 and seen[-1] == len(study.tasks())  # only the missing runs ran
    with sqlite3.connect(tmp_path / "results.sqlite") as connection:
        keys = [row[0] for row in connection.execute("SELECT key FROM runs")]
    assert len(keys) == len(set(keys)) == len(study.tasks())
    assert _summary(resumed) == _summary(run_study(study, workers=1))


def test_rerunning_a_finished_study_runs_nothing(tmp_path: Path) -> None:
    run_study(_study(), tmp_path, workers=1)
    calls = []
    again = run_study(_study(), tmp_path, workers=1, progress=lambda *a: calls.append(a))
    assert calls == [] and len(again) == len(_study().tasks())


# --- failures -----------------------------------------------------------------------------


@pytest.mark.parametrize("workers", [1, 2])
def test_a_raising_objective_is_a_failed_run_and_the_study_goes_on(workers: int) -> None:
    problems = [_problem("fine"), _problem("raising", value=_raising_value), _problem("fine2")]
    results = run_study(Study(problems=problems, controllers=[Armijo()], stop=SHORT),
                        workers=workers)
    by_problem = {r.problem: r for r in results}
    failed = by_problem["raising"]
    assert failed.kind == "failed" and failed.solved is False
    assert "RuntimeError: the simulator crashed" in failed.reason
    assert "Traceback" in failed.error and "_raising_value" in failed.error
    assert failed.value_evaluations == 1  # the call that raised is counted
    assert by_problem["fine"].kind == by_problem["fine2"].kind == "converged"


def test_nan_at_the_start_is_a_failed_run_with_the_reason() -> None:
    [record] = run_study(Study(problems=[_problem("nan", value=_nan_value)],
                               controllers=[Armijo()]), workers=1)
    assert record.kind == "failed"
    assert "must be finite" in record.reason and record.value is None


def test_nan_along_the_way_ends_as_failed_with_the_reason_or_is_avoided() -> None:
    problems = [_problem("nan_far", value=_nan_far_value)]
    fixed, search = run_study(Study(problems=problems,
                                    controllers=[Fixed(2.0), Armijo(initial=100.0)]), workers=1)
    # A fixed step of 2 lands at (-9, 12), where f is NaN: the run fails, saying why.
    assert fixed.kind == "failed" and "non_finite" in fixed.reason and fixed.error is None
    assert fixed.value == 25.0  # x never moved to a non-finite point
    # A search shrinks its trial step out of the NaN region and converges.
    assert search.kind == "converged" and search.solved


def test_a_dying_worker_is_a_failed_run_and_the_pool_is_rebuilt() -> None:
    problems = [_problem(f"fine{i}") for i in range(3)]
    problems.insert(1, _problem("dies", value=_dying_value))
    results = run_study(Study(problems=problems, controllers=[Armijo(), Fixed(0.25)],
                              stop=SHORT), workers=2)
    assert len(results) == 8
    for record in results:
        if record.problem == "dies":
            assert record.kind == "failed" and "worker process" in record.reason
        else:
            assert record.kind == "converged", record.reason


def test_problems_that_cannot_reach_worker_processes_are_named() -> None:
    [lambda_problem] = as_problems({"name": "lambdas", "value": lambda x: float(x @ x),
                                    "gradient": lambda x: 2 * x, "start": [1.0]})
    study = Study(problems=[lambda_problem], controllers=[Armijo()], stop=SHORT)
    with pytest.raises(ValueError, match="'lambdas' cannot be sent to worker processes"):
        run_study(study, workers=2)
    [record] = run_study(study, workers=1)  # in this process it runs
    assert record.kind == "converged"


def test_any_executor_gives_the_same_results() -> None:
    with ThreadPoolExecutor(max_workers=2) as executor:
        threaded = run_study(_study(), executor=executor)
    assert _summary(threaded) == _summary(run_study(_study(), workers=1))


@pytest.mark.parametrize("workers", [0, -2, 1.5])
def test_a_bad_worker_count_is_rejected(workers) -> None:
    # workers=0 once fell through to "all CPUs" without a word
    with pytest.raises((ValueError, TypeError), match="`workers` must"):
        run_study(_study(), workers=workers)


def test_the_optimum_is_recorded_exactly_however_far_the_run_ends() -> None:
    # f = ‖x‖² + 1/2, f* = 1/2. One fixed step of 1e9 ends near f = 1e20, where
    # f − f* rounds to f: the optimum must still be f* itself, not f − (f − f*) = 0.
    [problem] = as_problems({"name": "raised_bowl", "value": _raised_bowl_value,
                             "gradient": _bowl_gradient, "start": [3.0, -4.0],
                             "optimal_value": 0.5})
    [record] = run_study(Study(problems=[problem], controllers=[Fixed(1e9)],
                               stop=stopping.MaxIterations(1)), workers=1)
    assert record.value > 1e19
    assert record.optimum == 0.5 and record.gap == record.value - 0.5
    assert record.solved is False


def test_file_path_objectives_reach_spawned_worker_processes(tmp_path: Path) -> None:
    # A module loaded from a file path is registered under a private name that a
    # fresh ("spawn", the default on macOS and Windows) process cannot import, so the
    # problem travels as its spec and each worker loads the file itself.
    path = tmp_path / "spawned_bowl.py"
    path.write_text(textwrap.dedent("""
        def value(x):
            return float(x @ x)

        def gradient(x):
            return 2 * x

        def make():
            return {"value": value, "gradient": gradient, "start": [1.0, -2.0],
                    "optimal_value": 0.0}
    """))
    study = Study(problems=[f"{path}:make"], controllers=[Armijo()], stop=SHORT)
    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=1, mp_context=context) as pool:
        [record] = run_study(study, executor=pool)
    assert record.kind == "converged" and record.solved, record.reason


def test_unknown_optima_are_judged_against_the_best_run() -> None:
    [problem] = as_problems({"name": "no_optimum", "value": _bowl_value,
                             "gradient": _bowl_gradient, "start": [3.0, -4.0]})
    results = run_study(Study(problems=[problem], controllers=[Armijo(), Fixed(1e-4)],
                              stop=stopping.default(max_iterations=50)), workers=1)
    armijo, tiny = results
    assert armijo.gap is None and armijo.solved is None  # nothing known when the run ends
    assert results.reference(armijo.instance) == armijo.value  # the best run sets f_ref
    assert results.gap(armijo) == 0.0 and results.is_solved(armijo)
    assert results.gap(tiny) > 1.0 and not results.is_solved(tiny)


# --- user objectives ----------------------------------------------------------------------


def _module(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, name: str, source: str) -> None:
    (tmp_path / f"{name}.py").write_text(textwrap.dedent(source))
    monkeypatch.syspath_prepend(str(tmp_path))


def test_a_spec_loads_problems_from_a_module(tmp_path: Path, monkeypatch) -> None:
    _module(tmp_path, monkeypatch, "invented_fit", """
        import numpy as np
        def make():
            def both(x):
                r = x - np.array([1.0, 2.0])
                return float(r @ r), 2 * r
            return {"name": "invented_fit", "value_and_gradient": both, "start": [0.0, 0.0],
                    "optimal_value": 0.0}
    """)
    [problem] = load_objective("invented_fit:make")
    assert problem.name == "invented_fit" and problem.source == ("invented_fit:make", 0)
    # lambdas/closures do not pickle; the pool gets the spec and rebuilds the problem
    [record] = run_study(Study(problems=["invented_fit:make"], controllers=[Armijo()]),
                         workers=2)
    assert record.kind == "converged" and record.solved
    # a fused objective is called once per point: values and gradients are counted together
    assert record.value_evaluations == record.gradient_evaluations


def test_a_file_path_spec(tmp_path: Path) -> None:
    path = tmp_path / "my_script.py"
    path.write_text("def problem():\n    return {'value': lambda x: float(x @ x),"
                    " 'gradient': lambda x: 2 * x, 'start': [1.0, 1.0]}\n")
    [problem] = load_objective(f"{path}:problem")
    assert problem.name == "problem" and problem.dimension == 2


@pytest.mark.parametrize("source, spec, match", [
    ("", "nocolon", "must look like"),
    ("", "does_not_exist_anywhere:make", "Cannot import 'does_not_exist_anywhere'"),
    ("def make():\n    return {}\n", "{m}:other", "has no attribute 'other'.*It defines: make"),
    ("def make(data):\n    return {}\n", "{m}:make", r"no arguments.*make\(data\)"),
    ("make = 3\n", "{m}:make", "is a int"),
    ("def make():\n    raise OSError('no data file')\n", "{m}:make", "raised OSError"),
    ("def make():\n    return {'value': abs, 'start': [1.0]}\n", "{m}:make", "no 'gradient'"),
    ("def make():\n    return {'value': abs, 'gradient': abs}\n", "{m}:make", "no 'start'"),
    ("def make():\n    return {'value': abs, 'gradient': abs, 'start': [[1.0]]}\n", "{m}:make",
     "1-D"),
    ("def make():\n    return {'value': lambda: 0, 'gradient': abs, 'start': [1.0]}\n",
     "{m}:make", "one argument"),
    ("def make():\n    return {'valu': abs}\n", "{m}:make", "unknown keys"),
    ("def make():\n    return 42\n", "{m}:make", "must be a Problem"),
])
def test_bad_specs_are_named_in_the_error(tmp_path: Path, monkeypatch, source: str, spec: str,
                                         match: str) -> None:
    module = f"spec_case_{abs(hash((source, spec))) % 10**8}"
    _module(tmp_path, monkeypatch, module, source)
    spec = spec.format(m=module)
    with pytest.raises(ObjectiveSpecError, match=match) as info:
        load_objective(spec)
    if ":" in spec:
        assert repr(spec) in str(info.value) or spec.split(":")[0] in str(info.value)


# --- suites -------------------------------------------------------------------------------


def test_suites() -> None:
    assert suite_names() == ["default", "mgh", "quadratics", "logistic", "large"]
    assert len(suite("mgh")) == 35  # MGH 1981 has 35 problems
    quadratics = suite("quadratics")
    assert [p.name for p in quadratics] == [f"quadratic_cond_1e{k}" for k in range(1, 7)]
    with pytest.raises(ValueError, match="Unknown suite 'nope'"):
        suite("nope")


@pytest.mark.parametrize("arguments, error, match", [
    ({"condition": 0.5}, ValueError, "`condition` must be >= 1"),
    ({"condition": math.inf}, ValueError, "`condition` must be a finite positive number"),
    ({"condition": 10.0, "dimension": 1}, ValueError, "`dimension` must be >= 2"),
    ({"condition": 10.0, "dimension": 5.0}, TypeError, "`dimension` must be an integer"),
    ({"condition": 10.0, "seed": -1}, ValueError, "`seed` must be >= 0"),
])
def test_bad_quadratics_are_rejected(arguments: dict, error: type, match: str) -> None:
    with pytest.raises(error, match=match):
        quadratic_problem(**arguments)


@pytest.mark.parametrize("condition", [1e1, 1e4])
def test_quadratics_have_the_stated_condition_and_optimum(condition: float) -> None:
    problem = quadratic_problem(condition, dimension=20, seed=3)
    # The Hessian, recovered column by column from the gradient, has κ = condition.
    identity = np.eye(20)
    center = problem.minimizers[0]
    hessian = np.column_stack([problem.gradient(center + e) for e in identity])
    eigenvalues = np.linalg.eigvalsh(0.5 * (hessian + hessian.T))
    assert eigenvalues.max() / eigenvalues.min() == pytest.approx(condition, rel=1e-8)
    assert problem.value(center) == 0.0
    np.testing.assert_array_equal(problem.start, quadratic_problem(condition, dimension=20,
                                                                   seed=3).start)


# --- reports ------------------------------------------------------------------------------


def test_the_report_is_self_contained(tmp_path: Path) -> None:
    pytest.importorskip("matplotlib", reason="plots need matplotlib (linestep[bench])")
    from linestep.bench import write_report

    results = run_study(_study(), tmp_path, workers=1)
    written = write_report(tmp_path, csv=True, json=True, figures="svg")
    page = written["html"].read_text()
    assert page.count("data:image/png;base64,") == 2 + 3  # two profiles, three problems
    assert "http://" not in page and "https://" not in page and "<script" not in page
    assert "Armijo()" in page and "robustness score" in page.lower()
    lines = written["csv"].read_text().splitlines()
    assert len(lines) == 1 + len(results)
    document = json.loads(written["json"].read_text())
    assert len(document["runs"]) == len(results)
    assert document["runs"][0]["history"]["value"][0] == pytest.approx(24.2)
    assert sorted(p.name for p in (tmp_path / "figures").iterdir())[:2] == [
        "convergence_beale_n2_standard.svg", "convergence_helical_valley_n3_standard.svg"]
