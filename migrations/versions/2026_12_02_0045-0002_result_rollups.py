"""Rollups of results per 10 minutes and per hour (count, sum, min, max, OR of flags) for
fast long-range charts; an index of results by (unit, time) for range deletes and
rollup refreshes.

Revision ID: 0002
Revises: 0001
Created: 2026-12-02 00:45:00
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0002"
down_revision: str | None = "0001"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

LEVELS_MS = (600_000, 3_600_000)


def upgrade() -> None:
    op.create_index("ix_results_unit_id_t_ms", "results", ["unit_id", "t_ms"], unique=False)
    op.create_table(
        "result_rollups",
        sa.Column("unit_id", sa.Integer(), nullable=False),
        sa.Column("metric", sa.String(length=64), nullable=False),
        sa.Column("level_ms", sa.Integer(), nullable=False),
        sa.Column("t_ms", sa.BigInteger(), nullable=False),
        sa.Column("n", sa.Integer(), nullable=False),
        sa.Column("total", sa.Float(), nullable=True),
        sa.Column("low", sa.Float(), nullable=True),
        sa.Column("high", sa.Float(), nullable=True),
        sa.Column("bits", sa.BigInteger(), nullable=True),
        sa.ForeignKeyConstraint(
            ["unit_id"],
            ["units.id"],
            name=op.f("fk_result_rollups_unit_id_units"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint(
            "unit_id", "metric", "level_ms", "t_ms", name=op.f("pk_result_rollups")
        ),
    )
    # Rollups are derived data: build them for results stored before this revision.
    bind = op.get_bind()
    for level in LEVELS_MS:
        bind.execute(
            sa.text(
                "INSERT INTO result_rollups "
                "(unit_id, metric, level_ms, t_ms, n, total, low, high, bits) "
                "SELECT r.unit_id, r.metric, :lv, (r.t_ms / :lv) * :lv AS block, "
                "count(r.value), sum(r.value), min(r.value), max(r.value), NULL "
                "FROM results AS r JOIN units AS u ON u.id = r.unit_id "
                "GROUP BY r.unit_id, r.metric, block"
            ),
            {"lv": level},
        )
        # The OR of the flags per block, portably: few distinct values per block.
        rows = bind.execute(
            sa.text(
                "SELECT unit_id, (t_ms / :lv) * :lv AS block, CAST(value AS BIGINT) AS v "
                "FROM results WHERE metric = 'flags' AND value IS NOT NULL "
                "GROUP BY unit_id, block, v"
            ),
            {"lv": level},
        ).all()
        ored: dict[tuple[int, int], int] = {}
        for unit_id, block, value in rows:
            ored[(unit_id, block)] = ored.get((unit_id, block), 0) | int(value)
        if ored:
            bind.execute(
                sa.text(
                    "UPDATE result_rollups SET bits = :b WHERE unit_id = :u "
                    "AND metric = 'flags' AND level_ms = :lv AND t_ms = :t"
                ),
                [{"b": b, "u": u, "lv": level, "t": t} for (u, t), b in ored.items()],
            )


def downgrade() -> None:
    op.drop_table("result_rollups")
    op.drop_index("ix_results_unit_id_t_ms", table_name="results")
