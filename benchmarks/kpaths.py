"""Benchmark of the k-path count (`paths.build_paths`: kpaths for k = 1..5 with occurrences,
sessions and distinct users) against a floor measured in the same run.

For each size: generate telemetry (``--shape entropy`` by default: almost every session's path
distinct, the hard case; ``demo`` for few paths and many users), profile it once, then alternate
runs of the floor and of ``build_paths`` on a copy of the workspace, each in a fresh process, and
print medians of wall time and peak memory and the ratio to the floor.

The floor is DuckDB counting the transitions alone (k = 2) over the same workspace, with the
sessions and distinct users of each: every counted session's path unnested into pairs, one group
by. The k-path count does that for k = 1..5 at once; the ratio says what the other lengths and the
exact users per run cost beyond it.
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

from _synthetic import write_telemetry
from _timing import timed

FLOOR = """
import duckdb, sys
con = duckdb.connect(sys.argv[1], read_only=True)
con.execute("SET threads = 2")
con.execute(
    "SELECT a, b, count(*), count(DISTINCT session_key), count(DISTINCT user_key) FROM ("
    "SELECT session_key, user_key, p[i] AS a, p[i + 1] AS b FROM (SELECT session_key, user_key, "
    "[0] || path || [1] AS p, unnest(range(1, len(path) + 2)) AS i FROM sessions WHERE NOT is_automated)) "
    "GROUP BY ALL"
).fetchall()
"""

COUNT = """
import sys, time
import duckdb
from gapfinder.paths import build_paths
from gapfinder.workspace import use_engine
use_engine(threads=2)
con = duckdb.connect(sys.argv[1])
con.execute("SET threads = 2")
build_paths(con, max_k=5)
con.close()
"""


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--sizes", type=int, nargs="+", default=[1_000_000, 10_000_000])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--shape", choices=["demo", "entropy"], default="entropy")
    args = parser.parse_args()
    gapfinder = shutil.which("gapfinder") or sys.exit("install gapfinder first (pip install -e .)")
    medians: dict[int, float] = {}
    with tempfile.TemporaryDirectory() as tmp:
        for size in args.sizes:
            folder = Path(tmp) / f"t{size}"
            ws = Path(tmp) / f"ws{size}.duckdb"
            write_telemetry(args.shape, folder, size, gapfinder)
            subprocess.run(
                [gapfinder, "profile", str(folder / "field"), "-w", str(ws), "--format", "json"],
                check=True,
                capture_output=True,
            )
            floors, counts = [], []
            for _ in range(args.runs):
                floors.append(timed([sys.executable, "-c", FLOOR, str(ws)]))
                copy = Path(tmp) / "copy.duckdb"
                shutil.copy(ws, copy)
                counts.append(timed([sys.executable, "-c", COUNT, str(copy)]))
                copy.unlink()
            floor = statistics.median(s for s, _ in floors)
            count = statistics.median(s for s, _ in counts)
            medians[size] = count
            print(
                f"{size:>11,} events ({args.shape})  floor (transitions, sessions, users) {floor:6.2f} s  "
                f"k-paths 1..5 {count:6.2f} s  ratio {count / floor:5.2f}x  peak {max(m for _, m in counts):4.2f} GB "
                f"(floor {max(m for _, m in floors):4.2f} GB; medians of {args.runs})",
                flush=True,
            )
    if len(medians) > 1:
        small, large = min(medians), max(medians)
        print(f"scaling {large // small}x events -> {medians[large] / medians[small]:.2f}x time")


if __name__ == "__main__":
    main()
