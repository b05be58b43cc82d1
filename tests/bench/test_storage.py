"""The SQLite results file: round trip, one row per key, refusal of foreign or old files."""

from __future__ import annotations

import math
import sqlite3
from pathlib import Path

import pytest

from linestep.bench import storage
from linestep.bench.storage import COLUMNS, SCHEMA_VERSION, ResultsFileError, ResultStore

# A stored history: equal-length arrays named as History's fields (inf survives JSON).
_HISTORY = {"value": [1.0, math.inf, 0.5], "gradient_norm": [2.0, 1.0, 0.1],
            "size": [0.0, 1.0, 0.5], "values": [1, 2, 3], "gradients": [1, 2, 3],
            "restarted": [False, False, False], "status": ["start", "accepted", "accepted"]}


def _row(key: str = "k1", **changes: object) -> dict:
    row = {name: None for name in COLUMNS}
    row.update(key=key, slot=f"slot-{key}", problem_fingerprint="fp", controller_id="c",
               direction_id="d", stop_id="s", problem="bowl", dimension=2,
               controller="Armijo()", controller_repr="Armijo(c1=0.0001)",
               direction="SteepestDescent()", start="standard", seed=None,
               stop="MaxIterations(5)", kind="converged", reason="done", value=0.5,
               optimal_values=[0.0], solve_rtol=1e-4, iterations=3, value_evaluations=4,
               gradient_evaluations=4, seconds=0.01, objective_seconds=0.001,
               x=[1.0, 2.0], history=_HISTORY)
    row.update(changes)
    return row


def test_round_trip_keeps_every_field(tmp_path: Path) -> None:
    with ResultStore(tmp_path / "results.sqlite") as store:
        assert store.write(_row())
        [row] = list(store.rows())
    assert row == _row()  # JSON columns decoded; inf survives
    assert row["history"]["value"][1] == math.inf


def test_a_folder_means_the_results_file_inside_it(tmp_path: Path) -> None:
    with ResultStore(tmp_path) as store:
        store.write(_row())
    assert (tmp_path / storage.FILE_NAME).exists()


def test_a_key_is_stored_once(tmp_path: Path) -> None:
    with ResultStore(tmp_path / "r.sqlite") as store:
        assert store.write(_row("a"))
        assert not store.write(_row("a", value=7.0))  # a second write of a key is ignored
        assert store.write(_row("b"))
        assert len(store) == 2 and store.keys() == {"a", "b"}
        assert [row["value"] for row in store.rows()] == [0.5, 0.5]
        assert store.write(_row("c"))
    # `sequence` numbers the rows in write order; the ignored write took no number
    with sqlite3.connect(tmp_path / "r.sqlite") as connection:
        order = connection.execute("SELECT key, sequence FROM runs ORDER BY sequence").fetchall()
    assert order == [("a", 1), ("b", 2), ("c", 3)]


def test_each_write_is_committed_at_once(tmp_path: Path) -> None:
    path = tmp_path / "r.sqlite"
    store = ResultStore(path)
    store.write(_row("a"))
    # Another connection sees the row before this one is closed: nothing waits for the end.
    with sqlite3.connect(path) as other:
        assert other.execute("SELECT COUNT(*) FROM runs").fetchone()[0] == 1
    store.close()


def test_metadata(tmp_path: Path) -> None:
    with ResultStore(tmp_path / "r.sqlite") as store:
        metadata = store.metadata()
    assert metadata["format"] == "linestep-bench-results"
    assert metadata["schema_version"] == str(SCHEMA_VERSION)


def test_a_missing_column_is_an_error(tmp_path: Path) -> None:
    row = _row()
    del row["seed"]
    with ResultStore(tmp_path / "r.sqlite") as store, pytest.raises(ValueError, match="seed"):
        store.write(row)


def _refused_and_unchanged(path: Path, match: str, *, read_only: bool = False) -> None:
    """Opening `path` raises ResultsFileError matching `match` and leaves the file as it was."""
    before = path.read_bytes()
    with pytest.raises(ResultsFileError, match=match):
        ResultStore(path, read_only=read_only)
    assert path.read_bytes() == before


def test_a_file_that_is_not_a_database_is_refused_and_left_alone(tmp_path: Path) -> None:
    path = tmp_path / "results.sqlite"
    path.write_text("these are my notes, not a database\n" * 20)
    _refused_and_unchanged(path, "not a linestep results file")


def test_a_foreign_database_is_refused_and_left_alone(tmp_path: Path) -> None:
    path = tmp_path / "results.sqlite"
    with sqlite3.connect(path) as connection:
        connection.execute("CREATE TABLE measurements (t REAL)")
    _refused_and_unchanged(path, "did not write")


def test_another_schema_version_is_refused_with_both_versions_named(tmp_path: Path) -> None:
    path = tmp_path / "results.sqlite"
    with ResultStore(path) as store:
        store.write(_row())
    with sqlite3.connect(path) as connection:
        connection.execute("UPDATE metadata SET value = '99' WHERE name = 'schema_version'")
    _refused_and_unchanged(path, rf"schema version 99.*version {SCHEMA_VERSION}")
    _refused_and_unchanged(path, "schema version 99", read_only=True)


def test_read_only_opening(tmp_path: Path) -> None:
    with pytest.raises(FileNotFoundError, match="linestep bench"):
        ResultStore(tmp_path / "absent.sqlite", read_only=True)
    assert not (tmp_path / "absent.sqlite").exists()
    path = tmp_path / "r.sqlite"
    with ResultStore(path) as store:
        store.write(_row())
    with ResultStore(path, read_only=True) as store:
        assert len(store) == 1
        with pytest.raises(ResultsFileError, match="read-only"):
            store.write(_row("other"))
