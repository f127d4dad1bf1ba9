"""Gaps on the committed demo sample: the generator's manifest is the truth."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from gapfinder.coverage import unpack_code
from gapfinder.gaps import GapOptions, find_gaps, unused_tests
from gapfinder.paths import feature_names, id_bits
from gapfinder.suite import load_suite
from gapfinder.workspace import Workspace
from tests.helpers import SAMPLE

MANIFEST = json.loads((SAMPLE / "manifest.json").read_text())


@pytest.fixture(scope="module")
def demo_gaps(suite_workspace: Path) -> dict:
    with Workspace(suite_workspace, read_only=True) as ws:
        result = find_gaps(ws, GapOptions(top=10))
        result["_unused"] = unused_tests(ws)
        names = feature_names(ws.con)
        bits = id_bits(len(names))
        result["_kpaths"] = {
            tuple(names[e] for e in unpack_code(code, bits)): s
            for code, s in ws.con.execute("SELECT code, sessions FROM kpaths").fetchall()
        }
    return result


def contains_run(path: list[str], run: list[str]) -> bool:
    return any(path[i : i + len(run)] == run for i in range(len(path) - len(run) + 1))


def family_paths(gap: dict) -> list[list[str]]:
    return [gap["path"], *(f["path"] for f in gap["folded"])]


@pytest.mark.parametrize("journey", MANIFEST["untested_journeys"], ids=lambda j: j["journey"])
def test_every_planted_untested_journey_is_in_the_top_10(demo_gaps: dict, journey: dict) -> None:
    signature = journey["signature_transition"]
    hits = [g["rank"] for g in demo_gaps["gaps"] if any(contains_run(p, signature) for p in family_paths(g))]
    assert hits and min(hits) <= 10, f"{journey['journey']} ({signature}) not among the top 10"


def test_the_automated_loop_is_not_a_gap(demo_gaps: dict) -> None:
    loop = MANIFEST["automated_account"]["loop_transition"]
    assert not [g for g in demo_gaps["gaps"] if any(contains_run(p, loop) for p in family_paths(g))]


def test_the_waitlist_gap_is_recent_and_on_the_new_version(demo_gaps: dict) -> None:
    (waitlist,) = [g for g in demo_gaps["gaps"] if "join_waitlist" in g["path"]]
    assert waitlist["trend"]["label"] in ("new", "rising")
    assert {"segment": "app_version", "value": "5.0"}.items() <= waitlist["segments"][0].items()


def test_every_gap_carries_its_evidence(demo_gaps: dict) -> None:
    total = demo_gaps["total_sessions"]
    for gap in demo_gaps["gaps"]:
        assert {
            "path",
            "sessions",
            "users",
            "share",
            "reason",
            "share_low",
            "share_high",
            "error_rate",
            "trend",
        } <= gap.keys()
        assert isinstance(gap["path"], list) and gap["users"] >= 5
        assert gap["share"] == pytest.approx(gap["sessions"] / total)
        assert gap["share_low"] <= gap["share"] <= gap["share_high"]
        if gap["kind"] in ("feature", "transition", "kpath"):
            assert gap["sessions"] == demo_gaps["_kpaths"][tuple(gap["path"])]  # evidence agrees with the SQL counts
    scores = [g["score"] for g in demo_gaps["gaps"]]
    assert scores == sorted(scores, reverse=True)


def test_rarely_used_tests_are_listed(demo_gaps: dict) -> None:
    listed = {r["test_id"] for r in demo_gaps["_unused"]["unused"]}
    assert set(MANIFEST["rarely_used_tests"]) <= listed
    tested = set(MANIFEST["tested_journeys"].values()) - set(MANIFEST["rarely_used_tests"])
    assert not listed & tested


def test_unused_holds_back_journeys_of_few_users(profiled: Path, tmp_path: Path) -> None:
    catalog = tmp_path / "tests.yaml"
    catalog.write_text("tests:\n  - id: t_tune\n    steps: [open, settings]\n  - id: t_never\n    steps: [pay, open]\n")
    with Workspace(profiled) as ws:
        load_suite(ws, [catalog])
        floored = {r["test_id"]: r for r in unused_tests(ws, max_share=1.0, min_users=5)["unused"]}
        open_rows = {r["test_id"]: r for r in unused_tests(ws, max_share=1.0, min_users=1)["unused"]}
    assert floored["t_tune"]["sessions"] is None and "held back" in floored["t_tune"]["reason"]
    assert floored["t_never"]["sessions"] == 0
    assert open_rows["t_tune"]["sessions"] == 1 and open_rows["t_tune"]["users"] == 1


def _sets_of_listed(ws_path: Path, gaps: list[dict]) -> list[tuple]:
    """The session set of each listed gap, recomputed from the workspace."""
    import numpy as np

    from gapfinder.matching import containing_sequences
    from gapfinder.patterns import load_sequences

    with Workspace(ws_path, read_only=True) as ws:
        names = feature_names(ws.con)
        ids = {n: i for i, n in enumerate(names)}
        db = load_sequences(ws.con, with_users=False)
        gap_bound = json.loads(
            ws.con.execute("SELECT value FROM meta WHERE key = 'patterns_parameters'").fetchone()[0]
        ).get("max_gap")
    paths = [tuple(ids[e] for e in g["path"]) for g in gaps]
    patterns = [g["kind"] == "pattern" for g in gaps]
    which, sequence = containing_sequences(
        db, paths, max_gaps=[gap_bound if p else 0 for p in patterns], framed=[not p for p in patterns]
    )
    out = []
    for n in range(len(gaps)):
        seqs = np.unique(sequence[which == n])
        out.append((seqs, db.weights[seqs]))
    return out


def test_no_two_listed_gaps_share_more_than_half_their_sessions(demo_gaps: dict, suite_workspace: Path) -> None:
    from gapfinder.session_sets import session_jaccard

    sets = _sets_of_listed(suite_workspace, demo_gaps["gaps"])
    for i in range(len(sets)):
        assert int(sets[i][1].sum()) == demo_gaps["gaps"][i]["sessions"]
        for j in range(i):
            pair = (demo_gaps["gaps"][i]["path"], demo_gaps["gaps"][j]["path"])
            assert session_jaccard(sets[i], sets[j]) <= 0.5, pair


def test_each_listed_gap_is_its_familys_longest_common_member(demo_gaps: dict) -> None:
    for gap in demo_gaps["gaps"]:
        members = [gap, *gap["folded"]]
        best = max(m["sessions"] for m in members)
        assert gap["sessions"] >= 0.8 * best
        assert all(len(m["path"]) <= len(gap["path"]) for m in members if m["sessions"] >= 0.8 * best)
        assert gap["family_sessions"] >= best


def test_errors_are_pinned_to_the_steps_that_fail(demo_gaps: dict) -> None:
    """Each step's failure rate among a gap's sessions holds the rate the generator planted for that
    event (manifest `error_rates`) inside its 95 % Wilson interval. Left out: pick_slot (its planted
    rate differs by segment) and the card payment of the card-then-voucher journey (failed on purpose)."""
    planted = MANIFEST["error_rates"]
    checked = 0
    for gap in demo_gaps["gaps"]:
        for step in gap["step_errors"]:
            event = step["event"]
            if event == "pick_slot" or (event == "pay_deposit_card" and "pay_deposit_voucher" in gap["path"]):
                continue
            rate = planted.get(event, planted["base"])
            assert step["rate_low"] <= rate <= step["rate_high"], (gap["path"], step)
            checked += 1
    assert checked >= 20


def test_a_journey_does_not_borrow_errors_from_elsewhere_in_its_sessions(demo_gaps: dict) -> None:
    (voucher,) = [g for g in demo_gaps["gaps"] if g["path"][-2:] == ["pick_slot", "pay_deposit_voucher"]]
    # sessions that pay by voucher often failed a card payment before; that is not this path's error
    assert voucher["session_error_rate"] > 0.2
    assert voucher["error_rate"] < 0.1 and voucher["risk"] < 2
    (retry,) = [g for g in demo_gaps["gaps"] if g["path"][-2:] == ["pay_deposit_card", "pay_deposit_voucher"]]
    assert retry["failing_step"]["event"] == "pay_deposit_card" and retry["risk"] == 4.0
    assert "pay_deposit_card fails in 100.0 % of these sessions" in retry["reason"]


def test_each_gap_shows_complete_sessions_that_hold_it(demo_gaps: dict, suite_workspace: Path) -> None:
    from gapfinder.coverage import occurs_in

    with Workspace(suite_workspace, read_only=True) as ws:
        names = feature_names(ws.con)
        users_of = {
            tuple(names[e] for e in path): users
            for path, users in ws.con.execute("SELECT path, users FROM full_paths").fetchall()
        }
    for gap in demo_gaps["gaps"]:
        examples = gap["example_sessions"]
        assert 1 <= len(examples) <= 3
        counts = [e["sessions"] for e in examples]
        assert counts == sorted(counts, reverse=True) and counts[0] <= gap["sessions"]
        inner = [s for s in gap["path"] if s not in ("START", "END")]
        for example in examples:
            framed = ["START", *example["path"], "END"]
            assert occurs_in(gap["path"] if gap["kind"] != "pattern" else inner, framed, None)
            assert users_of[tuple(example["path"])] >= 5  # above the privacy floor


def test_session_sets_are_the_same_from_ordered_or_shuffled_pairs() -> None:
    """The matcher's order (candidate, then path ascending) skips the sort; any other order sorts."""
    import numpy as np

    from gapfinder.session_sets import session_sets

    rng = np.random.default_rng(1)
    pairs = sorted(set(zip(rng.integers(0, 20, 800).tolist(), rng.integers(0, 90, 800).tolist(), strict=True)))
    which = np.array([a for a, _ in pairs])
    sequence = np.array([b for _, b in pairs])
    weights = rng.integers(1, 5, 90)
    ordered = session_sets(which, sequence, weights, 20)
    shuffle = rng.permutation(len(pairs))
    shuffled = session_sets(which[shuffle], sequence[shuffle], weights, 20)
    for n in range(20):
        assert ordered[n][0].tolist() == shuffled[n][0].tolist() == sorted(b for a, b in pairs if a == n)
        assert ordered[n][1].tolist() == shuffled[n][1].tolist()


