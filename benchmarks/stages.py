"""Benchmark of the stages after profile — suite, patterns, coverage, gaps, plan, audit, report — on demo data.

``--shape entropy`` uses telemetry shaped like a large product instead (benchmarks/_synthetic.py:
200 features, Zipf-like popularity, Markov-like transitions, ~20 events a session, almost every path
distinct) with a suite of 40 tests walking the same chain.

For each size: generate demo telemetry, profile it once, then alternate runs of a floor and of each
stage, every one in a fresh process, and print medians of wall time, peak memory, the ratio to
the floor and the scaling between the smallest and largest size. The floor is one bare DuckDB
query over the same workspace that touches every counted session once: it unnests each session's
path and counts its transitions.
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
con.execute("SELECT a, b, count(*) FROM (SELECT p[i] AS a, p[i + 1] AS b FROM (SELECT path AS p, "
            "unnest(range(1, len(path))) AS i FROM sessions WHERE NOT is_automated)) GROUP BY ALL").fetchall()
"""


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--sizes", type=int, nargs="+", default=[1_000_000, 10_000_000])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--shape", choices=["demo", "entropy"], default="demo")
    args = parser.parse_args()
    gapfinder = shutil.which("gapfinder") or sys.exit("install gapfinder first (pip install -e .)")
    medians: dict[str, dict[int, float]] = {}
    with tempfile.TemporaryDirectory() as tmp:
        for size in args.sizes:
            demo = Path(tmp) / f"demo{size}"
            ws = str(Path(tmp) / f"ws{size}.duckdb")
            write_telemetry(args.shape, demo, size, gapfinder, with_suite=True)
            subprocess.run(
                [gapfinder, "profile", str(demo / "field"), "-w", ws, "--format", "json"],
                check=True,
                capture_output=True,
            )
            suite = str(demo / "tests" / "suite_traces.csv")
            stages = {
                "floor": [sys.executable, "-c", FLOOR, ws],
                "suite": [gapfinder, "suite", suite, "-w", ws, "--format", "json"],
                "patterns": [gapfinder, "paths", "-w", ws, "--kind", "patterns", "--format", "json"],
                "coverage": [gapfinder, "coverage", "-w", ws, "--max-gap", "1", "--format", "json"],
                "gaps": [gapfinder, "gaps", "-w", ws, "--top", "20", "--format", "json"],
                "plan": [gapfinder, "plan", "-w", ws, "--budget", "8", "--format", "json"],
                "audit": [gapfinder, "audit", "-w", ws, "--by", "platform", "--format", "json"],
                "report": [gapfinder, "report", "-w", ws, "-o", str(Path(tmp) / f"r{size}.html")],
            }
            results: dict[str, list[tuple[float, float]]] = {name: [] for name in stages}
            for _ in range(args.runs):
                for name, cmd in stages.items():
                    results[name].append(timed(cmd))
            floor = statistics.median(s for s, _ in results["floor"])
            line = [f"{size:>11,} events  floor {floor:5.2f} s"]
            for name in list(stages)[1:]:
                median = statistics.median(s for s, _ in results[name])
                peak = max(m for _, m in results[name])
                medians.setdefault(name, {})[size] = median
                line.append(f"{name} {median:5.2f} s ({median / floor:4.1f}x, {peak:4.2f} GB)")
            print("\n    ".join(line) + f"\n    (medians of {args.runs})", flush=True)
    if len(args.sizes) > 1:
        small, large = min(args.sizes), max(args.sizes)
        print(
            f"scaling {large // small}x events -> "
            + ", ".join(f"{name} {m[large] / m[small]:.2f}x" for name, m in medians.items())
        )


if __name__ == "__main__":
    main()
