"""The suppression rule against differencing attacks: no hidden cell can be recovered by
subtracting what listings show from the totals they show.

The rule is the threshold rule with complementary suppression, common practice in official
statistics (statistical disclosure control of frequency tables).
"""

from __future__ import annotations

import itertools
from collections import Counter
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gapfinder.disclosure import complementary_suppression, kpath_parents
from gapfinder.patterns import usage_paths
from gapfinder.usage_profile import ProfileOptions, profile_telemetry
from gapfinder.workspace import Workspace
from tests.helpers import at, write_events

FLOOR = 5


@pytest.fixture(scope="module")
def rare_workspace(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, list[list[str]]]:
    """40 users on common flows; one user on a rare feature, three on a rare transition."""
    folder = tmp_path_factory.mktemp("rare")
    rows = []
    sessions: list[list[str]] = []
    flows = {
        "buy": ["open", "list", "item", "pay"],
        "look": ["open", "search", "item"],
        "tune": ["open", "settings"],
    }
    plan = [(f"user{n}@mail.example", ["buy", "look", "tune"][n % 3]) for n in range(40)]
    plan += [("loner@mail.example", "secret")]  # one person: a feature nobody else uses
    plan += [(f"trio{n}@mail.example", "odd") for n in range(3)]  # three people: a rare transition
    flows["secret"] = ["open", "alice.smith@private.example", "pay"]
    flows["odd"] = ["open", "settings", "pay"]
    for n, (user, flow) in enumerate(plan):
        start = n * 7200
        path = flows[flow]
        sessions.append(path)
        rows += [(user, at(start + 30 * i), e) for i, e in enumerate(path)]
    telemetry = write_events(folder / "events.parquet", rows)
    ws = folder / "ws.duckdb"
    profile_telemetry([telemetry], ws, ProfileOptions(), min_users=FLOOR)
    return ws, sessions


def _listing(ws: Path, kind: str, **options: object) -> dict:
    with Workspace(ws, read_only=True) as w:
        return usage_paths(w, kind, top=0, min_users=FLOOR, **options)  # type: ignore[arg-type]


def _truth(sessions: list[list[str]]) -> tuple[Counter, Counter, Counter]:
    features: Counter = Counter()
    transitions: Counter = Counter()
    full: Counter = Counter()
    for path in sessions:
        framed = ["START", *path, "END"]
        features.update(path)
        transitions.update(itertools.pairwise(framed))
        full[tuple(path)] += 1
    return features, transitions, full


def test_features_do_not_give_away_a_hidden_one_by_subtraction(rare_workspace: tuple[Path, list]) -> None:
    ws, sessions = rare_workspace
    features, _, _ = _truth(sessions)
    shown = {r["path"][0]: r["occurrences"] for r in _listing(ws, "features")["rows"]}
    total_events = sum(features.values())  # the profile summary prints this total
    residual = total_events - sum(shown.values())
    hidden = {f: n for f, n in features.items() if f not in shown}
    assert "alice.smith@private.example" in hidden  # primary suppression: one user
    assert len(hidden) >= 2, "a lone hidden feature would equal the residual"
    assert all(residual != n for n in hidden.values())


def test_transitions_out_of_a_feature_do_not_give_away_a_hidden_one(rare_workspace: tuple[Path, list]) -> None:
    ws, sessions = rare_workspace
    _, transitions, _ = _truth(sessions)
    shown_features = {r["path"][0]: r["occurrences"] for r in _listing(ws, "features")["rows"]}
    shown = {tuple(r["path"]): r["occurrences"] for r in _listing(ws, "transitions")["rows"]}
    for source, occurrences in shown_features.items():
        outgoing = {t: n for t, n in transitions.items() if t[0] == source}
        hidden = {t: n for t, n in outgoing.items() if t not in shown}
        residual = occurrences - sum(n for t, n in outgoing.items() if t in shown)
        assert len(hidden) != 1, f"{source}: one hidden transition out of it equals the residual {residual}"
        incoming = {t: n for t, n in transitions.items() if t[1] == source}
        hidden_in = [t for t in incoming if t not in shown]
        assert len(hidden_in) != 1
    # the rare transition used by three people is hidden
    assert ("settings", "pay") not in shown


def test_full_paths_do_not_give_away_a_hidden_one(rare_workspace: tuple[Path, list]) -> None:
    ws, sessions = rare_workspace
    _, _, full = _truth(sessions)
    shown = {tuple(r["path"]): r["sessions"] for r in _listing(ws, "full")["rows"]}
    hidden = {p: n for p, n in full.items() if p not in shown}
    residual = len(sessions) - sum(shown.values())
    assert len(hidden) != 1
    assert all(residual != n for n in hidden.values()) or not hidden


