"""Errors raised by the backtest engine; each carries a stable ``code`` for callers to map."""

from __future__ import annotations


class BacktestError(Exception):
    """Base class for every error the engine raises on bad input.

    ``pointer`` says where in the caller's input the mistake is (a JSON pointer, RFC 6901,
    such as ``/candidates/2``), when the caller knows it; see :meth:`at`.
    """

    code = "backtest_error"
    pointer = ""

    def at(self, pointer: str) -> BacktestError:
        """This error, placed at ``pointer`` in the caller's input."""
        self.pointer = pointer
        return self


class SeriesError(BacktestError):
    """A series is malformed: bad periods, values, or too short for the plan."""

    code = "invalid_series"


class SeriesTooLongError(SeriesError):
    """A series would hold more observations (gaps filled) than the caller allows; raised
    from the span of its periods, before anything is filled in."""

    code = "series_too_long"

    def __init__(self, key: str, length: int, limit: int) -> None:
        super().__init__(f"series {key!r} spans {length} periods (gaps filled); at most "
                         f"{limit} are accepted")
        self.key, self.length, self.limit = key, length, limit


class TooManySeriesError(SeriesError):
    """A file holds more series than the caller allows; raised on the first one too many."""

    code = "too_many_series"

    def __init__(self, count: int, limit: int) -> None:
        super().__init__(f"the file holds at least {count} series; at most {limit} are "
                         "accepted at once")
        self.count, self.limit = count, limit


class CandidateError(BacktestError):
    """A candidate model specification is malformed or impossible; ``position`` is its place
    in a list of candidates, counting from 1, when one was given."""

    code = "invalid_candidate"

    def __init__(self, message: str, *, position: int | None = None) -> None:
        super().__init__(message)
        self.position = position


class PlanError(BacktestError):
    """A backtest plan is malformed or impossible."""

    code = "invalid_plan"