def test_masked_session_sets_list_the_pairs_of_every_block() -> None:
    """Session sets kept as the evidence blocks' masks (8-, 64- and 128-candidate blocks, narrowed to
    the bits they use) list the same paths and weights as the (candidate, path) pairs they stand for."""
    import numpy as np

    from gapfinder.gap_evidence import mask_pairs
    from gapfinder.session_sets import MaskedSessionSets

    rng = np.random.default_rng(1)
    paths = 300
    weights = rng.integers(1, 5, paths)
    sizes = [8, 64, 128, 3]
    sets = MaskedSessionSets(weights, sum(sizes))
    expected: dict[int, list[int]] = {}
    first = 0
    for size in sizes:
        held = rng.random((size, paths)) < 0.2
        low = np.zeros(paths, dtype=np.uint64)
        high = np.zeros(paths, dtype=np.uint64)
        for p in range(size):
            words = low if p < 64 else high
            words[held[p]] |= np.uint64(1) << np.uint64(p % 64)
            expected[first + p] = np.flatnonzero(held[p]).tolist()
        which, sequence = mask_pairs(low, high, size)
        assert sorted(zip(which.tolist(), sequence.tolist(), strict=True)) == sorted(
            (p, s) for p in range(size) for s in expected[first + p]
        )
        sets.add_block(first, size, low, high)
        first += size
    assert len(sets) == first and list(sets) == list(range(first))
    for n in range(first):
        ids, got_weights = sets[n]
        assert ids.tolist() == expected[n]
        assert got_weights.tolist() == weights[ids].tolist()
    with pytest.raises(KeyError):
        sets[first]
    # unions read from the bits in place equal those of the listed paths
    for _ in range(50):
        members = [int(x) for x in rng.choice(first, size=int(rng.integers(1, 6)), replace=False)]
        union = sorted(set().union(*(expected[m] for m in members)))
        assert sets.union_total(members) == int(weights[union].sum())


