"""Coverage figures against a brute force over raw sessions, and the invariants they must keep."""

from __future__ import annotations

import itertools
import tempfile
from pathlib import Path

import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder.coverage import TestPaths, compute_coverage, load_field_items, load_test_paths
from gapfinder.paths import feature_names
from gapfinder.sessions import SessionOptions
from gapfinder.suite import load_suite
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from gapfinder.workspace import Workspace
from tests.helpers import at, write_events

MAX_K = 4
EVENTS = ["a", "b", "c", "d"]


def brute_force(
    sessions: list[tuple[str, list[str]]], tests: list[list[str]], max_gap: int
) -> dict[str, dict[str, float | None]]:
    """Coverage straight from the definitions, on names, with Python sets."""
    items: dict[tuple[str, ...], list] = {}  # run -> [occurrences, session ids, users]
    for sid, (user, events) in enumerate(sessions):
        framed = ["START", *events, "END"]
        for k in range(1, MAX_K + 1):
            for i in range(len(framed) - k + 1):
                run = tuple(framed[i : i + k])
                if k == 1 and run[0] in ("START", "END"):
                    continue
                entry = items.setdefault(run, [0, set(), set()])
                entry[0] += 1
                entry[1].add(sid)
                entry[2].add(user)
    exercised: set[tuple[str, ...]] = set()
    for steps in tests:
        framed = ["START", *steps, "END"]
        for k in range(1, MAX_K + 1):
            for idx in itertools.combinations(range(len(framed)), k):
                gap = 0 if k == 1 else max_gap
                if all(b - a - 1 <= gap for a, b in itertools.pairwise(idx)):
                    exercised.add(tuple(framed[i] for i in idx))
    out: dict[str, dict[str, float | None]] = {}
    for metric, keep in (
        ("features", lambda r: len(r) == 1),
        ("transitions", lambda r: len(r) == 2),
        ("kpaths", lambda r: len(r) >= 3),
    ):
        rows = {r: v for r, v in items.items() if keep(r)}
        hit = {r: v for r, v in rows.items() if r in exercised}

        def share(pick, rows=rows, hit=hit):
            total = sum(pick(v) for v in rows.values())
            return sum(pick(v) for v in hit.values()) / total if total else None

        out[metric] = {
            "items": len(rows),
            "exercised": len(hit),
            "by_occurrences": share(lambda v: v[0]),
            "by_sessions": share(lambda v: len(v[1])),
            "by_users": share(lambda v: len(v[2])),
        }
    return out


session_strategy = st.lists(
    st.tuples(st.sampled_from(["u1", "u2", "u3"]), st.lists(st.sampled_from(EVENTS), min_size=1, max_size=6)),
    min_size=1,
    max_size=8,
)
test_strategy = st.lists(
    st.lists(st.sampled_from([*EVENTS, "zz_unknown"]), min_size=1, max_size=5), min_size=1, max_size=4
)


def build_workspace(folder: Path, sessions: list[tuple[str, list[str]]], tests: list[list[str]]) -> Path:
    rows = []
    for n, (user, events) in enumerate(sessions):
        rows += [(user, at(n * 3600 + i), e) for i, e in enumerate(events)]  # an hour apart: one session each
    data = write_events(folder / "e.parquet", rows)
    ws = folder / "ws.duckdb"
    options = ProfileOptions(sessions=SessionOptions(idle_minutes=1.0, flag_automated=False), max_k=MAX_K)
    profile_telemetry([data], ws, options, min_users=1)
    catalog = folder / "tests.yaml"
    catalog.write_text(yaml.safe_dump({"tests": [{"id": f"t{i}", "steps": s} for i, s in enumerate(tests)]}))
    with Workspace(ws) as workspace:
        load_suite(workspace, [catalog])
    return ws


@settings(max_examples=30, deadline=None)
@given(sessions=session_strategy, tests=test_strategy, max_gap=st.integers(0, 2))
def test_coverage_equals_brute_force(
    sessions: list[tuple[str, list[str]]], tests: list[list[str]], max_gap: int
) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        ws = build_workspace(Path(tmp), sessions, tests)
        with Workspace(ws, read_only=True) as workspace:
            result = compute_coverage(load_test_paths(workspace), load_field_items(workspace), max_gap=max_gap)
    strict, lenient = brute_force(sessions, tests, 0), brute_force(sessions, tests, max_gap)
    for metric in ("features", "transitions", "kpaths"):
        for mode, expected in (("strict", strict), ("lenient", lenient)):
            ours = result["metrics"][metric][mode]
            want = expected[metric]
            assert ours["items"] == want["items"] and ours["exercised"] == want["exercised"], (metric, mode)
            for key in ("by_occurrences", "by_sessions", "by_users"):
                assert ours[key] == pytest.approx(want[key]), (metric, mode, key)


@pytest.fixture(scope="module")
def field_items(tmp_path_factory: pytest.TempPathFactory) -> object:
    folder = tmp_path_factory.mktemp("cov")
    sessions = [
        ("u1", list("abcab")),
        ("u2", list("abd")),
        ("u3", list("cab")),
        ("u1", list("dcba")),
        ("u2", list("bb")),
    ]
    ws = build_workspace(folder, sessions, [["a"]])
    with Workspace(ws, read_only=True) as workspace:
        return load_field_items(workspace)


