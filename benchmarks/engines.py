"""Benchmark of the two engines of `gapfinder profile`: DuckDB against a local Spark, same input.

For each size: generate telemetry (the demo, or ``--shape entropy``), then alternate DuckDB and
Spark profiles, each in a fresh process, and print medians of the wall time and of each phase
(reading and row counts, sessions, paths, usage model), the peak memory of the Python process (for
Spark the JVM is a child: its memory is not in that figure), the bytes of per-session Parquet Spark
hands back, and the floor measured in the same run (bare DuckDB sessionize + transitions; see
benchmarks/profile.py). Spark's start-up (JVM, session) is timed apart and left out of its phases.

Needs ``pip install -e ".[spark]"`` and Java 17+. Example::

    python benchmarks/engines.py --sizes 2000000 10000000 --runs 3 --master 'local[2]'
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import shutil
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

from _synthetic import write_telemetry

# benchmarks/profile.py is loaded under another name: as "profile" it would hide the standard library's.
_spec = importlib.util.spec_from_file_location("profile_benchmark", Path(__file__).with_name("profile.py"))
assert _spec and _spec.loader
_profile_benchmark = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(_profile_benchmark)
FLOOR, timed = _profile_benchmark.FLOOR, _profile_benchmark.timed

# Runs one profile in this child process and prints its phases as JSON on the last line.
RUNNER = r"""
import json, resource, sys, time, warnings
warnings.simplefilter("ignore")
from gapfinder.engines import spark as spark_engine
from gapfinder.usage_profile import ProfileOptions, profile_telemetry

source, workspace, engine, master, threads = sys.argv[1:6]
phases, marks = {}, []
staged = {}
startup = 0.0
settings = None
if engine == "spark":
    started = time.perf_counter()
    spark_engine.spark_session(spark_engine.SparkSettings(master=master))  # the JVM starts here
    startup = time.perf_counter() - started
    settings = spark_engine.SparkSettings()
    cleanup = spark_engine._Staging.cleanup

    def measured(self):
        for name in ("users", "raw_sessions"):
            staged[name] = sum(p.stat().st_size for p in (self.path / name).glob("*.parquet"))
        cleanup(self)

    spark_engine._Staging.cleanup = measured
def progress(message):
    marks.append((message, time.perf_counter()))
began = time.perf_counter()
options = ProfileOptions(spark=settings, threads=int(threads))
summary = profile_telemetry([source], workspace, options, progress=progress)
ended = time.perf_counter()
marks.append(("end", ended))
for (name, t0), (_, t1) in zip(marks, marks[1:]):
    phases[name.replace(" with Spark", "")] = t1 - t0
print(json.dumps({
    "seconds": ended - began, "startup": startup, "phases": phases, "staged": staged,
    "sessions": summary["sessions"]["count"], "events": summary["sessions"]["events"],
    "distinct_paths": summary["full_paths"]["distinct"],
    "peak_gb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024 / 1024,
}))
"""


def run_profile(source: Path, workspace: Path, engine: str, master: str, threads: int) -> dict:
    done = subprocess.run(
        [sys.executable, "-c", RUNNER, str(source), str(workspace), engine, master, str(threads)],
        cwd=workspace.parent,  # not benchmarks/, whose profile.py would hide the standard library's
        capture_output=True,
        text=True,
    )
    if done.returncode:
        sys.exit(f"{engine} profile failed:\n{done.stderr[-3000:]}")
    workspace.unlink(missing_ok=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def _median(runs: list[dict], key: str) -> float:
    return statistics.median(r[key] for r in runs)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--sizes", type=int, nargs="+", default=[2_000_000, 10_000_000])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--threads", type=int, default=2)
    parser.add_argument("--master", default="local[2]")
    parser.add_argument("--shape", choices=["demo", "entropy"], default="demo")
    args = parser.parse_args()
    gapfinder = shutil.which("gapfinder") or sys.exit("install gapfinder first (pip install -e '.[spark]')")
    with tempfile.TemporaryDirectory() as tmp:
        for size in args.sizes:
            demo = Path(tmp) / f"demo{size}"
            write_telemetry(args.shape, demo, size, gapfinder)
            source = demo / "field"
            floors, duck, spark = [], [], []
            for i in range(args.runs):
                floors.append(timed([sys.executable, "-c", FLOOR, str(source / "**" / "*.parquet")])[0])
                duck.append(run_profile(source, Path(tmp) / f"d{i}.duckdb", "duckdb", args.master, args.threads))
                spark.append(run_profile(source, Path(tmp) / f"s{i}.duckdb", "spark", args.master, args.threads))
            floor = statistics.median(floors)
            d, s = _median(duck, "seconds"), _median(spark, "seconds")
            print(
                f"{size:>11,} events ({args.shape}; {duck[0]['sessions']:,} sessions, {duck[0]['distinct_paths']:,} "
                f"distinct paths), medians of {args.runs}"
            )
            print(f"{'':>11} floor (DuckDB sessionize + transitions) {floor:7.2f} s")
            peak = _median(duck, "peak_gb")
            print(f"{'':>11} duckdb profile {d:7.2f} s ({d / floor:5.2f}x floor)  peak {peak:.2f} GB")
            print(
                f"{'':>11} spark  profile {s:7.2f} s ({s / floor:5.2f}x floor, {s / d:5.2f}x duckdb) "
                f"+ start-up {_median(spark, 'startup'):.1f} s; driver Python peak {_median(spark, 'peak_gb'):.2f} GB"
            )
            for name in duck[0]["phases"]:
                dp = statistics.median(r["phases"][name] for r in duck)
                sp = statistics.median(r["phases"].get(name, 0.0) for r in spark)
                print(f"{'':>15} {name:<24} duckdb {dp:7.2f} s   spark {sp:7.2f} s")
            staged = {k: statistics.median(r["staged"][k] for r in spark) for k in spark[0]["staged"]}
            per_event = sum(staged.values()) / max(duck[0]["events"], 1)
            print(
                f"{'':>15} Spark handed back {sum(staged.values()) / 1e6:.1f} MB of Parquet "
                f"({', '.join(f'{k} {v / 1e6:.1f} MB' for k, v in staged.items())}; {per_event:.2f} bytes per event)"
            )


if __name__ == "__main__":
    main()
