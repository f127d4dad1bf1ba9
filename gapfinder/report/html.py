"""One self-contained HTML page: no scripts, no fonts or images fetched, charts as inline SVG.

gapfinder's look: a deep teal band for the title, warm paper background, slate text, amber for
anything untested. The page is written as well-formed XHTML-compatible markup (every element
closed, every attribute quoted) so that it can be checked with an XML parser.
"""

from __future__ import annotations

import itertools
import math
from typing import Any

from gapfinder.quoting import html_text
from gapfinder.report.layout import layered_layout
from gapfinder.report.markdown import p_value_text, privacy_note, suite_sentence

__all__ = ["render_html"]

TEAL = "#0f5257"
TEAL_LIGHT = "#5c9ea3"
AMBER = "#d98a00"
SLATE = "#2f3a40"
MUTED = "#6b767c"
PAPER = "#f7f5f0"
CARD = "#ffffff"
RULE = "#e3ded3"

STYLE = f"""
body {{ margin: 0; background: {PAPER}; color: {SLATE}; font: 15px/1.5 system-ui, -apple-system, "Segoe UI", sans-serif; }}
header {{ background: {TEAL}; color: #fff; padding: 22px 40px 18px; }}
header h1 {{ margin: 0; font-size: 24px; font-weight: 650; letter-spacing: 0.2px; }}
header p {{ margin: 4px 0 0; color: #cfe3e4; }}
main {{ max-width: 1120px; margin: 0 auto; padding: 8px 40px 40px; }}
section {{ background: {CARD}; border: 1px solid {RULE}; border-radius: 10px; padding: 18px 22px; margin: 18px 0; }}
h2 {{ margin: 0 0 10px; font-size: 18px; color: {TEAL}; }}
.cards {{ display: flex; gap: 14px; flex-wrap: wrap; }}
.card {{ flex: 1 1 180px; border: 1px solid {RULE}; border-radius: 8px; padding: 12px 14px; background: {PAPER}; }}
.card .metric {{ color: {MUTED}; font-size: 13px; text-transform: uppercase; letter-spacing: 0.6px; }}
.card .big {{ font-size: 30px; font-weight: 650; color: {TEAL}; }}
.card .small {{ color: {MUTED}; font-size: 13px; }}
table {{ border-collapse: collapse; width: 100%; font-size: 14px; }}
th {{ text-align: left; color: {MUTED}; font-weight: 600; border-bottom: 2px solid {RULE}; padding: 6px 8px; }}
td {{ border-bottom: 1px solid {RULE}; padding: 6px 8px; vertical-align: top; }}
td.num, th.num {{ text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }}
.path {{ font-family: ui-monospace, "SFMono-Regular", Menlo, monospace; font-size: 13px; }}
.reason {{ color: {MUTED}; font-size: 13px; }}
.untested {{ color: {AMBER}; font-weight: 600; }}
.note {{ color: {MUTED}; font-size: 13px; margin: 8px 0 0; }}
svg text {{ font-family: system-ui, -apple-system, "Segoe UI", sans-serif; }}
"""


def _pct(x: float | None, digits: int = 1) -> str:
    return "—" if x is None else f"{100 * x:.{digits}f} %"


def _path(path: list[str]) -> str:
    return html_text(" › ".join(path))


