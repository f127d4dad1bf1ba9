"""Benchmark of journey families at scale: synthetic distinct paths shaped like a large product.

Takes ``--paths`` distinct session paths from the high-entropy generator (benchmarks/_synthetic.py:
200 features, Zipf-like popularity, Markov-like transitions, ~20 events a session), most taken
first, and times each step of ``gapfinder.families.label_paths``: shingles, MinHash sketches,
HDBSCAN on the ``--max-paths`` most taken, and the attachment of the rest. The floor, measured in
the same run, is one pass that only builds each path's set of events and transitions as a Python
set (what any method that looks at each distinct path must at least do).

    python benchmarks/families.py --paths 1000000
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from _synthetic import synthetic_sessions

from gapfinder.families import FamilyOptions, _attach, _cluster, minhash_signatures, path_shingles


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--paths", type=int, default=1_000_000)
    parser.add_argument("--max-paths", type=int, default=FamilyOptions().max_paths)
    args = parser.parse_args()
    db = synthetic_sessions(int(args.paths * 1.1), seed=5)
    seen: dict[tuple[int, ...], int] = {}
    items = (db.items + 2).tolist()  # ids from 2: 0 and 1 are START and END
    for i in range(len(db.starts) - 1):
        key = tuple(items[db.starts[i] : db.starts[i + 1]])
        seen[key] = seen.get(key, 0) + 1
    ordered = sorted(seen.items(), key=lambda kv: (-kv[1], kv[0]))[: args.paths]
    paths = [list(p) for p, _ in ordered]
    print(f"{len(paths):,} distinct paths, mean length {np.mean([len(p) for p in paths]):.1f}")
    options = FamilyOptions(max_paths=args.max_paths)
    bits = 8

    t = time.perf_counter()
    floor_sets = [set(zip([0, *p], [*p, 1], strict=True)) | set(p) for p in paths]
    floor = time.perf_counter() - t
    del floor_sets
    t = time.perf_counter()
    shingles = [path_shingles(p, options.shingle_k, bits) for p in paths]
    t_shingles = time.perf_counter() - t
    t = time.perf_counter()
    signatures = minhash_signatures(shingles, options.permutations, options.seed)
    t_minhash = time.perf_counter() - t
    t = time.perf_counter()
    labels = np.full(len(paths), -1, dtype=np.int64)
    clustered = min(options.max_paths, len(paths))
    labels[:clustered] = _cluster(signatures[:clustered], options.min_family_paths)
    t_cluster = time.perf_counter() - t
    t = time.perf_counter()
    members, loose = np.flatnonzero(labels >= 0), np.flatnonzero(labels < 0)
    if len(members) and len(loose):
        labels[loose] = _attach(signatures, members, loose, labels, options.attach_similarity)
    t_attach = time.perf_counter() - t
    total = t_shingles + t_minhash + t_cluster + t_attach
    print(f"floor (Python sets of events and transitions)  {floor:7.2f} s")
    print(
        f"shingles {t_shingles:7.2f} s · MinHash {t_minhash:7.2f} s · HDBSCAN on {clustered:,} {t_cluster:7.2f} s · "
        f"attach {t_attach:7.2f} s"
    )
    print(
        f"total {total:7.2f} s = {total / floor:5.2f}x the floor; {len(set(labels.tolist()) - {-1}):,} families, "
        f"{(labels < 0).mean():.1%} of paths in none"
    )


if __name__ == "__main__":
    main()
