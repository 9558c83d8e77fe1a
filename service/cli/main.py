"""The ``foldline`` command line.

Bad input ends with a one-line message on stderr and exit code 2, never a traceback.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

from backtest.cost import estimate_cost
from backtest.engine import run_backtest
from backtest.errors import BacktestError
from backtest.results import BacktestResult
from backtest.tidy import (
    FOLD_COLUMNS,
    RANKING_COLUMNS,
    SCORE_COLUMNS,
    fold_rows,
    ranking_rows,
    read_series_csv,
    score_rows,
    write_csv,
)
from service.cli import champion as cli_champion
from service.cli import db as cli_db
from service.cli import dossier as cli_dossier
from service.cli import forecast as cli_forecast
from service.cli import keys as cli_keys
from service.cli import monitor as cli_monitor
from service.cli import report as cli_report
from service.cli import serve as cli_serve
from service.cli import worker as cli_run
from service.cli.terminal import ProgressBar, ranking_report
from service.demo.run import OutputFolderError, run_demo
from service.errors import ServiceError
from service.limits import check_cost, series_limits
from service.settings import InvalidSettingsError, checked_settings
from service.usecases.submit_run import parse_run_inputs

#: How ``foldline backtest`` takes the frequency of series without a frequency column.
FREQUENCY_OPTION = "add the --frequency option (e.g. --frequency P1M) for the whole file"


class UsageError(Exception):
    """A problem with the command's arguments or files."""


def _read_json(path: str, what: str) -> object:
    try:
        return json.loads(Path(path).read_text())
    except OSError as exc:
        raise UsageError(f"{what} file {path}: {exc.strerror}") from None
    except json.JSONDecodeError as exc:
        raise UsageError(f"{what} file {path}, line {exc.lineno}: invalid JSON ({exc.msg})") \
            from None


def write_outputs(result: BacktestResult, out: Path) -> list[Path]:
    """Write the full JSON result and the tidy CSV tables to ``out``."""
    out.mkdir(parents=True, exist_ok=True)
    paths = [out / "result.json", out / "folds.csv", out / "scores.csv", out / "ranking.csv"]
    paths[0].write_text(json.dumps(result.to_dict(), indent=1, allow_nan=False))
    for path, rows, columns in zip(paths[1:], (fold_rows, score_rows, ranking_rows),
                                   (FOLD_COLUMNS, SCORE_COLUMNS, RANKING_COLUMNS)):
        with path.open("w", newline="") as handle:
            write_csv(rows(result), columns, handle)
    return paths


def _cmd_backtest(args: argparse.Namespace) -> int:
    try:
        text = Path(args.series).read_text()
    except OSError as exc:
        raise UsageError(f"series file {args.series}: {exc.strerror}") from None
    settings = checked_settings()
    try:
        with series_limits(settings, ""):
            series = [one.series for one in read_series_csv(
                text, frequency=args.frequency, season_length=args.season_length,
                fill=args.fill, max_length=settings.max_observations,
                max_series=settings.max_series_per_upload, frequency_option=FREQUENCY_OPTION)]
    except (BacktestError, ServiceError) as exc:
        raise UsageError(f"series file {args.series}: {exc}") from None
    candidates, plan = parse_run_inputs(_read_json(args.candidates, "candidates"),
                                        _read_json(args.plan, "plan"), settings)
    check_cost(estimate_cost(series, candidates, plan), settings)
    progress = None if args.json else ProgressBar()
    result = run_backtest(series, candidates, plan, n_jobs=args.jobs, progress=progress)
    if args.out:
        paths = write_outputs(result, Path(args.out))
    if args.json:
        json.dump(result.to_dict(), sys.stdout, allow_nan=False)
        sys.stdout.write("\n")
        return 0
    print(ranking_report(result))
    if args.out:
        print("\nresults written to:\n" + "\n".join(f"  {p}" for p in paths))
    return 0


def _cmd_demo(args: argparse.Namespace) -> int:
    try:
        return run_demo(Path(args.out), args.jobs)
    except OutputFolderError as exc:
        raise UsageError(str(exc)) from None


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every subcommand."""
    parser = argparse.ArgumentParser(prog="foldline", description="Forecast backtesting "
                                     "and model audit.")
    commands = parser.add_subparsers(dest="command", required=True)
    bt = commands.add_parser("backtest", help="backtest candidates on series from a CSV file")
    bt.add_argument("series", help="tidy CSV: series_key, period, value [, frequency, "
                    "season_length, unit]; rows in any order")
    bt.add_argument("--candidates", required=True, help="JSON list of candidate specs")
    bt.add_argument("--plan", required=True, help="JSON backtest plan")
    bt.add_argument("--out", help="directory for result.json and the CSV tables")
    bt.add_argument("--json", action="store_true", help="print the full result as JSON")
    bt.add_argument("--frequency", help="ISO 8601 duration for series without a frequency "
                    "column, e.g. P1M")
    bt.add_argument("--season-length", type=int, help="season length for every series")
    bt.add_argument("--fill", choices=("reject", "linear"), default="reject",
                    help="what to do with missing periods (default: reject)")
    bt.add_argument("--jobs", type=int, default=1, help="worker processes (default 1)")
    bt.set_defaults(handler=_cmd_backtest)
    demo = commands.add_parser("demo", help="run the invented demo scenario through the "
                               "service (server, worker, HTTP)")
    demo.add_argument("--out", default="foldline-out/demo", help="output folder: new, empty "
                      "or an earlier demo's; each run writes a new numbered subfolder")
    demo.add_argument("--jobs", type=int, default=2, help="worker processes (default 2)")
    demo.set_defaults(handler=_cmd_demo)
    cli_serve.register(commands)
    cli_run.register(commands)
    cli_db.register(commands)
    cli_report.register(commands)
    cli_keys.register(commands)
    cli_champion.register(commands)
    cli_dossier.register(commands)
    cli_forecast.register(commands)
    cli_monitor.register(commands)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``foldline`` console script."""
    args = build_parser().parse_args(argv)
    handler: Callable[[argparse.Namespace], int] = args.handler
    try:
        return handler(args)
    except (UsageError, BacktestError, ServiceError, InvalidSettingsError) as exc:
        print(f"foldline: error: {' '.join(str(exc).split())}", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
