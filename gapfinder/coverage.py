"""Coverage: how much of real usage the tests exercise, unweighted and weighted by usage.

Each test is one path framed START → steps → END (a step that matches no field event stays in
the path as an unknown state, so it breaks contiguity). A field item — a feature, a transition
(START/END included), a contiguous k-path, a mined pattern — is *exercised* by a test when it
occurs in the test's path:

- strict: as a contiguous run (patterns: with the gap bound they were mined with);
- lenient (``max_gap`` = G): as a subsequence with at most G other steps between consecutive
  items (patterns: at most max(their own bound, G)).

Coverage of a metric is reported unweighted (share of distinct items exercised) and weighted by
usage: the share of the items' field occurrences, sessions and distinct users that falls on
exercised items. Test paths are enumerated into packed integer codes with the same layout as the
``kpaths`` table (``queries/create_kpaths.sql``), so matching millions of field k-paths is one
vectorized membership test.
"""

from __future__ import annotations

import json
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from gapfinder.errors import ConfigError
from gapfinder.kpath_counts import in_code_order
from gapfinder.matching import containing_sequences
from gapfinder.mining import SequenceDatabase
from gapfinder.paths import feature_names, id_bits
from gapfinder.privacy import DEFAULT_MIN_USERS
from gapfinder.sql import fetch_dicts, fetch_numpy, first_row
from gapfinder.workspace import Workspace

__all__ = [
    "METRICS",
    "FieldItems",
    "TestPaths",
    "compute_coverage",
    "coverage_report",
    "exercised_codes",
    "exercised_masks",
    "load_field_items",
    "load_test_paths",
    "occurs_in",
    "pack_code",
    "planned_and_done",
    "suite_reading",
]

METRICS = ("features", "transitions", "kpaths", "patterns")
START, END, UNKNOWN = 0, 1, -1


def pack_code(path: Sequence[int], bits: int) -> int:
    """The integer the kpaths table uses for a contiguous run: k in the top 4 bits, then ids.

    Examples
    --------
    >>> pack_code([0, 5], 4) == (2 << 60) | (0 << 4) | 5
    True
    """
    code = len(path) << 60
    for j, event in enumerate(path):
        code |= int(event) << (bits * (len(path) - 1 - j))
    return code


def unpack_code(code: int, bits: int) -> tuple[int, ...]:
    """The event ids of a packed code (the inverse of ``pack_code``).

    Examples
    --------
    >>> unpack_code(pack_code([0, 5, 3], 4), 4)
    (0, 5, 3)
    """
    code = int(code)
    k = code >> 60
    mask = (1 << bits) - 1
    return tuple((code >> (bits * (k - 1 - j))) & mask for j in range(k))


def _index_runs(length: int, k: int, max_gap: int) -> Iterator[tuple[int, ...]]:
    """Index tuples of k positions in a path of ``length`` with at most ``max_gap`` skipped between."""
    if k == 1:
        for i in range(length):
            yield (i,)
        return
    for start in range(length):
        stack: list[tuple[int, ...]] = [(start,)]
        while stack:
            chosen = stack.pop()
            if len(chosen) == k:
                yield chosen
                continue
            last = chosen[-1]
            for nxt in range(last + 1, min(length, last + 2 + max_gap)):
                stack.append((*chosen, nxt))


def exercised_codes(framed: Sequence[int], *, max_k: int, max_gap: int, bits: int) -> set[int]:
    """Packed codes of every run of 1..max_k states of a framed test path (gap bound applied).

    Runs through an unknown step (-1) are left out: no field item contains one. Single states
    are features only (START and END are not features).
    """
    codes: set[int] = set()
    n = len(framed)
    for k in range(1, max_k + 1):
        for idx in _index_runs(n, k, max_gap if k > 1 else 0):
            run = [framed[i] for i in idx]
            if UNKNOWN in run or (k == 1 and run[0] in (START, END)):
                continue
            codes.add(pack_code(run, bits))
    return codes


