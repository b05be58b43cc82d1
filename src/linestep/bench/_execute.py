"""Running a study: one run in a worker, executors (inline, process pool, Dask), draining.

`run_study` is the entry point. Every run is shipped to a worker as a `_Task`
(everything in it must pickle), executed by `execute`, and its row handed back
to the parent, which alone writes the results file.
"""

from __future__ import annotations

import dataclasses
import functools
import os
import pickle
import signal
import threading
import time
import traceback
from collections import deque
from collections.abc import Callable
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from pathlib import Path
from typing import Any

import numpy as np

from linestep import _validate
from linestep._descend import descend
from linestep.bench import storage
from linestep.bench._record import STORED_POINT_LIMIT, RunRecord, _history_to_json
from linestep.bench._results import Results
from linestep.bench._study import Study, _Task
from linestep.bench.problems import Problem
from linestep.bench.user import UserProblem, from_file, resolve_source

# Tracebacks longer than this are cut (keeping the end, where the error is).
ERROR_TEXT_LIMIT = 4_000
# Runs kept in flight per worker: enough to keep workers busy, few enough to
# lose little on Ctrl-C.
IN_FLIGHT_PER_WORKER = 2
# How often a pool worker checks that its parent is alive (seconds).
PARENT_POLL_SECONDS = 0.25

# --- running one task (in a worker) -------------------------------------------------------


class _Timed:
    """Wraps a callable and adds up the seconds spent in it."""

    __slots__ = ("function", "seconds")

    def __init__(self, function: Callable) -> None:
        self.function = function
        self.seconds = 0.0

    def __call__(self, x: Any) -> Any:
        started = time.perf_counter()
        try:
            return self.function(x)
        finally:
            self.seconds += time.perf_counter() - started


def _timed_objective(problem: Problem) -> tuple[Any, list[_Timed]]:
    from linestep import Objective

    fused = getattr(problem, "fused", None)
    if fused is not None:
        timer = _Timed(fused)
        return Objective(timer, fused=True), [timer]
    value, gradient = _Timed(problem.value), _Timed(problem.gradient)
    return Objective(value, gradient), [value, gradient]


def _error_text(exc: BaseException) -> str:
    text = "".join(traceback.format_exception(type(exc), exc, exc.__traceback__))
    return text if len(text) <= ERROR_TEXT_LIMIT else "…" + text[-ERROR_TEXT_LIMIT:]


def _failed_row(task: _Task, reason: str, error: str, *, seconds: float = 0.0,
                value_evaluations: int = 0, gradient_evaluations: int = 0,
                objective_seconds: float = 0.0) -> dict[str, Any]:
    return {"key": task.key, **task.header, "kind": "failed", "reason": reason,
            "value": None, "initial_value": None, "iterations": 0,
            "value_evaluations": value_evaluations,
            "gradient_evaluations": gradient_evaluations, "seconds": seconds,
            "objective_seconds": objective_seconds, "error": error, "x": None,
            "history": None}


# Worker side of a local pool: the study's problems, sent once per worker process
# (by the pool's initializer) instead of once per run. Empty in the parent.
_POOL_PROBLEMS: list[Problem] = []


def _install_problems(problems: list[Problem], parent: int) -> None:
    """A pool worker's start: receive the problems, leave Ctrl-C to the parent (which
    ends the workers itself), and exit when the parent process dies."""
    _POOL_PROBLEMS[:] = problems
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    threading.Thread(target=_watch_parent, args=(parent, os.getppid()), daemon=True,
                     name="linestep-watch-parent").start()


def _watch_parent(parent: int, spawner: int) -> None:
    """Exit at once when the parent (or the process that started this one) is gone:
    a killed parent must not leave idle workers holding its output pipe."""
    while True:
        time.sleep(PARENT_POLL_SECONDS)
        if os.getppid() != spawner or not _alive(parent):
            os._exit(1)


def _alive(pid: int) -> bool:
    if os.name == "nt":  # os.kill(pid, 0) would end the process there: trust getppid
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # alive, owned by someone else (a reused pid): treat as gone
        return False
    return True


def _problem_of(task: _Task) -> Problem:
    if task.problem is not None:
        return task.problem
    if task.slot is not None:
        return _POOL_PROBLEMS[task.slot]
    return resolve_source(task.source)


