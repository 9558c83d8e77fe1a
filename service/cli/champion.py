"""``foldline champion``: choose a series' champion, show it, its history, a run's suggestions."""

from __future__ import annotations

import argparse

from sqlalchemy.orm import Session, sessionmaker

from service.cli.ledger_text import champion_lines, suggestion_lines
from service.cli.store import add_store_option, operator, run_in_store
from service.usecases import champions


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``champion`` command group."""
    group = subparsers.add_parser("champion", help="choose and read series' champions")
    commands = group.add_subparsers(dest="champion_command", required=True, metavar="COMMAND")
    chosen = commands.add_parser("set", help="choose a candidate as a series' champion")
    chosen.add_argument("series", metavar="SERIES", help="the series key")
    chosen.add_argument("--candidate", required=True, metavar="ID", help="candidate id")
    chosen.add_argument("--run", required=True, type=int, metavar="RUN_ID",
                        help="the succeeded run that backtested it")
    chosen.add_argument("--reason", required=True, help="why (kept with the choice)")
    chosen.set_defaults(handler=champion_set)
    show = commands.add_parser("show", help="a series' current champion")
    show.add_argument("series", metavar="SERIES")
    show.set_defaults(handler=champion_show)
    history = commands.add_parser("history", help="every champion choice of a series")
    history.add_argument("series", metavar="SERIES")
    history.set_defaults(handler=champion_history_command)
    suggest = commands.add_parser("suggest", help="the champions a run suggests")
    suggest.add_argument("run_id", type=int, metavar="RUN_ID")
    suggest.set_defaults(handler=champion_suggest)
    for parser in (chosen, show, history, suggest):
        add_store_option(parser)


def champion_set(args: argparse.Namespace) -> int:
    def work(sessions: sessionmaker[Session]) -> str:
        choice = champions.choose(sessions, series_key=args.series,
                                  candidate_id=args.candidate, run_id=args.run,
                                  reason=args.reason, actor=operator())
        return "\n".join(champion_lines([choice]))
    return run_in_store(args, work)


def champion_show(args: argparse.Namespace) -> int:
    def work(sessions: sessionmaker[Session]) -> str:
        choice = champions.champion_of(sessions, args.series)
        return "\n".join(champion_lines([choice])) if choice else \
            f"series {args.series} has no champion"
    return run_in_store(args, work)


def champion_history_command(args: argparse.Namespace) -> int:
    def work(sessions: sessionmaker[Session]) -> str:
        return "\n".join(champion_lines(champions.champion_choices(sessions, args.series)))
    return run_in_store(args, work)


def champion_suggest(args: argparse.Namespace) -> int:
    def work(sessions: sessionmaker[Session]) -> str:
        return "\n".join(suggestion_lines(champions.suggestions(sessions, args.run_id)))
    return run_in_store(args, work)
