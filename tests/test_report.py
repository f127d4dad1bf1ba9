"""The HTML and Markdown reports: well-formed, self-contained, and rendered by headless Chromium."""

from __future__ import annotations

import itertools
import shutil
import subprocess
import xml.etree.ElementTree as ElementTree
from pathlib import Path

import pytest

from gapfinder.plan import PlanOptions, make_plan
from gapfinder.report import render_html, render_markdown
from gapfinder.report.data import report_data
from gapfinder.workspace import Workspace

CHROMIUM_FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--hide-scrollbars",
    "--enable-logging=stderr",
    "--v=0",
]


@pytest.fixture(scope="module")
def data(tmp_path_factory: pytest.TempPathFactory, suite_workspace: Path) -> dict:
    ws_path = tmp_path_factory.mktemp("report") / "ws.duckdb"
    shutil.copy(suite_workspace, ws_path)
    with Workspace(ws_path) as ws:
        make_plan(ws, PlanOptions(budget=5))
        return report_data(ws)


def test_html_is_well_formed_and_self_contained(data: dict) -> None:
    html = render_html(data)
    root = ElementTree.fromstring(html.removeprefix("<!DOCTYPE html>\n"))
    svg = "{http://www.w3.org/2000/svg}svg"
    assert len(list(root.iter(svg))) >= 3  # coverage bars, trend, path diagram
    assert "<script" not in html and "http://" not in html.replace("http://www.w3.org/", "")
    # url(#…) names a marker inside the page; any other url( could fetch something
    assert "https://" not in html and "@import" not in html and "url(" not in html.replace("url(#arrow-", "")
    for needle in (
        "How much of real usage",
        "Coverage by month",
        "Untested paths most worth a test",
        "Next sprint",
        "How usage moved",
    ):
        assert needle in html
    assert render_html(data) == html  # deterministic


def test_markdown_has_every_part(data: dict) -> None:
    md = render_markdown(data)
    for heading in (
        "## Coverage",
        "## Coverage by month",
        "## Untested paths most worth a test",
        "## Next sprint's scenarios",
        "## How usage moved",
    ):
        assert heading in md
    assert md.count("\n| 1 |") >= 2  # gaps and plan tables


def test_html_renders_in_headless_chromium(data: dict, tmp_path: Path) -> None:
    browser = shutil.which("chromium") or shutil.which("chromium-browser")
    if browser is None:
        pytest.skip("Chromium is not installed (.ci/run installs Debian's chromium when it can)")
    page = tmp_path / "report.html"
    page.write_text(render_html(data), encoding="utf-8")
    shot = tmp_path / "shot.png"
    done = subprocess.run(
        [
            browser,
            *CHROMIUM_FLAGS,
            f"--user-data-dir={tmp_path / 'profile'}",
            f"--screenshot={shot}",
            "--window-size=1200,2400",
            page.as_uri(),
        ],
        capture_output=True,
        text=True,
        timeout=120,
    )
    console = [line for line in done.stderr.splitlines() if ":CONSOLE" in line]
    assert not console, console
    assert shot.exists() and shot.stat().st_size > 50_000, done.stderr[-2000:]


def test_gaps_stay_readable_at_80_columns(suite_workspace) -> None:  # type: ignore[no-untyped-def]
    import io

    from rich.console import Console

    from gapfinder.gaps import GapOptions, find_gaps
    from gapfinder.report import render_gaps
    from gapfinder.workspace import Workspace

    with Workspace(suite_workspace, read_only=True) as ws:
        result = find_gaps(ws, GapOptions(top=5))
    out = io.StringIO()
    render_gaps(result, Console(file=out, width=80, no_color=True))
    text = out.getvalue()
    assert all(len(line) <= 80 for line in text.splitlines())
    assert "…" not in text  # no path is cut short
    flat = " ".join(text.split())
    for gap in result["gaps"]:
        assert " › ".join(gap["path"]) in flat


@pytest.mark.parametrize(("low", "high"), [(0.83, 0.91), (0.875, 0.875), (0.2, 0.95), (0.0, 1.0), (0.5, 0.56)])
def test_chart_ticks_fall_on_round_values(low: float, high: float) -> None:
    from gapfinder.report.html import nice_ticks

    ticks = nice_ticks(low, high)
    assert ticks[0] <= low and ticks[-1] >= high and 2 <= len(ticks) <= 7
    steps = {round(b - a, 6) for a, b in itertools.pairwise(ticks)}
    assert len(steps) == 1 and steps.pop() in (0.01, 0.02, 0.025, 0.05, 0.1, 0.2, 0.25, 0.5)