def occurs_in(pattern: Sequence[Any], path: Sequence[Any], max_gap: int | None) -> bool:
    """Whether ``pattern`` occurs in ``path`` in order with at most ``max_gap`` steps between
    consecutive items (None: any number).

    Examples
    --------
    >>> occurs_in([1, 3], [1, 2, 3], 1), occurs_in([1, 3], [1, 2, 3], 0)
    (True, False)
    """
    if not pattern:
        return True
    if max_gap is None:
        it = iter(path)
        return all(any(x == e for x in it) for e in pattern)
    ends = [i for i, x in enumerate(path) if x == pattern[0]]
    for event in pattern[1:]:
        ends = sorted({j for e in ends for j in range(e + 1, min(len(path), e + 2 + max_gap)) if path[j] == event})
        if not ends:
            return False
    return bool(ends)


@dataclass
class TestPaths:
    """The stored suite: test ids and their framed paths of event ids (-1 for unknown steps)."""

    __test__ = False

    test_ids: list[str]
    framed: list[list[int]]


@dataclass
class FieldItems:
    """Field items to be covered, one array per column (kpaths rows, then patterns rows)."""

    k: np.ndarray
    code: np.ndarray
    occurrences: np.ndarray
    sessions: np.ndarray
    users: np.ndarray
    bits: int
    max_k: int
    patterns: list[tuple[int, ...]] = field(default_factory=list)
    pattern_sessions: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))
    pattern_users: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))
    pattern_gap: int | None = None

    def path(self, row: int) -> tuple[int, ...]:
        """Event ids of one k-path row, decoded from its packed code (there may be millions of rows:
        no list column is held for them)."""
        return unpack_code(int(self.code[row]), self.bits)


def load_test_paths(ws: Workspace) -> TestPaths:
    ws.require("suite_tests", hint="run `gapfinder suite TRACES... -w ...` first")
    rows = [(r["test_id"], r["path"]) for r in fetch_dicts(ws.con, "list_counted_test_paths")]
    if not rows:
        stored = fetch_dicts(ws.con, "list_suite_tests")
        if stored:
            raise ConfigError(
                f"workspace {ws.path}: none of the {len(stored):,} stored tests counts as exercising anything "
                "(failed, skipped or left out by tags); run `gapfinder suite ... --count-all` to count them"
            )
        raise ConfigError(f"workspace {ws.path}: the stored suite has no tests; run `gapfinder suite` with some")
    return TestPaths([r[0] for r in rows], [[START, *list(r[1]), END] for r in rows])


def load_field_items(ws: Workspace) -> FieldItems:
    """kpaths (k = 1..K) and, when mined, the stored patterns with their mining gap bound; kept on
    ``ws`` until profile or mining runs again (`run` reads them for gap ranking and the plan), so
    their arrays are read-only."""
    ws.require("kpaths", "features", hint="run `gapfinder profile TELEMETRY -w ...` first")
    return ws.derived("field_items", ("profile", "patterns"), lambda: _read_field_items(ws))


def _read_field_items(ws: Workspace) -> FieldItems:
    con = ws.con
    bits = id_bits(len(feature_names(con)))
    columns = fetch_numpy(con, "list_kpath_items")
    arrays = {
        name: columns.pop(name).astype(dtype, copy=False)
        for name, dtype in (("code", np.uint64), ("occurrences", np.int64), ("sessions", np.int64), ("users", np.int64))
    }
    arrays = dict(zip(arrays, in_code_order(*arrays.values()), strict=True))  # the code column first
    k = (arrays["code"] >> np.uint64(60)).astype(np.int8)  # k <= 15: a byte a row
    items = FieldItems(
        k=k,
        code=arrays["code"],
        occurrences=arrays["occurrences"],
        sessions=arrays["sessions"],
        users=arrays["users"],
        bits=bits,
        max_k=int(k.max()) if len(k) else 2,
    )
    if ws.has_table("patterns"):
        rows = con.execute("SELECT path, sessions, users FROM patterns ORDER BY pattern_no").fetchall()
        meta = first_row(con.execute("SELECT value FROM meta WHERE key = 'patterns_parameters'"))
        items.patterns = [tuple(r[0]) for r in rows]
        items.pattern_sessions = np.array([r[1] for r in rows], dtype=np.int64)
        items.pattern_users = np.array([r[2] for r in rows], dtype=np.int64)
        items.pattern_gap = json.loads(meta[0]).get("max_gap") if meta else None
    for array in (items.k, items.code, items.occurrences, items.sessions, items.users):
        array.flags.writeable = False
    items.pattern_sessions.flags.writeable = False
    items.pattern_users.flags.writeable = False
    return items


