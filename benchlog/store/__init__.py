"""The lab archive: every bench's runs indexed in one database (SQLite embedded, PostgreSQL for a lab).

The run file stays the source of truth; the archive is an index of it that many
benches share. One schema (`schema.py`), versioned by Alembic migrations shipped
in `migrations/` and applied when an archive is opened (`connect.open_archive`).
"""

from .connect import Archive, ArchiveUnreachable, DEFAULT_URL, open_archive, resolve_url

__all__ = ["Archive", "ArchiveUnreachable", "DEFAULT_URL", "open_archive", "resolve_url"]
