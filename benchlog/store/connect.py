"""Opening an archive: which database (argument, environment, embedded default), the engine, the migrations.

URL order: `--db URL`, else the environment variable `BENCHLOG_DB`, else
`sqlite:///benchlog-archive.sqlite` in the current folder. A `postgresql://`
URL is driven by psycopg 3; its password comes from libpq's own sources (the
PGPASSWORD environment variable or the standard password file ~/.pgpass) when
the URL carries none, and the archive never stores a URL or a password.

SQLite runs in WAL mode so readers never block the one writer; every write
transaction starts with BEGIN IMMEDIATE so concurrent benches queue on the
database lock instead of failing part-way (SQLite's own locking, waited up to
`BUSY_TIMEOUT_S`). Migrations run on open under a lock (a file lock beside a
SQLite archive, an advisory lock on PostgreSQL) so several benches opening a
new archive at once create it once.
"""

from __future__ import annotations

import os
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Iterator

from benchlog.badinput import BadInput

DEFAULT_FILE = "benchlog-archive.sqlite"
DEFAULT_URL = f"sqlite:///{DEFAULT_FILE}"
ENV_VAR = "BENCHLOG_DB"
BUSY_TIMEOUT_S = 60.0
#: Advisory lock key of the migration step on PostgreSQL (any fixed 64-bit number of our own).
_MIGRATION_LOCK_KEY = 0x62656E63686C6F67
_MIGRATIONS = Path(__file__).resolve().parent / "migrations"


class ArchiveUnreachable(BadInput):
    """The archive cannot be opened: a malformed URL, a driver missing, a server that does not answer."""


def resolve_url(given: str | None = None) -> str:
    """The archive URL in force: the argument, else `BENCHLOG_DB`, else the embedded default."""
    return given or os.environ.get(ENV_VAR) or DEFAULT_URL


def _shown(url) -> str:
    """A URL as it may be printed: the password, if any, masked."""
    try:
        return url.render_as_string(hide_password=True)
    except AttributeError:
        return str(url)


def _parse(text: str):
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError

    try:
        url = make_url(text)
    except ArgumentError:
        raise ArchiveUnreachable("--db", "", f"{text.split('@')[-1]!r} is not a database URL",
                                 "sqlite:///FILE or postgresql://USER@HOST[:PORT]/DB") from None
    if url.get_backend_name() == "sqlite":
        if url.drivername not in ("sqlite", "sqlite+pysqlite"):
            raise ArchiveUnreachable("--db", "", f"driver {url.drivername!r} is not supported", "sqlite:///FILE")
        return url.set(drivername="sqlite+pysqlite")
    if url.get_backend_name() == "postgresql":
        if url.drivername not in ("postgresql", "postgresql+psycopg"):
            raise ArchiveUnreachable("--db", "", f"driver {url.drivername!r} is not supported",
                                     "postgresql:// (driven by psycopg 3)")
        return url.set(drivername="postgresql+psycopg")
    raise ArchiveUnreachable("--db", "", f"database kind {url.get_backend_name()!r} is not supported",
                             "sqlite:///FILE or postgresql://USER@HOST[:PORT]/DB")


def shown_url(text: str) -> str:
    """The archive URL `text` as it may be printed (a password masked); ArchiveUnreachable when malformed."""
    return _shown(_parse(text))


def _sqlite_engine(url):
    from sqlalchemy import create_engine, event

    if not url.database or url.database == ":memory:":
        raise ArchiveUnreachable("--db", "", "an in-memory SQLite archive would be lost on exit",
                                 "sqlite:///FILE")
    folder = Path(url.database).expanduser().resolve().parent
    if not folder.is_dir():
        raise ArchiveUnreachable(_shown(url), "", f"folder {folder} does not exist", "an existing folder")
    engine = create_engine(url, connect_args={"timeout": BUSY_TIMEOUT_S})

    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection, _record):
        dbapi_connection.isolation_level = None  # we issue BEGIN ourselves (below)
        cursor = dbapi_connection.cursor()
        cursor.execute("PRAGMA journal_mode=WAL")
        # NORMAL in WAL mode: a crash never corrupts the archive, a power cut may lose the last
        # commits; the run files are the source of truth and `archive sync` re-adds them.
        cursor.execute("PRAGMA synchronous=NORMAL")
        cursor.execute(f"PRAGMA busy_timeout={int(BUSY_TIMEOUT_S * 1000)}")
        cursor.execute("PRAGMA foreign_keys=ON")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(connection):
        connection.exec_driver_sql("BEGIN IMMEDIATE" if connection.get_execution_options().get("write")
                                   else "BEGIN")

    return engine


