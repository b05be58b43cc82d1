"""The results file of a benchmark study: one SQLite database, one row per finished run.

`run_study` writes each run the moment it finishes, in its own transaction, so a
study that is interrupted (Ctrl-C, a crash, a lost connection to a cluster) keeps
every run that finished; running the same study again skips the runs whose key
is already in the file and runs only the rest. Only the parent process writes:
workers return their results and never open the file.

Layout (schema version `SCHEMA_VERSION`):

``metadata(name TEXT PRIMARY KEY, value TEXT)``
    ``format`` = ``"linestep-bench-results"``, ``schema_version``, ``created``
    (UTC, ISO 8601) and ``linestep_version`` (the version that created the file).
``runs``
    One row per finished run, keyed by the run key (see `run_key`), with one
    column per scalar field of `linestep.bench.RunRecord`; the final point ``x``
    and the per-iteration ``history`` are JSON text (``history`` is an object of
    equal-length arrays named as the fields of `linestep.History`: value,
    gradient_norm, size, values and gradients (cumulative evaluation counts),
    restarted, status; non-finite numbers are written
    as JSON's ``NaN``/``Infinity`` extensions, which Python's `json` reads back).
    ``sequence`` numbers the rows in the order they were written.

A file whose ``format`` or ``schema_version`` differs, or that is not an SQLite
database at all, raises `ResultsFileError` when opened, and is never changed.

Examples
--------
>>> import tempfile, pathlib
>>> from linestep.bench.storage import ResultStore
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> with ResultStore(folder / "results.sqlite") as store:
...     len(store), store.schema_version
(0, 1)
"""

from __future__ import annotations

import datetime
import hashlib
import json
import math
import sqlite3
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

__all__ = ["COLUMNS", "SCHEMA_VERSION", "ResultStore", "ResultsFileError", "run_key"]

# Bump when the columns or their meaning change; older files are then refused.
SCHEMA_VERSION = 1
# Marks the file as ours, so a foreign SQLite file is never mistaken for results.
FORMAT = "linestep-bench-results"
# The file's name inside a study's output folder.
FILE_NAME = "results.sqlite"

# Column name -> SQLite type, in record order; "x" and "history" hold JSON text.
COLUMNS: dict[str, str] = {
    "key": "TEXT PRIMARY KEY",
    "problem": "TEXT NOT NULL",
    "dimension": "INTEGER NOT NULL",
    "controller": "TEXT NOT NULL",
    "controller_repr": "TEXT NOT NULL",
    "direction": "TEXT NOT NULL",
    "start": "TEXT NOT NULL",
    "seed": "INTEGER",
    "stop": "TEXT NOT NULL",
    "kind": "TEXT NOT NULL",
    "reason": "TEXT NOT NULL",
    "value": "REAL",
    "initial_value": "REAL",
    "optimum": "REAL",
    "gap": "REAL",
    "solved": "INTEGER",
    "iterations": "INTEGER NOT NULL",
    "value_evaluations": "INTEGER NOT NULL",
    "gradient_evaluations": "INTEGER NOT NULL",
    "seconds": "REAL NOT NULL",
    "objective_seconds": "REAL NOT NULL",
    "error": "TEXT",
    "x": "TEXT",
    "history": "TEXT",
}
_JSON_COLUMNS = ("x", "history")


class ResultsFileError(RuntimeError):
    """The results file cannot be used: not ours, or written with another schema."""


def run_key(*, problem: str, dimension: int, controller_repr: str, direction: str,
            start: str, seed: int | None, stop: str) -> str:
    """The identity of a run: a SHA-256 hex digest of what determines it.

    Two runs with the same key would repeat the same computation, so a study
    that finds the key in its results file skips the run.

    Examples
    --------
    >>> from linestep.bench.storage import run_key
    >>> key = run_key(problem="rosenbrock", dimension=2, controller_repr="Fixed(size=0.1)",
    ...               direction="SteepestDescent()", start="standard", seed=None,
    ...               stop="MaxIterations(10)")
    >>> len(key)
    64
    """
    identity = [problem, int(dimension), controller_repr, direction, start,
                None if seed is None else int(seed), stop]
    return hashlib.sha256(json.dumps(identity).encode("utf-8")).hexdigest()