def test_hidden_counts_do_not_move_with_min_support(rare_workspace: tuple[Path, list]) -> None:
    ws, _ = rare_workspace
    held = set()
    for support in (1, 2, 3, 5, 10, 0.01, 0.2):
        result = _listing(ws, "transitions", min_support=support)
        assert "suppressed_sessions" not in result
        held.add(result["suppressed"])
    assert len(held) == 1  # a sweep of --min-support cannot difference the hidden rows


def test_unique_contribution_of_a_rare_path_is_not_shown(rare_workspace: tuple[Path, list], tmp_path: Path) -> None:
    import shutil

    from gapfinder.coverage import coverage_report
    from gapfinder.suite import load_suite

    ws_path = tmp_path / "ws.duckdb"
    shutil.copy(rare_workspace[0], ws_path)
    catalog = tmp_path / "catalog.yaml"
    catalog.write_text(
        "tests:\n  - id: probe\n    steps: [settings, pay]\n  - id: base\n    steps: [open, list, item, pay]\n"
    )
    with Workspace(ws_path) as ws:
        load_suite(ws, [catalog])
        result = coverage_report(ws, min_users=FLOOR)
    probe = next(t for t in result["tests"] if t["test_id"] == "probe")
    assert probe["unique"]["transitions"] >= 1  # it does exercise the rare transition alone
    assert probe["unique_session_share"]["transitions"] == 0.0  # but its sessions are not shown


def test_align_never_suggests_an_event_fewer_than_the_floor_used(
    rare_workspace: tuple[Path, list], tmp_path: Path
) -> None:
    import shutil

    from gapfinder.align import suggest_for_workspace
    from gapfinder.suite import load_suite

    ws_path = tmp_path / "ws.duckdb"
    shutil.copy(rare_workspace[0], ws_path)
    catalog = tmp_path / "catalog.yaml"
    catalog.write_text("tests:\n  - id: probe\n    steps: [alice smith private example]\n")
    with Workspace(ws_path) as ws:
        load_suite(ws, [catalog])
        result = suggest_for_workspace(ws, min_score=0.0, min_users=FLOOR)
    assert all(s["event"] != "alice.smith@private.example" for s in result["suggestions"])


def test_profile_summary_names_no_automated_path_and_no_hidden_name(rare_workspace: tuple[Path, list]) -> None:
    import json

    from gapfinder.usage_profile import summarize_profile

    with Workspace(rare_workspace[0], read_only=True) as ws:
        text = json.dumps(summarize_profile(ws, top=50, min_users=FLOOR), default=str)
    assert "alice.smith" not in text and "@mail.example" not in text
    assert "typical_path" not in text


@settings(max_examples=200, deadline=None)
@given(
    st.lists(st.tuples(st.integers(0, 4), st.integers(1, 50), st.booleans()), min_size=1, max_size=30),
)
def test_no_partition_group_is_left_with_one_hidden_member(cells: list[tuple[int, int, bool]]) -> None:
    """Property: after the rule, no group holds exactly one hidden member, whatever the input."""
    keys = np.arange(1, len(cells) + 1, dtype=np.int64) + 100
    groups = np.array([c[0] for c in cells], dtype=np.int64)
    values = np.array([c[1] for c in cells], dtype=np.int64)
    primary = np.array([c[2] for c in cells])
    hidden = complementary_suppression(keys, values, primary, [groups])
    assert (hidden | ~primary).all() and (hidden >= primary).all()
    for g in np.unique(groups):
        assert hidden[groups == g].sum() != 1 or (groups == g).sum() == 1


def _rule_by_hand(keys: list[int], values: list[int], hidden: list[bool], families: list[list[int]]) -> list[bool]:
    """The rule as the module docstring states it, one group at a time in plain Python."""
    hidden = list(hidden)
    row_of = {key: row for row, key in enumerate(keys)}
    for _ in range(50):
        changed = False
        for groups in families:
            members: dict[int, list[int]] = {}
            for row, group in enumerate(groups):
                members.setdefault(group, []).append(row)
            lone = [g for g, rows in members.items() if sum(hidden[r] for r in rows) == 1]
            orphans = []
            for group in lone:
                visible = [r for r in members[group] if not hidden[r]]
                if visible:
                    hidden[min(visible, key=lambda r: (values[r], keys[r]))] = True
                    changed = True
                else:
                    orphans.append(group)
            for group in orphans:
                parent = row_of.get(group)
                if parent is not None and not hidden[parent]:
                    hidden[parent] = True
                    changed = True
        if not changed:
            break
    return hidden


