"""The results file of a benchmark study: one SQLite database, one row per finished run.

`run_study` writes each run the moment it finishes, in its own transaction, so a
study that is interrupted (Ctrl-C, a crash, a lost connection to a cluster) keeps
every run that finished; running the same study again skips the runs whose key
is already in the file and runs only the rest. Only parent processes write:
workers return their results and never open the file. Several `linestep bench`
processes may write one file at once: every write takes SQLite's write lock
first (``BEGIN IMMEDIATE``), so row sequence numbers are unique and in write
order, and a new file's tables are created in one transaction.

Layout (schema version `SCHEMA_VERSION`):

``metadata(name TEXT PRIMARY KEY, value TEXT)``
    ``format`` = ``"linestep-bench-results"``, ``schema_version``, ``created``
    (UTC, ISO 8601) and ``linestep_version`` (the version that created the file).
``runs``
    One row per finished run, keyed by the run key (a digest of the run's content:
    see `linestep.bench._identity`), with one column per stored field of
    `linestep.bench.RunRecord`. ``slot`` identifies the configuration on a named
    problem instance and ``problem_fingerprint`` the problem's data; when a run is
    stored for a slot whose older rows have another fingerprint (the problem
    changed), those rows are kept and marked with ``superseded_by`` (the new key).
    Only raw data are stored: the optimum, gap and solved flag are derived when
    read (from ``value``, ``optimal_values`` and ``solve_rtol``). ``x``,
    ``optimal_values`` and ``history`` are JSON text (``history`` is an object of
    equal-length arrays named as the fields of `linestep.History`; non-finite
    numbers are written as JSON's ``NaN``/``Infinity`` extensions).
    ``sequence`` numbers the rows in the order they were written (unique).

A file whose ``format`` or ``schema_version`` differs, or that is not an SQLite
database at all, raises `ResultsFileError` when opened, and is never changed. A
file left half-made by a crash while it was being created (our tables partly
there, no runs) is finished or rebuilt. A damaged row (text that is not UTF-8,
cut-off JSON, a missing required value) is skipped with a note in `damaged`; a
run stored in it is run again on resume and replaces it.

Examples
--------
>>> import tempfile, pathlib
>>> from linestep.bench.storage import ResultStore
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> with ResultStore(folder / "results.sqlite") as store:
...     len(store), store.schema_version
(0, 2)
"""

from __future__ import annotations

import datetime
import json
import math
import sqlite3
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

__all__ = ["COLUMNS", "SCHEMA_VERSION", "ResultStore", "ResultsFileError"]

# Bump when the columns or their meaning change; older files are then refused.
SCHEMA_VERSION = 2
# Marks the file as ours, so a foreign SQLite file is never mistaken for results.
FORMAT = "linestep-bench-results"
# The file's name inside a study's output folder.
FILE_NAME = "results.sqlite"
# Seconds a writer waits for another process's write lock before giving up.
LOCK_TIMEOUT = 60.0

# Column name -> SQLite type, in record order; the JSON columns hold JSON text.
COLUMNS: dict[str, str] = {
    "key": "TEXT PRIMARY KEY",
    "slot": "TEXT NOT NULL",
    "problem_fingerprint": "TEXT NOT NULL",
    "controller_id": "TEXT NOT NULL",
    "direction_id": "TEXT NOT NULL",
    "stop_id": "TEXT NOT NULL",
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
    "optimal_values": "TEXT NOT NULL",
    "solve_rtol": "REAL NOT NULL",
    "iterations": "INTEGER NOT NULL",
    "value_evaluations": "INTEGER NOT NULL",
    "gradient_evaluations": "INTEGER NOT NULL",
    "seconds": "REAL NOT NULL",
    "objective_seconds": "REAL NOT NULL",
    "error": "TEXT",
    "x": "TEXT",
    "history": "TEXT",
}
_JSON_COLUMNS = ("optimal_values", "x", "history")
_REQUIRED = tuple(name for name, kind in COLUMNS.items() if "NOT NULL" in kind or "KEY" in kind)
_KINDS = ("converged", "budget", "failed")
_HISTORY_FIELDS = ("value", "gradient_norm", "size", "values", "gradients", "restarted",
                   "status")


class ResultsFileError(RuntimeError):
    """The results file cannot be used: not ours, another schema, damaged or unreachable."""