class ResultStore:
    """An open results file (created with the current schema if it does not exist).

    Parameters
    ----------
    path : str or Path
        The SQLite file; a folder means ``folder / "results.sqlite"``.
    read_only : bool
        Open without writing anything (`linestep report`); the file must exist.

    Raises
    ------
    ResultsFileError
        The file is not an SQLite database, was not written by linestep's harness,
        or has another schema version. The file is left as it was.
    FileNotFoundError
        `read_only` and the file does not exist.
    """

    def __init__(self, path: str | Path, *, read_only: bool = False) -> None:
        path = Path(path)
        if path.is_dir():
            path = path / FILE_NAME
        self.path = path
        self.read_only = read_only
        if read_only:
            if not path.exists():
                raise FileNotFoundError(
                    f"No results file at {str(path)!r}. Run `linestep bench --out "
                    f"{str(path.parent)!r}` first, or name the folder that holds "
                    f"{FILE_NAME}."
                )
            self._connection = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True)
        else:
            path.parent.mkdir(parents=True, exist_ok=True)
            self._connection = sqlite3.connect(path)
        try:
            self.schema_version = self._check_or_create()
        except BaseException:
            self._connection.close()
            raise
        if not read_only:
            # Rollback journal (one file, fine on network drives) without FULL's extra
            # sync: each commit survives a crash or kill of the process.
            self._connection.execute("PRAGMA synchronous = NORMAL")

    # -- opening ------------------------------------------------------------------
    def _refuse(self, why: str) -> ResultsFileError:
        return ResultsFileError(
            f"{str(self.path)!r} {why} It was left unchanged. Choose another output "
            f"folder (`--out` / `out=`), or move the file away to start afresh."
        )

    def _check_or_create(self) -> int:
        try:
            tables = {row[0] for row in self._connection.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table'")}
        except sqlite3.DatabaseError as exc:
            raise self._refuse(f"is not a linestep results file (SQLite says: {exc}).") from None
        if not tables:
            if self.read_only:
                raise self._refuse("is an empty database, not a linestep results file.")
            self._create()
            return SCHEMA_VERSION
        if "metadata" not in tables:
            raise self._refuse("is an SQLite database that linestep's harness did not write.")
        metadata = self.metadata()
        if metadata.get("format") != FORMAT:
            raise self._refuse("is an SQLite database that linestep's harness did not write.")
        try:
            version = int(metadata.get("schema_version", ""))
        except ValueError:
            raise self._refuse("has no readable schema version.") from None
        if version != SCHEMA_VERSION:
            raise self._refuse(
                f"holds results in schema version {version}; this linestep reads and "
                f"writes version {SCHEMA_VERSION}. Read it with the linestep version that "
                f"wrote it ({metadata.get('linestep_version', 'unknown')})."
            )
        if "runs" not in tables:
            raise self._refuse("has no `runs` table.")
        return version

    def _create(self) -> None:
        from linestep import __version__

        created = datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")
        columns = ", ".join(f"{name} {kind}" for name, kind in COLUMNS.items())
        with self._connection:
            self._connection.execute(
                "CREATE TABLE metadata (name TEXT PRIMARY KEY, value TEXT NOT NULL)")
            self._connection.executemany(
                "INSERT INTO metadata (name, value) VALUES (?, ?)",
                [("format", FORMAT), ("schema_version", str(SCHEMA_VERSION)),
                 ("created", created), ("linestep_version", __version__)])
            self._connection.execute(
                f"CREATE TABLE runs (sequence INTEGER NOT NULL, {columns})")

    # -- use ----------------------------------------------------------------------
    def metadata(self) -> dict[str, str]:
        """The metadata table as a dict."""
        return dict(self._connection.execute("SELECT name, value FROM metadata"))

    def keys(self) -> set[str]:
        """Keys of the runs already in the file."""
        return {row[0] for row in self._connection.execute("SELECT key FROM runs")}

    def __len__(self) -> int:
        return self._connection.execute("SELECT COUNT(*) FROM runs").fetchone()[0]

    def write(self, row: Mapping[str, Any]) -> bool:
        """Store one run and commit at once. Returns False if its key was already there.

        `row` maps every name in `COLUMNS` to a value; ``x`` and ``history`` may be
        given as lists/dicts (stored as JSON) or None.
        """
        if self.read_only:
            raise ResultsFileError(f"{str(self.path)!r} was opened read-only.")
        missing = [name for name in COLUMNS if name not in row]
        if missing:
            raise ValueError(f"`row` lacks the columns {missing}.")
        values = [_to_sql(name, row[name]) for name in COLUMNS]
        with self._connection:  # one transaction per run: committed when this block ends
            # Rows are appended, so the last row holds the largest sequence number: a
            # lookup by rowid, where MAX(sequence) would scan the whole table per run.
            last = self._connection.execute(
                "SELECT sequence FROM runs ORDER BY rowid DESC LIMIT 1").fetchone()
            sequence = 1 if last is None else last[0] + 1
            cursor = self._connection.execute(
                f"INSERT OR IGNORE INTO runs (sequence, {', '.join(COLUMNS)}) "
                f"VALUES (?, {', '.join('?' for _ in COLUMNS)})", [sequence, *values])
        return cursor.rowcount == 1

    def rows(self, keys: set[str] | None = None) -> Iterator[dict[str, Any]]:
        """The stored runs as dicts (JSON columns decoded), in the order written."""
        cursor = self._connection.execute(
            f"SELECT {', '.join(COLUMNS)} FROM runs ORDER BY sequence")
        for values in cursor:
            row = dict(zip(COLUMNS, values, strict=True))
            if keys is not None and row["key"] not in keys:
                continue
            for name in _JSON_COLUMNS:
                if row[name] is not None:
                    row[name] = json.loads(row[name])
            if row["solved"] is not None:
                row["solved"] = bool(row["solved"])
            yield row

    def close(self) -> None:
        self._connection.close()

    def __enter__(self) -> ResultStore:
        return self

    def __exit__(self, *exc_info: Any) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"ResultStore({str(self.path)!r})"


def _to_sql(name: str, value: Any) -> Any:
    if name in _JSON_COLUMNS:
        return None if value is None else json.dumps(value)
    if name == "solved" and value is not None:
        return int(bool(value))
    if isinstance(value, float) and math.isnan(value):
        return None  # SQLite stores NaN as NULL anyway; say so explicitly
    return value
