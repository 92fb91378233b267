"""The archive suite runs on both engines: an SQLite file, and a real PostgreSQL server started here.

PostgreSQL refuses to run as root, so under root the server is initialised and
started as the system's `postgres` user (`runuser`), its data folder in a fresh
temporary folder owned by that user, listening on 127.0.0.1 at a free port with
trust authentication for local connections only (a throw-away test server). It
is started once per session; each test gets a new database on it. When it
truly cannot start (no server binaries, no `postgres` user under root), the
PostgreSQL half skips with the reason and the SQLite half runs.
"""

from __future__ import annotations

import glob
import itertools
import os
import shutil
import socket
import subprocess
import tempfile
from pathlib import Path

import pytest

_counter = itertools.count()


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class _Server:
    def __init__(self) -> None:
        self.skip_reason = ""
        self.port = 0
        self.data: Path | None = None
        self.started = False
        self.prefix: list[str] = []

    def start(self) -> None:
        bins = sorted(glob.glob("/usr/lib/postgresql/*/bin/initdb"))
        initdb = bins[-1] if bins else shutil.which("initdb")
        if not initdb:
            self.skip_reason = "PostgreSQL server binaries (initdb, pg_ctl) not found"
            return
        bindir = Path(initdb).parent
        if os.geteuid() == 0:
            try:
                import pwd

                user = pwd.getpwnam("postgres")
            except KeyError:
                self.skip_reason = "running as root and there is no 'postgres' system user to start the server as"
                return
            self.prefix = ["runuser", "-u", "postgres", "--"]
        root = Path(tempfile.mkdtemp(prefix="benchlog-pg-"))
        self.data = root / "data"
        if self.prefix:
            os.chown(root, user.pw_uid, user.pw_gid)
        self.port = _free_port()
        run = lambda *cmd: subprocess.run([*self.prefix, *cmd], capture_output=True, text=True, timeout=120)
        done = run(str(bindir / "initdb"), "-D", str(self.data), "-A", "trust", "-U", "postgres", "-E", "UTF8")
        if done.returncode != 0:
            self.skip_reason = f"initdb failed: {done.stderr.strip()[-300:]}"
            return
        opts = f"-p {self.port} -c listen_addresses=127.0.0.1 -k {root} -c fsync=off -c max_connections=60"
        done = run(str(bindir / "pg_ctl"), "-D", str(self.data), "-o", opts, "-l", str(root / "log"), "-w", "start")
        if done.returncode != 0:
            self.skip_reason = f"pg_ctl start failed: {done.stderr.strip()[-300:]}"
            return
        self.started = True
        self.bindir = bindir

    def new_database(self) -> str:
        import psycopg

        name = f"archive_{os.getpid()}_{next(_counter)}"
        with psycopg.connect(f"host=127.0.0.1 port={self.port} user=postgres dbname=postgres", autocommit=True) as c:
            c.execute(f'CREATE DATABASE "{name}"')  # our own generated name, not user input
        return f"postgresql://postgres@127.0.0.1:{self.port}/{name}"

    def viewer_url(self, url: str) -> str:
        """A read-only role for the database of `url`, as the README's viewer (SELECT only); its URL."""
        import psycopg

        dbname = url.rsplit("/", 1)[1]
        role = f"viewer_{dbname}"
        with psycopg.connect(f"host=127.0.0.1 port={self.port} user=postgres dbname={dbname}", autocommit=True) as c:
            for statement in (f'CREATE ROLE "{role}" LOGIN', f'GRANT CONNECT ON DATABASE "{dbname}" TO "{role}"',
                              f'GRANT USAGE ON SCHEMA public TO "{role}"',
                              f'GRANT SELECT ON ALL TABLES IN SCHEMA public TO "{role}"'):
                c.execute(statement)  # names generated here, not user input
        return url.replace("postgres@", f"{role}@")

    def stop(self) -> None:
        if self.started:
            subprocess.run([*self.prefix, str(self.bindir / "pg_ctl"), "-D", str(self.data), "-m", "immediate", "stop"],
                           capture_output=True, timeout=60)
        if self.data is not None:
            shutil.rmtree(self.data.parent, ignore_errors=True)


@pytest.fixture(scope="session")
def postgres_server():
    server = _Server()
    server.start()
    yield server
    server.stop()


@pytest.fixture(params=["sqlite", "postgresql"])
def archive_url(request, tmp_path):
    """A fresh, empty archive URL on each engine."""
    if request.param == "sqlite":
        return f"sqlite:///{tmp_path / 'archive.sqlite'}"
    server = request.getfixturevalue("postgres_server")
    if not server.started:
        pytest.skip(server.skip_reason)
    return server.new_database()
