"""The first archive schema: runs, instruments, points, fits, verdicts.

Revision ID: a001
Revises:
"""

import sqlalchemy as sa
from alembic import op

revision = "a001"
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "runs",
        sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("run_id", sa.String(36), nullable=False),
        sa.Column("path", sa.Text, nullable=False),
        sa.Column("content_sha256", sa.String(64), nullable=False),
        sa.Column("bench_host", sa.Text),
        sa.Column("element_id", sa.Text),
        sa.Column("kind", sa.Text),
        sa.Column("label", sa.Text),
        sa.Column("serial", sa.Text),
        sa.Column("lot", sa.Text),
        sa.Column("board_revision", sa.Text),
        sa.Column("plan_json", sa.Text),
        sa.Column("started_utc", sa.String(40), nullable=False),
        sa.Column("ended_s", sa.Float),
        sa.Column("outcome", sa.String(16), nullable=False),
        sa.Column("points", sa.Integer, nullable=False),
        sa.Column("tool_version", sa.Text),
        sa.Column("schema_version", sa.Integer),
        sa.Column("ingested_utc", sa.String(40), nullable=False),
        sa.UniqueConstraint("run_id", name="uq_runs_run_id"),
    )
    for name, column in (("ix_runs_serial", "serial"), ("ix_runs_lot", "lot"), ("ix_runs_kind", "kind"),
                         ("ix_runs_started", "started_utc"), ("ix_runs_host", "bench_host")):
        op.create_index(name, "runs", [column])
    op.create_table(
        "instruments",
        sa.Column("run_pk", sa.Integer, sa.ForeignKey("runs.id"), nullable=False),
        sa.Column("role", sa.Text, nullable=False),
        sa.Column("resource", sa.Text),
        sa.Column("idn", sa.Text),
        sa.Column("profile", sa.Text),
        sa.Column("profile_sha256", sa.String(64)),
    )
    op.create_index("ix_instruments_run", "instruments", ["run_pk"])
    op.create_table(
        "points",
        sa.Column("run_pk", sa.Integer, sa.ForeignKey("runs.id"), nullable=False),
        sa.Column("idx", sa.Integer, nullable=False),
        sa.Column("t_s", sa.Float, nullable=False),
        sa.Column("setpoint_a", sa.Float),
        sa.Column("current_a", sa.Float),
        sa.Column("drop_v", sa.Float),
        sa.Column("supply_v", sa.Float),
        sa.Column("temperature_c", sa.Float),
        sa.Column("flags", sa.Text),
    )
    op.create_index("ix_points_run", "points", ["run_pk"])
    op.create_table(
        "fits",
        sa.Column("run_pk", sa.Integer, sa.ForeignKey("runs.id"), nullable=False),
        sa.Column("model", sa.String(16), nullable=False),
        sa.Column("parameter", sa.String(40), nullable=False),
        sa.Column("value", sa.Float, nullable=False),
        sa.Column("std_u", sa.Float),
        sa.Column("expanded_u", sa.Float),
        sa.Column("k", sa.Float),
        sa.Column("budget_json", sa.Text),
    )
    op.create_index("ix_fits_parameter_run", "fits", ["parameter", "run_pk"])
    op.create_table(
        "verdicts",
        sa.Column("run_pk", sa.Integer, sa.ForeignKey("runs.id"), nullable=False),
        sa.Column("spec_name", sa.Text, nullable=False),
        sa.Column("spec_sha256", sa.String(64), nullable=False),
        sa.Column("quantity", sa.String(40)),
        sa.Column("outcome", sa.String(16), nullable=False),
        sa.Column("measured", sa.Float),
        sa.Column("expanded_u", sa.Float),
        sa.Column("limit_value", sa.Float),
        sa.Column("conditions_json", sa.Text),
    )
    op.create_index("ix_verdicts_run", "verdicts", ["run_pk"])
    op.create_index("ix_verdicts_outcome", "verdicts", ["outcome"])


def downgrade() -> None:
    for table in ("verdicts", "fits", "points", "instruments", "runs"):
        op.drop_table(table)
