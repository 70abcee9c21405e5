"""Alert rules, their evaluation state and alerts; webhook subscriptions, the event
outbox, deliveries and their attempt log.

Revision ID: 0003
Revises: 0002
Created: 2026-12-02 01:00:00
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0003"
down_revision: str | None = "0002"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "webhook_subscriptions",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("url", sa.String(length=2000), nullable=False),
        sa.Column("description", sa.String(length=500), nullable=True),
        sa.Column("secret", sa.String(length=200), nullable=False),
        sa.Column("previous_secret", sa.String(length=200), nullable=True),
        sa.Column("previous_expires_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("event_types", sa.JSON(), nullable=True),
        sa.Column("plants", sa.JSON(), nullable=True),
        sa.Column("units", sa.JSON(), nullable=True),
        sa.Column("severities", sa.JSON(), nullable=True),
        sa.Column("enabled", sa.Boolean(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_webhook_subscriptions")),
    )
    op.create_table(
        "alert_rules",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("plant_id", sa.Integer(), nullable=False),
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=64), nullable=False),
        sa.Column("kind", sa.String(length=16), nullable=False),
        sa.Column("metric", sa.String(length=64), nullable=True),
        sa.Column("direction", sa.String(length=8), nullable=True),
        sa.Column("limit", sa.Float(), nullable=True),
        sa.Column("clear_limit", sa.Float(), nullable=True),
        sa.Column("for_seconds", sa.Float(), nullable=False),
        sa.Column("clear_for_seconds", sa.Float(), nullable=False),
        sa.Column("after_seconds", sa.Float(), nullable=True),
        sa.Column("flag_names", sa.JSON(), nullable=True),
        sa.Column("tag_names", sa.JSON(), nullable=True),
        sa.Column("severity", sa.String(length=16), nullable=False),
        sa.Column("enabled", sa.Boolean(), nullable=False),
        sa.Column("description", sa.String(length=500), nullable=True),
        sa.Column("source", sa.String(length=8), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["plant_id"],
            ["plants.id"],
            name=op.f("fk_alert_rules_plant_id_plants"),
            ondelete="CASCADE",
        ),
        sa.ForeignKeyConstraint(
            ["unit_id"], ["units.id"], name=op.f("fk_alert_rules_unit_id_units"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_alert_rules")),
        sa.UniqueConstraint("plant_id", "name", name=op.f("uq_alert_rules_plant_id_name")),
    )
    op.create_index(op.f("ix_alert_rules_plant_id"), "alert_rules", ["plant_id"], unique=False)
    op.create_index(op.f("ix_alert_rules_unit_id"), "alert_rules", ["unit_id"], unique=False)

    op.create_table(
        "alerts",
        sa.Column("id", sa.BigInteger().with_variant(sa.Integer(), "sqlite"), nullable=False),
        sa.Column("rule_id", sa.Integer(), nullable=True),
        sa.Column("plant_id", sa.Integer(), nullable=False),
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("rule_name", sa.String(length=64), nullable=False),
        sa.Column("kind", sa.String(length=16), nullable=False),
        sa.Column("metric", sa.String(length=64), nullable=True),
        sa.Column("severity", sa.String(length=16), nullable=False),
        sa.Column("status", sa.String(length=16), nullable=False),
        sa.Column("message", sa.String(length=500), nullable=False),
        sa.Column("began_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("fired_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("resolved_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("value", sa.Float(), nullable=True),
        sa.Column("resolved_value", sa.Float(), nullable=True),
        sa.Column("expected", sa.Float(), nullable=True),
        sa.Column("drift", sa.Float(), nullable=True),
        sa.Column("drift_rel", sa.Float(), nullable=True),
        sa.Column("cost_per_h", sa.Float(), nullable=True),
        sa.Column("details", sa.JSON(), nullable=False),
        sa.Column("acknowledged_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("acknowledged_by", sa.String(length=200), nullable=True),
        sa.Column("ack_note", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["plant_id"], ["plants.id"], name=op.f("fk_alerts_plant_id_plants"), ondelete="CASCADE"
        ),
        sa.ForeignKeyConstraint(
            ["rule_id"],
            ["alert_rules.id"],
            name=op.f("fk_alerts_rule_id_alert_rules"),
            ondelete="SET NULL",
        ),
        sa.ForeignKeyConstraint(
            ["unit_id"], ["units.id"], name=op.f("fk_alerts_unit_id_units"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_alerts")),
    )
    op.create_index(op.f("ix_alerts_plant_id"), "alerts", ["plant_id"], unique=False)
    op.create_index(op.f("ix_alerts_rule_id"), "alerts", ["rule_id"], unique=False)
    op.create_index("ix_alerts_status_began", "alerts", ["status", "began_at"], unique=False)
    op.create_index("ix_alerts_unit_began", "alerts", ["unit_id", "began_at"], unique=False)

    op.create_table(
        "alert_rule_states",
        sa.Column("rule_id", sa.Integer(), nullable=False),
        sa.Column("phase", sa.String(length=16), nullable=False),
        sa.Column("since_ms", sa.BigInteger(), nullable=True),
        sa.Column("clear_since_ms", sa.BigInteger(), nullable=True),
        sa.Column("last_t_ms", sa.BigInteger(), nullable=True),
        sa.Column("alert_id", sa.BigInteger().with_variant(sa.Integer(), "sqlite"), nullable=True),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["alert_id"],
            ["alerts.id"],
            name=op.f("fk_alert_rule_states_alert_id_alerts"),
            ondelete="SET NULL",
        ),
        sa.ForeignKeyConstraint(
            ["rule_id"],
            ["alert_rules.id"],
            name=op.f("fk_alert_rule_states_rule_id_alert_rules"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("rule_id", name=op.f("pk_alert_rule_states")),
    )
    op.create_index(
        op.f("ix_alert_rule_states_alert_id"), "alert_rule_states", ["alert_id"], unique=False
    )

    op.create_table(
        "webhook_events",
        sa.Column("id", sa.String(length=40), nullable=False),
        sa.Column("type", sa.String(length=32), nullable=False),
        sa.Column("body", sa.Text(), nullable=False),
        sa.Column("alert_id", sa.BigInteger().with_variant(sa.Integer(), "sqlite"), nullable=True),
        sa.Column("ordering_key", sa.String(length=64), nullable=False),
        sa.Column("occurred_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["alert_id"],
            ["alerts.id"],
            name=op.f("fk_webhook_events_alert_id_alerts"),
            ondelete="SET NULL",
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_webhook_events")),
    )
    op.create_index(
        op.f("ix_webhook_events_alert_id"), "webhook_events", ["alert_id"], unique=False
    )

    op.create_table(
        "webhook_deliveries",
        sa.Column("id", sa.BigInteger().with_variant(sa.Integer(), "sqlite"), nullable=False),
        sa.Column("event_id", sa.String(length=40), nullable=False),
        sa.Column("subscription_id", sa.Integer(), nullable=False),
        sa.Column("ordering_key", sa.String(length=64), nullable=False),
        sa.Column("state", sa.String(length=16), nullable=False),
        sa.Column("attempts", sa.Integer(), nullable=False),
        sa.Column("next_attempt_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("lease_owner", sa.String(length=128), nullable=True),
        sa.Column("lease_expires_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("last_status", sa.Integer(), nullable=True),
        sa.Column("last_error", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("delivered_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["event_id"],
            ["webhook_events.id"],
            name=op.f("fk_webhook_deliveries_event_id_webhook_events"),
            ondelete="CASCADE",
        ),
        sa.ForeignKeyConstraint(
            ["subscription_id"],
            ["webhook_subscriptions.id"],
            name=op.f("fk_webhook_deliveries_subscription_id_webhook_subscriptions"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_webhook_deliveries")),
    )
    op.create_index(
        "ix_webhook_deliveries_claim",
        "webhook_deliveries",
        ["state", "next_attempt_at"],
        unique=False,
    )
    op.create_index(
        op.f("ix_webhook_deliveries_event_id"), "webhook_deliveries", ["event_id"], unique=False
    )
    op.create_index(
        "ix_webhook_deliveries_order",
        "webhook_deliveries",
        ["subscription_id", "ordering_key", "id"],
        unique=False,
    )

    op.create_table(
        "webhook_attempts",
        sa.Column("id", sa.BigInteger().with_variant(sa.Integer(), "sqlite"), nullable=False),
        sa.Column(
            "delivery_id", sa.BigInteger().with_variant(sa.Integer(), "sqlite"), nullable=False
        ),
        sa.Column("number", sa.Integer(), nullable=False),
        sa.Column("started_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("duration_ms", sa.Float(), nullable=True),
        sa.Column("address", sa.String(length=64), nullable=True),
        sa.Column("status_code", sa.Integer(), nullable=True),
        sa.Column("error", sa.Text(), nullable=True),
        sa.Column("outcome", sa.String(length=16), nullable=False),
        sa.ForeignKeyConstraint(
            ["delivery_id"],
            ["webhook_deliveries.id"],
            name=op.f("fk_webhook_attempts_delivery_id_webhook_deliveries"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_webhook_attempts")),
    )
    op.create_index(
        op.f("ix_webhook_attempts_delivery_id"), "webhook_attempts", ["delivery_id"], unique=False
    )


def downgrade() -> None:
    op.drop_index(op.f("ix_webhook_attempts_delivery_id"), table_name="webhook_attempts")

    op.drop_table("webhook_attempts")
    op.drop_index("ix_webhook_deliveries_order", table_name="webhook_deliveries")
    op.drop_index(op.f("ix_webhook_deliveries_event_id"), table_name="webhook_deliveries")
    op.drop_index("ix_webhook_deliveries_claim", table_name="webhook_deliveries")

    op.drop_table("webhook_deliveries")
    op.drop_index(op.f("ix_webhook_events_alert_id"), table_name="webhook_events")

    op.drop_table("webhook_events")
    op.drop_index(op.f("ix_alert_rule_states_alert_id"), table_name="alert_rule_states")

    op.drop_table("alert_rule_states")
    op.drop_index("ix_alerts_unit_began", table_name="alerts")
    op.drop_index("ix_alerts_status_began", table_name="alerts")
    op.drop_index(op.f("ix_alerts_rule_id"), table_name="alerts")
    op.drop_index(op.f("ix_alerts_plant_id"), table_name="alerts")

    op.drop_table("alerts")
    op.drop_index(op.f("ix_alert_rules_unit_id"), table_name="alert_rules")
    op.drop_index(op.f("ix_alert_rules_plant_id"), table_name="alert_rules")

    op.drop_table("alert_rules")
    op.drop_table("webhook_subscriptions")
