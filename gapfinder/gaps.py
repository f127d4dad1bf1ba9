"""Gaps: the common paths no test exercises, ranked and explained with evidence.

Candidates are unexercised features, unexercised transitions (START/END included), *frontier*
k-paths (unexercised, while the path one step shorter at either end is exercised: the smallest new
combination a test would have to add) and unexercised mined patterns. Each candidate that passes
the privacy floor gets its evidence from the sessions that contain it:

- ``share``: sessions with the path / all sessions, with a Wilson score interval (95 %);
- ``error_rate``: sessions with the path that had an error, against the baseline of all sessions;
- ``trend``: its share in the recent half of the data against the earlier half, the halves cut at a
  midnight (UTC, ``periods.split_in_halves``): ``new`` when absent or under the privacy floor
  before, ``rising``/``falling`` with the ratio and its interval;
- ``segments``: app versions or platforms where it is at least 1.5 times as common as overall.

Score = lower bound of the share's interval × risk, where risk is the lower bound of the Wilson
interval of the path's error rate divided by the baseline error rate, kept between 1 and 4 — a
path's errors only raise its rank when they are unlikely to be chance. Ranked by score, then folded
into journey families (``fold_families``): gaps that share more than half of their sessions
(Jaccard) are one row, shown by the longest path within 80 % of the family's sessions.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pyarrow as pa
from numba import njit

from gapfinder.compiled import FIBONACCI
from gapfinder.coverage import (
    FieldItems,
    TestPaths,
    exercised_masks,
    load_field_items,
    load_test_paths,
    occurs_in,
)
from gapfinder.disclosure import kpath_parents
from gapfinder.errors import ConfigError
from gapfinder.gap_evidence import MAX_PATTERNS, gap_evidence, load_path_sessions
from gapfinder.matching import (
    candidate_ranges,
    containing_sequences,
    event_index,
    pair_signatures,
    signature_reach,
)
from gapfinder.mining import use_python
from gapfinder.paths import feature_names, hidden_full_path_ids
from gapfinder.patterns import profile_included_automated, workspace_sequences
from gapfinder.periods import Period, split_in_halves, time_zone
from gapfinder.privacy import DEFAULT_MIN_USERS
from gapfinder.session_sets import MaskedSessionSets, SessionSet
from gapfinder.sql import fetch_dicts, registered
from gapfinder.stats import ratio_interval, wilson_interval
from gapfinder.workspace import Workspace

__all__ = [
    "GAP_KINDS",
    "GapOptions",
    "find_gaps",
    "fold_families",
    "unused_tests",
]

GAP_KINDS = ("feature", "transition", "kpath", "pattern")
MAX_RISK = 4.0
SEGMENT_LIFT = 1.5
# Two gaps whose session sets have a Jaccard index above this are one journey family.
FAMILY_JACCARD = 0.5
# A family is shown by its longest member in at least this share of its most common member's sessions.
LEAD_SHARE = 0.8
# Families formed before the listing is cut to `top` (the same for every top up to half of it).
MAX_FAMILIES = 100
# Complete session paths shown per gap, so a tester can replay what people did.
EXAMPLES = 3


@dataclass(frozen=True)
class GapOptions:
    """What counts as a gap and how many to list.

    max_gap: steps a test may have between a path's items and still exercise it (0: contiguous).
    top: gaps to list after folding. min_users: privacy floor. kinds: candidate kinds to consider.
    pool: candidates (most sessions first) whose evidence is computed before ranking.
    """

    max_gap: int = 0
    top: int = 20
    min_users: int = DEFAULT_MIN_USERS
    kinds: tuple[str, ...] = GAP_KINDS
    pool: int = 300
    confidence: float = 0.95
    tz: str | None = None  # the time zone whose midnights cut the data into halves (default UTC)

    def __post_init__(self) -> None:
        time_zone(self.tz)
        unknown = [k for k in self.kinds if k not in GAP_KINDS]
        if unknown:
            raise ConfigError(f"--kind {', '.join(unknown)}: give one of {', '.join(GAP_KINDS)}")
        if self.max_gap < 0:
            raise ConfigError(f"--max-gap {self.max_gap}: give 0 or more")
        if self.top < 1:
            raise ConfigError(f"--top {self.top}: give 1 or more")

    def pool_size(self) -> int:
        """How many candidates get their evidence computed: ``pool``, or ten per listed gap if more."""
        return max(self.pool, 10 * self.top)


@dataclass
class _Candidate:
    kind: str
    path: tuple[int, ...]
    sessions: int
    users: int
    framed: bool
    gap: int | None


def _frontier(items: FieldItems, exercised: np.ndarray) -> np.ndarray:
    """Rows of unexercised k-paths (k >= 3) whose prefix and suffix one step shorter are exercised.

    The parents come from ``disclosure.kpath_parents`` (one compiled pass for large inputs) and are
    looked up in a hash table of the few exercised codes (``_parents_known``; np.isin sorted all
    18.4M codes of 50M high-entropy events together with them: 5.7 s)."""
    unexercised = (items.k >= 3) & ~exercised
    known = np.unique(items.code[exercised])
    if len(known) == 0 or not unexercised.any():
        return unexercised & False
    prefix, suffix = kpath_parents(items.code, items.bits)
    return _parents_known(prefix, suffix, unexercised, known)


@njit(cache=True, nogil=True)
def _parents_known(  # pragma: no cover - compiled
    prefix: np.ndarray, suffix: np.ndarray, rows: np.ndarray, known: np.ndarray
) -> np.ndarray:
    """Whether each of ``rows`` has both parents among the ``known`` codes (distinct, never 0),
    looked up in a hash table of them: one pass, where a binary search per parent and its
    temporaries took 1.06 s over the 18.4M k-paths of 50M high-entropy events."""
    bits = 1
    while (1 << bits) < 2 * known.shape[0]:
        bits += 1
    mask = (1 << bits) - 1
    shift = np.uint64(64 - bits)
    table = np.zeros(1 << bits, dtype=np.uint64)
    for code in known:
        h = np.int64((code * FIBONACCI) >> shift)
        while table[h] != 0:
            h = (h + 1) & mask
        table[h] = code
    out = np.zeros(rows.shape[0], dtype=np.bool_)
    for i in range(rows.shape[0]):
        if not rows[i]:
            continue
        both = True
        for code in (prefix[i], suffix[i]):
            h = np.int64((code * FIBONACCI) >> shift)
            while table[h] != 0 and table[h] != code:
                h = (h + 1) & mask
            both = both and table[h] == code
        out[i] = both
    return out


def _candidates(
    items: FieldItems,
    exercised: np.ndarray,
    pattern_exercised: np.ndarray,
    kinds: tuple[str, ...],
    *,
    min_users: int,
    pool: int,
) -> tuple[list[_Candidate], int, int]:
    """(the ``pool`` candidates with the most sessions, all candidates, those held back).

    Selection runs on arrays; objects are made only for the pool, so millions of unexercised
    k-paths cost one sort, not a Python loop.
    """
    selectors = {
        "feature": (items.k == 1) & ~exercised,
        "transition": (items.k == 2) & ~exercised,
        "kpath": _frontier(items, exercised),
    }
    kind_of_row = np.full(len(items.k), -1, dtype=np.int64)
    for n, kind in enumerate(GAP_KINDS[:3]):
        if kind in kinds:
            kind_of_row[selectors[kind]] = n
    rows = np.flatnonzero(kind_of_row >= 0)
    pattern_rows = np.flatnonzero(~pattern_exercised) if "pattern" in kinds else np.zeros(0, np.int64)
    total = len(rows) + len(pattern_rows)
    rows = rows[items.users[rows] >= min_users]
    pattern_rows = pattern_rows[items.pattern_users[pattern_rows] >= min_users]
    held_back = total - len(rows) - len(pattern_rows)
    sessions = np.concatenate([items.sessions[rows], items.pattern_sessions[pattern_rows]])
    lengths = np.concatenate([items.k[rows], [len(items.patterns[r]) for r in pattern_rows]]).astype(np.int64)
    order = np.lexsort((lengths, -sessions))[:pool]
    out: list[_Candidate] = []
    for i in order.tolist():
        if i < len(rows):
            row = int(rows[i])
            kind = GAP_KINDS[int(kind_of_row[row])]
            out.append(_Candidate(kind, items.path(row), int(items.sessions[row]), int(items.users[row]), True, 0))
        else:
            row = int(pattern_rows[i - len(rows)])
            out.append(
                _Candidate(
                    "pattern",
                    items.patterns[row],
                    int(items.pattern_sessions[row]),
                    int(items.pattern_users[row]),
                    False,
                    items.pattern_gap,
                )
            )
    return out, total, held_back


def _contains(longer: tuple[int, ...], shorter: tuple[int, ...]) -> bool:
    return len(longer) > len(shorter) and occurs_in(shorter, longer, None)


class _FamilyTest:
    """Whether two gaps' session sets share more than FAMILY_JACCARD of their union.

    The Jaccard index is at most the smaller total over the larger, so sets of very different size
    are told apart without comparing paths; otherwise one set's paths are looked up in a boolean
    mask of the other's (a family lead's mask is made once and kept: every later gap is compared
    with the leads, and the gap's paths are kept while it is). Sets kept as masks
    (``MaskedSessionSets``) know their totals, so a size check lists no paths."""

    def __init__(self, sets: Mapping[int, SessionSet], path_count: int | None = None) -> None:
        self.sets = sets
        self.masked = sets if isinstance(sets, MaskedSessionSets) else None
        if path_count is None and self.masked is not None:
            path_count = self.masked.path_count
        elif path_count is None:
            path_count = 1 + max((int(ids[-1]) for ids, _ in sets.values() if len(ids)), default=0)
        self.size = path_count
        self.totals: dict[int, int] = {}
        self.masks: dict[int, np.ndarray] = {}
        self._last: tuple[int, SessionSet] | None = None

    def session_set(self, n: int) -> SessionSet:
        if self._last is None or self._last[0] != n:
            self._last = (n, self.sets[n])
        return self._last[1]

    def total(self, n: int) -> int:
        if self.masked is not None:
            return self.masked.total(n)
        if n not in self.totals:
            self.totals[n] = int(self.session_set(n)[1].sum())
        return self.totals[n]

    def mask(self, n: int) -> np.ndarray:
        if n not in self.masks:
            if self.masked is not None:
                self.masks[n] = self.masked.holds(n)
            else:
                mask = np.zeros(self.size, dtype=bool)
                mask[self.session_set(n)[0]] = True
                self.masks[n] = mask
        return self.masks[n]

    def __call__(self, gap: int, lead: int) -> bool:
        total_gap, total_lead = self.total(gap), self.total(lead)
        if min(total_gap, total_lead) <= FAMILY_JACCARD * max(total_gap, total_lead):
            return False
        lead_mask = self.mask(lead)
        ids, weights = self.session_set(gap)
        shared = _weight_held(ids, weights, lead_mask)
        union = total_gap + total_lead - shared
        return union > 0 and shared / union > FAMILY_JACCARD

    def union_total(self, members: list[int]) -> int:
        """The sessions of the paths in any of the sets ``members`` (a path counted once)."""
        if self.masked is not None:
            return self.masked.union_total(members)
        seen = np.zeros(self.size, dtype=bool)
        total = 0
        for n in members:
            ids, weights = self.sets[n]
            total += int(weights[~seen[ids]].sum())
            seen[ids] = True
        return total


@njit(cache=True, nogil=True)
def _weight_held(ids: np.ndarray, weights: np.ndarray, mask: np.ndarray) -> int:  # pragma: no cover - compiled
    """Σ weights[i] over the i where mask[ids[i]]: one pass, no temporary arrays."""
    total = 0
    for i in range(ids.shape[0]):
        if mask[ids[i]]:
            total += weights[i]
    return total


def _lead(members: list[dict[str, Any]]) -> dict[str, Any]:
    """The member that names the family: the longest path in at least LEAD_SHARE of the sessions of
    the family's most common member."""
    best = max(m["sessions"] for m in members)
    close = [m for m in members if m["sessions"] >= LEAD_SHARE * best]
    return max(close, key=lambda m: (len(m["_ids"]), m["score"], m["kind"] == "pattern", m["path"]))