@dataclass
class Archive:
    """An open archive: the engine and what it is called in messages (never with a password)."""

    engine: object
    shown_url: str

    @property
    def dialect(self) -> str:
        return self.engine.dialect.name

    @contextmanager
    def writing(self) -> Iterator[object]:
        """A write transaction (BEGIN IMMEDIATE on SQLite), committed on success, rolled back on error."""
        with self.engine.connect().execution_options(write=True) as conn:
            with conn.begin():
                yield conn

    @contextmanager
    def reading(self) -> Iterator[object]:
        with self.engine.connect() as conn:
            with conn.begin():
                yield conn

    def close(self) -> None:
        self.engine.dispose()


def _alembic_config(connection):
    from alembic.config import Config

    config = Config()
    config.set_main_option("script_location", str(_MIGRATIONS))
    config.attributes["connection"] = connection
    return config


def head_revision() -> str:
    from alembic.script import ScriptDirectory

    return ScriptDirectory.from_config(_alembic_config(None)).get_current_head()


def current_revision(connection) -> str | None:
    from alembic.runtime.migration import MigrationContext

    return MigrationContext.configure(connection).get_current_revision()


def _upgrade(engine) -> None:
    """Bring the archive to the newest schema, once, even when several benches open it together."""
    from alembic import command

    head = head_revision()
    with engine.connect() as conn:
        if current_revision(conn) == head:
            return
    if engine.dialect.name == "postgresql":
        with engine.connect() as conn:
            conn.exec_driver_sql(f"SELECT pg_advisory_lock({_MIGRATION_LOCK_KEY})")
            conn.commit()
            try:
                command.upgrade(_alembic_config(conn), "head")
                conn.commit()
            finally:
                conn.exec_driver_sql(f"SELECT pg_advisory_unlock({_MIGRATION_LOCK_KEY})")
                conn.commit()
        return
    from filelock import FileLock

    with FileLock(str(Path(engine.url.database).expanduser()) + ".migrate.lock", timeout=BUSY_TIMEOUT_S):
        with engine.connect().execution_options(write=True) as conn:
            command.upgrade(_alembic_config(conn), "head")
            conn.commit()


def open_archive(given: str | None = None, *, migrate: bool = True) -> Archive:
    """Open (and create or upgrade) the archive at `given`, `BENCHLOG_DB` or the default; ArchiveUnreachable if not."""
    from sqlalchemy import create_engine
    from sqlalchemy.exc import DBAPIError, NoSuchModuleError, OperationalError

    url = _parse(resolve_url(given))
    shown = _shown(url)
    try:
        if url.get_backend_name() == "sqlite":
            engine = _sqlite_engine(url)
        else:
            engine = create_engine(url, pool_pre_ping=True, connect_args={"connect_timeout": 10})
    except NoSuchModuleError as exc:
        raise ArchiveUnreachable(shown, "", f"no driver: {exc}", "pip install 'benchlog[postgres]'") from None
    except ImportError as exc:
        raise ArchiveUnreachable(shown, "", f"no driver: {exc}", "pip install 'benchlog[postgres]'") from None
    try:
        if migrate:
            _upgrade(engine)
        else:
            with engine.connect():
                pass
    except (OperationalError, DBAPIError) as exc:
        engine.dispose()
        reason = " ".join(str(getattr(exc, "orig", exc)).split())[:200]
        raise ArchiveUnreachable(shown, "", f"cannot open the archive: {reason}",
                                 "a reachable database (or run `benchlog archive sync` later)") from None
    return Archive(engine, shown)
