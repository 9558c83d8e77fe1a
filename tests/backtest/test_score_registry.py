"""The score registry is the one list of scores: the scores computed, their order, the
rankable ones and the contributor guide all follow it."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from backtest.plan import PlanError, parse_plan
from backtest.results import FoldResult
from backtest.score_registry import (
    RANK_SCORES,
    RANKABLE,
    SCORES,
    level_rule,
    loss_of,
)
from backtest.scoring import score_candidate

GUIDE = Path(__file__).resolve().parents[2] / "DEVELOPERS.md"


def _fold(number: int, actuals: tuple[float, ...], point: tuple[float, ...]) -> FoldResult:
    return FoldResult(series_key="s", candidate_id="c", fold=number, origin=str(number),
                      train_start="0", train_size=8, reestimated=True, status="ok",
                      reason=None, params={}, warnings=(),
                      periods=tuple(f"p{number}{h}" for h in range(len(actuals))),
                      actuals=actuals, point=point,
                      lower={80: tuple(p - 1 for p in point)},
                      upper={80: tuple(p + 1 for p in point)}, scale=1.0, scale_sq=1.0)


def test_a_candidates_scores_come_in_registry_order_at_every_horizon():
    folds = [_fold(0, (1.0, 2.0), (1.5, 1.0)), _fold(1, (2.0, 4.0), (2.0, 3.0))]

    scores = score_candidate("c", folds, 2, [80])

    expected = [(s.name, None if s.group != "level" else 80) for s in SCORES]
    for horizon in (1, 2, None):
        assert [(s.metric, s.level) for s in scores if s.horizon == horizon] == expected


def test_a_plan_ranks_by_exactly_the_unlevelled_lower_is_better_scores():
    for kind in SCORES:
        rankable = kind.lower_is_better and kind.group != "level"
        assert (kind.loss is not None) == rankable
    for name in RANK_SCORES:
        assert parse_plan({"horizon": 2, "rank_by": name}).rank_by == name
    for name in {s.name for s in SCORES} - set(RANK_SCORES):
        with pytest.raises(PlanError, match="rank_by"):
            parse_plan({"horizon": 2, "rank_by": name})
        with pytest.raises(KeyError):
            loss_of(name)


def test_the_bi_ranking_takes_every_lower_is_better_score_with_its_level_rule():
    assert set(RANKABLE) == {s.name for s in SCORES if s.lower_is_better}
    assert set(RANK_SCORES) <= set(RANKABLE)
    assert {name: level_rule(name) for name in RANKABLE if level_rule(name) != "none"} == {
        "winkler": "required", "msis": "required", "pinball": "optional"}


def _guide_section(title: str) -> str:
    text = GUIDE.read_text(encoding="utf-8")
    start = text.index(f"\n## {title}\n")
    end = text.find("\n## ", start + 1)
    return text[start:end]


def test_the_contributor_guide_lists_the_registry():
    rows = re.findall(r"^\| `(\w+)` \| (\w+) \| (yes|no) \| ?(\w*) ?\|$",
                      _guide_section("Scores"), flags=re.MULTILINE)
    assert rows == [(s.name, s.group, "yes" if s.lower_is_better else "no", s.loss or "")
                    for s in SCORES]
    plan_row = next(line for line in _guide_section("Plans (public interface)").splitlines()
                    if line.startswith("| `rank_by`"))
    listed = re.search(r"below: ([^)]*)\)", plan_row)
    assert listed is not None
    assert tuple(re.findall(r"`(\w+)`", listed.group(1))) == RANK_SCORES