def fold_families(
    ranked: list[dict[str, Any]], top: int, sets: Mapping[int, SessionSet], path_count: int | None = None
) -> list[dict[str, Any]]:
    """One row per journey: gaps that ride on largely the same sessions form one family.

    In rank order, a gap joins an earlier family when its path contains a member's path (it cannot
    be tested without it) or when it shares more than half of its sessions with the family's lead
    (Jaccard > FAMILY_JACCARD); otherwise it starts a family. A family is shown by its lead (the
    longest member within LEAD_SHARE of the sessions of its most common member), ranked by its
    best member's score, with the others folded under it. Leads that still share more than half of
    their sessions are merged, so no two listed gaps do.
    """
    one_journey = _FamilyTest(sets, path_count)
    families: list[list[dict[str, Any]]] = []
    leads: list[dict[str, Any]] = []
    known: list[tuple[tuple[int, ...], int]] = []
    for gap in ranked:
        ids = gap["_ids"]
        home = next((f for path, f in known if _contains(ids, path)), None)
        if home is None:
            home = next(
                (f for f, lead in enumerate(leads) if one_journey(gap["_index"], lead["_index"])),
                None,
            )
        if home is not None:
            families[home].append(gap)
            leads[home] = _lead(families[home])
        elif len(families) < max(MAX_FAMILIES, 2 * top):  # the same cap whatever `top`: ranks do not move
            families.append([gap])
            leads.append(gap)
            home = len(families) - 1
        else:
            continue
        known.append((ids, home))
    merged = True
    while merged:
        merged = False
        for i in range(1, len(families)):
            j = next(
                (j for j in range(i) if one_journey(leads[i]["_index"], leads[j]["_index"])),
                None,
            )
            if j is not None:
                families[j].extend(families.pop(i))
                leads.pop(i)
                leads[j] = _lead(families[j])
                merged = True
                break
    shown = []
    for members, lead in zip(families[:top], leads[:top], strict=False):
        entry = {k: v for k, v in lead.items() if not k.startswith("_")}
        entry["score"] = members[0]["score"]
        entry["family_sessions"] = one_journey.union_total([member["_index"] for member in members])
        entry["folded"] = [
            {"kind": m["kind"], "path": m["path"], "sessions": m["sessions"]} for m in members if m is not lead
        ]
        entry["_index"] = lead["_index"]
        shown.append(entry)
    return shown


