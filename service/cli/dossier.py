"""``foldline dossier``: a series' champion, its justification, issued forecasts against
their actuals and the audit events, as they stood at a point in time."""

from __future__ import annotations

import argparse
import io

from sqlalchemy.orm import Session, sessionmaker

from backtest.tidy import write_csv
from service.cli.store import add_store_option, run_in_store
from service.errors import InvalidInputError
from service.http.schemas.dossier import ChampionEntryOut, DossierOut, StepRow
from service.http.schemas.results import columns
from service.limits import MAX_DOSSIER_ITEMS
from service.moments import point_in_time
from service.usecases.dossier import read_dossier_of
from service.views.dossier import dossier_out, step_rows


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``dossier`` command."""
    command = subparsers.add_parser(
        "dossier", help="which model a series trusted, why, and how its forecasts fared")
    command.add_argument("series", metavar="SERIES", help="the series key")
    command.add_argument("--as-of", metavar="WHEN", help="ISO 8601 date or time (default: now;"
                         " a date means the end of that day, a time without offset is UTC)")
    command.add_argument("--issued-from", metavar="WHEN", help="issued at or after (ISO 8601)")
    command.add_argument("--issued-to", metavar="WHEN", help="issued before (ISO 8601)")
    command.add_argument("--target-from", metavar="PERIOD", help="a target period on or after")
    command.add_argument("--target-to", metavar="PERIOD", help="a target period on or before")
    command.add_argument("--limit", type=int, default=200, metavar="N",
                         help="at most N forecasts and N audit events (the latest)")
    command.add_argument("--csv", action="store_true", help="one row per forecast step")
    add_store_option(command)
    command.set_defaults(handler=dossier_command)


def dossier_command(args: argparse.Namespace) -> int:
    def work(sessions: sessionmaker[Session]) -> str:
        if not 1 <= args.limit <= MAX_DOSSIER_ITEMS:
            raise InvalidInputError(f"--limit {args.limit}: give 1 to {MAX_DOSSIER_ITEMS} "
                                    "(the API's limit too)")
        dossier = read_dossier_of(
            sessions, args.series, as_of=point_in_time("--as-of", args.as_of, day_end=True),
            limit=args.limit, issued_from=point_in_time("--issued-from", args.issued_from),
            issued_to=point_in_time("--issued-to", args.issued_to),
            target_from=args.target_from, target_to=args.target_to)
        if args.csv:
            out = io.StringIO()
            names = columns(StepRow)
            write_csv(({k: _cell(v) for k, v in row.model_dump().items()}
                       for row in step_rows(dossier)), names, out)
            return out.getvalue().rstrip("\n")
        return "\n".join(dossier_lines(dossier_out(dossier)))
    return run_in_store(args, work)


def dossier_lines(dossier: DossierOut) -> list[str]:
    """The dossier as text for a terminal."""
    unit = f", unit {dossier.unit}" if dossier.unit else ""
    lines = [f"{dossier.series_key} ({dossier.frequency}, season length "
             f"{dossier.season_length}{unit}) as of {dossier.as_of.isoformat()}"]
    lines.append("champion: " + (_choice(dossier.champion) if dossier.champion else "none"))
    lines += ["  earlier: " + _choice(c) for c in dossier.champion_history[:-1]]
    lines.append("data versions:")
    lines += [f"  v{v.version}  {v.n_obs} obs {v.first_period}..{v.last_period}  "
              f"{v.change}  sha256 {v.fingerprint}  {v.created_at:%Y-%m-%d} by {v.created_by}"
              for v in dossier.versions]
    lines.append(f"issued forecasts ({len(dossier.forecasts)}):")
    for f in dossier.forecasts:
        realised = "no actuals yet" if f.realised_mase is None else (
            f"realised MASE {f.realised_mase:.3f} against promised "
            + ("n/a" if f.promised_mase is None else f"{f.promised_mase:.3f}")
            + "  coverage " + " ".join(f"{level}%:{share:.2f}"
                                       for level, share in sorted(f.coverage.items())))
        lines.append(f"  #{f.forecast_id}  {f.issued_at:%Y-%m-%d} by {f.issued_by}  "
                     f"{f.candidate}  origin {f.origin}  v{f.series_version}  "
                     f"{f.outcomes_known}/{len(f.periods)} known  {realised}")
    lines.append(f"audit events: {len(dossier.events)}")
    lines += [f"  #{e.seq}  {e.occurred_at.isoformat()}  {e.actor}  {e.action}  "
              f"{e.subject_label} [{e.subject}]" for e in dossier.events]
    return lines


def _choice(entry: ChampionEntryOut) -> str:
    found = entry.justification
    evidence = "no run named" if found is None else (
        f"run {found.run_id} (v{found.series_version}) rank {found.rank}, score "
        + ("n/a" if found.score is None else f"{found.score:.3f}")
        + (", in the confidence set" if found.in_confidence_set else ""))
    return (f"{entry.candidate} [{entry.candidate_id}] chosen {entry.chosen_at:%Y-%m-%d %H:%M} "
            f"by {entry.chosen_by}: \"{entry.reason}\"; {evidence}")


def _cell(value: object) -> object:
    return value.isoformat() if hasattr(value, "isoformat") else value