def _exercised_by_test(tests: TestPaths, items: FieldItems, max_gap: int) -> list[np.ndarray]:
    """For each test, the sorted unique packed codes of the runs it exercises."""
    out = []
    for framed in tests.framed:
        codes = exercised_codes(framed, max_k=items.max_k, max_gap=max_gap, bits=items.bits)
        out.append(np.array(sorted(codes), dtype=np.uint64))
    return out


def _pattern_hits(tests: TestPaths, items: FieldItems, gap: int | None) -> np.ndarray:
    """(tests × patterns) booleans: which test exercises which stored pattern."""
    hits = np.zeros((len(tests.framed), len(items.patterns)), dtype=bool)
    if hits.size == 0:
        return hits
    patterns = [tuple(int(e) for e in pattern) for pattern in items.patterns]
    empty = np.array([not pattern for pattern in patterns])
    hits[:, empty] = True  # an empty pattern occurs everywhere (as in occurs_in)
    wanted = np.flatnonzero(~empty)
    if len(wanted):
        # the tests' framed paths are the sequences (START and END are items of them); an unknown
        # step (-1) becomes an id no pattern holds
        steps = [np.asarray(framed, dtype=np.int64) for framed in tests.framed]
        unknown = 1 + max(max((max(p) for p in patterns if p), default=1), max(int(x.max()) for x in steps))
        db = SequenceDatabase.from_sequences([np.where(x == UNKNOWN, unknown, x).tolist() for x in steps])
        which, test_rows = containing_sequences(
            db, [patterns[p] for p in wanted], max_gaps=[gap] * len(wanted), framed=[False] * len(wanted)
        )
        hits[test_rows, wanted[which]] = True
    return hits


def _summary(mask: np.ndarray, occurrences: np.ndarray | None, sessions: np.ndarray, users: np.ndarray) -> dict:
    def share(weights: np.ndarray) -> float | None:
        total = float(weights.sum())
        return float(weights[mask].sum()) / total if total else None

    total = len(mask)
    exercised = int(mask.sum())
    return {
        "items": total,
        "exercised": exercised,
        "unweighted": exercised / total if total else None,
        "by_occurrences": share(occurrences) if occurrences is not None else None,
        "by_sessions": share(sessions),
        "by_users": share(users),
    }


def _rows_holding(codes: np.ndarray, wanted: np.ndarray) -> np.ndarray:
    """np.isin(codes, wanted) for ``codes`` in ascending order (field items come in code order): the
    few wanted codes are looked up in the many, not the other way round (np.isin sorted the 18.4M
    k-path codes of 50M high-entropy events for a few thousand exercised ones: 2-3 s)."""
    mask = np.zeros(len(codes), dtype=bool)
    if len(codes) == 0 or len(wanted) == 0:
        return mask
    at = np.searchsorted(codes, wanted)
    inside = at < len(codes)
    at, wanted = at[inside], wanted[inside]
    mask[at[codes[at] == wanted]] = True
    return mask


def _metric_masks(
    items: FieldItems, codes_by_test: list[np.ndarray], pattern_hits: np.ndarray
) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """{metric: (row selector over items, exercised mask over those rows)}; patterns separately."""
    every = np.unique(np.concatenate(codes_by_test)) if codes_by_test else np.zeros(0, np.uint64)
    exercised = _rows_holding(items.code, every)
    selectors = {"features": items.k == 1, "transitions": items.k == 2, "kpaths": items.k >= 3}
    out = {m: (sel, exercised[sel]) for m, sel in selectors.items()}
    hit = pattern_hits.any(axis=0) if pattern_hits.size else np.zeros(len(items.patterns), bool)
    out["patterns"] = (np.ones(len(items.patterns), bool), hit)
    return out