BLOCK_CANDIDATES = MAX_PATTERNS  # candidates whose evidence is added up at once (a 128-bit mask per path)
# (candidate, distinct path) pairs a block tries at most: a byte of hit flag each (the paths themselves
# are read in place from the inverted index). At 50M high-entropy events 300 candidates try 228M pairs.
BLOCK_CANDIDATE_PATHS = 1 << 28


def _blocks(candidate_paths: np.ndarray) -> list[tuple[int, int]]:
    """(start, end) of consecutive blocks of the pool: at most BLOCK_CANDIDATES candidates and at
    most BLOCK_CANDIDATE_PATHS paths to try (``candidate_paths[i]``: candidate i's); a candidate
    alone may exceed it. Fewer blocks mean fewer passes: each costs DuckDB two passes over the
    sessions (a block's users) and the kernel a pass over the paths (100M high-entropy events: 7
    blocks of about 16M expected hits each, 1.3-1.5 s a block beside the kernel)."""
    out: list[tuple[int, int]] = []
    lo, pairs = 0, 0
    for i, tried in enumerate(candidate_paths.tolist()):
        if i > lo and (i - lo == BLOCK_CANDIDATES or pairs + tried > BLOCK_CANDIDATE_PATHS):
            out.append((lo, i))
            lo, pairs = i, 0
        pairs += tried
    if lo < len(candidate_paths):
        out.append((lo, len(candidate_paths)))
    return out


