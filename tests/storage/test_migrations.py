"""The migrations build exactly the schema the models declare (an ``alembic check``)."""

from __future__ import annotations

from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import Column, Engine, Integer, MetaData, Table

from storage.db import Base
from storage.db.migrate import alembic_config, upgrade


def _differences(engine: Engine, metadata: MetaData) -> list:
    with engine.connect() as connection:
        context = MigrationContext.configure(connection, opts={"compare_type": True})
        return compare_metadata(context, metadata)


def test_upgraded_database_matches_the_models(engine: Engine):
    assert _differences(engine, Base.metadata) == []


def test_comparison_notices_a_model_the_migrations_lack(engine: Engine):
    extended = MetaData(naming_convention=Base.metadata.naming_convention)
    for table in Base.metadata.tables.values():
        table.to_metadata(extended)
    Table("unmigrated", extended, Column("id", Integer, primary_key=True))

    differences = _differences(engine, extended)

    assert [(d[0], d[1].name) for d in differences] == [("add_table", "unmigrated")]


def test_database_is_at_head_and_upgrading_again_changes_nothing(store_url: str,
                                                                 engine: Engine):
    head = ScriptDirectory.from_config(alembic_config()).get_current_head()

    upgrade(store_url)

    with engine.connect() as connection:
        assert MigrationContext.configure(connection).get_current_revision() == head
    assert _differences(engine, Base.metadata) == []
