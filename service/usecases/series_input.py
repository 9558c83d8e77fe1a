"""Turning posted series (JSON, tidy CSV, appended actuals) into validated series, within limits.

Everything here runs before anything is written: a request that fails any check stores
nothing. Limits are checked by :mod:`service.limits` (``FOLDLINE_MAX_OBSERVATIONS``,
``FOLDLINE_MAX_SERIES_PER_UPLOAD``), as ``foldline backtest`` checks a file.
"""

from __future__ import annotations

import re
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import replace

from backtest.series import FillPolicy, Series, make_series
from backtest.tidy import FileSeries, read_series_csv
from service.errors import FieldError, InvalidInputError
from service.http.schemas.series import ObservationIn, SeriesIn
from service.limits import MAX_UNIT_LENGTH, UNIT_PATTERN, check_observations, series_limits
from service.settings import Settings
from service.usecases.series_keys import SeriesKeyError, normalised_key
from storage.errors import ConflictError

#: How an upload gives the frequency of series without a frequency column.
FREQUENCY_PARAMETER = "add the frequency query parameter (e.g. ?frequency=P1M) for the whole file"


def series_from_json(body: SeriesIn, settings: Settings) -> Series:
    """The series a JSON body describes."""
    check_observations(len(body.observations), settings, "/observations")
    with _numbers_in_range(), series_limits(settings, "/observations"):
        return make_series(body.key, body.frequency,
                           [(o.period, o.value) for o in body.observations],
                           season_length=body.season_length, fill=body.fill,
                           max_length=settings.max_observations)


def series_from_csv(data: bytes, settings: Settings, *, frequency: str | None,
                    season_length: int | None, unit: str | None,
                    fill: FillPolicy) -> list[FileSeries]:
    """The series of a tidy CSV upload (with their units), in order of first appearance."""
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InvalidInputError(f"the CSV is not UTF-8 text (byte {exc.start} cannot be "
                                "decoded)", errors=[FieldError("body", "", "not UTF-8")]) \
            from None
    with _numbers_in_range(), series_limits(settings, ""):
        read = read_series_csv(text, frequency=frequency, season_length=season_length,
                               unit=unit, fill=fill, max_length=settings.max_observations,
                               max_series=settings.max_series_per_upload,
                               frequency_option=FREQUENCY_PARAMETER)
    keyed = [replace(one, series=replace(one.series, key=_upload_key(one.series.key)),
                     unit=_unit(one.series.key, one.unit)) for one in read]
    repeated = len({one.series.key for one in keyed}) < len(keyed)
    if repeated:
        raise InvalidInputError("two series keys of the upload are spellings of one key "
                                "(they are equal in Unicode NFC)",
                                errors=[FieldError("body", "", "invalid series key")])
    return keyed


def _unit(key: str, unit: str | None) -> str | None:
    if unit is not None and (len(unit) > MAX_UNIT_LENGTH or not re.match(UNIT_PATTERN, unit)):
        raise InvalidInputError(f"series {key[:40]!r}: the unit has at most {MAX_UNIT_LENGTH} "
                                "characters and no control characters",
                                errors=[FieldError("body", "", "invalid unit")])
    return unit


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
    by_position = {stored.frequency.position(label): (label, float(value), "stored")
                   for label, value in zip(stored.labels(), stored.values)
                   if label not in filled}
    for number, observation in enumerate(observations, start=1):
        position = stored.frequency.position(observation.period)
        old = by_position.get(position)
        if old is not None and old[1] != observation.value:
            raise ConflictError(
                f"series {stored.key!r}: period {old[0]} is stored as {old[1]:g}; the "
                f"append gives {observation.value:g} for {observation.period}; appending "
                "cannot change history: post the whole series to revise it")
        by_position[position] = (old[0] if old else observation.period, observation.value,
                                 old[2] if old else f"observation {number}")
    merged = [by_position[p] for p in sorted(by_position)]
    check_observations(len(merged), settings, "/observations", stored.key)
    with _numbers_in_range(), series_limits(settings, "/observations"):
        return make_series(stored.key, stored.frequency.duration,
                           [(label, value) for label, value, _ in merged],
                           season_length=stored.season_length, fill=stored.fill_policy,
                           max_length=settings.max_observations,
                           places=[place for _, _, place in merged])


@contextmanager
def _numbers_in_range() -> Iterator[None]:
    """Turn arithmetic overflow on absurd input (a frequency of a billion months, a period
    in the year 10**9) into an input error."""
    try:
        yield
    except OverflowError as exc:
        raise InvalidInputError(f"a period or frequency is out of range ({exc})",
                                errors=[FieldError("body", "", "out of range")]) from None