def _evidence_in_blocks(
    con: Any, db: Any, pool: list[_Candidate], event_rate: np.ndarray, *, midpoint: Any, include_automated: bool
) -> tuple[dict[int, dict[str, Any]], list[dict[str, Any]], MaskedSessionSets]:
    """gap_evidence for the pool in blocks (``_blocks``), with every candidate's session set (the
    distinct paths holding it, for the families and the example sessions).

    A candidate's evidence depends on no other candidate, so blocks give the very same numbers;
    only a block's candidate paths and per-candidate arrays are held at once."""
    evidence: dict[int, dict[str, Any]] = {}
    segment_rows: list[dict[str, Any]] = []
    sets = MaskedSessionSets(db.weights, len(pool))
    sessions = load_path_sessions(con, db, midpoint=midpoint, include_automated=include_automated)
    index = event_index(db, plain=use_python("auto", len(db.items)))  # once for every block
    reach = signature_reach([c.gap for c in pool])  # the pairs the pool's candidates need, no more
    signatures = pair_signatures(db, reach)
    first, last, _every = candidate_ranges(db, [c.path for c in pool], index)
    for lo, hi in _blocks(last - first):
        block = pool[lo:hi]
        found, segments, low, high = gap_evidence(
            con,
            db,
            sessions,
            [c.path for c in block],
            max_gaps=[c.gap for c in block],
            framed=[c.framed for c in block],
            event_rate=event_rate,
            index=index,
            signatures=signatures,
            reach=reach,
        )
        evidence.update({c + lo: {**ev, "candidate": c + lo} for c, ev in found.items()})
        segment_rows.extend({**r, "candidate": int(r["candidate"]) + lo} for r in segments)
        sets.add_block(lo, hi - lo, low, high)
        del low, high
    return evidence, segment_rows, sets


