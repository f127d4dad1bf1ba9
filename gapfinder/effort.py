"""Test effort against usage, per feature: where the suite's effort and the users' usage disagree.

Each feature's operational-profile probability is its share of all feature occurrences in the
field (Musa, "Operational profiles in software-reliability engineering", IEEE Software 10(2),
1993). Beside it: its share of the suite's test steps and the share of tests that touch it. A
feature is over-tested when its share of test steps is above its share of usage with 95 %
confidence (Newcombe's hybrid score interval for a difference of proportions), under-tested when
below. The allocation Musa recommends for a suite of N tests gives each feature tests in proportion
to its occurrence probability; the user may name critical features with a minimum number of tests,
which are fixed first, the rest being shared out among the others in proportion (largest
remainders, so the counts add up to N exactly). Today's allocation, for comparison, shares the same
N tests out by the suite's test steps (a test is a journey through several features, so counting
the tests that touch a feature would count the same test many times).

Features seen by fewer than the privacy floor's distinct users are left out of the listing, with
the same suppression pattern as every other listing (``gapfinder.disclosure``).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from gapfinder.coverage import END as END_ID
from gapfinder.coverage import START as START_ID
from gapfinder.coverage import load_test_paths
from gapfinder.errors import ConfigError
from gapfinder.paths import feature_names, list_features
from gapfinder.privacy import DEFAULT_MIN_USERS
from gapfinder.stats import difference_interval
from gapfinder.usage_model import END, START
from gapfinder.workspace import Workspace

__all__ = ["EffortOptions", "allocate_tests", "effort_report", "parse_minimums"]


@dataclass(frozen=True)
class EffortOptions:
    """tests: the suite size to allocate (default: the stored suite's); minimums: critical features'
    minimum tests; min_users: the privacy floor."""

    tests: int | None = None
    minimums: Mapping[str, int] = field(default_factory=dict)
    min_users: int = DEFAULT_MIN_USERS
    confidence: float = 0.95


def parse_minimums(items: tuple[str, ...] | list[str]) -> dict[str, int]:
    """``FEATURE=MIN`` options.

    >>> parse_minimums(["pay=3"])
    {'pay': 3}
    """
    out: dict[str, int] = {}
    for item in items:
        name, sep, value = item.rpartition("=")
        if not sep or not name.strip() or not value.strip().isdigit():
            raise ConfigError(f"--critical {item!r}: give FEATURE=MIN, e.g. pay_deposit_card=3")
        out[name.strip()] = int(value)
    return out


def _largest_remainder(weights: Mapping[str, float], seats: int) -> dict[str, int]:
    """``seats`` shared in proportion to ``weights`` (Hamilton's method; ties by name)."""
    total = sum(weights.values())
    if seats <= 0 or total <= 0:
        return dict.fromkeys(weights, 0)
    quotas = {k: seats * w / total for k, w in weights.items()}
    out = {k: math.floor(q) for k, q in quotas.items()}
    left = seats - sum(out.values())
    for k in sorted(quotas, key=lambda k: (-(quotas[k] - out[k]), k))[:left]:
        out[k] += 1
    return out


def allocate_tests(probabilities: Mapping[str, float], total: int, minimums: Mapping[str, int]) -> dict[str, int]:
    """Tests per feature for a suite of ``total`` tests: proportional to occurrence probability,
    each feature in ``minimums`` getting at least its minimum.

    Examples
    --------
    Usage 60 / 30 / 10 %, ten tests; then with C critical at 3 tests (worked by hand: C is fixed at
    3, the other 7 go to A and B in the ratio 6 : 3, quotas 4.67 and 2.33):

    >>> allocate_tests({"A": 0.6, "B": 0.3, "C": 0.1}, 10, {})
    {'A': 6, 'B': 3, 'C': 1}
    >>> allocate_tests({"A": 0.6, "B": 0.3, "C": 0.1}, 10, {"C": 3})
    {'A': 5, 'B': 2, 'C': 3}
    """
    unknown = sorted(set(minimums) - set(probabilities))
    if unknown:
        raise ConfigError(f"--critical {unknown[0]}: no such feature in the usage profile")
    if sum(minimums.values()) > total:
        raise ConfigError(f"--critical: the minimums add up to {sum(minimums.values())}, more than --tests {total}")
    fixed: dict[str, int] = {}
    while True:
        free = {k: p for k, p in probabilities.items() if k not in fixed}
        shared = _largest_remainder(free, total - sum(fixed.values()))
        short = {k: m for k, m in minimums.items() if k not in fixed and shared.get(k, 0) < m}
        if not short:
            return {k: fixed.get(k, shared.get(k, 0)) for k in probabilities}
        fixed.update(short)


def effort_report(ws: Workspace, options: EffortOptions | None = None) -> dict[str, Any]:
    """Per feature: usage share, share of test steps and of tests, the difference with its interval,
    and the recommended allocation against today's."""
    options = options or EffortOptions()
    tests = load_test_paths(ws)
    names = feature_names(ws.con)
    everything = list_features(ws.con, min_users=0, hidden=np.zeros(0, dtype=np.uint64)).rows
    visible = list_features(ws.con, min_users=options.min_users)
    occurrences = {r["event"]: int(r["occurrences"]) for r in everything if r["event"] not in (START, END)}
    total_occurrences = sum(occurrences.values())
    steps = dict.fromkeys(occurrences, 0)
    touching = dict.fromkeys(occurrences, 0)
    for framed in tests.framed:
        seen = set()
        for event_id in framed:
            if event_id in (START_ID, END_ID) or not 0 <= event_id < len(names):
                continue
            name = names[event_id]
            if name in steps:
                steps[name] += 1
                seen.add(name)
        for name in seen:
            touching[name] += 1
    total_steps = sum(steps.values())
    suite_size = len(tests.test_ids)
    wanted = options.tests if options.tests is not None else suite_size
    if wanted < 1:
        raise ConfigError(f"--tests {wanted}: give a suite size of 1 or more")
    probabilities = {k: v / total_occurrences for k, v in occurrences.items()} if total_occurrences else {}
    allocation = allocate_tests(probabilities, wanted, dict(options.minimums))
    # Today's effort in the same unit: the suite's steps shared out over the same number of tests.
    today = _largest_remainder({k: float(v) for k, v in steps.items()}, wanted)
    rows = []
    for r in visible.rows:
        name = r["event"]
        if name not in occurrences:
            continue
        low, high = (
            difference_interval(
                steps[name], total_steps, occurrences[name], total_occurrences, confidence=options.confidence
            )
            if total_steps
            else (-1.0, 1.0)
        )
        step_share = steps[name] / total_steps if total_steps else 0.0
        difference = step_share - probabilities[name]
        verdict = "over-tested" if low > 0 else "under-tested" if high < 0 else "in line"
        rows.append(
            {
                "event": name,
                "usage_share": probabilities[name],
                "users": r["users"],
                "test_steps": steps[name],
                "step_share": step_share,
                "tests": touching[name],
                "test_share": touching[name] / suite_size if suite_size else 0.0,
                "difference": difference,
                "difference_low": low,
                "difference_high": high,
                "verdict": verdict,
                "recommended_tests": allocation[name],
                "today_tests": today[name],
                "minimum": options.minimums.get(name),
            }
        )
    rows.sort(key=lambda row: (-abs(row["difference"]), row["event"]))
    return {
        "workspace": str(ws.path),
        "suite_tests": suite_size,
        "test_steps": total_steps,
        "allocated_tests": wanted,
        "features": rows,
        "over_tested": [r["event"] for r in rows if r["verdict"] == "over-tested"],
        "under_tested": [r["event"] for r in rows if r["verdict"] == "under-tested"],
        "suppressed": len([k for k in occurrences if k not in {r["event"] for r in rows}]),
        "min_users": options.min_users,
        "method": (
            "usage share = the feature's share of all field feature occurrences (its operational-profile "
            "probability, Musa 1993); step share = its share of the suite's test steps; the difference's "
            f"{options.confidence:.0%} interval is Newcombe's hybrid score interval; recommended tests are "
            "proportional to usage share (largest remainders), critical features raised to their minimum; "
            "today's are the same number of tests shared out by the suite's steps"
        ),
    }