def _coverage_bars(metrics: dict[str, Any], patterns_mined: bool) -> str:
    rows = [(m, v["strict"]) for m, v in metrics.items() if m != "patterns" or patterns_mined]
    width, label_w, bar_w, row_h = 760, 110, 480, 44
    height = row_h * len(rows) + 30
    out = [
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" role="img" '
        f'aria-label="Coverage by metric">'
    ]
    for i, (metric, v) in enumerate(rows):
        y = 10 + i * row_h
        out.append(f'<text x="0" y="{y + 18}" font-size="14" fill="{SLATE}">{html_text(metric)}</text>')
        for j, (key, colour, name) in enumerate(
            (("by_sessions", TEAL, "by sessions"), ("unweighted", TEAL_LIGHT, "distinct items"))
        ):
            value = v[key] or 0.0
            yy = y + j * 17
            out.append(f'<rect x="{label_w}" y="{yy + 4}" width="{bar_w}" height="13" fill="{RULE}" rx="3"/>')
            out.append(
                f'<rect x="{label_w}" y="{yy + 4}" width="{bar_w * value:.1f}" height="13" fill="{colour}" rx="3"/>'
            )
            out.append(
                f'<text x="{label_w + bar_w + 8}" y="{yy + 15}" font-size="12" fill="{SLATE}">'
                f"{_pct(v[key])} {name}</text>"
            )
    out.append("</svg>")
    return "".join(out)


def nice_ticks(low: float, high: float, *, most: int = 6) -> list[float]:
    """Axis ticks for shares at round steps (1, 2, 2.5, 5, 10, 20, 25 or 50 points) spanning low..high.

    >>> nice_ticks(0.83, 0.91)
    [0.82, 0.84, 0.86, 0.88, 0.9, 0.92]
    >>> nice_ticks(0.875, 0.875)
    [0.87, 0.88]
    """
    low, high = max(0.0, min(low, high)), min(1.0, max(low, high))
    for step in (0.01, 0.02, 0.025, 0.05, 0.1, 0.2, 0.25, 0.5):
        first = math.floor(low / step + 1e-9) * step
        last = math.ceil(high / step - 1e-9) * step
        if last - first < step:  # a flat line: show a tick either side
            first, last = max(0.0, first - step), min(1.0, last + step)
        count = round((last - first) / step)
        if count + 1 <= most + 1:
            return [round(first + k * step, 6) for k in range(count + 1)]
    return [0.0, 0.25, 0.5, 0.75, 1.0]


def axis_ticks(low: float, high: float, *, most: int = 6) -> list[float]:
    """Axis ticks at round steps (1, 2, 2.5 or 5 times a power of ten) spanning low..high, for
    values of any size (bits per step), at least two.

    >>> axis_ticks(0.347, 0.384)
    [0.34, 0.35, 0.36, 0.37, 0.38, 0.39]
    >>> axis_ticks(1.2, 3.9)
    [1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0]
    >>> axis_ticks(2.0, 2.0)
    [1.99, 2.0, 2.01]
    """
    low, high = min(low, high), max(low, high)
    span = high - low if high > low else max(abs(high) * 0.1, 1e-6)
    power = 10.0 ** math.floor(math.log10(span / most))
    for factor in (1, 2, 2.5, 5, 10, 20, 25, 50):
        step = factor * power
        first = math.floor(low / step + 1e-9) * step
        last = math.ceil(high / step - 1e-9) * step
        if last - first < step:
            first, last = first - step, last + step
        if round((last - first) / step) <= most:
            return [round(first + k * step, 10) for k in range(round((last - first) / step) + 1)]
    return [low, high]


def _bits(v: float, _digits: int = 0) -> str:
    """Bits per step, always to three decimals (the percent digits the chart passes do not apply)."""
    return f"{v:.3f}"


