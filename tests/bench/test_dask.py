"""A study on a Dask cluster gives the same runs as on the local process pool."""

from __future__ import annotations

from pathlib import Path

import pytest

distributed = pytest.importorskip(
    "dask.distributed", reason="Dask runs need the optional extra: pip install 'linestep[dask]'")

from linestep import stopping  # noqa: E402
from linestep.bench import Results, Study, get_problem, run_study  # noqa: E402
from linestep.directions import LBFGS, SteepestDescent  # noqa: E402
from linestep.rules.fixed import Fixed  # noqa: E402
from linestep.searches.armijo import Armijo  # noqa: E402


def _study() -> Study:
    return Study(problems=[get_problem("rosenbrock"), get_problem("beale"),
                           get_problem("powell_singular")],
                 controllers=[Armijo(), Fixed(1e-3)], directions=[SteepestDescent(), LBFGS()],
                 stop=stopping.default(max_iterations=200))


def _outcome(results: Results) -> list[tuple]:
    return [(r.key, r.kind, r.value, r.iterations, r.value_evaluations,
             r.gradient_evaluations) for r in results]


@pytest.fixture(scope="module")
def cluster():
    # One in-process worker keeps the test light; the harness code path is the same.
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                  dashboard_address=None) as local:
        yield local


def test_dask_matches_the_process_pool(cluster, tmp_path: Path) -> None:
    pooled = run_study(_study(), workers=2)
    with distributed.Client(cluster) as client:
        on_dask = run_study(_study(), tmp_path, scheduler=client)
    assert _outcome(on_dask) == _outcome(pooled)  # same evaluation counts and final values
    # the file holds the runs in the order they finished
    assert sorted(_outcome(Results.load(tmp_path))) == sorted(_outcome(pooled))


def test_a_client_sets_the_runs_in_flight_by_its_threads(cluster, monkeypatch) -> None:
    # One worker with two threads: IN_FLIGHT_PER_WORKER runs per thread, whether the
    # cluster is given by address or as a client (not this machine's CPU count).
    from linestep.bench import _execute as harness

    monkeypatch.setattr(harness.os, "cpu_count", lambda: 64)  # unlike the cluster
    limits = []
    drain = harness._drain
    monkeypatch.setattr(harness, "_drain",
                        lambda *args: limits.append(args[-1]) or drain(*args))
    with distributed.Client(cluster) as client:
        run_study(_study(), scheduler=client)
    run_study(_study(), scheduler=cluster.scheduler_address)
    assert limits == [2 * harness.IN_FLIGHT_PER_WORKER] * 2


def test_a_scheduler_address_works_like_a_client(cluster) -> None:
    by_address = run_study(_study(), scheduler=cluster.scheduler_address)
    assert _outcome(by_address) == _outcome(run_study(_study(), workers=1))
