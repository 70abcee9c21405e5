"""Tags: every stated uncertainty figure (absolute, of reading or of span; standard or
expanded; systematic or random) as a JSON list in SI.

Revision ID: 0005
Revises: 0004
Created: 2026-12-02 01:30:00
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0005"
down_revision: str | None = "0004"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    # Existing tags keep uncertainty_si / uncertainty_rel; the service reads those as a
    # standard, systematic figure until the plant file is applied again.
    with op.batch_alter_table("tags") as batch:
        batch.add_column(sa.Column("uncertainty_figures", sa.JSON(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("tags") as batch:
        batch.drop_column("uncertainty_figures")