def _pinned_errors(
    path: tuple[int, ...],
    ev: dict[str, Any],
    totals: dict[int, tuple[int, int]],
    event_error_rate: float,
    names: list[str],
    confidence: float,
    nameable: set[int],
) -> dict[str, Any]:
    """Errors on the path's own steps and on the step right after, each against the same events'
    rate elsewhere; the risk factor comes from the step whose failures are least likely chance."""
    sessions = int(ev["sessions"])
    steps: list[dict[str, Any]] = []
    for q, event in enumerate(path[:7]):
        if event in (0, 1):  # START and END are no events
            continue
        failed = int(ev[f"step_errors_{q + 1}"])
        occurrences, errors = totals.get(event, (0, 0))
        rest = occurrences - sessions
        elsewhere = (errors - failed) / rest if rest > 0 else event_error_rate
        rate_low, rate_high = wilson_interval(failed, sessions, confidence=confidence)
        steps.append(
            {
                "event": names[event],
                "failed_sessions": failed,
                "rate": failed / sessions if sessions else 0.0,
                "rate_low": rate_low,
                "rate_high": rate_high,
                "rate_elsewhere": elsewhere,
                "lift": (failed / sessions) / elsewhere if elsewhere > 0 and sessions else None,
                "risk": (rate_low / elsewhere) if elsewhere > 0 else (MAX_RISK if rate_low > 0 else 1.0),
            }
        )
    next_sessions, next_failed = int(ev["next_sessions"]), int(ev["next_error_sessions"])
    next_low, next_high = wilson_interval(next_failed, next_sessions, confidence=confidence)
    next_event = ev.get("next_failing_event_id")
    # what the events that came next fail at anywhere (their mix differs from gap to gap)
    expected = float(ev["next_expected_rate"]) if ev.get("next_expected_rate") is not None else event_error_rate
    after: dict[str, Any] = {
        # the next event is named only when enough people take it (a rare event's name may identify someone)
        "event": names[int(next_event)] if next_event is not None and int(next_event) in nameable else None,
        "sessions": next_sessions,
        "failed_sessions": next_failed,
        "rate": next_failed / next_sessions if next_sessions else 0.0,
        "rate_low": next_low,
        "rate_high": next_high,
        "rate_elsewhere": expected,
        "risk": next_low / expected if expected > 0 else 1.0,
    }
    worst = max(steps, key=lambda st: (st["risk"], st["rate"]), default=None)
    risk = max([float(st["risk"]) for st in steps] + [float(after["risk"]), 1.0])
    own = int(ev["own_error_sessions"])
    return {
        "error_rate": own / sessions if sessions else 0.0,
        "error_lift": worst["lift"] if worst is not None else None,
        "failing_step": worst if worst is not None and worst["failed_sessions"] else None,
        "step_errors": steps,
        "next_step_errors": after,
        "risk": min(MAX_RISK, risk),
    }


def _trend(
    recent: int,
    sessions: int,
    recent_total: int,
    total: int,
    *,
    earlier_users: int,
    min_users: int,
    since: str | None,
    confidence: float = 0.95,
) -> dict[str, Any]:
    """How the gap's share of sessions moved from the earlier half to the recent one.

    ``new``: absent before, or seen by fewer than ``min_users`` users before; ``rising``/``falling``:
    the ratio of its recent to its earlier share is at least 1.25 (at most 0.8) and its 95 % interval
    (Katz's log interval) excludes 1; otherwise ``steady``."""
    earlier, earlier_total = sessions - recent, total - recent_total
    recent_share = recent / recent_total if recent_total else 0.0
    earlier_share = earlier / earlier_total if earlier_total else 0.0
    out: dict[str, Any] = {
        "label": "steady",
        "recent_share": recent_share,
        "earlier_share": earlier_share,
        "ratio": None,
        "ratio_low": None,
        "ratio_high": None,
        "since": since,
    }
    if not recent_total or not earlier_total:
        return out  # one half is empty: nothing to compare
    if recent and earlier_users < min_users:
        out["label"] = "new"
        return out
    if earlier == 0:
        return out
    ratio, low, high = ratio_interval(recent, recent_total, earlier, earlier_total, confidence=confidence)
    out.update(ratio=ratio, ratio_low=None if math.isnan(low) else low, ratio_high=None if math.isnan(high) else high)
    if ratio >= 1.25 and out["ratio_low"] is not None and out["ratio_low"] > 1:
        out["label"] = "rising"
    elif ratio <= 0.8 and (recent == 0 or (out["ratio_high"] is not None and out["ratio_high"] < 1)):
        out["label"] = "falling"
    return out