def _by_slot(tasks: list[_Task]) -> tuple[list[_Task], list[Problem]]:
    """Replace each task's problem by its index in one shared list (sent once per worker)."""
    problems: list[Problem] = []
    slots: dict[int, int] = {}
    slotted = []
    for task in tasks:
        if task.problem is None:
            slotted.append(task)
            continue
        if id(task.problem) not in slots:
            slots[id(task.problem)] = len(problems)
            problems.append(task.problem)
        slotted.append(dataclasses.replace(task, problem=None, slot=slots[id(task.problem)]))
    return slotted, problems


def execute(task: _Task) -> dict[str, Any]:
    """Run one task and return its row (runs in a worker; never raises for run errors)."""
    started = time.perf_counter()
    objective, timers = None, []
    try:
        problem = _problem_of(task)
        objective, timers = _timed_objective(problem)
        run = descend(objective, task.x0.copy(), controller=task.controller,
                      direction=task.direction, stop=task.stop)
    except Exception as exc:
        return _failed_row(
            task, f"The run raised {type(exc).__name__}: {exc}", _error_text(exc),
            seconds=time.perf_counter() - started,
            value_evaluations=getattr(objective, "values", 0),
            gradient_evaluations=getattr(objective, "gradients", 0),
            objective_seconds=sum(t.seconds for t in timers))
    seconds = time.perf_counter() - started
    value = float(run.value)
    x = np.asarray(run.x, dtype=float).reshape(-1)
    return {
        "key": task.key, **task.header, "kind": str(run.verdict.kind.value),
        "reason": run.verdict.reason, "value": value,
        "initial_value": float(run.history.value[0]),
        "iterations": int(run.iterations),
        "value_evaluations": int(run.evaluations.values),
        "gradient_evaluations": int(run.evaluations.gradients),
        "seconds": seconds, "objective_seconds": sum(t.seconds for t in timers),
        "error": None,
        "x": x.tolist() if x.size <= STORED_POINT_LIMIT else None,
        "history": _history_to_json(run.history),
    }


# --- executors ----------------------------------------------------------------------------


class _InlineExecutor:
    """Runs each task at submit time in this process (workers=1): no pickling, no pool."""

    def submit(self, function: Callable, *args: Any) -> Future:
        future: Future = Future()
        try:
            future.set_result(function(*args))
        except BaseException as exc:
            if isinstance(exc, KeyboardInterrupt):
                raise
            future.set_exception(exc)
        return future

    def shutdown(self, wait: bool = True, *, cancel_futures: bool = False) -> None:
        pass


def _picklable(thing: Any) -> str | None:
    """None when `thing` pickles, else the error text."""
    try:
        pickle.dumps(thing)
    except Exception as exc:
        return f"{type(exc).__name__}: {exc}"
    return None


def _shipping_trouble(problem: Problem) -> str | None:
    """Why `problem` cannot travel to another process as it is; None when it can."""
    if isinstance(problem, UserProblem) and problem.source is not None \
            and from_file(problem.source):
        # its functions pickle by reference to a module other processes cannot import
        return "its module was loaded from a file path"
    return _picklable(problem)


def _prepare_for_processes(tasks: list[_Task], *, strict: bool) -> list[_Task]:
    """Ship user problems by spec when they cannot travel as they are; check everything
    else pickles."""
    verdicts: dict[int, str | None] = {}
    prepared = []
    for task in tasks:
        problem = task.problem
        if id(problem) not in verdicts:
            verdicts[id(problem)] = _shipping_trouble(problem)
        trouble = verdicts[id(problem)]
        if trouble is not None:
            source = problem.source if isinstance(problem, UserProblem) else None
            if source is not None:
                task = dataclasses.replace(task, problem=None, source=source)
            elif strict:
                raise ValueError(
                    f"Problem {problem.name!r} cannot be sent to worker processes ({trouble}). "
                    "Define its functions at module level, load it from a "
                    "'module:function' spec, or run with workers=1."
                )
        for part, what in ((task.controller, "controller"), (task.direction, "direction"),
                           (task.stop, "stopping rule")):
            if strict and id(part) not in verdicts:
                verdicts[id(part)] = _picklable(part)
                if verdicts[id(part)] is not None:
                    raise ValueError(
                        f"The {what} {part!r} cannot be sent to worker processes "
                        f"({verdicts[id(part)]}). Use module-level functions in it, or run "
                        "with workers=1."
                    )
        prepared.append(task)
    return prepared


# --- running a study ----------------------------------------------------------------------


