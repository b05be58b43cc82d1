"""Run identity from content (issue 10 item 1) and stale results (item 2).

Every check here is about the harness's own bookkeeping; the problems are the
MGH test functions and invented bowls (labelled as such), no published numbers.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from linestep import LBFGS, Armijo, NonlinearCG, SteepestDescent, Wolfe, stopping
from linestep.bench import Start, Study, as_problems, get_problem, run_study
from linestep.bench._identity import UnidentifiableError, describe, digest
from linestep.bench._label import distinct_labels, short_label
from linestep.bench.storage import ResultStore
from linestep.rules.fallback import Fallback
from linestep.rules.fixed import Fixed
from linestep.rules.schedule import Schedule

SHORT = stopping.default(max_iterations=50)


def _bowl_value(x: np.ndarray) -> float:
    return float(x @ x)


def _bowl_gradient(x: np.ndarray) -> np.ndarray:
    return 2 * x


def _shifted_value(x: np.ndarray) -> float:
    return float((x - 1) @ (x - 1))


def _shifted_gradient(x: np.ndarray) -> np.ndarray:
    return 2 * (x - 1)


def _bowl(name: str = "bowl", value=_bowl_value, gradient=_bowl_gradient, start=(3.0, -4.0),
          optimal=0.0):
    """An invented bowl problem."""
    return as_problems({"name": name, "value": value, "gradient": gradient,
                        "start": list(start), "optimal_value": optimal})[0]


def _keys(study: Study) -> list[str]:
    return [task.key for task in study.tasks()]


# --- controllers that print alike are told apart --------------------------------------------


def test_two_lambda_schedules_are_two_runs_with_two_labels() -> None:
    slow, fast = Schedule(lambda k: 0.01), Schedule(lambda k: 0.2)
    study = Study(problems=[_bowl()], controllers=[slow, fast], stop=SHORT)
    tasks = study.tasks()
    assert len({t.key for t in tasks}) == 2
    labels = [t.header["controller"] for t in tasks]
    assert len(set(labels)) == 2  # tagged: never merged in the ranking
    results = run_study(study, workers=1)
    assert len({r.key for r in results}) == 2
    assert len(results.solvers()) == 2


def test_exponential_schedules_with_other_rates_differ() -> None:
    a, b = Schedule.exponential(0.1, rate=0.9), Schedule.exponential(0.1, rate=0.99)
    assert digest(a) != digest(b)
    assert digest(a) == digest(Schedule.exponential(0.1, rate=0.9))


def test_starts_that_print_alike_are_distinct() -> None:
    assert Start.scaled(10).label != Start.scaled(10.0000001).label
    study = Study(problems=[get_problem("rosenbrock")], controllers=[Armijo()],
                  starts=[Start.scaled(10), Start.scaled(10.0000001)], stop=SHORT)
    results = run_study(study, workers=1)
    assert len({r.key for r in results}) == 2 and len(results.instances()) == 2


def test_a_start_listed_twice_is_refused() -> None:
    with pytest.raises(ValueError, match="more than once"):
        Study(problems=[_bowl()], controllers=[Armijo()], starts=[Start.scaled(2)] * 2)


def _plain_stop(progress):
    """A stopping rule written as a plain function (its repr holds a memory address)."""
    return None if progress.iteration < 5 else stopping.Verdict(
        kind=stopping.Kind.budget, reason="five iterations", criterion="_plain_stop")


def test_a_plain_function_stop_gives_the_same_key_every_time(tmp_path: Path) -> None:
    study = Study(problems=[_bowl()], controllers=[Armijo()], stop=_plain_stop)
    assert "0x" not in study.tasks()[0].header["stop"]
    run_study(study, tmp_path, workers=1)
    again = Study(problems=[_bowl()], controllers=[Armijo()], stop=_plain_stop)
    assert _keys(again) == _keys(study)
    run_study(again, tmp_path, workers=1)
    with ResultStore(tmp_path, read_only=True) as store:
        assert len(list(store.rows(superseded=True))) == 1


def test_the_same_configuration_listed_twice_is_refused_before_any_run() -> None:
    calls = []

    def counting_value(x):
        calls.append(1)
        return float(x @ x)

    study = Study(problems=[_bowl(value=counting_value)],
                  controllers={"a": Armijo(), "b": Armijo()}, stop=SHORT)
    with pytest.raises(ValueError, match="same computation"):
        run_study(study, workers=1)
    assert len(calls) <= 1  # at most the fingerprint's one evaluation: no run started


class _Opaque:
    """A callable whose content cannot be read: no parameters, no state, no pickling."""

    __slots__ = ()

    def __reduce__(self):
        raise TypeError("cannot pickle _Opaque")


def test_an_unidentifiable_object_is_refused_with_how_to_name_it() -> None:
    with pytest.raises(UnidentifiableError, match="linestep_identity"):
        describe(_Opaque(), what="stopping rule")

    class Named:
        def linestep_identity(self):
            return "my rule v1"

    assert digest(Named()) == digest(Named())


def test_a_lock_inside_a_criterion_is_refused() -> None:
    import threading

    class Locked:
        def __init__(self):
            self.lock = threading.Lock()

        def __call__(self, progress):
            return None

    study = Study(problems=[_bowl()], controllers=[Armijo()], stop=Locked())
    with pytest.raises(TypeError, match="stopping rule.*factory"):
        study.tasks()  # it cannot even be copied per run: a clear TypeError
    with pytest.raises(UnidentifiableError, match="stopping rule"):
        describe(Locked(), what="stopping rule")


def test_closure_data_is_part_of_a_function_identity() -> None:
    def make(rate):
        return lambda k: rate

    assert digest(make(0.1)) != digest(make(0.2))
    assert digest(make(0.1)) == digest(make(0.1))


# --- hypothesis: distinct configurations, distinct identities --------------------------------

controllers = st.one_of(
    st.builds(Fixed, st.floats(1e-4, 1.0)),
    st.builds(lambda c1: Armijo(c1=c1), st.floats(1e-6, 0.4)),
    st.builds(lambda c2: Wolfe(c2=c2), st.floats(0.5, 0.95)),
    st.builds(lambda size: Fallback(Fixed(size), Armijo()), st.floats(1e-4, 1.0)),
    st.builds(lambda rate: Schedule.exponential(0.1, rate=rate), st.floats(0.5, 0.999)),
)
directions = st.sampled_from([SteepestDescent, LBFGS, lambda: LBFGS(3), NonlinearCG,
                              lambda: NonlinearCG(beta="pr+")])
starts = st.floats(-5.0, 5.0, allow_nan=False).filter(lambda v: v != 0.0)


def _describe_configuration(controller, direction, start, problem_name):
    study = Study(problems=[_bowl(problem_name, start=(start, 1.0))],
                  controllers=[controller], directions=[direction], stop=SHORT,
                  exclude=None)
    [task] = study.tasks()
    return task.key


@given(controllers, controllers, directions, directions, starts, starts,
       st.sampled_from(["bowl", "other"]), st.sampled_from(["bowl", "other"]))
def test_distinct_configurations_get_distinct_identities(c1, c2, d1, d2, s1, s2, p1, p2):
    key1 = _describe_configuration(c1, d1, s1, p1)
    key2 = _describe_configuration(c2, d2, s2, p2)
    same = (repr(c1) == repr(c2) and describe(d1()) == describe(d2()) and s1 == s2
            and p1 == p2)
    assert (key1 == key2) == same


@given(controllers, directions, starts)
def test_a_configuration_built_twice_gets_the_same_identity(controller, direction, start):
    rebuilt = eval(repr(controller), {"Fixed": Fixed, "Armijo": Armijo, "Wolfe": Wolfe,  # noqa: S307
                                      "Fallback": Fallback, "Schedule": Schedule})
    assert _describe_configuration(controller, direction, start, "bowl") == \
        _describe_configuration(rebuilt, direction, start, "bowl")


# --- stale results (item 2) ---------------------------------------------------------------


def test_an_edited_problem_is_run_again_and_its_old_rows_are_superseded(tmp_path: Path) -> None:
    old = Study(problems=[_bowl("model")], controllers=[Armijo(), Fixed(0.1)], stop=SHORT)
    run_study(old, tmp_path, workers=1)
    # same name, new data: the objective's minimiser moved
    new = Study(problems=[_bowl("model", _shifted_value, _shifted_gradient)],
                controllers=[Armijo(), Fixed(0.1)], stop=SHORT)
    ran = []
    results = run_study(new, tmp_path, workers=1, progress=lambda d, t, r: ran.append(r.key))
    assert len(ran) == 2  # both runs again
    assert all(abs(r.x - 1).max() < 1e-2 for r in results)
    with ResultStore(tmp_path, read_only=True) as store:
        assert store.superseded() == 2 and len(store) == 2
        assert len(list(store.rows(superseded=True))) == 4  # the old rows are kept


def test_a_new_start_or_solve_rtol_reruns(tmp_path: Path) -> None:
    run_study(Study(problems=[_bowl()], controllers=[Armijo()], stop=SHORT), tmp_path, workers=1)
    for study in (Study(problems=[_bowl(start=(3.0, -4.5))], controllers=[Armijo()], stop=SHORT),
                  Study(problems=[_bowl()], controllers=[Armijo()], stop=SHORT,
                        solve_rtol=1e-8)):
        ran: list = []
        run_study(study, tmp_path, workers=1, progress=lambda d, t, r, ran=ran: ran.append(r))
        assert len(ran) == 1


def test_solved_is_derived_when_read_not_frozen_when_written(tmp_path: Path) -> None:
    run_study(Study(problems=[_bowl()], controllers=[Fixed(0.1)], stop=SHORT), tmp_path,
              workers=1)
    with sqlite3.connect(tmp_path / "results.sqlite") as connection:
        columns = {row[1] for row in connection.execute("PRAGMA table_info(runs)")}
        assert not {"solved", "gap", "optimum"} & columns
        # the stored raw data decide: move the stored optimum and the verdict follows
        connection.execute("UPDATE runs SET optimal_values = '[5.0]'")
    from linestep.bench import Results

    [record] = Results.load(tmp_path)
    assert record.optimum == 5.0 and record.solved is False


# --- labels (issue 13 item 6) ---------------------------------------------------------------


def test_one_short_label_form() -> None:
    assert short_label(Fixed(0.05)) == "Fixed(0.05)"
    assert short_label(Fallback(Fixed(0.05), Armijo())) == "Fallback(Fixed(0.05), Armijo())"
    assert short_label(Wolfe(strong=False)) == "Wolfe(strong=False)"
    assert short_label(LBFGS(3)) == "LBFGS(memory=3)"
    assert "0x" not in short_label(Schedule(lambda k: 0.1))


def test_labels_that_collide_are_tagged_not_merged() -> None:
    assert distinct_labels([("A()", "1111aaaa"), ("A()", "2222bbbb"), ("B()", "3")]) == \
        ["A() [1111aaaa]", "A() [2222bbbb]", "B()"]
    assert distinct_labels([("A()", "1"), ("A()", "1")]) == ["A()", "A()"]


def test_the_demo_uses_the_bench_label_form() -> None:
    from linestep._demo import run_demo

    lines: list[str] = []
    runs = run_demo(lines.append)
    labels = [label for label, _ in runs]
    assert "Fixed(1.0)" in labels and "Fallback(Fixed(1.0), Armijo())" in labels
