"""Initial schema: plants, fuels, tags, units, bindings, readings, work spans, results,
uploads and API keys.

Revision ID: 0001
Revises: (none)
Created: 2026-12-02 00:08:39.225166
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0001"
down_revision: str | None = None
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "api_keys",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("prefix", sa.String(length=16), nullable=False),
        sa.Column("secret_sha256", sa.String(length=64), nullable=False),
        sa.Column("scopes", sa.JSON(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("revoked_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("last_used_at", sa.DateTime(timezone=True), nullable=True),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_api_keys")),
        sa.UniqueConstraint("prefix", name=op.f("uq_api_keys_prefix")),
    )
    op.create_table(
        "plants",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("slug", sa.String(length=64), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("time_zone", sa.String(length=64), nullable=False),
        sa.Column("t0_k", sa.Float(), nullable=False),
        sa.Column("p0_pa", sa.Float(), nullable=False),
        sa.Column("ambient_tag", sa.String(length=128), nullable=True),
        sa.Column("atmosphere_pa", sa.Float(), nullable=False),
        sa.Column("interval_seconds", sa.Integer(), nullable=False),
        sa.Column("fuel_price_per_gj", sa.Float(), nullable=True),
        sa.Column("currency", sa.String(length=3), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_plants")),
        sa.UniqueConstraint("slug", name=op.f("uq_plants_slug")),
    )
    op.create_table(
        "readings",
        sa.Column("tag_id", sa.Integer(), nullable=False),
        sa.Column("t_ms", sa.BigInteger(), nullable=False),
        sa.Column("value", sa.Float(), nullable=False),
        sa.PrimaryKeyConstraint("tag_id", "t_ms", name=op.f("pk_readings")),
    )
    op.create_table(
        "results",
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("metric", sa.String(length=64), nullable=False),
        sa.Column("t_ms", sa.BigInteger(), nullable=False),
        sa.Column("value", sa.Float(), nullable=True),
        sa.PrimaryKeyConstraint("unit_id", "metric", "t_ms", name=op.f("pk_results")),
    )
    op.create_table(
        "fuels",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("plant_id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=128), nullable=False),
        sa.Column("spec", sa.JSON(), nullable=False),
        sa.Column("hhv_j_per_kg", sa.Float(), nullable=False),
        sa.Column("lhv_j_per_kg", sa.Float(), nullable=True),
        sa.Column("exergy_to_lhv_ratio", sa.Float(), nullable=False),
        sa.Column("density_kg_per_m3", sa.Float(), nullable=True),
        sa.Column("co2_kg_per_j", sa.Float(), nullable=True),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["plant_id"], ["plants.id"], name=op.f("fk_fuels_plant_id_plants"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_fuels")),
        sa.UniqueConstraint("plant_id", "name", name=op.f("uq_fuels_plant_id_name")),
    )
    op.create_index(op.f("ix_fuels_plant_id"), "fuels", ["plant_id"], unique=False)
    op.create_table(
        "tags",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("plant_id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=128), nullable=False),
        sa.Column("description", sa.String(length=500), nullable=True),
        sa.Column("unit", sa.String(length=64), nullable=False),
        sa.Column("si_unit", sa.String(length=32), nullable=True),
        sa.Column("low", sa.Float(), nullable=True),
        sa.Column("high", sa.Float(), nullable=True),
        sa.Column("low_si", sa.Float(), nullable=True),
        sa.Column("high_si", sa.Float(), nullable=True),
        sa.Column("uncertainty_si", sa.Float(), nullable=True),
        sa.Column("uncertainty_rel", sa.Float(), nullable=True),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["plant_id"], ["plants.id"], name=op.f("fk_tags_plant_id_plants"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_tags")),
        sa.UniqueConstraint("plant_id", "name", name=op.f("uq_tags_plant_id_name")),
    )
    op.create_index(op.f("ix_tags_plant_id"), "tags", ["plant_id"], unique=False)
    op.create_table(
        "uploads",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("plant_id", sa.Integer(), nullable=False),
        sa.Column("api_key_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("filename", sa.String(length=255), nullable=False),
        sa.Column("sha256", sa.String(length=64), nullable=False),
        sa.Column("size_bytes", sa.Integer(), nullable=False),
        sa.Column("mode", sa.String(length=16), nullable=False),
        sa.Column("status", sa.String(length=16), nullable=False),
        sa.Column("stored", sa.Integer(), nullable=False),
        sa.Column("replaced", sa.Integer(), nullable=False),
        sa.Column("unchanged", sa.Integer(), nullable=False),
        sa.Column("rejected", sa.Integer(), nullable=False),
        sa.Column("errors", sa.JSON(), nullable=False),
        sa.Column("notices", sa.JSON(), nullable=False),
        sa.Column("units_recomputed", sa.JSON(), nullable=False),
        sa.ForeignKeyConstraint(
            ["api_key_id"],
            ["api_keys.id"],
            name=op.f("fk_uploads_api_key_id_api_keys"),
            ondelete="SET NULL",
        ),
        sa.ForeignKeyConstraint(
            ["plant_id"], ["plants.id"], name=op.f("fk_uploads_plant_id_plants"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_uploads")),
    )
    op.create_index(op.f("ix_uploads_api_key_id"), "uploads", ["api_key_id"], unique=False)
    op.create_index(op.f("ix_uploads_plant_id"), "uploads", ["plant_id"], unique=False)
    op.create_index(op.f("ix_uploads_sha256"), "uploads", ["sha256"], unique=False)
    op.create_table(
        "units",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("plant_id", sa.Integer(), nullable=False),
        sa.Column("slug", sa.String(length=64), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("kind", sa.String(length=64), nullable=False),
        sa.Column("parameters", sa.JSON(), nullable=False),
        sa.Column("fuel_id", sa.Integer(), nullable=True),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["fuel_id"], ["fuels.id"], name=op.f("fk_units_fuel_id_fuels"), ondelete="RESTRICT"
        ),
        sa.ForeignKeyConstraint(
            ["plant_id"], ["plants.id"], name=op.f("fk_units_plant_id_plants"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_units")),
        sa.UniqueConstraint("slug", name=op.f("uq_units_slug")),
    )
    op.create_index(op.f("ix_units_fuel_id"), "units", ["fuel_id"], unique=False)
    op.create_index(op.f("ix_units_plant_id"), "units", ["plant_id"], unique=False)
    op.create_table(
        "result_meta",
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("kind", sa.String(length=64), nullable=False),
        sa.Column("formulation", sa.String(length=64), nullable=False),
        sa.Column("engine_version", sa.String(length=32), nullable=False),
        sa.Column("computed_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["unit_id"], ["units.id"], name=op.f("fk_result_meta_unit_id_units"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("unit_id", name=op.f("pk_result_meta")),
    )
    op.create_table(
        "unit_bindings",
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("role", sa.String(length=64), nullable=False),
        sa.Column("tag_id", sa.Integer(), nullable=False),
        sa.ForeignKeyConstraint(
            ["tag_id"], ["tags.id"], name=op.f("fk_unit_bindings_tag_id_tags"), ondelete="RESTRICT"
        ),
        sa.ForeignKeyConstraint(
            ["unit_id"],
            ["units.id"],
            name=op.f("fk_unit_bindings_unit_id_units"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("unit_id", "role", name=op.f("pk_unit_bindings")),
    )
    op.create_index(op.f("ix_unit_bindings_tag_id"), "unit_bindings", ["tag_id"], unique=False)
    op.create_table(
        "work_spans",
        sa.Column("id", sa.BigInteger().with_variant(sa.Integer(), "sqlite"), nullable=False),
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("start_ms", sa.BigInteger(), nullable=False),
        sa.Column("end_ms", sa.BigInteger(), nullable=False),
        sa.Column("state", sa.String(length=16), nullable=False),
        sa.Column("reason", sa.String(length=32), nullable=False),
        sa.Column("lease_owner", sa.String(length=128), nullable=True),
        sa.Column("lease_expires_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("attempts", sa.Integer(), nullable=False),
        sa.Column("last_error", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["unit_id"], ["units.id"], name=op.f("fk_work_spans_unit_id_units"), ondelete="CASCADE"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_work_spans")),
    )
    op.create_index(
        "ix_work_spans_claim", "work_spans", ["state", "lease_expires_at"], unique=False
    )
    op.create_index(op.f("ix_work_spans_unit_id"), "work_spans", ["unit_id"], unique=False)


def downgrade() -> None:
    op.drop_index(op.f("ix_work_spans_unit_id"), table_name="work_spans")
    op.drop_index("ix_work_spans_claim", table_name="work_spans")
    op.drop_table("work_spans")
    op.drop_index(op.f("ix_unit_bindings_tag_id"), table_name="unit_bindings")
    op.drop_table("unit_bindings")
    op.drop_table("result_meta")
    op.drop_index(op.f("ix_units_plant_id"), table_name="units")
    op.drop_index(op.f("ix_units_fuel_id"), table_name="units")
    op.drop_table("units")
    op.drop_index(op.f("ix_uploads_sha256"), table_name="uploads")
    op.drop_index(op.f("ix_uploads_plant_id"), table_name="uploads")
    op.drop_index(op.f("ix_uploads_api_key_id"), table_name="uploads")
    op.drop_table("uploads")
    op.drop_index(op.f("ix_tags_plant_id"), table_name="tags")
    op.drop_table("tags")
    op.drop_index(op.f("ix_fuels_plant_id"), table_name="fuels")
    op.drop_table("fuels")
    op.drop_table("results")
    op.drop_table("readings")
    op.drop_table("plants")
    op.drop_table("api_keys")
