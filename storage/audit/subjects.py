"""Audit subjects in words: ``series_version/13`` becomes ``sales/north version 2``, and
``api_key/k1`` ``API key bi-north (submitter, scope sales/north/)``.

The audit log names what an event touched by internal id (``storage.audit.contents``' subject
names); a reader wants series keys, version and run numbers and candidate labels. This
module renders a batch of subjects with one query per kind, keeping unknown ones as they
are.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable

from sqlalchemy import select
from sqlalchemy.orm import Session

from storage.audit.digest import canonical_json
from storage.db import (
    ApiKey,
    CandidateRecord,
    ChampionChoiceRecord,
    IssuedForecastRecord,
    SeriesRecord,
    SeriesVersion,
)
from storage.errors import translates_errors


@translates_errors
def describe_subjects(session: Session, subjects: Iterable[str]) -> dict[str, str]:
    """Each subject with its description (the subject itself where there is nothing to add)."""
    parts: dict[str, list[list[str]]] = defaultdict(list)
    for subject in set(subjects):
        kind, _, rest = subject.partition("/")
        parts[kind].append(rest.split("/"))
    versions = _versions(session, {int(p[-1]) for kind in ("series_version", "series_result",
                                                            "outcome_set")
                                   for p in parts[kind] if p[-1].isdigit()})
    series = _series(session, {int(p[0]) for p in parts["series"] if p[0].isdigit()})
    forecasts = _forecasts(session, {int(p[0]) for kind in ("issued_forecast", "outcome_set")
                                     for p in parts[kind] if p[0].isdigit()})
    choices = _choices(session, {int(p[0]) for p in parts["champion_choice"] if p[0].isdigit()})
    specs = _candidate_specs(session, {p[0] for p in parts["candidate"]})
    keys = {key_id: f"{name} ({role}, {'scope ' + scope if scope else 'global'})"
            for key_id, name, role, scope in session.execute(
                select(ApiKey.id, ApiKey.name, ApiKey.role, ApiKey.scope)
                .where(ApiKey.id.in_([p[0] for p in parts["api_key"]])))}
    described = {
        "series": lambda p: f"series {series[int(p[0])]}",
        "series_version": lambda p: f"series {versions[int(p[0])]}",
        "run": lambda p: f"run {p[0]}",
        "series_result": lambda p: f"run {p[0]} results for {versions[int(p[1])]}",
        "champion_choice": lambda p: f"champion choice {p[0]} of {choices[int(p[0])]}",
        "issued_forecast": lambda p: f"issued forecast {p[0]} of {forecasts[int(p[0])]}",
        "outcome_set": lambda p: (f"outcomes of forecast {p[0]} ({forecasts[int(p[0])]}) "
                                  f"against {versions[int(p[1])]}"),
        "candidate": lambda p: f"candidate {specs[p[0]]}",
        "plan": lambda p: f"plan {p[0][:12]}",
        "api_key": lambda p: f"API key {keys[p[0]]}",
    }
    answer = {}
    for kind, found in parts.items():
        for path in found:
            subject = f"{kind}/{'/'.join(path)}"
            try:
                answer[subject] = described[kind](path)
            except (KeyError, ValueError, IndexError):  # a subject this store cannot resolve
                answer[subject] = subject
    return answer


def _versions(session: Session, ids: set[int]) -> dict[int, str]:
    rows = session.execute(select(SeriesVersion.id, SeriesRecord.key, SeriesVersion.number)
                           .join(SeriesRecord, SeriesRecord.id == SeriesVersion.series_id)
                           .where(SeriesVersion.id.in_(ids)))
    return {version_id: f"{key} version {number}" for version_id, key, number in rows}


def _series(session: Session, ids: set[int]) -> dict[int, str]:
    return dict(session.execute(select(SeriesRecord.id, SeriesRecord.key)
                                .where(SeriesRecord.id.in_(ids))).tuples().all())


def _forecasts(session: Session, ids: set[int]) -> dict[int, str]:
    return dict(session.execute(
        select(IssuedForecastRecord.id, SeriesRecord.key)
        .join(SeriesRecord, SeriesRecord.id == IssuedForecastRecord.series_id)
        .where(IssuedForecastRecord.id.in_(ids))).tuples().all())


def _choices(session: Session, ids: set[int]) -> dict[int, str]:
    return dict(session.execute(
        select(ChampionChoiceRecord.id, SeriesRecord.key)
        .join(SeriesRecord, SeriesRecord.id == ChampionChoiceRecord.series_id)
        .where(ChampionChoiceRecord.id.in_(ids))).tuples().all())


def _candidate_specs(session: Session, ids: set[str]) -> dict[str, str]:
    """A candidate's label depends on a series' season length, which a catalog entry does
    not have: it is named by its canonical spec instead."""
    rows = session.execute(select(CandidateRecord.id, CandidateRecord.spec)
                           .where(CandidateRecord.id.in_(ids)))
    return {candidate_id: canonical_json(spec) for candidate_id, spec in rows}
