"""Migrations: the schema Alembic builds is exactly the schema the models declare."""

from __future__ import annotations

from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import Engine, inspect

import api.models
from api.core import migrate


def test_upgrade_head_leaves_no_autogenerate_difference(engine: Engine) -> None:
    # The session database was migrated from empty to head by the db_url fixture.
    with engine.connect() as conn:
        context = MigrationContext.configure(conn, opts={"compare_type": True})
        head = ScriptDirectory.from_config(migrate.alembic_config()).get_current_head()
        assert context.get_current_revision() == head
        diff = compare_metadata(context, api.models.Base.metadata)
    assert diff == []


def test_every_model_table_exists(engine: Engine) -> None:
    tables = set(inspect(engine).get_table_names())
    assert set(api.models.Base.metadata.tables) <= tables
    assert "alembic_version" in tables


def test_migration_file_names_are_dated() -> None:
    names = sorted(p.name for p in (migrate.PROJECT_ROOT / "migrations" / "versions").glob("*.py"))
    assert names, "no migration files"
    for name in names:
        date = name[:10]
        assert len(date.split("_")) == 3 and all(part.isdigit() for part in date.split("_")), name
