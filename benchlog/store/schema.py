"""The archive's tables, as SQLAlchemy Core metadata: the one schema both engines hold.

The migrations in `migrations/versions/` create exactly these tables; a test
compares a migrated database with this metadata column by column.
"""

from __future__ import annotations

from sqlalchemy import (Column, Float, ForeignKey, Index, Integer, MetaData, String, Table, Text,
                        UniqueConstraint)

metadata = MetaData()

#: One row per run file: its identity, header summary and outcome.
runs = Table(
    "runs", metadata,
    Column("id", Integer, primary_key=True, autoincrement=True),
    Column("run_id", String(36), nullable=False),
    Column("path", Text, nullable=False),
    Column("content_sha256", String(64), nullable=False),
    Column("bench_host", Text),
    Column("element_id", Text),
    Column("kind", Text),
    Column("label", Text),
    Column("serial", Text),
    Column("lot", Text),
    Column("board_revision", Text),
    Column("plan_json", Text),
    Column("started_utc", String(40), nullable=False),
    Column("ended_s", Float),
    Column("outcome", String(16), nullable=False),
    Column("points", Integer, nullable=False),
    Column("tool_version", Text),
    Column("schema_version", Integer),
    Column("ingested_utc", String(40), nullable=False),
    UniqueConstraint("run_id", name="uq_runs_run_id"),
)
Index("ix_runs_serial", runs.c.serial)
Index("ix_runs_lot", runs.c.lot)
Index("ix_runs_kind", runs.c.kind)
Index("ix_runs_started", runs.c.started_utc)
Index("ix_runs_host", runs.c.bench_host)

#: The instruments that took part in a run, as the header recorded them.
instruments = Table(
    "instruments", metadata,
    Column("run_pk", Integer, ForeignKey("runs.id"), nullable=False),
    Column("role", Text, nullable=False),
    Column("resource", Text),
    Column("idn", Text),
    Column("profile", Text),
    Column("profile_sha256", String(64)),
)
Index("ix_instruments_run", instruments.c.run_pk)

#: The measured points (the drop and current as read).
points = Table(
    "points", metadata,
    Column("run_pk", Integer, ForeignKey("runs.id"), nullable=False),
    Column("idx", Integer, nullable=False),
    Column("t_s", Float, nullable=False),
    Column("setpoint_a", Float),
    Column("current_a", Float),
    Column("drop_v", Float),
    Column("supply_v", Float),
    Column("temperature_c", Float),
    Column("flags", Text),
)
Index("ix_points_run", points.c.run_pk)

#: One row per fitted parameter of a run: value, standard and expanded uncertainty, GUM budget.
fits = Table(
    "fits", metadata,
    Column("run_pk", Integer, ForeignKey("runs.id"), nullable=False),
    Column("model", String(16), nullable=False),
    Column("parameter", String(40), nullable=False),
    Column("value", Float, nullable=False),
    Column("std_u", Float),
    Column("expanded_u", Float),
    Column("k", Float),
    Column("budget_json", Text),
)
Index("ix_fits_parameter_run", fits.c.parameter, fits.c.run_pk)

#: A run judged against a part spec (name and content hash), with the conditions it was judged at.
verdicts = Table(
    "verdicts", metadata,
    Column("run_pk", Integer, ForeignKey("runs.id"), nullable=False),
    Column("spec_name", Text, nullable=False),
    Column("spec_sha256", String(64), nullable=False),
    Column("quantity", String(40)),
    Column("outcome", String(16), nullable=False),
    Column("measured", Float),
    Column("expanded_u", Float),
    Column("limit_value", Float),
    Column("conditions_json", Text),
)
Index("ix_verdicts_run", verdicts.c.run_pk)
Index("ix_verdicts_outcome", verdicts.c.outcome)

CHILD_TABLES = (instruments, points, fits, verdicts)