def _trend_chart(
    trend: list[dict[str, Any]],
    unit: str,
    key: str = "transitions_by_sessions",
    label: str = "Transition coverage",
    fmt: Any = None,
) -> str:
    fmt = fmt or _pct
    points = [(t["bucket"], t[key]) for t in trend if t.get(key) is not None]
    if len(points) < 2:
        return '<p class="note">Not enough periods for a trend yet.</p>'
    width, height, left, right, top, bottom = 760, 230, 56, 48, 16, 40
    values = [v for _, v in points]
    ticks = nice_ticks(min(values), max(values)) if fmt is _pct else axis_ticks(min(values), max(values))
    low, high = ticks[0], ticks[-1]
    plot_w, plot_h = width - left - right, height - top - bottom

    def x(i: int) -> float:
        return left + plot_w * i / (len(points) - 1)

    def y(v: float) -> float:
        return top + plot_h * (1 - (v - low) / (high - low))

    out = [
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" role="img" '
        f'aria-label="{html_text(label)} by {html_text(unit)}">'
    ]
    digits = 0 if all(abs(t * 100 - round(t * 100)) < 1e-9 for t in ticks) else 1
    for v in ticks:
        out.append(f'<line x1="{left}" x2="{width - right}" y1="{y(v):.1f}" y2="{y(v):.1f}" stroke="{RULE}"/>')
        out.append(
            f'<text x="{left - 8}" y="{y(v) + 4:.1f}" font-size="11" fill="{MUTED}" text-anchor="end">{fmt(v, digits)}</text>'
        )
    line = " ".join(f"{x(i):.1f},{y(v):.1f}" for i, (_, v) in enumerate(points))
    out.append(f'<polyline points="{line}" fill="none" stroke="{TEAL}" stroke-width="2.5"/>')
    for i, (bucket, v) in enumerate(points):
        out.append(f'<circle cx="{x(i):.1f}" cy="{y(v):.1f}" r="4" fill="{TEAL}"/>')
        out.append(
            f'<text x="{x(i):.1f}" y="{height - 18}" font-size="11" fill="{MUTED}" text-anchor="middle">{html_text(bucket)}</text>'
        )
        out.append(
            # the first and last labels lean inwards, clear of the axis labels and the edge
            f'<text x="{x(i) + (-4 if i == 0 else 4 if i == len(points) - 1 else 0):.1f}" y="{y(v) - 9:.1f}" font-size="11" '
            f'fill="{SLATE}" text-anchor="{"start" if i == 0 else "end" if i == len(points) - 1 else "middle"}">{fmt(v)}</text>'
        )
    out.append("</svg>")
    return "".join(out)


