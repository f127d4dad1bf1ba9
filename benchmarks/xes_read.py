"""Reading an XES log: the streaming parser that feeds Arrow batches into Parquet.

Writes an invented XES log of about N events (a loan workflow: cases of 2 to 9 events, each event
with concept:name, time:timestamp, org:resource and lifecycle:transition, a global default and a
classifier, as pm4py and most process-mining tools write them), then times, each in a fresh
process, medians of several runs, with the peak resident memory of the process:

- floor 1: expat parsing the same file with no callbacks (the C parser alone);
- floor 2: expat calling an empty Python function at every element start and end (the least any
  expat-based reader in Python must pay);
- ``convert_xes``: the whole reader, the file to a Parquet file of events with their attributes.

    python benchmarks/xes_read.py                    # 1,000,000 events, 3 runs
    python benchmarks/xes_read.py --events 200000 --runs 5
"""

from __future__ import annotations

import argparse
import json
import random
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

FLOOR_C = """
import json, resource, sys, time
from xml.parsers import expat
t = time.perf_counter()
parser = expat.ParserCreate()
with open(sys.argv[1], "rb") as handle:
    parser.ParseFile(handle)
print(json.dumps({"seconds": time.perf_counter() - t, "rss": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss}))
"""

FLOOR_CALLBACKS = """
import json, resource, sys, time
from xml.parsers import expat
def start(name, attrs):
    pass
def end(name):
    pass
t = time.perf_counter()
parser = expat.ParserCreate()
parser.StartElementHandler = start
parser.EndElementHandler = end
with open(sys.argv[1], "rb") as handle:
    parser.ParseFile(handle)
print(json.dumps({"seconds": time.perf_counter() - t, "rss": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss}))
"""

OURS = """
import json, resource, sys, time
from pathlib import Path
from gapfinder.sources.xes import convert_xes
t = time.perf_counter()
facts = convert_xes([sys.argv[1]], Path(sys.argv[2]))
seconds = time.perf_counter() - t
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print(json.dumps({"seconds": seconds, "events": facts.events, "rss": rss}))
"""

ACTIVITIES = ["register", "check stock", "reserve", "pick slot", "pay deposit", "collect", "extend", "return"]


def write_log(path: Path, events: int, seed: int = 5) -> int:
    rng = random.Random(seed)
    written = 0
    case = 0
    with path.open("w", encoding="utf-8") as out:
        out.write('<?xml version="1.0" encoding="UTF-8" ?>\n')
        out.write(
            '<log xes.version="1849-2016" xes.features="nested-attributes" xmlns="http://www.xes-standard.org/">\n'
        )
        for name, prefix in (
            ("Concept", "concept"),
            ("Time", "time"),
            ("Organizational", "org"),
            ("Lifecycle", "lifecycle"),
        ):
            out.write(
                f'\t<extension name="{name}" prefix="{prefix}" uri="http://www.xes-standard.org/{prefix}.xesext"/>\n'
            )
        out.write('\t<global scope="event">\n\t\t<string key="org:resource" value="UNKNOWN"/>\n\t</global>\n')
        out.write('\t<classifier name="Activity" keys="concept:name"/>\n')
        while written < events:
            case += 1
            out.write(f'\t<trace>\n\t\t<string key="concept:name" value="loan-{case:07d}"/>\n')
            minute = rng.randrange(0, 60 * 24 * 180)
            for step in range(rng.randint(2, 9)):
                day, rest = divmod(minute + step * 7, 60 * 24)
                stamp = (
                    f"2026-{1 + day // 30 % 12:02d}-{1 + day % 28:02d}T{rest // 60:02d}:{rest % 60:02d}:00.000+00:00"
                )
                out.write(
                    "\t\t<event>\n"
                    f'\t\t\t<string key="concept:name" value="{rng.choice(ACTIVITIES)}"/>\n'
                    f'\t\t\t<date key="time:timestamp" value="{stamp}"/>\n'
                    f'\t\t\t<string key="org:resource" value="desk-{rng.randrange(12)}"/>\n'
                    '\t\t\t<string key="lifecycle:transition" value="complete"/>\n'
                    "\t\t</event>\n"
                )
                written += 1
            out.write("\t</trace>\n")
        out.write("</log>\n")
    return written


def _run(script: str, *args: str) -> dict:
    output = subprocess.run([sys.executable, "-c", script, *args], check=True, capture_output=True, text=True)
    return json.loads(output.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--events", type=int, default=1_000_000)
    parser.add_argument("--runs", type=int, default=3)
    options = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        log = Path(folder) / "loans.xes"
        events = write_log(log, options.events)
        size = log.stat().st_size / 2**20
        print(f"XES log: {events:,} events, {size:,.0f} MiB")
        results: dict[str, list[dict]] = {
            "floor: expat alone": [],
            "floor: expat + empty callbacks": [],
            "convert_xes": [],
        }
        for _ in range(options.runs):
            results["floor: expat alone"].append(_run(FLOOR_C, str(log)))
            results["floor: expat + empty callbacks"].append(_run(FLOOR_CALLBACKS, str(log)))
            results["convert_xes"].append(_run(OURS, str(log), str(Path(folder) / "out.parquet")))
        floors = {name: statistics.median(r["seconds"] for r in runs) for name, runs in results.items()}
        for name, runs in results.items():
            seconds = floors[name]
            rss = max(r["rss"] for r in runs) / 1024
            ratio = seconds / floors["floor: expat + empty callbacks"]
            print(
                f"{name:34s} median {seconds:6.2f} s  {events / seconds:10,.0f} events/s  "
                f"peak RSS {rss:6.0f} MiB  {ratio:4.2f}× the callback floor"
            )


if __name__ == "__main__":
    main()