def run_study(study: Study, out: str | Path | None = None, *, workers: int | None = None,
              executor: Any = None, scheduler: Any = None,
              progress: Callable[[int, int, RunRecord], Any] | None = None,
              announce: Callable[[int, int], Any] | None = None) -> Results:
    """Run every run of `study` not yet in `out`'s results file; return the study's results.

    Parameters
    ----------
    study : Study
    out : path, optional
        Folder of the results file ``results.sqlite`` (created if needed). Runs
        already there (same run key) are skipped, not repeated. None keeps the
        results in memory only.
    workers : int, optional
        Size of the local process pool; default ``os.cpu_count()``. ``workers=1``
        runs in this process, without a pool (no pickling; a crashing objective
        then takes the study down with it).
    executor : concurrent.futures.Executor-like, optional
        Where to run instead of a new pool: anything with ``submit(fn, *args)``
        returning a future. It is not shut down here.
    scheduler : str or dask.distributed.Client, optional
        A Dask scheduler address (or a connected client): runs go to that cluster
        (needs ``pip install "linestep[dask]"``).
    progress : callable, optional
        ``progress(done, total, record)`` after each run finishes (runs found
        already finished count as done from the start).
    announce : callable, optional
        ``announce(total, already)`` once the stored runs are read, before any run
        starts (``already``: runs of the study found finished in `out`).

    Returns
    -------
    Results
        Every run of the study, in study order, including those found in `out`.

    Raises
    ------
    linestep.bench.storage.ResultsFileError
        `out` cannot be used: not a folder we may write, a results file that is not
        ours, has another schema or is damaged beyond single rows. Damaged single
        rows are skipped (listed in `Results.damaged`) and their runs run again.
    linestep.bench._identity.UnidentifiableError
        A controller, direction or stopping rule cannot be identified by content.
    ValueError
        Two runs of the study are the same computation (before any run starts).
    KeyboardInterrupt
        Propagated after the pool's worker processes are ended; every finished run
        is already in `out`.

    Notes
    -----
    Building the runs' identities evaluates f and ∇f once at each starting point in
    this process (the problem's fingerprint): an objective that kills the
    interpreter at its start takes this process with it, and a stochastic objective
    (another f(x0) at each call) gets a new fingerprint each time, so its runs are
    run again and the older rows marked superseded (seed its generator to resume
    such a study). Pool workers ignore
    Ctrl-C (this process ends them) and exit by themselves when this process dies.
    """
    tasks = study.tasks()
    store = storage.ResultStore.in_folder(out) if out is not None else None
    damaged: list[str] = []
    try:
        finished = {row["key"]: RunRecord.from_row(row)
                    for row in store.rows({t.key for t in tasks})} if store else {}
        if store is not None:
            damaged += store.damaged
        pending = [t for t in tasks if t.key not in finished]
        done = len(finished)
        if announce is not None:
            announce(len(tasks), done)

        def accept(row: dict[str, Any]) -> None:
            nonlocal done
            if store is not None:
                store.write(row)
            record = RunRecord.from_row(row)
            finished[record.key] = record
            done += 1
            if progress is not None:
                progress(done, len(tasks), record)

        if pending:
            _dispatch(pending, accept, workers=workers, executor=executor, scheduler=scheduler)
    finally:
        if store is not None:
            store.close()
    return Results([finished[t.key] for t in tasks if t.key in finished],
                   solve_rtol=study.solve_rtol, damaged=damaged)


def _dispatch(tasks: list[_Task], accept: Callable[[dict[str, Any]], None], *,
              workers: int | None, executor: Any, scheduler: Any) -> None:
    if scheduler is not None and executor is not None:
        raise ValueError("Give `executor` or `scheduler`, not both.")
    workers = (os.cpu_count() or 1) if workers is None else _validate.integer("workers", workers)
    if scheduler is not None:
        client, close_client = _dask_client(scheduler)
        try:
            _drain(_prepare_for_processes(tasks, strict=False), accept, client.get_executor(),
                   None, IN_FLIGHT_PER_WORKER * _dask_workers(client))
        finally:
            if close_client:
                client.close()
    elif executor is not None:  # not ours: what cannot travel to it fails per run
        _drain(_prepare_for_processes(tasks, strict=False), accept, executor, None,
               IN_FLIGHT_PER_WORKER * workers)
    elif workers == 1:
        _drain(tasks, accept, None, _InlineExecutor, IN_FLIGHT_PER_WORKER)
    else:
        tasks, problems = _by_slot(_prepare_for_processes(tasks, strict=True))
        make = functools.partial(ProcessPoolExecutor, max_workers=workers,
                                 initializer=_install_problems, initargs=(problems, os.getpid()))
        _drain(tasks, accept, None, make, IN_FLIGHT_PER_WORKER * workers)


