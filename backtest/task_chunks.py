"""Cutting (series, candidate) tasks into chunks of origins when a run has fewer tasks
that estimate than worker processes, so that a run of one series still keeps every
worker busy.

A chunk starts at a re-estimating origin, so its folds are those the whole task computes
there (:func:`backtest.runner.model_folds`). The process gathering the results joins a
task's chunks in origin order and runs the steps that need every fold: combining,
empirical intervals and the fit-stability summary (:func:`join_chunks`). The first chunk
also computes the full-series diagnostics. Chunks are cut for about equal cost, an
estimation counted as the length of its training window (the observations it filters)
and the diagnostics as one estimation on the whole series; kept-parameter folds are
nearly free.

Not cut: closed-form tasks (cheap), tasks whose family starts each estimation from the
previous one (the plan's ``warm_start``), and every task when the run already has at
least as many estimating tasks as workers.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from backtest.candidates import Candidate
from backtest.diagnosis import (
    CandidateOutcome,
    candidate_diagnostics,
    candidate_outcome,
    evaluate_candidate,
)
from backtest.evidence_types import Report
from backtest.folds import Origin
from backtest.models.base import ModelSpec
from backtest.models.combination import CombinationSpec
from backtest.plan import Plan
from backtest.results import FoldResult
from backtest.runner import finish_folds, model_folds
from backtest.series import Series

Task = tuple[Series, Candidate, Plan, tuple[Origin, ...]]


@dataclass(frozen=True)
class Unit:
    """What one worker call computes: task ``task`` whole, or a run of its origins."""

    task: int
    origins: tuple[Origin, ...]
    whole: bool
    diagnose: bool


@dataclass(frozen=True)
class ChunkFolds:
    """A chunk's folds with the model's own intervals (one sequence per combination member,
    else one) and, for the first chunk, the full-series diagnostics."""

    members: tuple[tuple[FoldResult, ...], ...]
    diagnostics: Report | None

    @property
    def fold_count(self) -> int:
        return len(self.members[0])


def plan_units(tasks: Sequence[Task], n_jobs: int) -> list[Unit]:
    """The units of a run on ``n_jobs`` local workers, in task and origin order: with fewer
    cuttable tasks than workers, each of those is cut into ``ceil(n_jobs / count)``
    chunks (fewer if it has fewer re-estimations); every other task is one unit."""
    cuttable = [i for i, (_, candidate, plan, _) in enumerate(tasks)
                if _cuttable(candidate.spec, plan)]
    parts = math.ceil(n_jobs / len(cuttable)) if 0 < len(cuttable) < n_jobs else 1
    units = []
    for i, (series, _, plan, origins) in enumerate(tasks):
        if parts == 1 or i not in cuttable:
            units.append(Unit(i, origins, True, True))
            continue
        chunks = split_origins(origins, parts, diagnostics_cost=(
            len(series) if plan.assessment == "full" else 0))
        units += [Unit(i, chunk, len(chunks) == 1, k == 0) for k, chunk in enumerate(chunks)]
    return units


def _cuttable(spec: ModelSpec, plan: Plan) -> bool:
    if isinstance(spec, CombinationSpec):
        return any(_cuttable(member, plan) for member in spec.members) and not any(
            plan.warm_start and member.warm_startable for member in spec.members)
    return not spec.closed_form and not (plan.warm_start and spec.warm_startable)


def split_origins(origins: Sequence[Origin], parts: int, diagnostics_cost: int = 0
                  ) -> list[tuple[Origin, ...]]:
    """``origins`` in at most ``parts`` consecutive runs, each starting at a re-estimating
    origin (the first run at the first origin), of about equal cost; the first run carries
    ``diagnostics_cost`` besides its folds."""
    starts = [i for i, o in enumerate(origins) if i == 0 or o.reestimate]
    bounds = [*starts, len(origins)]
    costs = [origins[a].end - origins[a].start for a in starts]
    total = diagnostics_cost + sum(costs)
    cuts, reached = [0], float(diagnostics_cost)
    for group, cost in enumerate(costs[:-1], start=1):
        reached += cost
        target = total * len(cuts) / parts
        # cut after this group if that lands nearer the target than one group more
        if len(cuts) < parts and abs(reached - target) <= abs(reached + costs[group] - target):
            cuts.append(group)
    cuts.append(len(starts))
    return [tuple(origins[bounds[a]:bounds[b]]) for a, b in zip(cuts, cuts[1:])]


def run_unit(series: Series, candidate: Candidate, plan: Plan, origins: tuple[Origin, ...],
             whole: bool, diagnose: bool) -> CandidateOutcome | ChunkFolds:
    """A worker's call: the whole task's outcome, or a chunk's folds."""
    if whole:
        return evaluate_candidate(series, candidate, plan, origins)
    diagnostics = candidate_diagnostics(series, candidate, plan) if diagnose else None
    return ChunkFolds(model_folds(series, candidate, plan, origins), diagnostics)


def join_chunks(candidate: Candidate, plan: Plan, chunks: Sequence[ChunkFolds]
                ) -> CandidateOutcome:
    """A task's outcome from its chunks in origin order; equal to the whole task's."""
    members = tuple(tuple(f for chunk in chunks for f in chunk.members[k])
                    for k in range(len(chunks[0].members)))
    folds = finish_folds(candidate, plan, members)
    return candidate_outcome(candidate, folds, chunks[0].diagnostics)