def _diagram(diagram: dict[str, Any]) -> str:
    """The path diagram, laid out in layers (``report.layout``): arrowheads, loops with their counts,
    long edges through free slots, backward edges in lanes above the boxes."""
    nodes, edges = diagram["nodes"], diagram["edges"]
    if not edges:
        return '<p class="note">No transitions above the privacy floor to draw.</p>'
    layout = layered_layout(
        [n["name"] for n in nodes], [(e["source"], e["target"], float(e["occurrences"])) for e in edges]
    )
    backward_count = sum(layout.backward)
    col_w, row_h, box_w, box_h, margin = 172, 56, 136, 30, 16
    lane_gap = 7
    top = 24 + lane_gap * backward_count
    rows = max(len(members) for members in layout.layers)
    width = margin * 2 + col_w * (len(layout.layers) - 1) + box_w
    height = top + row_h * rows + 40

    def box(x: Any) -> tuple[float, float]:
        layer, index = layout.slot[x]
        offset = (rows - len(layout.layers[layer])) * row_h / 2
        return margin + layer * col_w, top + offset + index * row_h + (row_h - box_h) / 2

    heaviest = max(e["occurrences"] for e in edges)
    out = [
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" width="100%" role="img" '
        'aria-label="Most used paths; amber dashed transitions are untested">',
        "<defs>",
        *(
            f'<marker id="arrow-{name}" viewBox="0 0 8 8" refX="8" refY="4" markerWidth="9" markerHeight="9" '
            f'markerUnits="userSpaceOnUse" orient="auto"><path d="M0,0 L8,4 L0,8 z" fill="{colour}"/></marker>'
            for name, colour in (("tested", TEAL_LIGHT), ("untested", AMBER))
        ),
        "</defs>",
    ]
    lane = 0
    labels: list[str] = []
    for index in sorted(range(len(edges)), key=lambda i: edges[i]["exercised"]):
        e, route = edges[index], layout.routes[index]
        stroke = 1 + 6 * math.sqrt(e["occurrences"] / heaviest)
        colour, dash = (TEAL_LIGHT, "") if e["exercised"] else (AMBER, ' stroke-dasharray="6 4"')
        marker = "tested" if e["exercised"] else "untested"
        title = (
            f"{e['source']} › {e['target']}: {e['occurrences']:,} times, {'tested' if e['exercised'] else 'untested'}"
        )
        x1, y1 = box(route[0])
        if len(route) == 1:  # a loop: the feature follows itself
            cx, cy = x1 + box_w - 22, y1
            d = f"M{cx - 8:.1f},{cy:.1f} C{cx - 12:.1f},{cy - 18:.1f} {cx + 12:.1f},{cy - 18:.1f} {cx + 8:.1f},{cy:.1f}"
            labels.append(
                f'<text x="{cx - 16:.1f}" y="{cy - 6:.1f}" font-size="9" fill="{MUTED}" text-anchor="end">'
                f"{e['occurrences']:,}×</text>"
            )
        elif layout.backward[index]:  # up into a lane above every box, across, and down into the target
            x2, y2 = box(route[-1])
            lane_y = 14 + lane_gap * lane
            lane += 1
            out_x, in_x = x1 + box_w + (col_w - box_w) / 2, x2 - (col_w - box_w) / 2
            sy, ty = y1 + box_h / 2, y2 + box_h / 2
            d = (
                f"M{x1 + box_w:.1f},{sy:.1f} L{out_x:.1f},{sy:.1f} L{out_x:.1f},{lane_y:.1f} "
                f"L{in_x:.1f},{lane_y:.1f} L{in_x:.1f},{ty:.1f} L{x2:.1f},{ty:.1f}"
            )
        else:  # forward, through the free slots of the layers it crosses
            points = [(x1 + box_w, y1 + box_h / 2)]
            for dummy in route[1:-1]:
                dx, dy = box(dummy)
                points += [(dx, dy + box_h / 2), (dx + box_w, dy + box_h / 2)]
            x2, y2 = box(route[-1])
            points.append((x2, y2 + box_h / 2))
            d = f"M{points[0][0]:.1f},{points[0][1]:.1f}"
            for (ax, ay), (bx, by) in itertools.pairwise(points):
                if ay == by:
                    d += f" L{bx:.1f},{by:.1f}"
                else:
                    bend = (bx - ax) / 2
                    d += f" C{ax + bend:.1f},{ay:.1f} {bx - bend:.1f},{by:.1f} {bx:.1f},{by:.1f}"
        out.append(
            f'<path d="{d}" fill="none" stroke="{colour}" stroke-width="{stroke:.1f}" stroke-opacity="0.8"{dash} '
            f'marker-end="url(#arrow-{marker})"><title>{html_text(title)}</title></path>'
        )
    for name in (n["name"] for n in nodes):
        x, y = box(name)
        fill = TEAL if name in ("START", "END") else CARD
        text = "#fff" if name in ("START", "END") else SLATE
        label = name if len(name) <= 19 else name[:18] + "…"
        out.append(
            f'<rect x="{x:.1f}" y="{y:.1f}" width="{box_w}" height="{box_h}" rx="6" fill="{fill}" stroke="{TEAL}"/>'
        )
        out.append(
            f'<text x="{x + box_w / 2:.1f}" y="{y + 19:.1f}" font-size="12" fill="{text}" text-anchor="middle">'
            f"{html_text(label)}<title>{html_text(name)}</title></text>"
        )
    out += labels
    out.append(
        f'<text x="{margin}" y="{height - 8}" font-size="12" fill="{MUTED}">Line width: how often the transition is '
        f"taken; loops: a feature repeated. Teal: a test exercises it. Amber, dashed: no test does.</text>"
    )
    out.append("</svg>")
    return "".join(out)


