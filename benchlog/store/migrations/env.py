"""Alembic's entry point for the archive: migrate on the connection `connect.open_archive` hands over."""

from alembic import context

connection = context.config.attributes["connection"]
context.configure(connection=connection, render_as_batch=True)
with context.begin_transaction():
    context.run_migrations()