def _reason(gap: dict[str, Any], names_of_kind: dict[str, str]) -> str:
    what = names_of_kind[gap["kind"]]
    parts = [
        f"{what} in {100 * gap['share']:.1f} % of sessions ({gap['sessions']:,} sessions, {gap['users']:,} users; "
        f"95 % interval {100 * gap['share_low']:.1f}–{100 * gap['share_high']:.1f} %) and no test exercises it"
    ]
    worst, after = gap["failing_step"], gap["next_step_errors"]
    if worst is not None and worst["risk"] > 1:
        parts.append(
            f"{worst['event']} fails in {100 * worst['rate']:.1f} % of these sessions "
            f"(95 % interval {100 * worst['rate_low']:.1f}–{100 * worst['rate_high']:.1f} %), "
            + (f"{worst['lift']:.1f}× its rate elsewhere" if worst["lift"] else "and it never fails elsewhere")
        )
    if after["risk"] > 1:
        which = f" (most often {after['event']})" if after["event"] is not None else ""
        parts.append(
            f"the step right after fails in {100 * after['rate']:.1f} % of these sessions{which}, "
            f"{after['rate'] / after['rate_elsewhere']:.1f}× what those next events fail at overall"
        )
    trend = gap["trend"]
    if trend["label"] == "new":
        parts.append(f"new since {trend['since']}: absent before, or taken by fewer users than the privacy floor")
    elif trend["label"] in ("rising", "falling"):
        interval = (
            f", 95 % interval {trend['ratio_low']:.2f}–{trend['ratio_high']:.2f}×"
            if trend["ratio_low"] is not None and trend["ratio_high"] is not None
            else ""
        )
        parts.append(f"{trend['label']}: {trend['ratio']:.2f}× its share before {trend['since']}{interval}")
    if gap["segments"]:
        top = gap["segments"][0]
        parts.append(f"concentrated on {top['segment']} {top['value']} ({top['lift']:.1f}×)")
    return "; ".join(parts)


_KIND_WORDS = {
    "feature": "used",
    "transition": "taken",
    "kpath": "taken, extending tested paths by one step,",
    "pattern": "a journey",
}


