"""A write that fails at COMMIT (a full disk) shows that cause, not the error of the ROLLBACK
that follows it ("cannot rollback - no transaction is active": DuckDB ends a transaction whose
COMMIT failed, so the ROLLBACK has nothing left to undo)."""
from __future__ import annotations

import duckdb
import pytest

from scoremon.engines import DuckDBEngine
from scoremon.errors import EngineError
from tests.sql import tree


class CommitFails:
    """A DuckDB connection whose COMMIT fails as on a full disk, after which DuckDB has already
    ended the transaction (so a ROLLBACK fails too, as the real engine does)."""

    def __init__(self, connection):
        self.connection = connection

    def execute(self, sql, *args):
        if sql == "COMMIT":
            self.connection.execute("ROLLBACK")
            raise duckdb.IOException("IO Error: Could not write file \"history.duckdb.wal\": No space left on device")
        return self.connection.execute(sql, *args)

    def __getattr__(self, name):
        return getattr(self.connection, name)


@pytest.mark.parametrize("write", ["execute_atomically", "write_table"])
def test_a_failed_commit_shows_the_full_disk_not_the_rollback(tmp_path, write):
    engine = DuckDBEngine(str(tmp_path / "history.duckdb"))
    try:
        engine.connection = CommitFails(engine.connection)
        with pytest.raises(EngineError) as raised:
            if write == "execute_atomically":
                engine.execute_atomically([tree("CREATE TABLE runs (id INTEGER)"), tree("INSERT INTO runs VALUES (1)")],
                                          "appending the run to the monitoring history")
            else:
                engine.write_table(tree("SELECT 1 AS id"), ["scores"], "writing the scored table")
        assert "No space left on device" in str(raised.value)
        assert "rollback" not in str(raised.value).lower()
        assert engine.connection.connection.execute(
            "SELECT count(*) FROM information_schema.tables WHERE table_name IN ('runs', 'scores')").fetchall() == [(0,)]
    finally:
        engine.connection = engine.connection.connection
        engine.close()
