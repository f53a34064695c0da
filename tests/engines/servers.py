"""Throwaway engines for the test suite: a PostgreSQL cluster on loopback and a local Spark session.

PostgreSQL: ``initdb`` into a fresh temporary folder, a free port on 127.0.0.1, the unix socket in
that folder, durability switched off (nothing here needs to survive a crash), stopped and removed
at the end. The server refuses to run as root, so as root it runs as ``SCOREMON_PG_USER``
(default ``postgres``, which Debian's postgresql package creates) through ``runuser``.
``SCOREMON_PG_BIN`` names the folder with ``initdb`` and ``pg_ctl`` (default: the newest
``/usr/lib/postgresql/*/bin``, else ``pg_config --bindir``). ``SCOREMON_TEST_POSTGRES_URL``
uses a server that is already running instead.

Spark: a local session (``local[1]``, UI off, two shuffle partitions) with its warehouse in a
temporary folder, opened through :class:`scoremon.engines.spark.SparkEngine` itself.
"""
from __future__ import annotations

import glob
import os
import pwd
import shutil
import socket
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path

from scoremon.engines.spark import SparkEngine

PG_DATABASE_USER = "scoremon"


class EngineStartError(RuntimeError):
    """A throwaway engine could not be started; the message says why."""


def _postgres_bin() -> Path:
    named = os.environ.get("SCOREMON_PG_BIN")
    if named:
        return Path(named)
    found = sorted(glob.glob("/usr/lib/postgresql/*/bin"), key=lambda p: int(Path(p).parent.name))
    if found:
        return Path(found[-1])
    if shutil.which("pg_config"):
        out = subprocess.run(["pg_config", "--bindir"], capture_output=True, text=True, check=False)
        if out.returncode == 0:
            return Path(out.stdout.strip())
    raise EngineStartError("no PostgreSQL server binaries (initdb, pg_ctl) found; install the postgresql package "
                           "or set SCOREMON_PG_BIN")


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


@dataclass
class PostgresServer:
    """A running throwaway cluster; :meth:`stop` shuts it down and removes its folder."""

    url: str
    folder: Path | None = None
    as_user: list[str] | None = None
    pg_ctl: Path | None = None

    @classmethod
    def start(cls) -> "PostgresServer":
        existing = os.environ.get("SCOREMON_TEST_POSTGRES_URL")
        if existing:
            return cls(existing)
        binaries = _postgres_bin()
        initdb, pg_ctl = binaries / "initdb", binaries / "pg_ctl"
        if not initdb.exists() or not pg_ctl.exists():
            raise EngineStartError(f"{binaries} has no initdb/pg_ctl; install the postgresql package or set SCOREMON_PG_BIN")
        folder = Path(tempfile.mkdtemp(prefix="scoremon-pg-"))
        as_user: list[str] = []
        if os.geteuid() == 0:
            # postgres refuses to run as root: hand the folder to an ordinary user and run as them
            user = os.environ.get("SCOREMON_PG_USER", "postgres")
            try:
                account = pwd.getpwnam(user)
            except KeyError as error:
                shutil.rmtree(folder, ignore_errors=True)
                raise EngineStartError(f"running as root and there is no user {user!r} to run postgres as; "
                                       "create one (useradd) or set SCOREMON_PG_USER") from error
            os.chown(folder, account.pw_uid, account.pw_gid)
            as_user = ["runuser", "-u", user, "--"]
        server = cls("", folder, as_user, pg_ctl)
        port = _free_port()
        data = folder / "data"
        try:
            server._run([str(initdb), "-D", str(data), "-U", PG_DATABASE_USER, "--auth=trust", "-E", "UTF8",
                         "--no-locale", "--no-sync"])
            options = (f"-c listen_addresses=127.0.0.1 -p {port} -k {folder} -c fsync=off "
                       "-c synchronous_commit=off -c full_page_writes=off")
            server._run([str(pg_ctl), "-D", str(data), "-o", options, "-l", str(folder / "server.log"), "-w",
                         "-t", "60", "start"])
        except (EngineStartError, subprocess.TimeoutExpired) as error:
            log = folder / "server.log"
            tail = log.read_text(errors="replace")[-2000:] if log.exists() else ""
            server._remove()
            raise EngineStartError(f"PostgreSQL did not start: {error} {tail}".strip()) from error
        server.url = f"postgresql://{PG_DATABASE_USER}@127.0.0.1:{port}/postgres"
        return server

    def stop(self) -> None:
        if self.folder is None:
            return
        try:
            self._run([str(self.pg_ctl), "-D", str(self.folder / "data"), "-m", "immediate", "-w", "stop"])
        finally:
            self._remove()

    def _remove(self) -> None:
        if self.folder is not None:
            shutil.rmtree(self.folder, ignore_errors=True)

    def _run(self, command: list[str]) -> None:
        done = subprocess.run([*(self.as_user or []), *command], capture_output=True, text=True, check=False,
                              cwd=self.folder, timeout=120)
        if done.returncode != 0:
            raise EngineStartError(f"{Path(command[0]).name} failed ({done.returncode}): "
                                   f"{(done.stderr or done.stdout).strip()[-2000:]}")


def start_spark(warehouse: Path):
    """A local Spark session for the tests, owned by the returned engine (close() stops it)."""
    if shutil.which("java") is None and not os.environ.get("JAVA_HOME"):
        raise EngineStartError("Spark needs Java (17 or newer) and none was found; install a JDK or set JAVA_HOME")
    try:
        return SparkEngine("local[1]", {
            "spark.sql.shuffle.partitions": "2",
            "spark.sql.warehouse.dir": str(warehouse),
            "spark.driver.memory": "2g",
        })
    except Exception as error:  # noqa: BLE001 - any failure to start is reported as the reason
        raise EngineStartError(f"Spark did not start: {error}") from error
