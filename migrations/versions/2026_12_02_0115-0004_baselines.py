"""Baselines: fitted versions per unit and metric (one active), the control charts'
carried state, and CUSUM alarm events.

Revision ID: 0004
Revises: 0003
Created: 2026-12-02 01:15:00
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0004"
down_revision: str | None = "0003"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "baselines",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column("metric", sa.String(length=64), nullable=False),
        sa.Column("load", sa.String(length=64), nullable=False),
        sa.Column("regressors", sa.JSON(), nullable=False),
        sa.Column("start_ms", sa.BigInteger(), nullable=False),
        sa.Column("end_ms", sa.BigInteger(), nullable=False),
        sa.Column("model", sa.JSON(), nullable=False),
        sa.Column("best", sa.JSON(), nullable=True),
        sa.Column("settings", sa.JSON(), nullable=False),
        sa.Column("note", sa.String(length=500), nullable=True),
        sa.Column("active", sa.Boolean(), nullable=False),
        sa.Column("chart_origin_ms", sa.BigInteger(), nullable=True),
        sa.Column("created_by", sa.String(length=200), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("activated_by", sa.String(length=200), nullable=True),
        sa.Column("activated_at", sa.DateTime(timezone=True), nullable=True),
        sa.ForeignKeyConstraint(
            ["unit_id"], ["units.id"], name=op.f("fk_baselines_unit_id_units"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_baselines")),
        sa.UniqueConstraint("unit_id", "version", name=op.f("uq_baselines_unit_id_version")),
    )
    op.create_index(op.f("ix_baselines_unit_id"), "baselines", ["unit_id"], unique=False)
    # At most one active version per (unit, metric), said to the database itself.
    op.create_index(
        "uq_baselines_one_active",
        "baselines",
        ["unit_id", "metric"],
        unique=True,
        sqlite_where=sa.text("active"),
        postgresql_where=sa.text("active"),
    )
    op.create_table(
        "baseline_chart_checkpoints",
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("metric", sa.String(length=64), nullable=False),
        sa.Column("t_ms", sa.BigInteger(), nullable=False),
        sa.Column("baseline_id", sa.Integer(), nullable=False),
        sa.Column("ewma", sa.Float(), nullable=False),
        sa.Column("ewma_count", sa.Integer(), nullable=False),
        sa.Column("cusum_upper", sa.Float(), nullable=False),
        sa.Column("cusum_lower", sa.Float(), nullable=False),
        sa.Column("upper_run", sa.Integer(), nullable=False),
        sa.Column("lower_run", sa.Integer(), nullable=False),
        sa.Column("upper_since_ms", sa.BigInteger(), nullable=True),
        sa.Column("lower_since_ms", sa.BigInteger(), nullable=True),
        sa.ForeignKeyConstraint(
            ["baseline_id"],
            ["baselines.id"],
            name=op.f("fk_baseline_chart_checkpoints_baseline_id_baselines"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint(
            "unit_id", "metric", "t_ms", name=op.f("pk_baseline_chart_checkpoints")
        ),
    )
    op.create_index(
        op.f("ix_baseline_chart_checkpoints_baseline_id"),
        "baseline_chart_checkpoints",
        ["baseline_id"],
        unique=False,
    )
    op.create_table(
        "drift_events",
        sa.Column("id", sa.BigInteger().with_variant(sa.Integer(), "sqlite"), nullable=False),
        sa.Column("baseline_id", sa.Integer(), nullable=False),
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("metric", sa.String(length=64), nullable=False),
        sa.Column("alarm_ms", sa.BigInteger(), nullable=False),
        sa.Column("side", sa.String(length=8), nullable=False),
        sa.Column("shift_start_ms", sa.BigInteger(), nullable=True),
        sa.Column("run_length", sa.Integer(), nullable=False),
        sa.Column("statistic", sa.Float(), nullable=False),
        sa.Column("estimated_shift", sa.Float(), nullable=False),
        sa.ForeignKeyConstraint(
            ["baseline_id"],
            ["baselines.id"],
            name=op.f("fk_drift_events_baseline_id_baselines"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_drift_events")),
    )
    op.create_index(
        op.f("ix_drift_events_baseline_id"), "drift_events", ["baseline_id"], unique=False
    )
    op.create_index(
        "ix_drift_events_unit_metric_alarm",
        "drift_events",
        ["unit_id", "metric", "alarm_ms"],
        unique=False,
    )


def downgrade() -> None:
    op.drop_index("ix_drift_events_unit_metric_alarm", table_name="drift_events")
    op.drop_index(op.f("ix_drift_events_baseline_id"), table_name="drift_events")
    op.drop_table("drift_events")
    op.drop_index(
        op.f("ix_baseline_chart_checkpoints_baseline_id"), table_name="baseline_chart_checkpoints"
    )
    op.drop_table("baseline_chart_checkpoints")
    op.drop_index("uq_baselines_one_active", table_name="baselines")
    op.drop_index(op.f("ix_baselines_unit_id"), table_name="baselines")
    op.drop_table("baselines")
