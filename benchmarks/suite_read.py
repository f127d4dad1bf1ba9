"""Reading a test repository's folder: 1,000 Gherkin files (plus fixtures and reports) through `read_suite`.

Writes an invented repository of N feature files (Background, Scenario Outlines, tags, data
tables; a few files with no scenario or a parse error, as real repositories have), fixture JSON and
YAML files that must be ignored, and JUnit reports; then times, each in a fresh process, medians of
several runs:

- the floor: gherkin-official parsing and compiling the same feature files and nothing else
  (read, parse, pickle) — the least any Gherkin reader must do;
- `read_suite` on the whole folder (discovery by content, Gherkin with templates and tags, JUnit,
  fixtures skipped with counts, warnings for the broken files).

    python benchmarks/suite_read.py                 # 1,000 feature files, 3 runs
    python benchmarks/suite_read.py --files 5000 --runs 5
"""

from __future__ import annotations

import argparse
import random
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

FLOOR = """
import sys
from pathlib import Path
from gherkin.parser import Parser
from gherkin.pickles.compiler import Compiler
count = 0
for path in sorted(Path(sys.argv[1]).rglob("*.feature")):
    try:
        document = Parser().parse(path.read_text(encoding="utf-8"))
    except Exception:
        continue
    count += len(Compiler().compile({**document, "uri": str(path)}))
print(count)
"""

OURS = """
import sys
from gapfinder.suite import read_suite
report = read_suite([sys.argv[1]])
print(len(report.traces), len(report.problems), report.files_ignored)
"""

VERBS = ["search", "open", "reserve", "pay", "collect", "return", "rate", "extend", "report", "join"]
THINGS = ["the catalogue", "the tool", "a slot", "the deposit", "my loan", "the waitlist", "my settings"]


def write_repository(root: Path, files: int, seed: int = 3) -> None:
    rng = random.Random(seed)
    for n in range(files):
        folder = root / "features" / f"area_{n % 25:02d}"
        folder.mkdir(parents=True, exist_ok=True)
        if n % 200 == 7:
            (folder / f"draft_{n}.feature").write_text(f"Feature: Draft {n}\n  To be written.\n")
            continue
        if n % 250 == 11:
            (folder / f"broken_{n}.feature").write_text(f"Feature: Broken {n}\n  Scenario: a\n    | x |\n")
            continue
        lines = [f"@area-{n % 25}", f"Feature: Feature {n}", "", "  Background:", '    Given I sign in as "member"']
        for s in range(rng.randint(3, 9)):
            tag = "  @wip\n" if rng.random() < 0.05 else ""
            lines.append("")
            if rng.random() < 0.3:
                lines.append(f"{tag}  Scenario Outline: Outline {s}")
                lines.append(f"    When I {rng.choice(VERBS)} <thing>")
                lines.append("    Then I see the result")
                lines.append("    Examples:")
                lines.append("      | thing |")
                lines += [f"      | item {k} |" for k in range(rng.randint(2, 5))]
            else:
                lines.append(f"{tag}  Scenario: Scenario {s}")
                for k in range(rng.randint(2, 7)):
                    keyword = "When" if k == 0 else "And"
                    lines.append(f'    {keyword} I {rng.choice(VERBS)} {rng.choice(THINGS)} "{rng.randint(1, 99)}"')
                lines.append("    Then I see the result")
        (folder / f"feature_{n}.feature").write_text("\n".join(lines) + "\n")
    fixtures = root / "features" / "fixtures"
    fixtures.mkdir(parents=True, exist_ok=True)
    for n in range(50):
        (fixtures / f"payload_{n}.json").write_text('{"tool": "drill", "price": 20}\n')
        (root / "features" / f"config_{n}.yml").write_text("default: --format progress\n")
    reports = root / "reports"
    reports.mkdir(exist_ok=True)
    for n in range(20):
        cases = "".join(f'<testcase classname="t{n}" name="c{k}" time="0.01"/>' for k in range(50))
        suite = f'<testsuite name="t{n}" timestamp="2026-07-01T09:00:00">{cases}</testsuite>'
        (reports / f"TEST-{n}.xml").write_text(suite)


def timed(code: str, folder: Path) -> tuple[float, str]:
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", code, str(folder)], capture_output=True, text=True)
    seconds = time.perf_counter() - start
    if done.returncode != 0:
        raise SystemExit(done.stderr[-1500:])
    return seconds, done.stdout.strip()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--files", type=int, default=1000)
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp) / "repo"
        write_repository(root, args.files)
        floors, ours = [], []
        floor_out = ours_out = ""
        for _ in range(args.runs):
            seconds, floor_out = timed(FLOOR, root)
            floors.append(seconds)
            seconds, ours_out = timed(OURS, root)
            ours.append(seconds)
        floor, mine = statistics.median(floors), statistics.median(ours)
        scenarios = int(floor_out)
        tests, problems, ignored = (int(x) for x in ours_out.split())
        print(f"{args.files:,} feature files ({scenarios:,} pickles), 1,000 JUnit cases, 100 fixture files")
        print(f"floor (gherkin-official parse + compile only): {floor:.2f} s")
        print(f"read_suite on the folder: {mine:.2f} s  ({mine / floor:.2f}× the floor)")
        print(f"read: {tests:,} tests; {problems} files skipped with a warning; {ignored} other files ignored")


if __name__ == "__main__":
    main()