def _cards(coverage: dict[str, Any]) -> str:
    out = ['<div class="cards">']
    for metric, modes in coverage["metrics"].items():
        if metric == "patterns" and not coverage["patterns_mined"]:
            continue
        v = modes["strict"]
        out.append(
            f'<div class="card"><div class="metric">{html_text(metric)}</div><div class="big">{_pct(v["by_sessions"])}</div>'
            f'<div class="small">of sessions\' {html_text(metric)} exercised · {v["exercised"]:,} of {v["items"]:,} distinct</div></div>'
        )
    out.append("</div>")
    return "".join(out)


def _gaps_table(gaps: dict[str, Any]) -> str:
    rows = [
        '<table><thead><tr><th>#</th><th>untested path</th><th class="num">sessions</th><th class="num">users</th>'
        '<th class="num">share (95 % interval)</th><th class="num">errors</th><th>trend</th></tr></thead><tbody>'
    ]
    for g in gaps["gaps"]:
        lift = f" ({g['error_lift']:.1f}×)" if g.get("error_lift") and g["risk"] > 1 else ""
        folded = ""
        if g["folded"]:
            folded = f'<br/><span class="reason">also untested in the same sessions: {len(g["folded"])} related path(s)</span>'
        rows.append(
            f'<tr><td class="num">{g["rank"]}</td><td><span class="path untested">{_path(g["path"])}</span>'
            f'<br/><span class="reason">{html_text(g["reason"])}</span>{folded}</td>'
            f'<td class="num">{g["sessions"]:,}</td><td class="num">{g["users"]:,}</td>'
            f'<td class="num">{_pct(g["share"])}<br/><span class="reason">{100 * g["share_low"]:.1f}–{100 * g["share_high"]:.1f}</span></td>'
            f'<td class="num">{_pct(g["error_rate"])}{lift}</td><td>{html_text(g["trend"]["label"])}</td></tr>'
        )
    rows.append("</tbody></table>")
    rows.append(
        f'<p class="note">Score: {html_text(gaps["score"])}. {gaps["suppressed"]:,} candidate paths held back: fewer than '
        f"{gaps['min_users']} users.</p>"
    )
    return "".join(rows)


def _plan_section(plan: dict[str, Any] | None) -> str:
    if not plan or not plan.get("scenarios"):
        return '<p class="note">No plan stored yet: run <span class="path">gapfinder plan -w WORKSPACE --budget N</span>.</p>'
    rows = [
        f"<p>{len(plan['scenarios'])} scenario(s) within {plan['budget']} {html_text(plan['cost'])}, adding "
        f"{_pct(plan['gain_share'])} of untested {html_text(plan['objective'])} (field occurrences). "
        f"Guarantee: {html_text(plan['guarantee'])}.</p>",
        '<table><thead><tr><th>#</th><th>scenario</th><th class="num">steps</th><th class="num">adds</th>'
        "<th>closes gaps</th></tr></thead><tbody>",
    ]
    for s in plan["scenarios"]:
        rows.append(
            f'<tr><td class="num">{s["scenario"]}</td><td class="path">{_path(s["path"])}</td>'
            f'<td class="num">{s["steps"]}</td><td class="num">{_pct(s["gain_share"])}</td>'
            f"<td>{html_text(', '.join('#' + str(g) for g in s['gaps']))}</td></tr>"
        )
    rows.append(
        '</tbody></table><table><thead><tr><th>metric</th><th class="num">now</th><th class="num">after the plan</th></tr></thead><tbody>'
    )
    for metric, v in plan["coverage"].items():
        rows.append(
            f'<tr><td>{html_text(metric)}</td><td class="num">{_pct(v["before"])}</td><td class="num">{_pct(v["after"])}</td></tr>'
        )
    rows.append("</tbody></table>")
    return "".join(rows)


