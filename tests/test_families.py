"""Journey families recover the demo's planted journeys, and keep to the privacy floor."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from sklearn.metrics import adjusted_rand_score

from gapfinder.demo import DETOURS, JOURNEYS, Journey
from gapfinder.families import FamilyOptions, family_labels, journey_families, minhash_signatures, path_shingles
from gapfinder.paths import feature_names
from gapfinder.workspace import Workspace


def _fits(path: list[str], journey: Journey) -> bool:
    """Whether the demo generator's template could have produced this path: the template's steps in
    order (optional ones may be missing), with only the generator's detour events in between."""
    detours = {d for d, _ in DETOURS}
    i = 0
    for event in path:
        while i < len(journey.steps) and journey.steps[i][0] != event and journey.steps[i][1] < 1:
            i += 1
        if i < len(journey.steps) and journey.steps[i][0] == event:
            i += 1
        elif event not in detours:
            return False
    return all(chance < 1 for _, chance in journey.steps[i:])


def test_families_recover_the_planted_journeys(sample_workspace: Path) -> None:
    with Workspace(sample_workspace, read_only=True) as ws:
        assigned = family_labels(ws)
        names = feature_names(ws.con)
    truth, found, weights = [], [], []
    for path, label, sessions in zip(assigned.paths, assigned.labels, assigned.sessions, strict=True):
        fitting = [j.name for j in JOURNEYS if _fits([names[e] for e in path], j)]
        if len(fitting) == 1:  # paths two templates could make say nothing either way
            truth.append(fitting[0])
            found.append(int(label))
            weights.append(int(sessions))
    assert sum(weights) > 0.95 * assigned.sessions.sum()
    score = adjusted_rand_score(np.repeat(truth, weights), np.repeat(found, weights))
    assert score > 0.8, score


def test_listing_keeps_to_the_privacy_floor(suite_workspace: Path) -> None:
    with Workspace(suite_workspace, read_only=True) as ws:
        result = journey_families(ws, FamilyOptions(min_users=50))
    assert result["families"]
    assert all(f["users"] >= 50 for f in result["families"])
    shares = sum(f["session_share"] for f in result["families"]) + result["unassigned_share"]
    assert shares <= 1 + 1e-9
    for f in result["families"]:
        assert 0 <= f["transitions_exercised_by_occurrences"] <= 1
        assert f["typical_path"] is None or f["name"] == " › ".join(f["typical_path"])


def test_minhash_estimates_jaccard() -> None:
    rng = np.random.default_rng(2)
    a = np.unique(rng.integers(0, 1000, 300)).astype(np.uint64)
    b = np.unique(np.r_[a[:150], rng.integers(1000, 2000, 150)]).astype(np.uint64)
    exact = len(np.intersect1d(a, b)) / len(np.union1d(a, b))
    sig = minhash_signatures([a, b], 512, seed=3)
    estimate = float((sig[0] == sig[1]).mean())
    assert abs(estimate - exact) < 0.06  # standard error sqrt(J(1-J)/512) ≈ 0.02
    assert len(path_shingles([2, 3, 2], 2, 4)) == 8  # START, 2, 3, END and START-2, 2-3, 3-2, 2-END


def test_paths_beyond_the_clustered_ones_are_attached_by_similarity(sample_workspace: Path) -> None:
    with Workspace(sample_workspace, read_only=True) as ws:
        assigned = family_labels(ws, FamilyOptions(max_paths=40))
    attached = assigned.labels[40:]
    assert (attached >= 0).mean() > 0.5  # most of the less taken paths find their family
    assert assigned.sessions[assigned.labels < 0].sum() < 0.01 * assigned.sessions.sum()


def test_held_back_families_cannot_be_read_off_the_total(suite_workspace: Path) -> None:
    with Workspace(suite_workspace, read_only=True) as ws:
        result = journey_families(ws, FamilyOptions(min_users=400))
    assert result["held_back"] > 0
    listed = sum(f["sessions"] for f in result["families"])
    # what the listing shows adds up to the total: the held-back sessions are inside "no listed family"
    assert listed + result["unassigned_sessions"] == result["sessions"]