def find_gaps(ws: Workspace, options: GapOptions | None = None) -> dict[str, Any]:
    """The ranked gaps between real usage and the stored suite (see the module docstring)."""
    options = options or GapOptions()
    ws.require("sessions", hint="run `gapfinder profile TELEMETRY -w ...` first")
    if "error_positions" not in {r[0] for r in ws.con.execute("DESCRIBE sessions").fetchall()}:
        raise ConfigError(
            f"workspace {ws.path} was profiled by an earlier gapfinder that did not keep where errors happen; "
            "run `gapfinder profile` again"
        )
    ws.release_cached_memory()  # the k-path items and the (candidate, path) pairs are held in arrays
    tests = load_test_paths(ws)
    items = load_field_items(ws)
    ws.release_cached_memory()  # the k-path cells DuckDB just read stay cached otherwise
    exercised, pattern_exercised = exercised_masks(tests, items, max_gap=options.max_gap)
    pool, candidate_count, suppressed = _candidates(
        items,
        exercised,
        pattern_exercised,
        options.kinds,
        min_users=options.min_users,
        pool=options.pool_size(),
    )
    features = np.flatnonzero((items.k == 1) & (items.users >= options.min_users))
    nameable = {items.path(int(r))[0] for r in features}
    del items, exercised, pattern_exercised  # every k-path's arrays: not needed past the candidates

    con = ws.con
    include_automated = profile_included_automated(con)
    window = fetch_dicts(con, "summarize_session_window", include_automated=include_automated)[0]
    if window["sessions"]:
        earlier_half, recent_half = split_in_halves(window["first_start"], window["last_start"], time_zone(options.tz))
    else:
        earlier_half = recent_half = Period(None, None, "")
    baseline = fetch_dicts(
        con, "summarize_gap_baseline", midpoint=recent_half.start, include_automated=include_automated
    )[0]
    total = int(baseline["sessions"] or 0)
    recent_total = int(baseline["recent_sessions"] or 0)
    base_error = (baseline["error_sessions"] or 0) / total if total else 0.0
    names = feature_names(con)
    result: dict[str, Any] = {
        "workspace": str(ws.path),
        "max_gap": options.max_gap,
        "total_sessions": total,
        "baseline_error_rate": base_error,
        "candidates": candidate_count,
        "suppressed": suppressed,
        "min_users": options.min_users,
        "tests": len(tests.test_ids),
        "score": "lower bound of the share's 95 % interval × error risk (1–4)",
        "periods": {
            "earlier": {**earlier_half.as_dict(), "sessions": total - recent_total},
            "recent": {**recent_half.as_dict(), "sessions": recent_total},
        },
    }
    if not pool or total == 0:
        result["gaps"] = []
        return result

    db = workspace_sequences(ws, with_users=False)
    totals = {
        int(r["event_id"]): (int(r["occurrences"]), int(r["errors"]))
        for r in fetch_dicts(con, "list_event_error_totals", include_automated=include_automated)
    }
    all_occurrences = sum(o for o, _ in totals.values())
    event_error_rate = sum(e for _, e in totals.values()) / all_occurrences if all_occurrences else 0.0
    # the failure rate of each event anywhere, by event id (NaN: never seen in a counted session)
    event_rate = np.full(max(totals, default=0) + 1, np.nan)
    for event, (occurrences, errors) in totals.items():
        event_rate[event] = errors / occurrences if occurrences else 0.0
    evidence, segment_rows, sets = _evidence_in_blocks(
        con, db, pool, event_rate, midpoint=recent_half.start, include_automated=include_automated
    )
    # A segment value is named only when the gap's sessions in it and the value itself each have
    # at least min_users distinct users (an app version one person used must not be shown).
    segment_totals = {
        (r["segment"], r["value"]): r["sessions"]
        for r in fetch_dicts(con, "list_segment_baseline", include_automated=include_automated)
        if r["users"] >= options.min_users
    }
    segments_of: dict[int, list[dict[str, Any]]] = {}
    for r in segment_rows:
        ev = evidence.get(r["candidate"])
        overall = segment_totals.get((r["segment"], r["value"]), 0)
        if not ev or not overall or ev["sessions"] == 0:
            continue
        gap_share = r["sessions"] / ev["sessions"]
        lift = gap_share / (overall / total)
        if lift >= SEGMENT_LIFT and r["users"] >= options.min_users and r["sessions"] >= 0.1 * ev["sessions"]:
            segments_of.setdefault(r["candidate"], []).append(
                {"segment": r["segment"], "value": r["value"], "share_of_gap": gap_share, "lift": lift}
            )

    ranked: list[dict[str, Any]] = []
    for index, cand in enumerate(pool):
        ev = evidence.get(index)
        if not ev:
            continue
        sessions = int(ev["sessions"])
        low, high = wilson_interval(sessions, total, confidence=options.confidence)
        pinned = _pinned_errors(cand.path, ev, totals, event_error_rate, names, options.confidence, nameable)
        gap: dict[str, Any] = {
            "kind": cand.kind,
            "path": [names[e] for e in cand.path],
            "k": len(cand.path),
            "sessions": sessions,
            "users": int(ev["users"]),
            "share": sessions / total,
            "share_low": low,
            "share_high": high,
            **pinned,
            "session_error_rate": int(ev["error_sessions"]) / sessions if sessions else 0.0,
            "trend": _trend(
                int(ev["recent_sessions"]),
                sessions,
                recent_total,
                total,
                earlier_users=int(ev["earlier_users"]),
                min_users=options.min_users,
                since=recent_half.as_dict()["from"],
            ),
            "segments": sorted(segments_of.get(index, []), key=lambda s: -s["lift"])[:3],
            "score": low * pinned["risk"],
            "folded": [],
            "_ids": cand.path,
            "_index": index,
        }
        gap["reason"] = _reason(gap, _KIND_WORDS)
        ranked.append(gap)
    ranked.sort(key=lambda g: (-g["score"], g["k"], g["path"]))
    listed = fold_families(ranked, options.top, sets, db.sequence_count)
    hidden = set(hidden_full_path_ids(con, min_users=options.min_users).tolist())
    for rank, gap in enumerate(listed, start=1):
        gap["rank"] = rank
        gap["example_sessions"] = _example_sessions(db, sets[gap.pop("_index")], hidden, names)
    result["gaps"] = listed
    return result


def _example_sessions(
    db: Any, session_set: SessionSet, hidden: set[int], names: list[str], count: int = EXAMPLES
) -> list[dict[str, Any]]:
    """The most common complete session paths that hold the gap, as a tester could replay them; only
    paths the full-path listing shows (above the privacy floor, after complementary suppression)."""
    sequences, weights = session_set
    order = np.lexsort((sequences, -weights))
    out = []
    for i in order.tolist():
        seq = int(sequences[i])
        if int(db.path_ids[seq]) in hidden:
            continue
        steps = db.items[db.starts[seq] : db.starts[seq + 1]].tolist()
        out.append({"path": [names[e] for e in steps], "sessions": int(weights[i])})
        if len(out) == count:
            break
    return out


