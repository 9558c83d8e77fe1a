"""The shared chart look and rendering: distinguishable lines, SVG/PNG bytes, no pyplot."""

import ast
from pathlib import Path

import numpy as np
import pytest
from matplotlib.colors import to_rgb

from service.views.charts import ForecastBands, fan_chart, render
from service.views.charts.style import (
    BENCHMARK_LOOK,
    CANDIDATE_LOOKS,
    candidate_looks,
    label_periods,
    new_figure,
    period_axis_label,
    set_title,
    step_word,
    value_axis_label,
)

# Dichromat simulation matrices of Machado, Oliveira & Fernandes (2009), severity 1.0, on
# linear RGB (recalled, not checked against the source).
DICHROMACIES = {
    "protanopia": [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216],
                   [-0.003882, -0.048116, 1.051998]],
    "deuteranopia": [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413],
                     [-0.011820, 0.042940, 0.968881]],
    "tritanopia": [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602],
                   [0.004733, 0.691367, 0.303900]],
}
#: CIE76 colour difference above which two line colours count as clearly different.
CLEARLY_DIFFERENT = 12.0


def _linear(rgb):
    c = np.asarray(rgb)
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def _lab(linear_rgb):
    xyz = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722],
                    [0.0193, 0.1192, 0.9505]]) @ np.clip(linear_rgb, 0, 1)
    t = xyz / np.array([0.95047, 1.0, 1.08883])
    f = np.where(t > (6 / 29) ** 3, np.cbrt(t), t / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


@pytest.mark.parametrize("name", [*DICHROMACIES, "typical vision"])
def test_line_colours_stay_apart_for_colour_vision_deficiencies(name):
    matrix = np.asarray(DICHROMACIES.get(name, np.eye(3)))
    colours = [look.color for look in (*CANDIDATE_LOOKS, BENCHMARK_LOOK)]
    seen = [_lab(matrix @ _linear(to_rgb(c))) for c in colours]
    closest = min(np.linalg.norm(a - b) for i, a in enumerate(seen) for b in seen[i + 1:])
    assert closest > CLEARLY_DIFFERENT


def test_every_line_also_differs_in_marker_and_dashes():
    looks = (*CANDIDATE_LOOKS, BENCHMARK_LOOK)
    assert len({look.marker for look in looks}) == len(looks)
    assert len({look.dashes for look in looks}) == len(looks)


def test_a_candidate_keeps_its_look_and_the_benchmark_gets_the_benchmark_look():
    looks = candidate_looks(["a", "bench", "b"], "bench")
    assert looks["bench"] == BENCHMARK_LOOK
    assert (looks["a"], looks["b"]) == CANDIDATE_LOOKS[:2]
    assert candidate_looks(["b", "bench"], "bench")["b"] == CANDIDATE_LOOKS[0]


def test_axis_wording_names_steps_and_units():
    assert step_word("P1M") == "months" and step_word("P3M") == "quarters"
    assert step_word("P5D") == "periods"
    assert period_axis_label("P1W") == "period (week)"
    assert value_axis_label("t CO2e") == "value (t CO2e)"
    assert value_axis_label(None) == "value (series units)"


def _ticks(labels, max_ticks=8):
    ax = new_figure(2).subplots()
    label_periods(ax, labels, range(len(labels)), max_ticks=max_ticks)
    return [t.get_text() for t in ax.get_xticklabels()]


def _months(first_year, first_month, count, step=1):
    return [f"{first_year + (first_month - 1 + i) // 12}-{(first_month - 1 + i) % 12 + 1:02d}"
            for i in range(0, count * step, step)]


def test_period_ticks_sit_at_regular_calendar_positions():
    two_years = _months(2020, 1, 24)
    assert _ticks(two_years, 6) == ["2020-01", "2020-07", "2021-01", "2021-07"]
    # 8 years from February: every January (not 2017-02, 2018-03, 2019-04 ...)
    eight = _months(2017, 2, 96)
    assert _ticks(eight) == [f"{y}-01" for y in range(2018, 2026)]
    quarterly = _months(2015, 3, 40, step=3)  # Mar, Jun, Sep, Dec
    assert _ticks(quarterly) == [f"{y}-03" for y in range(2016, 2025, 2)]
    assert _ticks([str(y) for y in range(1990, 2031)]) == [str(y) for y in range(1990, 2031, 10)]
    days = [f"2024-{m:02d}-{d:02d}" for m in range(1, 7) for d in (1, 8, 15, 22)]
    assert _ticks(days) == [f"2024-{m:02d}-01" for m in range(1, 7)]


def test_quarter_labels_tick_on_the_calendar_as_written():
    quarters = [f"{2015 + i // 4}-Q{i % 4 + 1}" for i in range(40)]
    assert _ticks(quarters) == [f"{y}-Q1" for y in range(2016, 2025, 2)]


def test_labels_without_a_calendar_are_thinned():
    assert _ticks([f"w{i}" for i in range(24)], 6) == [f"w{i}" for i in range(0, 24, 4)]


def test_long_titles_wrap_instead_of_running_off_the_figure():
    fig = new_figure(2)
    set_title(fig, "a fairly long series key: " + "word " * 30)
    assert all(len(line) <= 76 for line in fig.get_suptitle().splitlines())
    assert len(fig.get_suptitle().splitlines()) > 1


def _small_fan():
    forecast = ForecastBands("2021-03", ("2021-04", "2021-05"), (10.0, 11.0),
                             {80: (9.0, 9.5)}, {80: (11.0, 12.5)}, (None, None))
    return fan_chart(forecast, ["2021-01", "2021-02", "2021-03"], [8.0, 9.0, 10.0],
                     series_key="k", candidate_label="c")


def test_render_gives_svg_with_text_and_png_bytes():
    fig = _small_fan()
    svg = render(fig, "svg").decode()
    assert svg.lstrip().startswith("<?xml") and "<svg" in svg
    assert "point forecast" in svg  # text kept as text
    assert render(fig, "png").startswith(b"\x89PNG\r\n\x1a\n")
    assert render(fig, "svg") == render(fig, "svg")  # no timestamps


def test_render_refuses_other_formats():
    with pytest.raises(ValueError, match="svg"):
        render(_small_fan(), "pdf")


def test_charts_and_report_never_import_pyplot():
    root = Path(__file__).resolve().parents[2] / "service"
    modules = [*(root / "views" / "charts").glob("*.py"), *(root / "views" / "report").glob("*.py")]
    imported = set()
    for path in modules:
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Import):
                imported |= {alias.name for alias in node.names}
            elif isinstance(node, ast.ImportFrom):
                imported |= {f"{node.module}.{alias.name}" for alias in node.names}
    assert len(modules) >= 10 and any(name.startswith("matplotlib") for name in imported)
    assert not [name for name in imported if "pyplot" in name or name == "pylab"]
