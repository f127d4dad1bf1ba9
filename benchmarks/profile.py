"""Benchmark of `gapfinder profile` against a floor measured in the same run.

For each size: generate demo telemetry, then alternate (floor, profile) runs, each in a fresh
process, and print medians of the wall time, peak memory, and the ratios profile / floor and
largest / smallest size. The floor is what BENCHMARKS.md's goal names, "the DuckDB floor for
sessionize + transitions on the same file": bare DuckDB reading the same Parquet, sessionizing by
a 30-minute idle gap (lag + running sum, materialized), then counting transitions per session
(lead + group by). The bare transition count without sessions (the floor used before) is printed
too, as a stricter reference, and, where polars is installed, the same sessionize + transitions
done by polars with one global sort (the faster of the two floors is the one to beat).

``--shape entropy`` replaces the demo by telemetry shaped like a large product: 200 features with
Zipf-like popularity and Markov-like transitions, about 20 events per session
(``benchmarks/_synthetic.py``), so that almost every session's path is distinct.
"""

from __future__ import annotations

import argparse
import importlib.util
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from _synthetic import write_telemetry

FLOOR = """
import duckdb, sys
con = duckdb.connect()
con.execute("SET threads = 2")
con.execute(
    "CREATE TEMP TABLE s AS SELECT user_id, ts, event, "
    "sum(is_new) OVER (PARTITION BY user_id ORDER BY ts ROWS UNBOUNDED PRECEDING) AS session_no "
    "FROM (SELECT user_id, ts, event, CASE WHEN ts - lag(ts) OVER (PARTITION BY user_id ORDER BY ts) "
    "> INTERVAL 30 MINUTE THEN 1 ELSE 0 END AS is_new FROM read_parquet($f, hive_partitioning = true))",
    {"f": sys.argv[1]},
)
con.execute("SELECT e, n, count(*) FROM (SELECT event AS e, lead(event) OVER (PARTITION BY user_id, session_no "
            "ORDER BY ts) AS n FROM s) GROUP BY ALL").fetchall()
"""

POLARS_FLOOR = """
import sys
import polars as pl
pl.Config.set_streaming_chunk_size(1_000_000)
events = pl.scan_parquet(sys.argv[1], hive_partitioning=True).select("user_id", "ts", pl.col("event").cast(pl.String))
counted = (
    events.sort("user_id", "ts")
    .with_columns(
        ((pl.col("ts") - pl.col("ts").shift(1).over("user_id")) > pl.duration(minutes=30))
        .fill_null(True)
        .cum_sum()
        .over("user_id")
        .alias("session_no")
    )
    .with_columns(pl.col("event").shift(-1).over("user_id", "session_no").alias("next"))
    .group_by("event", "next")
    .len()
    .collect()
)
"""

TRANSITIONS_ONLY = """
import duckdb, sys
con = duckdb.connect()
con.execute("SET threads = 2")
con.execute("SELECT e, n, count(*) FROM (SELECT event AS e, lead(event) OVER (PARTITION BY user_id ORDER BY ts) AS n "
            "FROM read_parquet($f, hive_partitioning = true)) GROUP BY ALL", {"f": sys.argv[1]}).fetchall()
"""


def timed(cmd: list[str]) -> tuple[float, float]:
    """(seconds, peak RSS in GB) of one child process."""
    wrapped = ["/usr/bin/time", "-f", "%M", *cmd]
    start = time.perf_counter()
    done = subprocess.run(wrapped, capture_output=True, text=True, check=True)
    seconds = time.perf_counter() - start
    peak_kb = int(done.stderr.strip().splitlines()[-1])
    return seconds, peak_kb / 1024 / 1024


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--sizes", type=int, nargs="+", default=[1_000_000, 10_000_000])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--threads", type=int, default=2)
    parser.add_argument("--shape", choices=["demo", "entropy"], default="demo")
    args = parser.parse_args()
    gapfinder = shutil.which("gapfinder") or sys.exit("install gapfinder first (pip install -e .)")
    medians: dict[int, float] = {}
    with tempfile.TemporaryDirectory() as tmp:
        for size in args.sizes:
            demo = Path(tmp) / f"demo{size}"
            write_telemetry(args.shape, demo, size, gapfinder)
            glob = str(demo / "field" / "**" / "*.parquet")
            floors, bare, profiles, polars_floors = [], [], [], []
            has_polars = importlib.util.find_spec("polars") is not None
            for i in range(args.runs):
                floors.append(timed([sys.executable, "-c", FLOOR, glob]))
                bare.append(timed([sys.executable, "-c", TRANSITIONS_ONLY, glob]))
                if has_polars:
                    polars_floors.append(timed([sys.executable, "-c", POLARS_FLOOR, glob]))
                ws = Path(tmp) / f"ws{size}_{i}.duckdb"
                profiles.append(
                    timed(
                        [
                            gapfinder,
                            "profile",
                            str(demo / "field"),
                            "-w",
                            str(ws),
                            "--threads",
                            str(args.threads),
                            "--format",
                            "json",
                        ]
                    )
                )
                ws.unlink()
            floor = statistics.median(s for s, _ in floors)
            polars_floor = statistics.median(s for s, _ in polars_floors) if polars_floors else None
            transitions_only = statistics.median(s for s, _ in bare)
            prof = statistics.median(s for s, _ in profiles)
            peak = max(m for _, m in profiles)
            medians[size] = prof
            print(
                f"{size:>11,} events  floor (sessionize + transitions) {floor:6.2f} s  profile {prof:6.2f} s  "
                f"ratio {prof / floor:5.2f}x  profile peak {peak:4.2f} GB  | "
                f"transitions only {transitions_only:6.2f} s, ratio {prof / transitions_only:5.2f}x  "
                f"(medians of {args.runs})"
            )
            if polars_floor is not None:
                best = min(floor, polars_floor)
                print(
                    f"{'':>11}         polars one-sort floor {polars_floor:6.2f} s; profile / best floor "
                    f"{prof / best:5.2f}x"
                )
            else:
                print(f"{'':>11}         polars not installed: the one-sort floor is skipped")
    if len(medians) > 1:
        small, large = min(medians), max(medians)
        print(f"scaling {large // small}x events -> {medians[large] / medians[small]:.2f}x time")


if __name__ == "__main__":
    main()
