"""Signed checkpoints: a rewrite of the chain that recomputes every later hash, or a cut
of its latest events, passes the plain verification but not against a kept checkpoint."""

from __future__ import annotations

import json
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import select, text

from service.settings import get_settings
from storage.access import create_key
from storage.audit.contents import stored_digest
from storage.audit.log import event_hash
from storage.db import AuditEvent, make_engine, session_factory
from tests.storage.builders import drop_guards, monthly_series, run_and_store
from tests.storage.test_cli_db import _run

KEY = "a-test-secret-of-enough-length"


@pytest.fixture
def keyed(monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    monkeypatch.setenv("FOLDLINE_AUDIT_KEY", KEY)
    get_settings.cache_clear()
    yield
    get_settings.cache_clear()


def _stored_run(url: str) -> None:
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        run_and_store(session, [monthly_series("sales/north"), monthly_series("sales/south")])
    engine.dispose()


def _checkpoint(url: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> Path:
    assert _run("audit", "checkpoint", "--database-url", url) == 0
    path = tmp_path / "checkpoint.json"
    path.write_text(capsys.readouterr().out)
    return path


def _rewrite_a_score_and_every_later_hash(url: str) -> None:
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        for table in ("score", "audit_event"):
            drop_guards(session, table)
        session.execute(text("UPDATE score SET value = value / 2 WHERE metric = 'mase'"))
        events = session.scalars(select(AuditEvent).order_by(AuditEvent.seq)).all()
        previous = None
        for event in events:
            if event.action == "results.written" or previous is not None:
                digest = stored_digest(session, event.action, event.subject) or event.digest
                prev_hash = previous or event.prev_hash
                new_hash = event_hash(event.seq, event.occurred_at, event.actor, event.action,
                                      event.subject, digest, prev_hash)
                session.execute(text("UPDATE audit_event SET digest = :d, prev_hash = :p, "
                                     "hash = :h WHERE seq = :s"),
                                {"d": digest, "p": prev_hash, "h": new_hash, "s": event.seq})
                previous = new_hash
    engine.dispose()


def _add_a_key(url: str) -> None:
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        create_key(session, key_id="k1", name="ops-2", role="admin", secret_hash="ab" * 32,
                   actor="ops")
    engine.dispose()


def _cut_the_key_and_its_event(url: str) -> None:
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        for table in ("api_key", "audit_event"):
            drop_guards(session, table)
        session.execute(text("DELETE FROM api_key WHERE id = 'k1'"))
        session.execute(text("DELETE FROM audit_event WHERE subject = 'api_key/k1'"))
    engine.dispose()


def test_a_rewritten_chain_passes_alone_but_not_against_the_checkpoint(
        fresh_url: str, tmp_path: Path, keyed: None, capsys: pytest.CaptureFixture[str]):
    _stored_run(fresh_url)
    checkpoint = _checkpoint(fresh_url, tmp_path, capsys)
    assert set(json.loads(checkpoint.read_text())) == {"seq", "hash", "time", "mac"}

    _rewrite_a_score_and_every_later_hash(fresh_url)

    assert _run("audit", "verify", "--database-url", fresh_url) == 0  # no secret needed
    capsys.readouterr()
    assert _run("audit", "verify", "--database-url", fresh_url,
                "--checkpoint", str(checkpoint)) == 1
    assert "rewritten" in capsys.readouterr().out


def test_a_cut_log_is_caught_by_the_checkpoint(fresh_url: str, tmp_path: Path, keyed: None,
                                               capsys: pytest.CaptureFixture[str]):
    _stored_run(fresh_url)
    _add_a_key(fresh_url)
    checkpoint = _checkpoint(fresh_url, tmp_path, capsys)
    assert _run("audit", "verify", "--database-url", fresh_url,
                "--checkpoint", str(checkpoint)) == 0

    _cut_the_key_and_its_event(fresh_url)  # the latest event and what it vouched for

    assert _run("audit", "verify", "--database-url", fresh_url) == 0
    capsys.readouterr()
    assert _run("audit", "verify", "--database-url", fresh_url,
                "--checkpoint", str(checkpoint)) == 1
    assert "cut back" in capsys.readouterr().out


def test_a_forged_checkpoint_or_a_missing_key_is_an_error(
        fresh_url: str, tmp_path: Path, keyed: None, capsys: pytest.CaptureFixture[str],
        monkeypatch: pytest.MonkeyPatch):
    _stored_run(fresh_url)
    checkpoint = _checkpoint(fresh_url, tmp_path, capsys)
    body = json.loads(checkpoint.read_text())
    checkpoint.write_text(json.dumps(body | {"seq": body["seq"] - 1}))

    assert _run("audit", "verify", "--database-url", fresh_url,
                "--checkpoint", str(checkpoint)) == 2
    assert "MAC does not match" in capsys.readouterr().err
    monkeypatch.delenv("FOLDLINE_AUDIT_KEY")
    get_settings.cache_clear()
    assert _run("audit", "checkpoint", "--database-url", fresh_url) == 2
    assert "FOLDLINE_AUDIT_KEY is not set" in capsys.readouterr().err
