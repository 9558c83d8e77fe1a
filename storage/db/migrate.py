"""Schema migrations, applied programmatically with Alembic's command API.

The Alembic scripts live inside the package (``storage/db/migrations``), so this works from an
installed package as well as from the repository (where ``alembic.ini`` points at the same
scripts for the ``alembic`` command line).
"""

from __future__ import annotations

from pathlib import Path

from alembic import command
from alembic.config import Config
from alembic.util import CommandError
from sqlalchemy.exc import SQLAlchemyError

from storage.db.connection import make_engine
from storage.errors import ConfigurationError, translate

MIGRATIONS = Path(__file__).resolve().parent / "migrations"


def alembic_config() -> Config:
    """An Alembic configuration built in code, pointing at the packaged scripts."""
    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS))
    return config


def upgrade(url: str, revision: str = "head") -> None:
    """Apply the migrations up to ``revision`` to the database at ``url``, in one transaction."""
    engine = make_engine(url)
    config = alembic_config()
    try:
        with engine.begin() as connection:
            config.attributes["connection"] = connection
            command.upgrade(config, revision)
    except CommandError as exc:
        raise ConfigurationError(f"migration failed: {exc}") from exc
    except SQLAlchemyError as exc:
        raise translate(exc) from exc
    finally:
        engine.dispose()
