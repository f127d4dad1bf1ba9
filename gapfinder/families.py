"""Journey families: sessions grouped by the journeys they contain, each family named and checked.

Works on distinct complete paths with their sessions, never on events. Each path becomes the set of
its contiguous runs of 1 to ``shingle_k`` states, framed by START and END; a MinHash sketch of that
set (``permutations`` hash functions: the share of equal sketch positions estimates the Jaccard
similarity of two sets — Broder, "On the resemblance and containment of documents", 1997) places
the paths in a space where the Hamming distance between sketches estimates the Jaccard distance.
scikit-learn's HDBSCAN clusters the sketches of the most taken paths without a fixed number of
clusters; the paths it leaves out (noise, or beyond ``max_paths``) join the family of the most
similar clustered path when that similarity is at least ``attach_similarity``, else no family.

Each family is named by its most typical path (the one most sessions take, among those the
full-path listing may show), with its share of sessions and users, how much of its transition
usage the suite exercises, and its most taken untested transitions. Families seen by fewer than
the privacy floor's distinct users are not listed.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from typing import Any

import numpy as np
import pyarrow as pa

from gapfinder.coverage import load_test_paths
from gapfinder.errors import ConfigError
from gapfinder.paths import feature_names, hidden_full_path_ids, id_bits
from gapfinder.patterns import profile_included_automated
from gapfinder.privacy import DEFAULT_MIN_USERS
from gapfinder.sql import fetch_arrow, fetch_dicts, registered
from gapfinder.workspace import Workspace

__all__ = [
    "FamilyLabels",
    "FamilyOptions",
    "family_labels",
    "journey_families",
    "label_paths",
    "minhash_signatures",
    "path_shingles",
]


@dataclass(frozen=True)
class FamilyOptions:
    # the most taken distinct paths are clustered (HDBSCAN grows faster than linearly: 20,000 took 39 s
    # on 2 cores); the rest are attached by locality-sensitive hashing
    max_paths: int = 5_000
    min_family_paths: int = 2  # HDBSCAN's min_cluster_size, in distinct paths
    shingle_k: int = 2  # events and transitions: what a path does, and in which order
    permutations: int = 64
    attach_similarity: float = 0.5
    min_users: int = DEFAULT_MIN_USERS
    seed: int = 1

    def __post_init__(self) -> None:
        if self.min_family_paths < 2:
            raise ConfigError(f"--min-paths {self.min_family_paths}: give 2 or more")
        if self.max_paths < self.min_family_paths:
            raise ConfigError(f"--max-paths {self.max_paths}: give at least --min-paths")


def path_shingles(path: list[int], k: int, bits: int) -> np.ndarray:
    """The distinct contiguous runs of 1..k states of START + path + END, each packed in one integer.

    >>> len(path_shingles([2, 3], 2, 4))  # START, 2, 3, END and three transitions
    7
    """
    framed = [0, *path, 1]
    out = set()
    for size in range(1, k + 1):
        for i in range(len(framed) - size + 1):
            code = 0
            for e in framed[i : i + size]:
                code = (code << bits) | e
            out.add((size << 60) | code if size > 1 else code)
    return np.array(sorted(out), dtype=np.uint64)


def _mix(x: np.ndarray) -> np.ndarray:
    """splitmix64's finalizer: a well-spread 64-bit hash of each value (wrapping arithmetic)."""
    with np.errstate(over="ignore"):
        x = (x ^ (x >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
        x = (x ^ (x >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
        return x ^ (x >> np.uint64(31))


def minhash_signatures(shingles: list[np.ndarray], permutations: int, seed: int = 1) -> np.ndarray:
    """(paths × permutations) MinHash sketch: per hash function, the least hash over the path's set."""
    lengths = np.array([len(s) for s in shingles], dtype=np.int64)
    flat = np.concatenate(shingles) if shingles else np.zeros(0, np.uint64)
    starts = np.r_[0, np.cumsum(lengths)[:-1]]
    rng = np.random.default_rng(seed)
    salts = rng.integers(0, 2**63 - 1, size=permutations, dtype=np.int64).astype(np.uint64)
    out = np.empty((len(shingles), permutations), dtype=np.uint64)
    for j, salt in enumerate(salts):
        hashed = _mix(flat ^ salt)
        out[:, j] = np.minimum.reduceat(hashed, starts) if len(flat) else 0
    return out


_BAND_ROWS = 4  # locality-sensitive hashing: sketches cut into bands of 4 positions


def _attach(
    signatures: np.ndarray, members: np.ndarray, loose: np.ndarray, labels: np.ndarray, threshold: float
) -> np.ndarray:
    """The family of each loose path: that of the most similar clustered path among those sharing a
    whole band of its sketch (locality-sensitive hashing, so the cost grows with the paths, not with
    their pairs), when that similarity is at least ``threshold``; else -1."""
    bands = signatures.shape[1] // _BAND_ROWS
    best_sim = np.full(len(loose), -1.0)
    best_label = np.full(len(loose), -1, dtype=np.int64)
    for band in range(bands):
        cols = slice(band * _BAND_ROWS, (band + 1) * _BAND_ROWS)
        member_keys = _mix(np.bitwise_xor.reduce(_mix(signatures[members, cols]) * np.uint64(band + 1), axis=1))
        loose_keys = _mix(np.bitwise_xor.reduce(_mix(signatures[loose, cols]) * np.uint64(band + 1), axis=1))
        order = np.argsort(member_keys, kind="stable")
        at = np.searchsorted(member_keys[order], loose_keys)
        at = np.minimum(at, len(order) - 1)
        hit = member_keys[order][at] == loose_keys
        if not hit.any():
            continue
        rows = np.flatnonzero(hit)
        partner = members[order[at[rows]]]
        sim = (signatures[loose[rows]] == signatures[partner]).mean(axis=1)
        better = sim > best_sim[rows]
        best_sim[rows[better]] = sim[better]
        best_label[rows[better]] = labels[partner[better]]
    return np.where(best_sim >= threshold, best_label, -1)


def _cluster(signatures: np.ndarray, min_paths: int) -> np.ndarray:
    """HDBSCAN labels (-1 for noise) on the sketches with the Hamming distance."""
    from sklearn.cluster import HDBSCAN

    if len(signatures) < max(min_paths, 2):
        return np.full(len(signatures), -1, dtype=np.int64)
    # Hamming on the raw 64-bit values: only equality per position matters.
    codes = np.unique(signatures, return_inverse=True)[1].reshape(signatures.shape)
    model = HDBSCAN(min_cluster_size=min_paths, metric="hamming", copy=True)
    return np.asarray(model.fit(codes.astype(np.float64)).labels_, dtype=np.int64)


@dataclass
class FamilyLabels:
    """Each distinct path (most taken first) with its sessions and family (-1: none)."""

    path_ids: np.ndarray
    paths: list[list[int]]
    sessions: np.ndarray
    labels: np.ndarray
    clustered: int


def family_labels(ws: Workspace, options: FamilyOptions | None = None) -> FamilyLabels:
    """The family of every distinct path (see the module docstring)."""
    options = options or FamilyOptions()
    ws.require("full_paths", "sessions", hint="run `gapfinder profile TELEMETRY -w ...` first")
    bits = id_bits(len(feature_names(ws.con)))
    table = fetch_arrow(ws.con, "list_family_paths")
    path_ids = table.column("path_id").to_numpy().astype(np.int64)
    sessions = table.column("sessions").to_numpy().astype(np.int64)
    paths = [list(p) for p in table.column("path").to_pylist()]
    if not paths:
        raise ConfigError(f"workspace {ws.path}: no sessions to group")
    labels, clustered = label_paths(paths, options, bits=bits)
    return FamilyLabels(path_ids, paths, sessions, labels, clustered)


def label_paths(paths: list[list[int]], options: FamilyOptions, *, bits: int) -> tuple[np.ndarray, int]:
    """(family of each path, -1 for none; how many were clustered) for distinct paths of event ids
    given most taken first."""
    shingles = [path_shingles(p, options.shingle_k, bits) for p in paths]
    signatures = minhash_signatures(shingles, options.permutations, options.seed)
    clustered = min(options.max_paths, len(paths))
    labels = np.full(len(paths), -1, dtype=np.int64)
    labels[:clustered] = _cluster(signatures[:clustered], options.min_family_paths)
    members = np.flatnonzero(labels >= 0)
    loose = np.flatnonzero(labels < 0)
    if len(members) and len(loose):
        labels[loose] = _attach(signatures, members, loose, labels, options.attach_similarity)
    return labels, clustered


def journey_families(ws: Workspace, options: FamilyOptions | None = None) -> dict[str, Any]:
    """Families of journeys with their share, coverage by the suite and top untested transitions."""
    options = options or FamilyOptions()
    assigned = family_labels(ws, options)
    path_ids, paths, sessions, labels = assigned.path_ids, assigned.paths, assigned.sessions, assigned.labels
    clustered = assigned.clustered
    con = ws.con
    names = feature_names(con)
    # users per family from the sessions (one pass), never summed over paths
    frame = pa.table({"path_id": pa.array(path_ids, pa.int64()), "family": pa.array(labels, pa.int64())})
    with registered(con, family_of_path=frame):
        reach = {
            int(r["family"]): r
            for r in fetch_dicts(con, "count_family_sessions", include_automated=profile_included_automated(con))
        }
    total_sessions = int(sessions.sum())
    total_users = int(fetch_dicts(con, "summarize_sessions")[0]["user_count"] or 0)
    suite_transitions = _suite_transitions(ws)
    transition_users = {
        (int(r["a"]), int(r["b"])): int(r["users"])
        for r in fetch_dicts(con, "list_transition_users", bits=id_bits(len(names)))
    }
    hidden = set(hidden_full_path_ids(con, min_users=options.min_users).tolist())
    families: list[dict[str, Any]] = []
    held_back = 0
    unlisted: list[np.ndarray] = [np.flatnonzero(labels < 0)]
    for label in sorted(set(labels.tolist()) - {-1}):
        rows = np.flatnonzero(labels == label)
        users = int(reach.get(label, {}).get("users") or 0)
        if users < options.min_users:
            held_back += 1
            unlisted.append(rows)
            continue
        order = rows[np.lexsort((path_ids[rows], -sessions[rows]))]
        typical = next((int(i) for i in order if int(path_ids[i]) not in hidden), None)
        used: dict[tuple[int, int], int] = {}
        for i in rows.tolist():
            framed = [0, *paths[i], 1]
            for a, b in itertools.pairwise(framed):
                used[(a, b)] = used.get((a, b), 0) + int(sessions[i])
        total = sum(used.values())
        exercised = sum(n for t, n in used.items() if t in suite_transitions)
        untested = sorted(
            (
                (n, t)
                for t, n in used.items()
                if t not in suite_transitions and transition_users.get(t, 0) >= options.min_users
            ),
            key=lambda nt: (-nt[0], nt[1]),
        )[:3]
        family_sessions = int(sessions[rows].sum())
        families.append(
            {
                "name": " › ".join(names[e] for e in paths[typical]) if typical is not None else None,
                "typical_path": [names[e] for e in paths[typical]] if typical is not None else None,
                "distinct_paths": len(rows),
                "sessions": family_sessions,
                "session_share": family_sessions / total_sessions if total_sessions else 0.0,
                "users": users,
                "user_share": users / total_users if total_users else 0.0,
                "transitions_exercised_by_occurrences": exercised / total if total else None,
                "top_untested": [
                    {"transition": [names[a], names[b]], "occurrences_in_family": n} for n, (a, b) in untested
                ],
            }
        )
    families.sort(key=lambda f: (-f["sessions"], f["name"] or ""))
    # Sessions in no family and in families under the floor are given as one number, so that a
    # held-back family's sessions cannot be read off the total minus the families shown.
    unassigned = int(sessions[np.concatenate(unlisted)].sum())
    return {
        "workspace": str(ws.path),
        "families": families,
        "held_back": held_back,
        "sessions": total_sessions,
        "unassigned_sessions": unassigned,
        "unassigned_share": unassigned / total_sessions if total_sessions else 0.0,
        "distinct_paths": len(paths),
        "clustered_paths": clustered,
        "min_users": options.min_users,
        "method": (
            f"MinHash sketches ({options.permutations} hashes) of each distinct path's runs of 1-{options.shingle_k} "
            f"steps, HDBSCAN (at least {options.min_family_paths} paths a family) on the {clustered:,} most taken "
            f"paths, the rest attached at an estimated Jaccard similarity of {options.attach_similarity:g} or more"
        ),
    }


def _suite_transitions(ws: Workspace) -> set[tuple[int, int]]:
    tests = load_test_paths(ws) if ws.has_table("suite_tests") else None
    out: set[tuple[int, int]] = set()
    for framed in tests.framed if tests else []:
        out.update((a, b) for a, b in itertools.pairwise(framed) if a >= 0 and b >= 0)
    return out