def unused_tests(
    ws: Workspace, *, max_share: float = 0.01, max_gap: int = 0, min_users: int = DEFAULT_MIN_USERS
) -> dict[str, Any]:
    """Tests whose journey field sessions take rarely or never: candidates to run less often.

    Only tests whose every step was read as a field event are judged; the others are listed under
    ``not_read`` with what to do, never as rarely taken (an unread step is no evidence of rarity).

    A test's journey is its mapped steps in order; a session takes it when it contains them with
    at most ``max_gap`` other events between consecutive steps (0: as one contiguous run). Tests
    taken by at most ``max_share`` of sessions are listed, rarest first, with the share of the
    suite's steps they account for (what running them less often would save). A journey taken by
    fewer than ``min_users`` distinct users has its counts held back (shown as None).
    """
    if not 0 <= max_share <= 1:
        raise ConfigError(f"--max-share {max_share}: give a fraction of sessions between 0 and 1")
    tests: TestPaths = load_test_paths(ws)
    con = ws.con
    names = feature_names(con)
    db = workspace_sequences(ws, with_users=False)
    total = db.session_count
    journeys = [tuple(e for e in framed[1:-1] if e >= 0) for framed in tests.framed]
    runnable = [i for i, j in enumerate(journeys) if j]
    which, sequence = containing_sequences(
        db, [journeys[i] for i in runnable], max_gaps=[max_gap] * len(runnable), framed=[False] * len(runnable)
    )
    sessions = np.zeros(len(runnable), dtype=np.int64)
    np.add.at(sessions, which, db.weights[sequence])
    users = np.zeros(len(runnable), dtype=np.int64)
    # Distinct users matter only for the journeys listed (taken by at most max_share of sessions):
    # DuckDB counts them from the sessions of the few paths those journeys occur in.
    rare = np.array([n for n in range(len(runnable)) if sessions[n] > 0 and sessions[n] / total <= max_share])
    if len(rare) and db.path_ids is not None:
        listed = np.isin(which, rare)
        journey_paths = pa.table(
            {
                "journey_no": pa.array(which[listed], type=pa.int64()),
                "path_id": pa.array(db.path_ids[sequence[listed]], type=pa.int64()),
            }
        )
        with registered(con, journey_paths=journey_paths):
            counted = fetch_dicts(con, "count_journey_users", include_automated=profile_included_automated(con))
        for row in counted:
            users[row["journey_no"]] = row["users"]
    taken = {runnable[n]: (int(sessions[n]), int(users[n])) for n in range(len(runnable))}
    step_total = sum(len(f) - 2 for f in tests.framed)
    rows = []
    not_read = []
    for i, test_id in enumerate(tests.test_ids):
        steps = len(tests.framed[i]) - 2
        unknown = sum(1 for e in tests.framed[i] if e < 0)
        if steps == 0 or unknown:
            # A test the suite reader could not fully read is no evidence of a rare journey.
            not_read.append(
                {
                    "test_id": test_id,
                    "steps": steps,
                    "unmapped_steps": unknown,
                    "reason": (
                        "no steps were read for it"
                        if steps == 0
                        else f"{unknown} of its {steps} steps match no field event"
                    )
                    + "; map them with --steps-map or --aliases (`gapfinder align` suggests events), or record "
                    "a test run's telemetry with `gapfinder suite --events`",
                }
            )
            continue
        count, people = taken.get(i, (0, 0))
        share = count / total if total else 0.0
        if share > max_share:
            continue
        held_back = 0 < people < min_users
        if count == 0:
            reason = "no field session takes this journey"
        elif held_back:
            reason = f"fewer than {min_users} users take this journey (counts held back)"
        else:
            reason = f"{count:,} sessions ({100 * share:.2f} %) of {people:,} users take this journey"
        rows.append(
            {
                "test_id": test_id,
                "path": [names[e] if e >= 0 else "?" for e in tests.framed[i][1:-1]],
                "sessions": None if held_back else count,
                "users": None if held_back else people,
                "share": None if held_back else share,
                "suite_step_share": steps / step_total if step_total else 0.0,
                "reason": reason,
            }
        )
    rows.sort(key=lambda r: (r["sessions"] if r["sessions"] is not None else 0.5, r["test_id"]))
    return {
        "workspace": str(ws.path),
        "max_share": max_share,
        "max_gap": max_gap,
        "min_users": min_users,
        "total_sessions": total,
        "tests": len(tests.test_ids),
        "unused": rows,
        "not_read": not_read,
    }