def test_evidence_in_blocks_of_any_size_equals_one_block(
    suite_workspace: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Gap evidence is computed in blocks of at most BLOCK_CANDIDATES candidates; blocks of 7 (the pool of 300 in 43
    blocks, the last one short) must give the very same listing, evidence and examples included."""
    import gapfinder.gaps as gaps_module

    with Workspace(suite_workspace, read_only=True) as ws:
        whole = find_gaps(ws, GapOptions(top=10))
        monkeypatch.setattr(gaps_module, "BLOCK_CANDIDATES", 7)
        blocked = find_gaps(ws, GapOptions(top=10))
        monkeypatch.setattr(gaps_module, "BLOCK_CANDIDATE_PATHS", 50)  # blocks by paths to try: often one candidate
        by_pairs = find_gaps(ws, GapOptions(top=10))
    assert blocked["candidates"] > 7 * 2 and len(blocked["gaps"]) == 10
    assert json.dumps(blocked, sort_keys=True, default=str) == json.dumps(whole, sort_keys=True, default=str)
    assert json.dumps(by_pairs, sort_keys=True, default=str) == json.dumps(whole, sort_keys=True, default=str)


def test_blocks_cover_the_pool_in_order_within_both_bounds() -> None:
    from gapfinder.gaps import BLOCK_CANDIDATE_PATHS, BLOCK_CANDIDATES, _blocks

    budget = BLOCK_CANDIDATE_PATHS
    tried = np.array([9 * budget, 5 * budget, budget // 4, budget // 4, budget // 10, *[budget // 20] * 300])
    blocks = _blocks(tried)
    # 9x and 5x the budget alone; then 25 % + 25 % + 10 % + 8 x 5 %, the next one over it; then 20 x 5 %
    assert blocks[:4] == [(0, 1), (1, 2), (2, 13), (13, 33)]
    assert [lo for lo, _ in blocks[1:]] == [hi for _, hi in blocks[:-1]] and blocks[-1][1] == len(tried)
    assert all(0 < hi - lo <= BLOCK_CANDIDATES for lo, hi in blocks)
    assert all(tried[lo:hi].sum() <= budget for lo, hi in blocks if hi - lo > 1)
    small = _blocks(np.ones(300, dtype=np.int64))  # within the budget: blocks of BLOCK_CANDIDATES
    assert small == [(0, BLOCK_CANDIDATES), (BLOCK_CANDIDATES, 2 * BLOCK_CANDIDATES), (2 * BLOCK_CANDIDATES, 300)]


def test_frontier_equals_a_check_by_sets(suite_workspace: Path) -> None:
    """The k-path frontier (unexercised k >= 3 runs whose one-shorter prefix and suffix are both
    exercised) equals the definition applied to event-id tuples, for several exercised sets."""
    from gapfinder.coverage import load_field_items
    from gapfinder.gaps import _frontier

    with Workspace(suite_workspace, read_only=True) as ws:
        items = load_field_items(ws)
    rng = np.random.default_rng(5)
    paths = [items.path(r) for r in range(len(items.code))]
    for share in (0.0, 0.3, 0.7, 1.0):
        exercised = rng.random(len(paths)) < share
        done = {p for p, e in zip(paths, exercised, strict=True) if e}
        expected = [
            len(p) >= 3 and not e and p[:-1] in done and p[1:] in done for p, e in zip(paths, exercised, strict=True)
        ]
        assert _frontier(items, exercised).tolist() == expected
        if 0 < share < 1:
            assert any(expected)