def _drift_section(drift: dict[str, Any]) -> str:
    current, previous = drift["current"], drift["previous"]
    distance = drift["distance"]
    cov_now = drift["coverage"]["current"]["transitions"]["by_occurrences"]
    cov_before = drift["coverage"]["previous"]["transitions"]["by_occurrences"]
    span = lambda p: html_text(f"{p['from'] or 'start'} to {p['to'] or 'end'}")  # noqa: E731
    out = [
        f"<p>{span(current)} ({current['sessions']:,} sessions) against {span(previous)} ({previous['sessions']:,}). "
        f"Jensen–Shannon distance (0 = same usage, 1 = nothing in common): features "
        f"{distance['features']:.3f}, transitions {distance['transitions']:.3f}. Transition coverage by occurrences "
        f"{_pct(cov_before)} → {_pct(cov_now)}.</p>"
        if distance["features"] is not None and distance["transitions"] is not None
        else "<p>Not enough sessions in both periods to compare.</p>",
        '<table><thead><tr><th>moved most</th><th class="num">share before</th><th class="num">share now</th>'
        '<th class="num">change (95 % interval)</th><th class="num">p</th></tr></thead><tbody>',
    ]
    for m in drift["movers"]:
        interval = f"{100 * m['change_low']:+.1f}…{100 * m['change_high']:+.1f}" if "change_low" in m else ""
        p = html_text(p_value_text(m.get("p_value")))
        out.append(
            f'<tr><td class="path">{_path(m["path"])}</td><td class="num">{_pct(m["share_before"])}</td>'
            f'<td class="num">{_pct(m["share_now"])}</td><td class="num">{100 * m["change"]:+.1f} pt<br/>'
            f'<span class="reason">{interval}</span></td><td class="num">{p}</td></tr>'
        )
    out.append("</tbody></table>")
    if drift["irrelevant_tests"]:
        listed = ", ".join(html_text(t["test_id"]) for t in drift["irrelevant_tests"])
        out.append(f'<p class="note">Tests whose journey left the field: {listed}.</p>')
    return "".join(out)


def _quarter_section(data: dict[str, Any]) -> str:
    """Representativeness as one number, where effort and usage disagree most, the journey families."""
    divergence = data["coverage"].get("representativeness") or {}
    out = []
    if divergence:
        out.append(
            f'<div class="cards"><div class="card"><div class="metric">representativeness</div>'
            f'<div class="big">{divergence["bits_per_step"]:.3f}</div><div class="small">bits per step between how '
            f"the tests step and how users step (0: alike; Whittaker-Thomason) · {divergence['arcs_tested']:,} of "
            f"{divergence['usage_arcs']:,} transitions users take walked by a test</div></div></div>"
        )
    rows = data["effort"]["features"][:6]
    if rows:
        out.append(
            "<h3>Where test effort and usage disagree most</h3><table><thead><tr><th>feature</th>"
            '<th class="num">share of usage</th><th class="num">share of test steps</th><th>verdict</th>'
            '<th class="num">recommended tests</th><th class="num">today</th></tr></thead><tbody>'
        )
        for r in rows:
            out.append(
                f'<tr><td>{html_text(r["event"])}</td><td class="num">{_pct(r["usage_share"])}</td>'
                f'<td class="num">{_pct(r["step_share"])}</td><td>{html_text(r["verdict"])}</td>'
                f'<td class="num">{r["recommended_tests"]}</td><td class="num">{r["today_tests"]}</td></tr>'
            )
        out.append(
            '</tbody></table><p class="note">Share of usage: the feature\'s share of all field feature '
            "occurrences (its operational-profile probability); over- or under-tested when the 95 % interval of "
            "the difference excludes 0. Recommended: the same number of tests allocated in proportion to usage; "
            "today: the suite's steps shared out over that number.</p>"
        )
    families = data["families"]["families"][:8]
    if families:
        out.append(
            "<h3>The users' journey families</h3><table><thead><tr><th>family (its most taken path)</th>"
            '<th class="num">sessions</th><th class="num">users</th><th class="num">transitions tested</th>'
            "<th>most taken untested transition</th></tr></thead><tbody>"
        )
        for f in families:
            tested = f["transitions_exercised_by_occurrences"]
            untested = f["top_untested"][0]["transition"] if f["top_untested"] else None
            out.append(
                f"<tr><td>{html_text(f['name'] or '(under the privacy floor)')}</td>"
                f'<td class="num">{_pct(f["session_share"])}</td><td class="num">{_pct(f["user_share"])}</td>'
                f'<td class="num">{_pct(tested)}</td><td>{_path(untested) if untested else "—"}</td></tr>'
            )
        out.append(f'</tbody></table><p class="note">{html_text(data["families"]["method"])}.</p>')
    return "".join(out)