class ResultStore:
    """An open results file (created with the current schema if it does not exist).

    Parameters
    ----------
    path : str or Path
        The SQLite file; an existing folder means ``folder / "results.sqlite"``
        (`ResultStore.in_folder` always means the folder, existing or not).
    read_only : bool
        Open without writing anything (`linestep report`); the file must exist.

    Attributes
    ----------
    damaged : list of str
        One sentence per damaged row met by `rows` (file, row and what is wrong).

    Raises
    ------
    ResultsFileError
        The file is not an SQLite database, was not written by linestep's harness,
        has another schema version, is damaged, or cannot be opened (a folder
        without write permission, a path through a file). The file is left as it was.
    FileNotFoundError
        `read_only` and the file does not exist.
    """

    @classmethod
    def in_folder(cls, folder: str | Path, *, read_only: bool = False) -> ResultStore:
        """The results file of the study folder `folder` (created if needed)."""
        return cls(Path(folder) / FILE_NAME, read_only=read_only, _exact=True)

    def __init__(self, path: str | Path, *, read_only: bool = False,
                 _exact: bool = False) -> None:
        path = Path(path)
        if path.is_dir() and not _exact:
            path = path / FILE_NAME
        self.path = path
        self.read_only = read_only
        self.damaged: list[str] = []
        self._damaged_keys: set[str] = set()
        if read_only:
            if not path.exists():
                # A missing folder was most likely meant as the study's folder.
                folder = path.parent if path.suffix == ".sqlite" else path
                raise FileNotFoundError(
                    f"No results file at {str(path)!r}. Run `linestep bench --out "
                    f"{folder}` first, or name the folder that holds {FILE_NAME}."
                )
            uri = f"{path.resolve().as_uri()}?mode=ro"
            self._connection = self._connect(uri, uri=True)
        else:
            try:
                path.parent.mkdir(parents=True, exist_ok=True)
            except (FileExistsError, NotADirectoryError):
                raise ResultsFileError(
                    f"Cannot create the results folder {str(path.parent)!r}: a file of that "
                    "name is in the way. Choose another output folder (`--out` / `out=`)."
                ) from None
            except OSError as exc:
                raise ResultsFileError(
                    f"Cannot create the results folder {str(path.parent)!r} "
                    f"({exc.strerror or exc}). Choose another output folder "
                    "(`--out` / `out=`)."
                ) from None
            if path.exists() and not path.is_file():
                raise ResultsFileError(
                    f"{str(path)!r} is not a file. Choose another output folder "
                    "(`--out` / `out=`)."
                )
            self._connection = self._connect(str(path))
        try:
            self.schema_version = self._check_or_create()
        except BaseException:
            self._connection.close()
            raise
        if not read_only:
            # Rollback journal (one file, fine on network drives) without FULL's extra
            # sync: each commit survives a crash or kill of the process.
            self._connection.execute("PRAGMA synchronous = NORMAL")

    def _connect(self, target: str, *, uri: bool = False) -> sqlite3.Connection:
        try:
            # isolation_level=None: transactions are begun here explicitly (BEGIN
            # IMMEDIATE takes the write lock first, so concurrent writers queue).
            connection = sqlite3.connect(target, uri=uri, timeout=LOCK_TIMEOUT,
                                         isolation_level=None)
        except sqlite3.Error as exc:
            raise self._unreachable(exc) from None
        connection.text_factory = bytes  # decoded per row: one bad row must not stop all
        return connection

    def _unreachable(self, exc: BaseException) -> ResultsFileError:
        where = self.path.parent
        return ResultsFileError(
            f"Cannot open the results file {str(self.path)!r} ({exc}). Check that the "
            f"folder {str(where)!r} exists and that you may write to it, or choose "
            "another output folder (`--out` / `out=`)."
        )

    # -- opening ------------------------------------------------------------------
    def _refuse(self, why: str) -> ResultsFileError:
        return ResultsFileError(
            f"{str(self.path)!r} {why} It was left unchanged. Choose another output "
            f"folder (`--out` / `out=`), or move the file away to start afresh."
        )

    def _damaged_file(self, exc: BaseException) -> ResultsFileError:
        return ResultsFileError(
            f"The results file {str(self.path)!r} is damaged and cannot be read "
            f"(SQLite says: {exc}). Move it away (runs in it are lost unless an SQLite "
            "recovery tool can save them) and run the study again."
        )

    def _check_or_create(self) -> int:
        try:
            if not self.read_only:
                self._connection.execute("BEGIN IMMEDIATE")  # creation is one transaction
            try:
                version = self._check_or_create_locked()
            except BaseException:
                if self._connection.in_transaction:
                    self._connection.execute("ROLLBACK")
                raise
            if self._connection.in_transaction:
                self._connection.execute("COMMIT")
            return version
        except sqlite3.OperationalError as exc:
            if "locked" in str(exc) or "unable to open" in str(exc) or "readonly" in str(exc):
                raise self._unreachable(exc) from None
            raise self._damaged_file(exc) from None
        except sqlite3.DatabaseError as exc:
            raise self._refuse(f"is not a linestep results file (SQLite says: {exc}).") from None

    def _check_or_create_locked(self) -> int:
        tables = {_text(row[0]) for row in self._connection.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table'")}
        if not tables:
            if self.read_only:
                raise self._refuse("is an empty database, not a linestep results file.")
            self._create(tables)
            return SCHEMA_VERSION
        if "metadata" not in tables:
            raise self._refuse("is an SQLite database that linestep's harness did not write.")
        metadata = self.metadata()
        if metadata.get("format") != FORMAT or "schema_version" not in metadata:
            if self._half_made(tables, metadata):
                if self.read_only:
                    raise self._refuse("was left half-made (its creation was interrupted); "
                                       "run `linestep bench` on it to rebuild it.")
                self._create(tables)
                return SCHEMA_VERSION
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
            if self.read_only:
                raise self._refuse("has no `runs` table (its creation was interrupted); "
                                   "run `linestep bench` on it to finish it.")
            self._create_runs()
            return version
        present = {_text(row[1]) for row in self._connection.execute("PRAGMA table_info(runs)")}
        missing = [name for name in ("sequence", "superseded_by", *COLUMNS)
                   if name not in present]
        if missing:
            raise self._refuse(f"has a `runs` table without the column(s) {missing}, so it "
                               "was damaged or changed by another program.")
        return version

    def _half_made(self, tables: set[str], metadata: dict[str, str]) -> bool:
        """Only our tables, no runs, and metadata without our format: an interrupted
        creation (by a linestep before this one), safe to rebuild."""
        if not tables <= {"metadata", "runs"}:
            return False
        if metadata and metadata.get("format") not in (None, FORMAT):
            return False
        if "runs" in tables:
            return self._connection.execute("SELECT COUNT(*) FROM runs").fetchone()[0] == 0
        return True

    def _create(self, tables: set[str]) -> None:
        from linestep import __version__

        for table in sorted(tables):
            self._connection.execute(f"DROP TABLE {table}")
        created = datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")
        self._connection.execute(
            "CREATE TABLE metadata (name TEXT PRIMARY KEY, value TEXT NOT NULL)")
        self._connection.executemany(
            "INSERT INTO metadata (name, value) VALUES (?, ?)",
            [("format", FORMAT), ("schema_version", str(SCHEMA_VERSION)),
             ("created", created), ("linestep_version", __version__)])
        self._create_runs()

    def _create_runs(self) -> None:
        columns = ", ".join(f"{name} {kind}" for name, kind in COLUMNS.items())
        self._connection.execute(
            f"CREATE TABLE runs (sequence INTEGER NOT NULL UNIQUE, superseded_by TEXT, "
            f"{columns})")
        self._connection.execute("CREATE INDEX runs_by_slot ON runs (slot)")

    # -- use ----------------------------------------------------------------------
    def metadata(self) -> dict[str, str]:
        """The metadata table as a dict."""
        return {_text(name): _text(value) for name, value in
                self._connection.execute("SELECT name, value FROM metadata")}

    def keys(self) -> set[str]:
        """Keys of the current (not superseded) runs in the file, damaged rows included."""
        return {_text(row[0]) for row in self._query(
            "SELECT key FROM runs WHERE superseded_by IS NULL")}

    def superseded(self) -> int:
        """How many rows are kept but superseded (their problem has changed since)."""
        return self._query("SELECT COUNT(*) FROM runs WHERE superseded_by IS NOT NULL"
                           ).fetchone()[0]

    def __len__(self) -> int:
        return self._query("SELECT COUNT(*) FROM runs WHERE superseded_by IS NULL"
                           ).fetchone()[0]

    def _query(self, sql: str, parameters: Any = ()) -> sqlite3.Cursor:
        try:
            return self._connection.execute(sql, parameters)
        except sqlite3.DatabaseError as exc:
            raise self._damaged_file(exc) from None

    def write(self, row: Mapping[str, Any]) -> bool:
        """Store one run and commit at once. Returns False if its key was already there.

        `row` maps every name in `COLUMNS` to a value; the JSON columns may be given
        as lists/dicts (stored as JSON) or None. Older rows of the same ``slot`` with
        another ``problem_fingerprint`` are marked superseded by this one. A damaged
        row met by `rows` with the same key is replaced.
        """
        if self.read_only:
            raise ResultsFileError(f"{str(self.path)!r} was opened read-only.")
        missing = [name for name in COLUMNS if name not in row]
        if missing:
            raise ValueError(f"`row` lacks the columns {missing}.")
        values = [_to_sql(name, row[name]) for name in COLUMNS]
        try:
            self._connection.execute("BEGIN IMMEDIATE")  # the write lock, before reading
            try:
                if row["key"] in self._damaged_keys:
                    self._connection.execute("DELETE FROM runs WHERE key = ?", [row["key"]])
                sequence = self._connection.execute(
                    "SELECT COALESCE(MAX(sequence), 0) + 1 FROM runs").fetchone()[0]
                cursor = self._connection.execute(
                    f"INSERT OR IGNORE INTO runs (sequence, {', '.join(COLUMNS)}) "
                    f"VALUES (?, {', '.join('?' for _ in COLUMNS)})", [sequence, *values])
                stored = cursor.rowcount == 1
                if stored:
                    self._connection.execute(
                        "UPDATE runs SET superseded_by = ? WHERE slot = ? AND key != ? "
                        "AND superseded_by IS NULL", [row["key"], row["slot"], row["key"]])
            except BaseException:
                self._connection.execute("ROLLBACK")
                raise
            self._connection.execute("COMMIT")
        except sqlite3.OperationalError as exc:
            raise ResultsFileError(
                f"Could not write a run to {str(self.path)!r} ({exc}). The runs stored "
                "before it are kept; free disk space or fix permissions and run the same "
                "command again to resume."
            ) from None
        except sqlite3.DatabaseError as exc:
            raise self._damaged_file(exc) from None
        self._damaged_keys.discard(row["key"])
        return stored

    def rows(self, keys: set[str] | None = None, *,
             superseded: bool = False) -> Iterator[dict[str, Any]]:
        """The stored runs as dicts (JSON columns decoded), in the order written.

        Superseded rows are left out unless `superseded`. A damaged row is skipped
        and described in `damaged`.
        """
        where = "" if superseded else " WHERE superseded_by IS NULL"
        cursor = self._query(
            f"SELECT sequence, {', '.join(COLUMNS)} FROM runs{where} ORDER BY sequence")
        while True:
            try:
                values = cursor.fetchone()
            except sqlite3.DatabaseError as exc:
                raise self._damaged_file(exc) from None
            if values is None:
                return
            sequence, values = values[0], values[1:]
            try:
                row = _decode(dict(zip(COLUMNS, values, strict=True)))
            except _DamagedRow as exc:
                key = values[0].decode("utf-8", "replace") if isinstance(values[0], bytes) \
                    else str(values[0])
                self._damaged_keys.add(key)
                self.damaged.append(
                    f"{str(self.path)!r}, row {sequence} (key {key[:12]}…): {exc}; the row "
                    "was skipped (its run is run again when the study is resumed).")
                continue
            if keys is not None and row["key"] not in keys:
                continue
            yield row

    def close(self) -> None:
        self._connection.close()

    def __enter__(self) -> ResultStore:
        return self

    def __exit__(self, *exc_info: Any) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"ResultStore({str(self.path)!r})"


class _DamagedRow(ValueError):
    """A stored row that cannot be decoded; the message says what is wrong."""


def _text(value: Any) -> Any:
    return value.decode("utf-8") if isinstance(value, bytes) else value


def _decode(row: dict[str, Any]) -> dict[str, Any]:
    """A stored row as Python values, or `_DamagedRow` saying what is wrong."""
    for name, value in row.items():
        if isinstance(value, bytes):
            try:
                row[name] = value.decode("utf-8")
            except UnicodeDecodeError:
                raise _DamagedRow(f"column `{name}` is not valid UTF-8 text") from None
    for name in _REQUIRED:
        if row[name] is None:
            raise _DamagedRow(f"column `{name}` is empty")
    for name in _JSON_COLUMNS:
        if row[name] is not None:
            try:
                row[name] = json.loads(row[name])
            except (TypeError, ValueError) as exc:
                raise _DamagedRow(f"column `{name}` holds broken JSON ({exc})") from None
    if row["kind"] not in _KINDS:
        raise _DamagedRow(f"column `kind` holds {row['kind']!r}, not one of {_KINDS}")
    if not isinstance(row["optimal_values"], list):
        raise _DamagedRow("column `optimal_values` is not a list")
    history = row["history"]
    if history is not None:
        if not isinstance(history, dict) or any(f not in history for f in _HISTORY_FIELDS):
            raise _DamagedRow("column `history` lacks some of its arrays")
        lengths = {len(history[f]) for f in _HISTORY_FIELDS}
        if len(lengths) != 1:
            raise _DamagedRow("column `history` holds arrays of different lengths")
    for name in ("value", "initial_value", "solve_rtol", "seconds", "objective_seconds"):
        if row[name] is not None and (isinstance(row[name], bool)
                                      or not isinstance(row[name], (int, float))):
            raise _DamagedRow(f"column `{name}` holds {row[name]!r}, not a number")
    for name in ("dimension", "iterations", "value_evaluations", "gradient_evaluations"):
        if not isinstance(row[name], int):
            raise _DamagedRow(f"column `{name}` holds {row[name]!r}, not an integer")
    return row


def _to_sql(name: str, value: Any) -> Any:
    if name in _JSON_COLUMNS:
        return None if value is None else json.dumps(value)
    if isinstance(value, float) and math.isnan(value):
        return None  # SQLite stores NaN as NULL anyway; say so explicitly
    return value
