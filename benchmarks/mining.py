"""Benchmark of the pattern miner against the ``prefixspan`` package (pure Python) on identical input.

Workloads (each measured in a fresh process, wall time and peak RSS via /usr/bin/time):
- demo: sessions of the invented demo (``gapfinder demo`` + ``profile``), 10k / 50k / 100k sessions,
  all frequent patterns at 1 % support, no gap bound — the miner and the reference.
- synthetic: BENCHMARKS.md's shape (200 features, Zipf-like popularity, Markov-like transitions,
  about 20 events per session): the top 100 patterns at 10k / 50k / 100k sessions, and all
  frequent patterns of up to 5 events at 1 % support at 10k sessions — the miner and the reference.
- scale: 1M synthetic sessions, closed patterns of up to 5 events, at most 2 events between steps,
  1 % support — the miner alone (the reference has no gap bound).

The miner mines distinct paths weighted by their session counts (what gapfinder does); the
reference gets every session as its own list. Their outputs are asserted identical (for top-k:
the supports, and every pattern above the k-th support). Medians over ``--runs`` runs are printed
with the ratio reference / miner.
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent


def worker(spec_path: str) -> None:
    """Run one measurement described by a JSON spec; write the patterns to spec['out']."""
    spec = json.loads(Path(spec_path).read_text())
    sys.path.insert(0, str(HERE))
    data = np.load(spec["input"])
    from gapfinder.mining import SequenceDatabase, mine_patterns

    db = SequenceDatabase(data["items"], data["starts"], data["weights"])
    warm = None
    if spec["engine"] == "miner":
        options = {
            "min_support": spec.get("min_support", 1),
            "max_length": spec.get("max_length", 64),
            "max_gap": spec.get("max_gap"),
            "closed": spec.get("closed", False),
            "top_k": spec.get("top_k"),
        }
        # Cold: the first call in a fresh process, which also sets up numba's runtime (about
        # 0.6 s whatever the input). Warm: the same call again in the same process.
        clock = time.perf_counter()
        found = mine_patterns(db, **options)
        seconds = time.perf_counter() - clock
        clock = time.perf_counter()
        mine_patterns(db, **options)
        warm = time.perf_counter() - clock
        result = [[list(p), int(s)] for p, s in zip(found.paths, found.sessions.tolist(), strict=True)]
    else:
        from _synthetic import as_lists
        from prefixspan import PrefixSpan

        sequences = as_lists(db)
        clock = time.perf_counter()  # the reference's input conversion is not charged to it
        ps = PrefixSpan(sequences)
        ps.maxlen = spec.get("max_length", 1000)
        pairs = ps.topk(spec["top_k"]) if spec.get("top_k") else ps.frequent(spec["min_support"])
        seconds = time.perf_counter() - clock
        result = [[list(p), int(s)] for s, p in pairs]
    Path(spec["out"]).write_text(json.dumps({"seconds": seconds, "warm": warm, "patterns": result}))


def measure(spec: dict, folder: Path, tag: str) -> tuple[float, float, float, list]:
    """(cold seconds, warm seconds, peak RSS in GB, patterns) of one fresh worker process."""
    spec = {**spec, "out": str(folder / f"{tag}.json")}
    spec_file = folder / f"{tag}.spec.json"
    spec_file.write_text(json.dumps(spec))
    done = subprocess.run(
        ["/usr/bin/time", "-f", "%M", sys.executable, __file__, "--worker", str(spec_file)],
        capture_output=True,
        text=True,
    )
    if done.returncode != 0:
        raise SystemExit(f"worker failed: {done.stderr[-2000:]}")
    peak_gb = int(done.stderr.strip().splitlines()[-1]) / 1024 / 1024
    out = json.loads(Path(spec["out"]).read_text())
    warm = out["warm"] if out["warm"] is not None else out["seconds"]
    return out["seconds"], warm, peak_gb, out["patterns"]


def same_patterns(ours: list, theirs: list, top_k: int | None) -> bool:
    a = {tuple(p): s for p, s in ours}
    b = {tuple(p): s for p, s in theirs}
    if not top_k:
        return a == b
    if sorted(a.values()) != sorted(b.values()):
        return False
    kth = min(b.values())
    return {p for p, s in a.items() if s > kth} == {p for p, s in b.items() if s > kth}


def save_input(db: object, path: Path) -> str:
    np.savez(path, items=db.items, starts=db.starts, weights=db.weights)  # type: ignore[attr-defined]
    return str(path)


def demo_inputs(folder: Path, sizes: list[int]) -> dict[int, str]:
    """Distinct demo paths with session counts for the first N sessions (by session key)."""
    import duckdb

    largest = max(sizes)
    demo = folder / "demo"
    subprocess.run(
        ["gapfinder", "demo", "--out", str(demo), "--events", str(int(largest * 4.2)), "--seed", "3"],
        check=True,
        capture_output=True,
    )
    ws = folder / "demo.duckdb"
    subprocess.run(
        ["gapfinder", "profile", str(demo / "field"), "-w", str(ws), "--format", "json"],
        check=True,
        capture_output=True,
    )
    con = duckdb.connect(str(ws), read_only=True)
    from gapfinder.mining import SequenceDatabase

    inputs = {}
    for n in sizes:
        rows = con.execute(
            "SELECT path, count(*) FROM (SELECT path FROM sessions WHERE NOT is_automated "
            "ORDER BY session_key LIMIT ?) GROUP BY path ORDER BY path",
            [n],
        ).fetchall()
        if sum(c for _, c in rows) < n:
            raise SystemExit(f"the demo gave fewer than {n} sessions")
        db = SequenceDatabase.from_sequences([list(p) for p, _ in rows], [c for _, c in rows])
        inputs[n] = save_input(db, folder / f"demo{n}.npz")
    con.close()
    return inputs


def compare(label: str, spec: dict, folder: Path, runs: int, reference_runs: int) -> None:
    ours = [measure({**spec, "engine": "miner"}, folder, f"{label}-m{i}") for i in range(runs)]
    cold = statistics.median(r[0] for r in ours)
    warm = statistics.median(r[1] for r in ours)
    mine_gb = max(r[2] for r in ours)
    line = f"{label:<38} miner cold {cold:6.2f} s warm {warm:6.2f} s {mine_gb:4.2f} GB"
    if reference_runs:
        theirs = [measure({**spec, "engine": "reference"}, folder, f"{label}-r{i}") for i in range(reference_runs)]
        ref_s = statistics.median(r[0] for r in theirs)
        ref_gb = max(r[2] for r in theirs)
        identical = same_patterns(ours[0][3], theirs[0][3], spec.get("top_k"))
        line += (
            f" | prefixspan {ref_s:7.2f} s {ref_gb:4.2f} GB | ratio cold {ref_s / cold:5.1f}x warm "
            f"{ref_s / max(warm, 1e-6):7.1f}x | {len(ours[0][3]):,} patterns, identical: {identical}"
        )
        print(line, flush=True)
        if not identical:
            raise SystemExit(f"{label}: the miner and the reference disagree")
    else:
        print(f"{line} | {len(ours[0][3]):,} patterns", flush=True)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--worker", help=argparse.SUPPRESS)
    parser.add_argument("--runs", type=int, default=3, help="miner runs per workload (median)")
    parser.add_argument("--reference-runs", type=int, default=1, help="prefixspan runs per workload (median)")
    parser.add_argument("--sizes", type=int, nargs="+", default=[10_000, 50_000, 100_000])
    parser.add_argument("--scale", type=int, default=1_000_000, help="sessions for the miner-only run (0: skip)")
    parser.add_argument("--quick", action="store_true", help="10k sessions only, no 1M run")
    args = parser.parse_args()
    if args.worker:
        worker(args.worker)
        return
    if args.quick:
        args.sizes, args.scale = [10_000], 0
    sys.path.insert(0, str(HERE))
    from _synthetic import synthetic_sessions

    print(f"miner runs: median of {args.runs}; prefixspan runs: median of {args.reference_runs}", flush=True)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        # Compile (or load) the kernel once so that no measured run pays for compilation.
        warm = save_input(synthetic_sessions(200), folder / "warm.npz")
        measure({"input": warm, "engine": "miner", "min_support": 2, "closed": True, "max_gap": 1}, folder, "warm")
        for n, path in demo_inputs(folder, args.sizes).items():
            spec = {"input": path, "min_support": max(1, -(-n // 100))}
            compare(f"demo {n:,} sessions, frequent 1%", spec, folder, args.runs, args.reference_runs)
        for n in args.sizes:
            path = save_input(synthetic_sessions(n), folder / f"syn{n}.npz")
            compare(f"synthetic {n:,}, top 100", {"input": path, "top_k": 100}, folder, args.runs, args.reference_runs)
            if n == min(args.sizes):
                spec = {"input": path, "min_support": -(-n // 100), "max_length": 5}
                compare(f"synthetic {n:,}, frequent 1% len<=5", spec, folder, args.runs, args.reference_runs)
        if args.scale:
            path = save_input(synthetic_sessions(args.scale), folder / "scale.npz")
            spec = {"input": path, "min_support": -(-args.scale // 100), "max_length": 5, "max_gap": 2, "closed": True}
            compare(f"synthetic {args.scale:,}, closed gap<=2 len<=5", spec, folder, args.runs, 0)
            compare(
                f"synthetic {args.scale:,}, top 100 gap<=2 len<=5",
                {**spec, "closed": False, "top_k": 100},
                folder,
                args.runs,
                0,
            )


if __name__ == "__main__":
    main()