def figures(result: dict) -> list[float]:
    return [
        v or 0.0
        for metric in ("features", "transitions", "kpaths")
        for mode in ("strict", "lenient")
        for key, v in result["metrics"][metric][mode].items()
        if key != "items"
    ]


suite_strategy = st.lists(
    st.lists(st.sampled_from([0, 2, 3, 4, 5, -1]), min_size=1, max_size=5), min_size=1, max_size=4
)


@settings(max_examples=100, deadline=None)
@given(
    tests=suite_strategy,
    extra=st.lists(st.sampled_from([2, 3, 4, 5, -1]), min_size=1, max_size=5),
    gap=st.integers(0, 2),
)
def test_adding_a_test_never_lowers_coverage_and_strict_is_at_most_lenient(
    field_items: object, tests: list[list[int]], extra: list[int], gap: int
) -> None:
    def suite(paths: list[list[int]]) -> TestPaths:
        return TestPaths([f"t{i}" for i in range(len(paths))], [[0, *p, 1] for p in paths])

    before = compute_coverage(suite(tests), field_items, max_gap=gap, per_test=False)  # type: ignore[arg-type]
    after = compute_coverage(suite([*tests, extra]), field_items, max_gap=gap, per_test=False)  # type: ignore[arg-type]
    assert all(b <= a + 1e-12 for b, a in zip(figures(before), figures(after), strict=True))
    for metric in ("features", "transitions", "kpaths"):
        s, le = before["metrics"][metric]["strict"], before["metrics"][metric]["lenient"]
        assert s["exercised"] <= le["exercised"]
        for key in ("by_occurrences", "by_sessions", "by_users"):
            assert (s[key] or 0) <= (le[key] or 0) + 1e-12


def test_redundant_tests_lose_nothing_when_taken_out(suite_workspace: Path) -> None:
    from gapfinder.redundancy import redundant_tests
    from gapfinder.workspace import Workspace

    with Workspace(suite_workspace, read_only=True) as ws:
        tests = load_test_paths(ws)
        items = load_field_items(ws)
    doubled = TestPaths([*tests.test_ids, "copy_of_first"], [*tests.framed, tests.framed[0]])
    listed = redundant_tests(doubled, items)
    assert listed and all(r["loss"] == 0 for r in listed)
    assert {tests.test_ids[0], "copy_of_first"} & {r["test_id"] for r in listed}
    gone = {r["test_id"] for r in listed}
    kept = TestPaths(
        [t for t in doubled.test_ids if t not in gone],
        [f for t, f in zip(doubled.test_ids, doubled.framed, strict=True) if t not in gone],
    )
    before = compute_coverage(doubled, items, per_test=False)["metrics"]["transitions"]["strict"]
    after = compute_coverage(kept, items, per_test=False)["metrics"]["transitions"]["strict"]
    assert after == before
    # every test left exercises something no other does
    assert redundant_tests(kept, items) == []


@settings(max_examples=200, deadline=None)
@given(
    tests=st.lists(st.lists(st.sampled_from([-1, 2, 3, 4, 5]), max_size=9), min_size=1, max_size=5),
    patterns=st.lists(st.lists(st.sampled_from([2, 3, 4, 5]), min_size=1, max_size=4), min_size=1, max_size=6),
    gap=st.sampled_from([None, 0, 1, 2]),
)
def test_pattern_hits_equal_the_plain_subsequence_check(
    tests: list[list[int]], patterns: list[list[int]], gap: int | None
) -> None:
    """Property: the compiled matcher marks exactly the (test, pattern) pairs where occurs_in holds,
    on framed paths with unknown steps (-1) and every gap bound coverage uses."""
    import numpy as np

    from gapfinder.coverage import FieldItems, _pattern_hits, occurs_in

    framed = [[0, *t, 1] for t in tests]
    empty = np.zeros(0, np.int64)
    items = FieldItems(empty, empty, empty, empty, empty, 8, 2, patterns=[tuple(p) for p in patterns])
    hits = _pattern_hits(TestPaths([f"t{i}" for i in range(len(framed))], framed), items, gap)
    expected = [[occurs_in(p, f, gap) for p in patterns] for f in framed]
    assert hits.tolist() == expected


def test_field_item_paths_decoded_from_codes_are_the_runs_of_the_sessions(tmp_path: Path) -> None:
    """FieldItems holds no list column: each row's path is decoded from its packed code, and the
    decoded paths must be exactly the contiguous runs of the framed sessions (k = 1 without START
    and END, k = 2 .. max_k with them), each once."""
    sessions = [("u1", list("abcab")), ("u2", list("abd")), ("u3", list("cab")), ("u1", list("dcba"))]
    ws = build_workspace(tmp_path, sessions, [["a"]])
    with Workspace(ws, read_only=True) as workspace:
        items = load_field_items(workspace)
        names = feature_names(workspace.con)
    start, end = names[0], names[1]
    expected = set()
    for _user, events in sessions:
        framed = [start, *events, end]
        for k in range(1, MAX_K + 1):
            expected |= {tuple(framed[i : i + k]) for i in range(len(framed) - k + 1)}
    expected -= {(start,), (end,)}
    decoded = [tuple(names[e] for e in items.path(row)) for row in range(len(items.code))]
    assert items.max_k == MAX_K
    assert sorted(decoded) == sorted(expected)
    assert [len(path) for path in decoded] == items.k.tolist()
