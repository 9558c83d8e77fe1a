"""Turning posted series (JSON, tidy CSV, appended actuals) into validated series, within limits.

Everything here runs before anything is written: a request that fails any check stores
nothing. Limits come from the settings (``FOLDLINE_MAX_OBSERVATIONS``,
``FOLDLINE_MAX_SERIES_PER_UPLOAD``).
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import replace

from backtest.errors import SeriesTooLongError, TooManySeriesError
from backtest.series import FillPolicy, Series, make_series
from backtest.tidy import read_series_csv
from service.errors import FieldError, InvalidInputError, LimitExceededError
from service.http.schemas.series import ObservationIn, SeriesIn
from service.settings import Settings
from service.usecases.series_keys import SeriesKeyError, normalised_key
from storage.errors import ConflictError


def series_from_json(body: SeriesIn, settings: Settings) -> Series:
    """The series a JSON body describes."""
    _check_count(len(body.observations), settings, "/observations")
    with _numbers_in_range(), _bounded(settings, "/observations"):
        return make_series(body.key, body.frequency,
                           [(o.period, o.value) for o in body.observations],
                           season_length=body.season_length, fill=body.fill,
                           max_length=settings.max_observations)


def series_from_csv(data: bytes, settings: Settings, *, frequency: str | None,
                    season_length: int | None, fill: FillPolicy) -> list[Series]:
    """The series of a tidy CSV upload, in order of first appearance."""
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InvalidInputError(f"the CSV is not UTF-8 text (byte {exc.start} cannot be "
                                "decoded)", errors=[FieldError("body", "", "not UTF-8")]) \
            from None
    with _numbers_in_range(), _bounded(settings, ""):
        series = read_series_csv(text, frequency=frequency, season_length=season_length,
                                 fill=fill, max_length=settings.max_observations,
                                 max_series=settings.max_series_per_upload)
    keyed = [replace(one, key=_upload_key(one.key)) for one in series]
    repeated = len({one.key for one in keyed}) < len(keyed)
    if repeated:
        raise InvalidInputError("two series keys of the upload are spellings of one key "
                                "(they are equal in Unicode NFC)",
                                errors=[FieldError("body", "", "invalid series key")])
    return keyed


def _upload_key(key: str) -> str:
    try:
        return normalised_key(key)
    except SeriesKeyError as exc:
        raise InvalidInputError(f"series key {key[:40]!r}: {exc}",
                                errors=[FieldError("body", "", "invalid series key")]) from None


def with_appended(stored: Series, observations: Sequence[ObservationIn],
                  settings: Settings) -> Series:
    """``stored`` with new observations merged in, under its own fill policy.

    A period already stored must come with its stored value (so a retried append changes
    nothing); a different value would rewrite history, which takes a full post instead.
    """
    filled = set(stored.filled)
    by_position = {stored.frequency.position(label): (label, float(value))
                   for label, value in zip(stored.labels(), stored.values)
                   if label not in filled}
    for index, observation in enumerate(observations):
        position = stored.frequency.position(observation.period)
        old = by_position.get(position)
        if old is not None and old[1] != observation.value:
            raise ConflictError(
                f"period {old[0]} of series {stored.key!r} is stored as {old[1]:g}, not "
                f"{observation.value:g} (observation {index}); appending cannot change "
                "history: post the whole series to revise it")
        by_position[position] = (observation.period, observation.value)
    rows = [by_position[p] for p in sorted(by_position)]
    _check_count(len(rows), settings, "/observations", stored.key)
    with _numbers_in_range(), _bounded(settings, "/observations"):
        return make_series(stored.key, stored.frequency.duration, rows,
                           season_length=stored.season_length, fill=stored.fill_policy,
                           max_length=settings.max_observations)


@contextmanager
def _numbers_in_range() -> Iterator[None]:
    """Turn arithmetic overflow on absurd input (a frequency of a billion months, a period
    in the year 10**9) into an input error."""
    try:
        yield
    except OverflowError as exc:
        raise InvalidInputError(f"a period or frequency is out of range ({exc})",
                                errors=[FieldError("body", "", "out of range")]) from None


@contextmanager
def _bounded(settings: Settings, pointer: str) -> Iterator[None]:
    """Turn the engine's span and count checks into limit problems naming the setting."""
    try:
        yield
    except SeriesTooLongError as exc:
        _check_count(exc.length, settings, pointer, exc.key)
        raise
    except TooManySeriesError as exc:
        raise LimitExceededError(
            f"the upload holds at least {exc.count} series; at most {exc.limit} are accepted "
            "at once (FOLDLINE_MAX_SERIES_PER_UPLOAD); nothing was stored",
            errors=[FieldError("body", "", "too many series")]) from None


def _check_count(count: int, settings: Settings, pointer: str, key: str | None = None) -> None:
    limit = settings.max_observations
    if count > limit:
        which = f"series {key!r} has" if key else "the series has"
        raise LimitExceededError(
            f"{which} {count} observations; at most {limit} per series are accepted "
            "(FOLDLINE_MAX_OBSERVATIONS); nothing was stored",
            errors=[FieldError("body", pointer, f"more than {limit} observations")])