def exercised_masks(tests: TestPaths, items: FieldItems, *, max_gap: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """(over kpaths rows, over patterns): whether any test exercises the item, strict when max_gap is 0."""
    codes = _exercised_by_test(tests, items, max_gap)
    every = np.unique(np.concatenate(codes)) if codes else np.zeros(0, np.uint64)
    gap = items.pattern_gap if max_gap == 0 or items.pattern_gap is None else max(items.pattern_gap, max_gap)
    hits = _pattern_hits(tests, items, gap)
    pattern_mask = np.asarray(hits.any(axis=0) if hits.size else np.zeros(len(items.patterns), bool), dtype=bool)
    kpath_mask = _rows_holding(items.code, every)
    return kpath_mask, pattern_mask


def compute_coverage(
    tests: TestPaths,
    items: FieldItems,
    *,
    max_gap: int = 0,
    per_test: bool = True,
    min_users: int = DEFAULT_MIN_USERS,
) -> dict[str, Any]:
    """Coverage of every metric, strict and lenient, and what each test contributes uniquely.

    Returns a dictionary: ``metrics`` (metric → {strict, lenient} → items, exercised, unweighted,
    by_occurrences, by_sessions, by_users) and ``tests`` (per test: items exercised per metric,
    items only it exercises and their share of sessions).
    """
    if max_gap < 0:
        raise ConfigError(f"--max-gap {max_gap}: give 0 (strict only) or more")
    lenient_pattern_gap = None if items.pattern_gap is None else max(items.pattern_gap, max_gap)
    strict_codes = _exercised_by_test(tests, items, 0)
    lenient_codes = strict_codes if max_gap == 0 else _exercised_by_test(tests, items, max_gap)
    strict_patterns = _pattern_hits(tests, items, items.pattern_gap)
    lenient_patterns = (
        strict_patterns
        if lenient_pattern_gap == items.pattern_gap
        else _pattern_hits(tests, items, lenient_pattern_gap)
    )
    metrics: dict[str, Any] = {}
    for mode, codes, hits in (("strict", strict_codes, strict_patterns), ("lenient", lenient_codes, lenient_patterns)):
        for metric, (selector, mask) in _metric_masks(items, codes, hits).items():
            if metric == "patterns":
                summary = _summary(mask, None, items.pattern_sessions, items.pattern_users)
            else:
                summary = _summary(mask, items.occurrences[selector], items.sessions[selector], items.users[selector])
            metrics.setdefault(metric, {})[mode] = summary
    result: dict[str, Any] = {
        "max_gap": max_gap,
        "pattern_gap": items.pattern_gap,
        "patterns_mined": bool(items.patterns),
        "metrics": metrics,
        "test_count": len(tests.test_ids),
    }
    if per_test:
        result["tests"] = _contributions(tests, items, strict_codes, strict_patterns, min_users)
        result["min_users"] = min_users
    return result


def _contributions(
    tests: TestPaths,
    items: FieldItems,
    codes_by_test: list[np.ndarray],
    pattern_hits: np.ndarray,
    min_users: int = DEFAULT_MIN_USERS,
) -> list[dict[str, Any]]:
    """Per test: items exercised, items no other test exercises, and those items' share of sessions.

    The share counts only items taken by at least ``min_users`` distinct users: otherwise a suite
    written to exercise one rare path would read that path's sessions off its unique share
    (the threshold rule of ``gapfinder.disclosure``).

    Works on each test's own codes looked up in the sorted item codes, so memory grows with the
    suite, not with tests × field items.
    """
    totals = {
        "features": float(items.sessions[items.k == 1].sum()),
        "transitions": float(items.sessions[items.k == 2].sum()),
        "kpaths": float(items.sessions[items.k >= 3].sum()),
    }
    all_codes = np.concatenate(codes_by_test) if codes_by_test else np.zeros(0, np.uint64)
    distinct, owner_count = np.unique(all_codes, return_counts=True)
    single = distinct[owner_count == 1]
    pattern_owners = pattern_hits.sum(axis=0) if pattern_hits.size else np.zeros(0, np.int64)
    rows = []
    for t, test_id in enumerate(tests.test_ids):
        codes = codes_by_test[t]
        at = np.minimum(np.searchsorted(items.code, codes), max(len(items.code) - 1, 0))
        found = items.code[at] == codes if len(items.code) else np.zeros(len(codes), bool)
        index = at[found]
        only = np.isin(codes[found], single)
        row: dict[str, Any] = {"test_id": test_id, "exercised": {}, "unique": {}, "unique_session_share": {}}
        ks = items.k[index]
        for metric, in_metric in (("features", ks == 1), ("transitions", ks == 2), ("kpaths", ks >= 3)):
            row["exercised"][metric] = int(in_metric.sum())
            row["unique"][metric] = int((in_metric & only).sum())
            counted = index[in_metric & only]
            counted = counted[items.users[counted] >= min_users]
            unique_sessions = float(items.sessions[counted].sum())
            row["unique_session_share"][metric] = unique_sessions / totals[metric] if totals[metric] else 0.0
        if len(items.patterns):
            mine = pattern_hits[t]
            only_p = mine & (pattern_owners == 1)
            total_p = float(items.pattern_sessions.sum())
            row["exercised"]["patterns"] = int(mine.sum())
            row["unique"]["patterns"] = int(only_p.sum())
            share_p = only_p & (items.pattern_users >= min_users)
            share = float(items.pattern_sessions[share_p].sum()) / total_p if total_p else 0.0
            row["unique_session_share"]["patterns"] = share
        rows.append(row)
    rows.sort(key=lambda r: (-r["unique_session_share"]["transitions"], -r["unique"]["transitions"], r["test_id"]))
    return rows


def coverage_report(ws: Workspace, *, max_gap: int = 0, min_users: int = DEFAULT_MIN_USERS) -> dict[str, Any]:
    """Coverage of the stored suite against the workspace's usage profile (and mined patterns)."""
    tests = load_test_paths(ws)
    items = load_field_items(ws)
    result = compute_coverage(tests, items, max_gap=max_gap, min_users=min_users)
    result["workspace"] = str(ws.path)
    totals = fetch_dicts(ws.con, "summarize_sessions")[0]
    result["sessions"] = int(totals["session_count"] or 0)
    result["suite"] = suite_reading(ws)
    from gapfinder.representativeness import suite_discriminant

    result["representativeness"] = suite_discriminant(ws, tests).as_dict()
    from gapfinder.redundancy import redundant_tests

    result["redundant"] = redundant_tests(tests, items)
    if ws.has_table("plan_scenarios"):
        result["planned"] = planned_and_done(ws, tests)
    return result


def _in_order(wanted: Sequence[int], framed: Sequence[int]) -> bool:
    """True when ``wanted`` occurs in ``framed`` in order (other steps may come between)."""
    steps = iter(framed)
    return all(any(step == item for step in steps) for item in wanted)


def planned_and_done(ws: Workspace, tests: TestPaths | None = None) -> list[dict[str, Any]]:
    """The stored plan's scenarios, each with the counted tests that now exercise the gap it was
    planned for (its path in order; a mined pattern's steps may have others between them): the
    scenarios implemented since the plan."""
    from gapfinder.plan import load_plan

    tests = tests or load_test_paths(ws)
    names = feature_names(ws.con)
    ids = {name: i for i, name in enumerate(names)}
    ids.update({"START": START, "END": END})
    out = []
    for row in load_plan(ws)["scenarios"]:
        wanted = [ids.get(step, UNKNOWN - 1) for step in row["gap_path"]]
        by = [
            test_id
            for test_id, framed in zip(tests.test_ids, tests.framed, strict=True)
            if wanted and _in_order(wanted, framed)
        ]
        out.append({"scenario": row["scenario"], "name": row["name"], "gap_path": row["gap_path"], "exercised_by": by})
    return out


def suite_reading(ws: Workspace) -> dict[str, Any]:
    """How much of the stored suite counts: tests counted and left out (by reason), steps mapped."""
    from gapfinder.suite.stage import summarize_suite

    summary = summarize_suite(ws)
    return {
        key: summary[key]
        for key in (
            "test_count",
            "counted_test_count",
            "left_out",
            "step_count",
            "mapped_step_count",
            "unmapped_step_count",
        )
    }
