"""A real PostgreSQL server for the plant tests: the one `.ci/run` started (its URL in
LINEWATCH_TEST_PG_URL), or a throwaway cluster of our own (initdb in a temporary folder, a free
port on 127.0.0.1, stopped at the end), so plain `pytest` needs nothing set up.

initdb refuses to run as root; as root the cluster belongs to the unprivileged `postgres` user
(or `nobody`), and its files go in a folder that user owns.
"""

from __future__ import annotations

import glob
import os
import pwd
import shutil
import socket
import subprocess
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

ENV_URL = "LINEWATCH_TEST_PG_URL"


def server_binaries() -> Path:
    """The folder holding initdb, pg_ctl and postgres (PATH first, then Debian's layout)."""
    found = shutil.which("initdb")
    if found:
        return Path(found).resolve().parent
    for folder in sorted(glob.glob("/usr/lib/postgresql/*/bin"), reverse=True):
        if Path(folder, "initdb").exists():
            return Path(folder)
    raise RuntimeError("PostgreSQL server binaries (initdb) not found: apt-get install "
                       "postgresql, or set LINEWATCH_TEST_PG_URL to a server's URL")


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _owner() -> str | None:
    """The unprivileged user to run the server as when we are root; None: ourselves."""
    if os.geteuid() != 0:
        return None
    for name in ("postgres", "nobody"):
        try:
            pwd.getpwnam(name)
            return name
        except KeyError:
            continue
    raise RuntimeError("running as root and no unprivileged user (postgres, nobody) exists")


@dataclass
class Cluster:
    """A throwaway cluster: `start`, `stop`, `restart`, its superuser URL."""

    folder: Path
    port: int
    owner: str | None

    @property
    def data(self) -> Path:
        return self.folder / "data"

    @property
    def url(self) -> str:
        return f"postgresql://postgres@127.0.0.1:{self.port}/postgres"

    def _run(self, *argv: str, check: bool = True) -> subprocess.CompletedProcess[str]:
        command = [str(server_binaries() / argv[0]), *argv[1:]]
        if self.owner is not None:
            command = ["runuser", "-u", self.owner, "--", *command]
        return subprocess.run(command, capture_output=True, text=True, check=check, timeout=120)

    @classmethod
    def create(cls, durable: bool = False) -> Cluster:
        folder = Path(tempfile.mkdtemp(prefix="linewatch-pg-"))
        owner = _owner()
        if owner is not None:
            entry = pwd.getpwnam(owner)
            os.chown(folder, entry.pw_uid, entry.pw_gid)
        cluster = cls(folder, free_port(), owner)
        cluster._run("initdb", "-D", str(cluster.data), "-A", "trust", "-U", "postgres",
                     "--no-sync", "-E", "UTF8", "--locale=C")
        with open(cluster.data / "postgresql.conf", "a", encoding="utf-8") as conf:
            if not durable:  # a throwaway test cluster need not survive a power cut
                conf.write("\nfsync = off\nsynchronous_commit = off\nfull_page_writes = off\n")
            conf.write("\nmax_connections = 200\nshared_buffers = 32MB\n")
        return cluster

    def start(self) -> None:
        self._run("pg_ctl", "-D", str(self.data), "-w", "-t", "60", "-l",
                  str(self.folder / "server.log"), "-o",
                  f"-p {self.port} -h 127.0.0.1 -k {self.folder}", "start")

    def stop(self, mode: str = "fast") -> None:
        self._run("pg_ctl", "-D", str(self.data), "-w", "-m", mode, "stop", check=False)

    def restart(self) -> None:
        self._run("pg_ctl", "-D", str(self.data), "-w", "-m", "fast", "-t", "60", "-l",
                  str(self.folder / "server.log"), "-o",
                  f"-p {self.port} -h 127.0.0.1 -k {self.folder}", "restart")

    def remove(self) -> None:
        self.stop("immediate")
        shutil.rmtree(self.folder, ignore_errors=True)


def wait_ready(url: str, timeout: float = 30.0) -> None:
    """Until the server at `url` answers."""
    import psycopg

    deadline = time.monotonic() + timeout
    while True:
        try:
            psycopg.connect(url, connect_timeout=2).close()
            return
        except psycopg.OperationalError:
            if time.monotonic() > deadline:
                raise
            time.sleep(0.2)


def with_database(url: str, name: str) -> str:
    """`url` pointing at database `name` instead."""
    from urllib.parse import urlsplit, urlunsplit

    parts = urlsplit(url)
    return urlunsplit((parts.scheme, parts.netloc, "/" + name, parts.query, parts.fragment))


def fresh_database(server_url: str) -> str:
    """A new, empty database on the server; its URL."""
    import uuid

    import psycopg

    name = "lw_" + uuid.uuid4().hex[:16]
    with psycopg.connect(server_url, autocommit=True) as conn:
        conn.execute(f'CREATE DATABASE "{name}"')
    return with_database(server_url, name)


def drop_database(server_url: str, url: str) -> None:
    """Drop the database of `url` (its connections closed first)."""
    import contextlib
    from urllib.parse import urlsplit

    import psycopg

    name = urlsplit(url).path.lstrip("/")
    with contextlib.suppress(psycopg.Error), psycopg.connect(server_url, autocommit=True) as c:
        c.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