@pytest.mark.parametrize("engine", ["vectorized", "compiled"])
@settings(max_examples=300, deadline=None)
@given(
    st.lists(
        st.tuples(st.integers(0, 6), st.integers(0, 6), st.integers(1, 9), st.booleans()), min_size=1, max_size=25
    ),
    st.permutations(range(25)),
)
def test_each_engine_hides_what_the_rule_by_hand_hides(
    engine: str, cells: list[tuple[int, int, int, bool]], shuffle: list[int]
) -> None:
    """Property: both engines (numpy passes; numba kernel) hide exactly what the rule applied group by
    group hides, with two families, group keys that name other rows as parents (keys 1..6 are rows'
    keys, 0 and the rest name no row) and rows in any key order."""
    keys = [1 + k for k in shuffle if k < len(cells)]
    families = [[c[0] for c in cells], [c[1] for c in cells]]
    values = [c[2] for c in cells]
    primary = [c[3] for c in cells]
    expected = _rule_by_hand(keys, values, primary, families)
    got = complementary_suppression(
        np.array(keys), np.array(values), np.array(primary), [np.array(f) for f in families], engine=engine
    )
    assert got.tolist() == expected


def test_engines_agree_on_packed_kpath_codes() -> None:
    """The k-path families as hidden_kpath_codes builds them (unsigned codes, prefix and suffix
    parents, START-like parents that are no row) give the same mask on both engines."""
    rng = np.random.default_rng(7)
    paths = {tuple(rng.integers(2, 9, size=int(rng.integers(1, 5))).tolist()) for _ in range(3000)}
    closed = set()
    for p in paths:  # every prefix and suffix of a stored k-path is stored too, as in kpaths
        closed.update(p[i:j] for i in range(len(p)) for j in range(i + 1, len(p) + 1))
    codes = np.array(sorted(sum(e << (4 * (len(p) - 1 - i)) for i, e in enumerate(p)) | (len(p) << 60) for p in closed))
    codes = codes.astype(np.uint64)
    values = rng.integers(1, 40, size=len(codes))
    primary = rng.random(len(codes)) < 0.2
    for shuffled in (False, True):  # in code order as list_kpath_cells gives them (no copies), and not
        if shuffled:
            order = rng.permutation(len(codes))
            codes, values, primary = codes[order], values[order], primary[order]
        families = list(kpath_parents(codes, 4))
        compiled = complementary_suppression(codes, values, primary, families, engine="compiled")
        vectorized = complementary_suppression(codes, values, primary, families, engine="vectorized")
        assert compiled.sum() > primary.sum()  # the rule did hide more than the floor
        assert np.array_equal(compiled, vectorized)


def test_an_unknown_engine_is_refused() -> None:
    with pytest.raises(ValueError, match="engine"):
        complementary_suppression(np.arange(3), np.arange(3), np.ones(3, dtype=bool), [], engine="fast")


@settings(max_examples=200, deadline=None)
@given(
    st.lists(st.integers(0, 40), max_size=60),
    st.lists(st.integers(-2, 45), max_size=80),
)
def test_run_search_finds_what_searchsorted_finds(keys: list[int], queries: list[int]) -> None:
    """The galloping search of the compiled engine equals numpy's leftmost searchsorted, for
    queries in any order (ascending runs, descending steps, repeats, beyond both ends)."""
    from gapfinder.disclosure import _search_runs

    sorted_keys = np.sort(np.array(keys, dtype=np.int64))
    q = np.array(queries, dtype=np.int64)
    assert _search_runs(sorted_keys, q, np.empty(len(q), np.int64)).tolist() == np.searchsorted(sorted_keys, q).tolist()
    assert _search_runs(sorted_keys, q, np.empty(len(q), np.int32)).tolist() == np.searchsorted(sorted_keys, q).tolist()


def test_compiled_kpath_parents_equal_the_numpy_ones() -> None:
    from gapfinder.disclosure import COMPILED_MIN_CELLS, _kpath_parents_compiled

    rng = np.random.default_rng(3)
    bits = 9
    k = rng.integers(0, 7, size=COMPILED_MIN_CELLS).astype(np.uint64)
    payload = rng.integers(0, 1 << 54, size=len(k), dtype=np.uint64) & ((np.uint64(1) << (k * np.uint64(bits))) - 1)
    codes = (k << np.uint64(60)) | payload
    prefix, suffix = np.empty_like(codes), np.empty_like(codes)
    _kpath_parents_compiled(codes, bits, prefix, suffix)
    expected = kpath_parents(codes[: COMPILED_MIN_CELLS - 1], bits)  # the numpy passes, below the threshold
    assert np.array_equal(prefix[:-1], expected[0]) and np.array_equal(suffix[:-1], expected[1])
    assert (prefix != 0).sum() > len(codes) // 2  # most codes have k >= 2: the comparison means something
