"""The coverage gate for a test pipeline: floors per metric and a ceiling on new gaps.

``--min-coverage transitions=0.80`` holds when the strict usage-weighted coverage of transitions
by sessions is at least 0.80; another weighting is named after a dot
(``transitions.by_occurrences=0.8``, ``kpaths.unweighted=0.1``, ``features.lenient.by_users``…).
``--max-new-gaps N`` holds when at most N of the top-ranked gaps are new: not in a baseline gap
list (``--baseline``, the JSON of an earlier ``gapfinder gaps``), or, without one, seen only in
the recent half of the period. The command exits 0 when every check holds and 1 when any fails.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from gapfinder.coverage import METRICS, coverage_report
from gapfinder.errors import ConfigError
from gapfinder.gaps import GapOptions, find_gaps
from gapfinder.safe_io import read_text
from gapfinder.workspace import Workspace

__all__ = ["Floor", "parse_floor", "run_gate"]

WEIGHTINGS = ("by_sessions", "by_occurrences", "by_users", "unweighted")
MODES = ("strict", "lenient")


@dataclass(frozen=True)
class Floor:
    """One coverage floor: metric, mode, weighting and the least acceptable value in [0, 1]."""

    metric: str
    mode: str
    weighting: str
    value: float

    @property
    def name(self) -> str:
        return f"{self.metric}.{self.mode}.{self.weighting}"


def parse_floor(text: str) -> Floor:
    """``metric[.mode][.weighting]=value``, e.g. ``transitions=0.8`` or ``kpaths.unweighted=0.1``.

    Examples
    --------
    >>> parse_floor("transitions=0.8").name
    'transitions.strict.by_sessions'
    """
    key, sep, raw = text.partition("=")
    parts = [p.strip() for p in key.split(".") if p.strip()]
    if not sep or not parts:
        raise ConfigError(f"--min-coverage {text!r}: write metric=value, e.g. transitions=0.8")
    metric, rest = parts[0], parts[1:]
    if metric not in METRICS:
        raise ConfigError(f"--min-coverage {text!r}: the metric must be one of {', '.join(METRICS)}")
    mode = next((p for p in rest if p in MODES), "strict")
    weighting = next((p for p in rest if p in WEIGHTINGS), "by_sessions")
    unknown = [p for p in rest if p not in MODES and p not in WEIGHTINGS]
    if unknown:
        raise ConfigError(
            f"--min-coverage {text!r}: {unknown[0]!r} is neither a mode ({', '.join(MODES)}) "
            f"nor a weighting ({', '.join(WEIGHTINGS)})"
        )
    try:
        value = float(raw)
    except ValueError:
        raise ConfigError(f"--min-coverage {text!r}: the value must be a number between 0 and 1") from None
    if not 0 <= value <= 1:
        raise ConfigError(f"--min-coverage {text!r}: the value must be between 0 and 1 (0.8 means 80 %)")
    return Floor(metric, mode, weighting, value)


def _baseline_paths(path: str) -> set[tuple[str, ...]]:
    try:
        data = json.loads(read_text(path, what="baseline file", option="--baseline"))
    except FileNotFoundError:
        raise ConfigError(f"--baseline {path}: no such file") from None
    except json.JSONDecodeError:
        raise ConfigError(f"--baseline {path}: not JSON; give the output of `gapfinder gaps --format json`") from None
    if not isinstance(data, dict) or not isinstance(data.get("gaps"), list):
        raise ConfigError(f"--baseline {path}: no `gaps` list; give the output of `gapfinder gaps --format json`")
    known = set()

    def path_of(entry: Any, n: int) -> tuple[str, ...]:
        path = entry.get("path") if isinstance(entry, dict) else None
        if not isinstance(path, list) or not all(isinstance(step, str) for step in path):
            raise ConfigError(
                f"--baseline {path_of_file}: gap {n} has no `path` list of event names; give the output of "
                "`gapfinder gaps --format json`"
            )
        return tuple(path)

    path_of_file = path
    for n, gap in enumerate(data["gaps"], start=1):
        known.add(path_of(gap, n))
        folded = gap.get("folded", [])
        if not isinstance(folded, list):
            raise ConfigError(f"--baseline {path}: gap {n} has a `folded` that is not a list")
        known.update(path_of(f, n) for f in folded)
    return known


def run_gate(
    ws: Workspace,
    floors: Sequence[Floor],
    *,
    max_new_gaps: int | None = None,
    max_divergence: float | None = None,
    top: int = 10,
    baseline: str | None = None,
    max_gap: int = 0,
    min_users: int = 5,
    tz: str | None = None,
) -> dict[str, Any]:
    """Evaluate every check; ``passed`` is True only when all of them hold."""
    if not floors and max_new_gaps is None and max_divergence is None:
        raise ConfigError(
            "nothing to check: give --min-coverage METRIC=VALUE, --max-new-gaps N and/or --max-divergence BITS"
        )
    checks: list[dict[str, Any]] = []
    if floors:
        report = coverage_report(ws, max_gap=max_gap)
        for floor in floors:
            if floor.metric == "patterns" and not report["patterns_mined"]:
                raise ConfigError(
                    "--min-coverage patterns: no mined patterns yet; run `gapfinder paths --kind patterns`"
                )
            value = report["metrics"][floor.metric][floor.mode][floor.weighting]
            if value is None:
                raise ConfigError(f"--min-coverage {floor.name}: this weighting does not apply to {floor.metric}")
            checks.append(
                {
                    "check": f"coverage {floor.name}",
                    "value": value,
                    "limit": floor.value,
                    "passed": value >= floor.value,
                }
            )
    if max_divergence is not None:
        from gapfinder.representativeness import suite_discriminant

        divergence = suite_discriminant(ws)
        checks.append(
            {
                "check": "divergence of the tests' steps from the users' (Whittaker-Thomason, bits per step)",
                "value": divergence.bits_per_step,
                "limit": max_divergence,
                "passed": divergence.bits_per_step <= max_divergence,
            }
        )
    if max_new_gaps is not None:
        gaps = find_gaps(ws, GapOptions(top=top, min_users=min_users, tz=tz))["gaps"]
        if baseline:
            known = _baseline_paths(baseline)
            new = [g for g in gaps if tuple(g["path"]) not in known]
            how = f"not in {baseline}"
        else:
            new = [g for g in gaps if g["trend"]["label"] == "new"]
            how = "seen only in the recent half of the period"
        checks.append(
            {
                "check": f"new gaps among the top {top} ({how})",
                "value": len(new),
                "limit": max_new_gaps,
                "passed": len(new) <= max_new_gaps,
                "new_gaps": [g["path"] for g in new],
            }
        )
    return {"workspace": str(ws.path), "passed": all(c["passed"] for c in checks), "checks": checks}
