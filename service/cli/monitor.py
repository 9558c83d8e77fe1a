"""``foldline monitor``: a series' champion (or a named candidate) under monitoring, or the
flags of every series' champion."""

from __future__ import annotations

import argparse
import sys

from sqlalchemy.orm import Session, sessionmaker

from service.cli.ledger_text import flag_lines, monitoring_lines
from service.cli.store import add_store_option, run_in_store
from service.usecases.monitoring import monitor_champions, monitor_series
from service.views.ledger_answers import monitoring_out


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``monitor`` command."""
    parser = subparsers.add_parser("monitor", help="realised accuracy and flags of champions")
    parser.add_argument("series", nargs="?", metavar="SERIES",
                        help="one series in detail (default: the flags of every champion)")
    parser.add_argument("--candidate", metavar="ID", help="default: the series' champion")
    parser.add_argument("--json", action="store_true", help="the report as JSON")
    add_store_option(parser)
    parser.set_defaults(handler=monitor_command)


def monitor_command(args: argparse.Namespace) -> int:
    if args.candidate is not None and args.series is None:
        print("foldline: error: --candidate needs a SERIES", file=sys.stderr)
        return 2

    def work(sessions: sessionmaker[Session]) -> str:
        with sessions.begin() as session:
            if args.series is not None:
                found = [monitor_series(session, args.series, args.candidate)]
            else:
                found, _ = monitor_champions(session)
        outs = [monitoring_out(m) for m in found]
        if args.json:
            return "\n".join(out.model_dump_json() for out in outs)
        if args.series is not None:
            return "\n".join(monitoring_lines(outs[0]))
        return "\n".join(line for out in outs for line in
                         [f"{out.series_key}: champion {out.candidate_id}",
                          *flag_lines(out.flags)]) or "no series has a champion"
    return run_in_store(args, work)