def _drain(tasks: list[_Task], accept: Callable[[dict[str, Any]], None], executor: Any,
           make: Callable[[], Any] | None, limit: int) -> None:
    """Keep up to `limit` tasks in flight; isolate and retry tasks that broke a pool.

    Runs on the `executor` given, or, when that is None, on a pool built with
    `make`: that pool is ours, rebuilt when a worker dies and shut down at the end.
    """
    if executor is None:
        executor = make()
    queue: deque[_Task] = deque(tasks)
    suspects: deque[_Task] = deque()  # tasks in flight when a worker died
    in_flight: dict[Future, tuple[_Task, bool]] = {}
    broken = False
    try:
        while queue or suspects or in_flight:
            if broken and not in_flight:  # every task of the dead pool is back
                if make is None:
                    raise RuntimeError(
                        "The executor passed to run_study is broken (a worker process died). "
                        "Finished runs are saved; pass a fresh executor to resume the study."
                    )
                executor.shutdown(wait=False, cancel_futures=True)
                executor, broken = make(), False
            if not broken:
                if suspects and not in_flight:
                    task = suspects.popleft()  # alone, so a second death is its own
                    in_flight[executor.submit(execute, task)] = (task, True)
                while not suspects and queue and len(in_flight) < limit:
                    task = queue.popleft()
                    in_flight[executor.submit(execute, task)] = (task, False)
            finished, _ = wait(list(in_flight), return_when=FIRST_COMPLETED)
            for future in [f for f in in_flight if f in finished]:  # in submission order
                task, isolated = in_flight.pop(future)
                if _settle(future, task, isolated, accept):
                    broken = True
                    if not isolated:
                        suspects.append(task)
    except BaseException:
        if make is not None:
            _end_pool(executor)
        raise
    if make is not None:
        executor.shutdown(wait=False, cancel_futures=True)


def _end_pool(executor: Any) -> None:
    """Stop our pool at once (Ctrl-C or an error): cancel what waits, kill the workers,
    with further Ctrl-C's held off so that the cleanup itself is not cut short."""
    main = threading.current_thread() is threading.main_thread()
    previous = signal.signal(signal.SIGINT, signal.SIG_IGN) if main else None
    try:
        processes = list((getattr(executor, "_processes", None) or {}).values())
        executor.shutdown(wait=False, cancel_futures=True)
        for process in processes:
            try:
                process.kill()
            except (OSError, ValueError, AttributeError):
                pass  # already gone
        for process in processes:
            try:
                process.join(timeout=1.0)
            except (OSError, ValueError, AssertionError, AttributeError):
                pass
    finally:
        if main:
            signal.signal(signal.SIGINT, previous)


def _settle(future: Future, task: _Task, isolated: bool,
            accept: Callable[[dict[str, Any]], None]) -> bool:
    """Pass a finished task's row to `accept`; True when a worker process died instead.

    A dead worker breaks the whole pool and every task in flight with it, so only
    an `isolated` task (one that ran alone) is recorded as failed; `_drain`
    retries the others one at a time.
    """
    try:
        row = future.result()
    except BrokenProcessPool as exc:
        if isolated:
            accept(_failed_row(
                task, "The worker process running this run died "
                f"({exc or 'no detail'}); the objective may have crashed the "
                "interpreter or run out of memory.", _error_text(exc)))
        return True
    except Exception as exc:  # the executor could not run it (pickling, cluster)
        row = _failed_row(task, f"The executor could not run this run: "
                                f"{type(exc).__name__}: {exc}", _error_text(exc))
    accept(row)
    return False


def _dask_client(scheduler: Any) -> tuple[Any, bool]:
    """A Dask client for `scheduler` (an address or a client), and whether to close it."""
    try:
        from dask.distributed import Client
    except ImportError as exc:
        raise ImportError(
            'Running on a Dask cluster needs dask.distributed: pip install "linestep[dask]".'
        ) from exc
    if isinstance(scheduler, Client):
        return scheduler, False
    return Client(scheduler), True


def _dask_workers(client: Any) -> int:
    """Threads across the cluster's workers (at least 1; the CPU count if unknown)."""
    try:
        return max(1, sum(client.nthreads().values()))
    except Exception:  # noqa: BLE001 - any failure to ask: fall back to a local guess
        return os.cpu_count() or 1