OVERLAP_PROBE = """<script>
window.addEventListener('load', () => {
  const found = [];
  document.querySelectorAll('svg').forEach((svg) => {
    const boxes = [...svg.querySelectorAll('text')].map((t) => [t.firstChild ? t.firstChild.textContent : '',
                                                               t.getBoundingClientRect()]);
    for (let i = 0; i < boxes.length; i++) {
      for (let j = i + 1; j < boxes.length; j++) {
        const a = boxes[i][1], b = boxes[j][1];
        if (a.width && b.width && a.left < b.right - 0.5 && b.left < a.right - 0.5 &&
            a.top < b.bottom - 0.5 && b.top < a.bottom - 0.5) {
          found.push(boxes[i][0] + ' / ' + boxes[j][0]);
        }
      }
    }
  });
  document.body.setAttribute('data-overlaps', JSON.stringify(found));
});
</script>"""


def _overlaps(markup: str, tmp_path: Path, width: int) -> list[str]:
    import html as html_module
    import json
    import re

    browser = shutil.which("chromium") or shutil.which("chromium-browser")
    if browser is None:
        pytest.skip("Chromium is not installed (.ci/run installs Debian's chromium when it can)")
    page = tmp_path / f"page_{width}.html"
    page.write_text(markup.replace("</body>", OVERLAP_PROBE + "</body>"), encoding="utf-8")
    done = subprocess.run(
        [
            browser,
            *CHROMIUM_FLAGS,
            f"--user-data-dir={tmp_path / f'profile_{width}'}",
            "--dump-dom",
            f"--window-size={width},3000",
            page.as_uri(),
        ],
        capture_output=True,
        text=True,
        timeout=120,
    )
    match = re.search(r'data-overlaps="([^"]*)"', done.stdout)
    assert match, done.stderr[-2000:]
    found: list[str] = json.loads(html_module.unescape(match.group(1)))
    return found


def test_the_overlap_probe_sees_an_overlap(tmp_path: Path) -> None:
    page = (
        '<html><body><svg xmlns="http://www.w3.org/2000/svg" width="300" height="100">'
        '<text x="10" y="50" font-size="14">pay_deposit_card</text>'
        '<text x="40" y="52" font-size="14">pick_slot</text>'
        '<text x="10" y="90" font-size="14">alone</text></svg></body></html>'
    )
    assert _overlaps(page, tmp_path, 800) == ["pay_deposit_card / pick_slot"]


@pytest.mark.parametrize("width", [1400, 800])
def test_no_text_overlaps_in_the_charts_at_two_widths(data: dict, tmp_path: Path, width: int) -> None:
    """Every chart label keeps its own space: bounding boxes from the DOM of headless Chromium."""
    assert _overlaps(render_html(data), tmp_path, width) == []


def test_diagram_layers_cover_features_whose_ways_in_were_cut() -> None:
    """A feature drawn only as the source of the transitions kept (its own ways in fell under the
    edge limit) still gets a layer; found on high-entropy telemetry, where the report failed."""
    from gapfinder.report.data import _layers

    edges = [
        {"source": "START", "target": "a", "occurrences": 9},
        {"source": "b", "target": "a", "occurrences": 3},
        {"source": "a", "target": "END", "occurrences": 9},
    ]
    layer = _layers(edges)
    assert layer["b"] >= 1 and layer["a"] >= 1 and layer["END"] > max(layer["a"], layer["b"])


def test_run_summary_says_how_many_rows_were_left_out_and_why() -> None:
    from gapfinder.pipeline import _reading_line

    reading = {
        "rows_read": 49_151_757,
        "format": "parquet",
        "label": "field",
        "rejected": {"timestamp outside 1990-2099": 36_419_965, "missing user id": 12},
    }
    line = _reading_line(reading)
    assert "rows left out: 12 missing user id, 36,419,965 timestamp outside 1990\\-2099" in line  # markdown-escaped
    assert "left out" not in _reading_line({**reading, "rejected": {}})
