"""A private PostgreSQL server for tests: the Debian ``postgresql`` package's ``initdb``
and ``pg_ctl`` on a free 127.0.0.1 port, trust authentication (tests only), data in a
temporary folder owned by the ``postgres`` user (``initdb`` refuses to run as root)."""

from __future__ import annotations

import glob
import os
import shutil
import socket
import subprocess
import tempfile
from pathlib import Path


def pg_bin() -> Path | None:
    """Folder of ``pg_ctl`` and ``initdb`` (PATH first, then Debian's layout)."""
    found = shutil.which("pg_ctl")
    if found and shutil.which("initdb"):
        return Path(found).resolve().parent
    dirs = sorted(glob.glob("/usr/lib/postgresql/*/bin"), reverse=True)
    return Path(dirs[0]) if dirs else None


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class PostgresServer:
    """Start with :meth:`start`, stop with :meth:`stop`; :meth:`new_database` gives a URL."""

    def __init__(self, bindir: Path) -> None:
        self.bindir = bindir
        self.port = _free_port()
        self.dir = Path(tempfile.mkdtemp(prefix="gapmatch-pg-"))
        self.data = self.dir / "data"
        self._as_postgres = os.geteuid() == 0
        self._n = 0

    def _run(self, *args: str) -> None:
        cmd = [str(self.bindir / args[0]), *args[1:]]
        if self._as_postgres:
            cmd = ["runuser", "-u", "postgres", "--", *cmd]
        subprocess.run(cmd, check=True, capture_output=True, text=True, timeout=120)

    def start(self) -> PostgresServer:
        if self._as_postgres:
            shutil.chown(self.dir, "postgres", "postgres")
        self._run("initdb", "-D", str(self.data), "-A", "trust", "-U", "postgres")
        opts = f"-c listen_addresses=127.0.0.1 -p {self.port} -k {self.dir} -c fsync=off"
        self._run(
            "pg_ctl", "-D", str(self.data), "-w", "-l", str(self.dir / "log"), "-o", opts, "start"
        )
        return self

    def url(self, database: str = "postgres") -> str:
        return f"postgresql+psycopg://postgres@127.0.0.1:{self.port}/{database}"

    def new_database(self) -> str:
        """A fresh empty database (its tables not yet created); returns its URL."""
        import psycopg

        self._n += 1
        name = f"gm{self._n}"
        with psycopg.connect(
            f"host=127.0.0.1 port={self.port} user=postgres dbname=postgres", autocommit=True
        ) as con:
            con.execute(f"CREATE DATABASE {name}")
        return self.url(name)

    def stop(self) -> None:
        try:
            self._run("pg_ctl", "-D", str(self.data), "-m", "immediate", "-w", "stop")
        finally:
            shutil.rmtree(self.dir, ignore_errors=True)