def render_html(data: dict[str, Any]) -> str:
    """The report page for ``report_data(...)``."""
    profile, coverage = data["profile"], data["coverage"]
    sessions = profile["sessions"]
    reading = profile["reading"]
    pseudonymized = bool(reading.get("pseudonymized"))
    period = f"{(reading.get('first_ts') or '')[:10]} to {(reading.get('last_ts') or '')[:10]}"
    parts = [
        "<!DOCTYPE html>",
        '<html xmlns="http://www.w3.org/1999/xhtml" lang="en"><head><meta charset="utf-8"/>',
        '<meta name="viewport" content="width=device-width, initial-scale=1"/>',
        "<title>gapfinder · test coverage against real usage</title>",
        f"<style>{STYLE}</style></head><body>",
        "<header><h1>Test coverage against real usage</h1>",
        f"<p>{sessions['count']:,} sessions of {sessions['users']:,} users, {html_text(period)} · "
        f"{coverage['test_count']} tests · gapfinder {html_text(data['version'])}</p>",
        f"<p>{html_text(suite_sentence(coverage.get('suite') or {}))}</p></header><main>",
        "<section><h2>Next sprint's scenarios</h2>",
        _plan_section(data["plan"]),
        "</section>",
        "<section><h2>How much of real usage the tests exercise</h2>",
        _cards(coverage),
        _coverage_bars(coverage["metrics"], coverage["patterns_mined"]),
        '<p class="note">By sessions: the share of sessions\' items (features, transitions, contiguous paths, mined '
        "journeys) that falls on items some test exercises, each item weighted by the sessions that contain it. "
        "Distinct items: the plain share of distinct items.</p></section>",
        f"<section><h2>Coverage by {html_text(data['drift']['trend_unit'])}</h2>",
        _trend_chart(data["drift"]["trend"], data["drift"]["trend_unit"]),
        '<p class="note">Transition coverage by sessions (as everywhere in this report): of the transitions the '
        "period's sessions take, the share the current suite exercises, each weighted by the sessions that take "
        "it.</p>",
        f"<h3>How far the tests step from the users, by {html_text(data['drift']['trend_unit'])}</h3>",
        _trend_chart(
            data["drift"]["trend"],
            data["drift"]["trend_unit"],
            "divergence",
            "Divergence of the tests from usage",
            _bits,
        ),
        '<p class="note">The Whittaker-Thomason discriminant of the suite against each period\'s usage chain, in bits '
        "per step: 0 when the tests step exactly as that period's users do; lower is better. One bit means the "
        "users' sessions are, step for step, twice as likely under their own chain as under the tests'.</p></section>",
        "<section><h2>Is test effort where the users are?</h2>",
        _quarter_section(data),
        "</section>",
        "<section><h2>Where people go and the tests do not</h2>",
        _diagram(data["diagram"]),
        "</section>",
        "<section><h2>Untested paths most worth a test</h2>",
        _gaps_table(data["gaps"]),
        "</section>",
        "<section><h2>How usage moved</h2>",
        _drift_section(data["drift"]),
        "</section>",
        f'<p class="note">{html_text(privacy_note(data["gaps"]["min_users"], pseudonymized))}</p>',
        "</main></body></html>",
    ]
    return "\n".join(parts) + "\n"
