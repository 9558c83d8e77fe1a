"""The ranking's ratio of a candidate's score to the benchmark's is named for what it is
(lower is better) in the JSON, the CSV, the OpenAPI schema and the terminal table; "skill"
is not used for it, a skill score being 1 - ratio (Murphy 1988)."""

from __future__ import annotations

import csv
import io

from backtest.tidy import RANKING_COLUMNS
from service.cli.terminal import ranking_table
from tests.service.conftest import Api
from tests.storage.builders import monthly_series


def test_json_csv_schema_and_terminal_name_the_ratio(api: Api):
    assert api.post_series(monthly_series("sales/north", 40, seed=4)).status_code == 201
    api.complete(api.submit(["sales/north"]).json()["id"])

    items = api.get("reader", "/v1/runs/1/ranking").json()["items"]
    table = api.get("reader", "/v1/runs/1/ranking", params={"format": "csv"}).text
    schema = api.app.openapi()["components"]["schemas"]["RunRankRow"]["properties"]
    printed = ranking_table("sales/north", items, "MASE")

    bench = next(r for r in items if r["is_benchmark"])
    assert all(r["ratio_to_benchmark"] == r["score"] / bench["score"] for r in items)
    assert all("skill" not in r for r in items)
    header = next(csv.reader(io.StringIO(table)))
    assert "ratio_to_benchmark" in header and "skill" not in header
    assert "ratio_to_benchmark" in RANKING_COLUMNS and "skill" not in RANKING_COLUMNS
    assert "lower is better" in schema["ratio_to_benchmark"]["description"]
    assert "1 - this ratio" in schema["ratio_to_benchmark"]["description"]
    assert "ratio to bench" in printed.splitlines()[1] and "skill" not in printed
