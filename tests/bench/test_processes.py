"""Real processes: concurrent writers on one results folder (issue 10 item 3), Ctrl-C and a
killed parent (item 4).

Each test starts `python -m linestep bench` as a separate process on an invented,
deliberately slow bowl objective. Waits below are hang detectors, not speed
limits (the two-second figure is measured by benchmarks/hostile_studies.py).
"""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

import linestep

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals and /proc")

SOURCE = Path(linestep.__file__).resolve().parents[1]
# Seconds to wait before calling a process hung (far above what a healthy run takes).
HANG = 30.0
# Problems in the studies that are interrupted: enough (at 0.02 s per value, several values
# a run) that the study is still running when the signal comes, even on a loaded machine.
STUDY_LENGTH = 60

OBJECTIVE = """
import os, time
import numpy as np

PIDS = os.path.join(os.path.dirname(os.path.abspath(__file__)), "pids")
DELAY = {delay!r}


def _mark():
    path = os.path.join(PIDS, str(os.getpid()))
    if not os.path.exists(path):
        open(path, "w").close()


def value(x):
    _mark()
    time.sleep(DELAY)
    return float(x @ x)


def gradient(x):
    return 2 * x


def make():
    return [{{"name": f"bowl{{i}}", "value": value, "gradient": gradient,
              "start": [3.0 + i, -4.0], "optimal_value": 0.0}} for i in range({count})]
"""


def _folder(tmp_path: Path, *, delay: float, count: int) -> Path:
    (tmp_path / "pids").mkdir()
    (tmp_path / "slow_bowl.py").write_text(textwrap.dedent(
        OBJECTIVE.format(delay=delay, count=count)))
    return tmp_path


def _bench(folder: Path, *arguments: str, **options) -> subprocess.Popen:
    environment = {**os.environ, "PYTHONPATH": os.pathsep.join(
        [str(SOURCE), str(folder), os.environ.get("PYTHONPATH", "")])}
    return subprocess.Popen(
        [sys.executable, "-m", "linestep", "bench", "--objective", "slow_bowl:make",
         "--directions", "steepest", "--no-report", "--quiet", *arguments],
        cwd=folder, env=environment, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
        **options)


def _interruptible() -> None:
    """In the child: SIGINT at its default, as under a terminal.

    A shell starts background jobs with SIGINT ignored, and an ignored signal stays
    ignored across exec, so a suite run with `&` would otherwise test a command that
    cannot be interrupted at all.
    """
    signal.signal(signal.SIGINT, signal.SIG_DFL)


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat") as handle:
            state = handle.read().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state not in ("Z", "X")  # a zombie has exited


def _worker_pids(folder: Path, parent: int) -> set[int]:
    return {int(p.name) for p in (folder / "pids").iterdir()} - {parent}


def _wait_for_workers(folder: Path, process: subprocess.Popen, count: int) -> set[int]:
    deadline = time.monotonic() + HANG
    while time.monotonic() < deadline:
        pids = _worker_pids(folder, process.pid)
        if len(pids) >= count:
            return pids
        assert process.poll() is None, process.communicate()
        time.sleep(0.05)
    raise AssertionError("the workers never started")


def _gone(pids: set[int]) -> set[int]:
    """The pids still alive after waiting up to HANG seconds (empty when all ended)."""
    deadline = time.monotonic() + HANG
    while time.monotonic() < deadline:
        alive = {pid for pid in pids if _alive(pid)}
        if not alive:
            return set()
        time.sleep(0.05)
    return alive


# --- item 3: concurrent writers -----------------------------------------------------------


def test_two_writers_on_one_folder_store_each_run_once_with_unique_sequence(
        tmp_path: Path) -> None:
    folder = _folder(tmp_path, delay=0.0, count=6)
    arguments = ("--controllers", "armijo,wolfe,fixed:0.1,fixed:0.2", "--workers", "1",
                 "--out", "shared")
    writers = [_bench(folder, *arguments) for _ in range(2)]
    for writer in writers:
        _, error = writer.communicate(timeout=HANG * 4)
        assert writer.returncode == 0, error.decode()
    with sqlite3.connect(folder / "shared" / "results.sqlite") as connection:
        rows = connection.execute("SELECT key, sequence FROM runs").fetchall()
    assert len(rows) == 6 * 4  # each run once, however the two writers interleaved
    assert len({key for key, _ in rows}) == len(rows)
    assert sorted(sequence for _, sequence in rows) == list(range(1, len(rows) + 1))


def test_four_processes_opening_one_fresh_folder_all_succeed(tmp_path: Path) -> None:
    folder = _folder(tmp_path, delay=0.0, count=1)
    writers = [_bench(folder, "--controllers", "armijo", "--workers", "1", "--out", "fresh")
               for _ in range(4)]
    for writer in writers:
        _, error = writer.communicate(timeout=HANG * 4)
        assert writer.returncode == 0, error.decode()
    with sqlite3.connect(folder / "fresh" / "results.sqlite") as connection:
        assert connection.execute("SELECT COUNT(*) FROM runs").fetchone()[0] == 1


def test_a_half_made_results_file_is_rebuilt_not_refused(tmp_path: Path) -> None:
    folder = _folder(tmp_path, delay=0.0, count=1)
    (folder / "half").mkdir()
    # What an interrupted creation by an older linestep left: metadata table, no rows in
    # it, no runs table.
    with sqlite3.connect(folder / "half" / "results.sqlite") as connection:
        connection.execute("CREATE TABLE metadata (name TEXT PRIMARY KEY, value TEXT NOT NULL)")
    writer = _bench(folder, "--controllers", "armijo", "--workers", "1", "--out", "half")
    _, error = writer.communicate(timeout=HANG * 4)
    assert writer.returncode == 0, error.decode()


# --- item 4: Ctrl-C and a killed parent ---------------------------------------------------


def test_ctrl_c_twice_ends_the_command_and_every_worker(tmp_path: Path) -> None:
    folder = _folder(tmp_path, delay=0.02, count=STUDY_LENGTH)
    process = _bench(folder, "--controllers", "armijo,wolfe", "--workers", "2",
                     "--max-iterations", "100000", "--out", "out", start_new_session=True,
                     preexec_fn=_interruptible)
    workers = _wait_for_workers(folder, process, 2)
    os.killpg(process.pid, signal.SIGINT)  # what a terminal sends: the whole group
    time.sleep(0.1)
    os.killpg(process.pid, signal.SIGINT)
    _, error = process.communicate(timeout=HANG)
    assert process.returncode == 130, error.decode()
    assert b"Traceback" not in error
    assert _gone(workers) == set()
    assert (folder / "out" / "results.sqlite").exists()


def test_workers_exit_by_themselves_when_the_parent_is_killed(tmp_path: Path) -> None:
    folder = _folder(tmp_path, delay=0.02, count=STUDY_LENGTH)
    process = _bench(folder, "--controllers", "armijo,wolfe", "--workers", "2",
                     "--max-iterations", "100000", "--out", "out", start_new_session=True)
    workers = _wait_for_workers(folder, process, 2)
    process.kill()
    # The output pipe reaches end-of-file: no worker holds it open (a `| tee` ends).
    process.communicate(timeout=HANG)
    assert _gone(workers) == set()
