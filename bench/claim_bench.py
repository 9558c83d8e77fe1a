"""What the fair claim order costs next to a first-in-first-out claim, on SQLite and PostgreSQL.

The queue holds a flood: one key with ``--queued`` runs waiting and ``--history`` finished
runs, a few other keys with a run each waiting. Each claim is made in a transaction that is
rolled back, so every one sees the same queue; the fair claim (``storage.runs.queue.claim_run``:
fewest running, least recently served, oldest waiting) and a first-in-first-out claim (the
oldest claimable run, the order before) are timed side by side, and which run each takes
is printed: the fair claim takes another key's run, FIFO the flood's oldest.

    python bench/claim_bench.py [--queued N] [--history N] [--backend sqlite|postgresql|both]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
import uuid
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from datetime import timedelta
from pathlib import Path

from sqlalchemy import create_engine, insert, select, text, update
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from backtest.plan import parse_plan  # noqa: E402
from storage.audit import lock_audit_log  # noqa: E402
from storage.db import (  # noqa: E402
    Run,  # noqa: E402
    make_engine,
    session_factory,
    upgrade,  # noqa: E402
    utc_now,  # noqa: E402
)
from storage.runs import (
    claim_run,  # noqa: E402
    start_run,  # noqa: E402
)
from storage.specs import register_plan  # noqa: E402

SERVER_URL = "postgresql+psycopg://postgres@127.0.0.1:5432/test"
FLOOD, OTHERS = "flood-key", ("team-a", "team-b", "team-c")
REPEATS = 20


def fill(session: Session, queued: int, history: int) -> None:
    """The flood's finished and waiting runs, then one waiting run per other key."""
    plan_id = register_plan(session, parse_plan({"horizon": 2}), actor=FLOOD)
    start = utc_now() - timedelta(days=1)

    def row(requester: str, i: int, status: str) -> dict:
        at = start + timedelta(seconds=i)
        done = status == "succeeded"
        return {"plan_id": plan_id, "seed": 0, "requested_by": requester, "status": status,
                "queued_at": at, "started_at": at if done else None,
                "finished_at": at if done else None, "folds_done": 0, "attempts": int(done),
                "estimated_fits": 10}

    session.execute(insert(Run), [row(FLOOD, i, "succeeded") for i in range(history)])
    session.execute(insert(Run), [row(FLOOD, history + i, "queued") for i in range(queued)])
    session.execute(insert(Run), [row(key, history + queued + i, "queued")
                                  for i, key in enumerate(OTHERS)])


def fifo_claim(session: Session) -> int | None:
    """The claim before: the oldest claimable run, taken and started the same way."""
    lock_audit_log(session)
    now = utc_now()
    oldest = (select(Run.id).where((Run.status == "queued") | (
        (Run.status == "running") & ((Run.lease_expires_at.is_(None))
                                     | (Run.lease_expires_at <= now))))
              .order_by(Run.queued_at, Run.id).limit(1)
              .with_for_update(skip_locked=True).scalar_subquery())
    run_id = session.execute(update(Run).where(Run.id == oldest)
                             .values(lease_owner="bench", lease_expires_at=now)
                             .returning(Run.id).execution_options(synchronize_session=False)
                             ).scalar()
    start_run(session, run_id, actor="bench", lease_owner="bench", lease_expires_at=now)
    return run_id


def fair_claim(session: Session) -> int | None:
    claim = claim_run(session, owner="bench", lease_seconds=30, max_running=2)
    return None if claim is None else claim.lease.run_id


def timed(url: str, claim: Callable[[Session], int | None]) -> tuple[float, str]:
    engine = make_engine(url)
    sessions = session_factory(engine)
    seconds, taken = [], None
    for _ in range(REPEATS):
        with sessions() as session:
            began = time.perf_counter()
            run_id = claim(session)
            seconds.append(time.perf_counter() - began)
            taken = session.scalar(select(Run.requested_by).where(Run.id == run_id))
            session.rollback()
    engine.dispose()
    return statistics.median(seconds), taken or "nothing"


def bench(url: str, queued: int, history: int) -> None:
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        fill(session, queued, history)
    engine.dispose()
    fifo, fifo_taken = timed(url, fifo_claim)
    fair, fair_taken = timed(url, fair_claim)
    print(f"  first-in-first-out claim: {fifo * 1000:8.2f} ms (median of {REPEATS}), "
          f"takes a run of {fifo_taken}")
    print(f"  fair claim:               {fair * 1000:8.2f} ms (median of {REPEATS}), "
          f"takes a run of {fair_taken}")
    print(f"  fair / FIFO: {fair / fifo:.2f}")


@contextmanager
def sqlite_store() -> Iterator[str]:
    with tempfile.TemporaryDirectory() as directory:
        url = f"sqlite:///{directory}/bench.db"
        upgrade(url)
        yield url


@contextmanager
def postgres_store(server_url: str) -> Iterator[str]:
    server = create_engine(server_url, isolation_level="AUTOCOMMIT")
    name = f"foldline_bench_{uuid.uuid4().hex[:8]}"
    with server.connect() as connection:
        connection.execute(text(f'CREATE DATABASE "{name}"'))
    try:
        url = make_url(server_url).set(database=name).render_as_string(hide_password=False)
        upgrade(url)
        yield url
    finally:
        with server.connect() as connection:
            connection.execute(text(f'DROP DATABASE "{name}" WITH (FORCE)'))
        server.dispose()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--queued", type=int, default=5000)
    parser.add_argument("--history", type=int, default=20000)
    parser.add_argument("--backend", choices=["sqlite", "postgresql", "both"], default="both")
    args = parser.parse_args()
    print(f"queue: {args.queued} runs of {FLOOD} waiting ({args.history} finished), "
          f"{len(OTHERS)} other keys with one run each")
    if args.backend in ("sqlite", "both"):
        print("sqlite:")
        with sqlite_store() as url:
            bench(url, args.queued, args.history)
    if args.backend in ("postgresql", "both"):
        print("postgresql:")
        with postgres_store(SERVER_URL) as url:
            bench(url, args.queued, args.history)


if __name__ == "__main__":
    main()
