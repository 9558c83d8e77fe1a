"""``foldline forecast``: issue a forecast into the ledger, list the ledger, show one, and
show what came true."""

from __future__ import annotations

import argparse
import io
from collections.abc import Iterable
from typing import Any

from sqlalchemy.orm import Session, sessionmaker

from backtest.tidy import write_csv
from service.cli.ledger_text import forecast_lines, outcome_lines
from service.cli.store import add_store_option, operator, run_in_store
from service.http.schemas.forecasts import ForecastOut, ForecastRow, OutcomeRow
from service.http.schemas.results import columns
from service.moments import MOMENT_HELP, point_in_time
from service.settings import checked_settings
from service.usecases import forecasts
from service.usecases.issue_forecast import IssueRequest, issue
from service.views.ledger_answers import forecast_out, forecast_rows, outcome_rows, outcome_set_out


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``forecast`` command group."""
    group = subparsers.add_parser("forecast", help="issue forecasts and read the ledger")
    commands = group.add_subparsers(dest="forecast_command", required=True, metavar="COMMAND")
    issuing = commands.add_parser("issue", help="fit a candidate on a series version and "
                                  "record its forecast")
    issuing.add_argument("series", metavar="SERIES")
    issuing.add_argument("--horizon", required=True, type=int, help="steps ahead")
    issuing.add_argument("--candidate", metavar="ID", help="default: the series' champion")
    issuing.add_argument("--version", type=int, metavar="N", help="default: the latest")
    issuing.add_argument("--levels", default=(80, 95), type=_levels,
                         help="interval levels in %% (default 80,95)")
    issuing.add_argument("--seed", type=int, default=0)
    issuing.set_defaults(handler=forecast_issue)
    listing = commands.add_parser("list", help="issued forecasts, oldest first")
    listing.add_argument("--series", metavar="SERIES")
    listing.add_argument("--candidate", metavar="ID")
    listing.add_argument("--from", dest="issued_from", metavar="TIME",
                         help=f"issued at or after: {MOMENT_HELP}")
    listing.add_argument("--to", dest="issued_to", metavar="TIME",
                         help=f"issued before: {MOMENT_HELP}")
    listing.add_argument("--horizon", type=int, help="only this step ahead")
    listing.add_argument("--csv", action="store_true", help="the flat ledger as CSV")
    listing.set_defaults(handler=forecast_list)
    show = commands.add_parser("show", help="one issued forecast")
    show.add_argument("forecast_id", type=int, metavar="ID")
    show.set_defaults(handler=forecast_show)
    outcomes = commands.add_parser("outcomes", help="what came true for a forecast")
    outcomes.add_argument("forecast_id", type=int, metavar="ID")
    outcomes.add_argument("--all", action="store_true", help="every version scored against")
    outcomes.add_argument("--csv", action="store_true")
    outcomes.set_defaults(handler=forecast_outcomes)
    for parser in (issuing, listing, show, outcomes):
        add_store_option(parser)


def forecast_issue(args: argparse.Namespace) -> int:
    def work(sessions: sessionmaker[Session]) -> str:
        request = IssueRequest(series_key=args.series, horizon=args.horizon,
                               levels=args.levels, seed=args.seed,
                               version=args.version, candidate_id=args.candidate)
        record, created = issue(sessions, request, checked_settings(), actor=operator())
        out = _out(forecasts.issued_forecast(sessions, record.forecast_id))
        note = "" if created else "identical inputs were issued before: "
        return note + "\n".join(forecast_lines(out))
    return run_in_store(args, work)


def forecast_list(args: argparse.Namespace) -> int:
    def work(sessions: sessionmaker[Session]) -> str:
        issued_from = point_in_time("--from", args.issued_from)
        issued_to = point_in_time("--to", args.issued_to)
        outs = [_out(n) for n in forecasts.issued_forecasts(
            sessions, series_key=args.series, candidate_id=args.candidate,
            issued_from=issued_from, issued_to=issued_to, limit=1_000_000)]
        if args.csv:
            return _csv((row for out in outs for row in forecast_rows(out, args.horizon)),
                        columns(ForecastRow))
        return "\n".join(line for out in outs
                         for line in _lines(out, args.horizon)) or "no forecasts issued"
    return run_in_store(args, work)


def forecast_show(args: argparse.Namespace) -> int:
    def work(sessions: sessionmaker[Session]) -> str:
        return "\n".join(forecast_lines(_out(forecasts.issued_forecast(sessions,
                                                                       args.forecast_id))))
    return run_in_store(args, work)


def forecast_outcomes(args: argparse.Namespace) -> int:
    def work(sessions: sessionmaker[Session]) -> str:
        found = forecasts.forecast_outcomes(sessions, args.forecast_id, every=args.all)
        out = _out(found.forecast)
        sets = [outcome_set_out(s, number, s.series_version_id == found.current_version_id)
                for s, number in found.sets]
        if args.csv:
            return _csv(outcome_rows(out, sets), columns(OutcomeRow))
        return "\n".join([*forecast_lines(out), *outcome_lines(sets)])
    return run_in_store(args, work)


def _out(issued: forecasts.Numbered) -> ForecastOut:
    return forecast_out(issued.record, issued.version)


def _lines(out: ForecastOut, horizon: int | None) -> list[str]:
    if horizon is None:
        return list(forecast_lines(out))
    steps = [s for s in out.steps if s.horizon == horizon]
    return list(forecast_lines(out.model_copy(update={"steps": steps}))) if steps else []


def _levels(text: str) -> tuple[int, ...]:
    try:
        return tuple(int(part) for part in text.split(","))
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a list like 80,95") from None


def _csv(rows: Iterable[dict[str, Any]], names: tuple[str, ...]) -> str:
    out = io.StringIO()
    write_csv(({name: row.get(name) for name in names} for row in rows), names, out)
    return out.getvalue().rstrip("\n")

