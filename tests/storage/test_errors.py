"""The storage error hierarchy: one base, documented leaves with distinct stable codes."""

from __future__ import annotations

import pytest
from sqlalchemy import text
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from storage import errors
from storage.series import save_series_version
from tests.storage.builders import ACTOR, monthly_series

LEAVES = [errors.NotFoundError, errors.ConflictError, errors.ImmutableRecordError,
          errors.StoreUnavailableError, errors.ConfigurationError]


def test_every_leaf_has_a_docstring_and_its_own_code():
    found = set(errors.StorageError.__subclasses__())

    assert found == set(LEAVES)
    assert len({leaf.code for leaf in [errors.StorageError, *LEAVES]}) == len(LEAVES) + 1
    assert all(leaf.__doc__ and "\n" not in leaf.__doc__.strip() for leaf in LEAVES)


def test_a_duplicate_key_becomes_a_conflict_raised_from_the_driver_error(session: Session):
    save_series_version(session, monthly_series("sales/north"), actor=ACTOR)

    @errors.translates_errors
    def insert_series_again() -> None:
        session.execute(text(
            "INSERT INTO series (key, frequency, season_length, tags, created_at, created_by) "
            "VALUES ('sales/north', 'P1M', 12, '{}', '2030-01-01 00:00:00', 'x')"))

    with pytest.raises(errors.ConflictError) as caught, session.begin_nested():
        insert_series_again()

    assert isinstance(caught.value.__cause__, IntegrityError)
    assert caught.value.code == "conflict"
