"""Precision and recall of `gapfinder align`'s top-1 suggestions on a labelled set of step phrasings.

The set (``benchmarks/data/align_phrasings.yaml``) holds invented phrasings in the demo scenario,
several per event, with opposites and near-misses labelled ``null``. A suggestion counts when its
score reaches the threshold; precision is the share of suggestions that name the labelled event,
recall the share of phrasings with an event that get it. The floor printed beside it is the same
TF-IDF character n-gram cosine without words, UI phrasings or opposites (the aligner before
2026-12-03, without its one-to-one assignment), measured in the same run.

    python benchmarks/align.py                  # default threshold and a sweep
    python benchmarks/align.py --threshold 0.3
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import yaml

from gapfinder.align import NameAligner

DATA = Path(__file__).resolve().parent / "data" / "align_phrasings.yaml"


def _floor_suggestions(events: list[str], steps: list[str], threshold: float) -> list[str | None]:
    import re

    from sklearn.feature_extraction.text import TfidfVectorizer

    def words(name: str) -> str:
        spaced = re.sub(r"(?<=[a-z0-9])(?=[A-Z])", "_", name.strip())
        return re.sub(r"[^0-9a-z]+", " ", spaced.lower()).strip()

    vectorizer = TfidfVectorizer(analyzer="char_wb", ngram_range=(2, 4))
    matrix = vectorizer.fit_transform([words(e) for e in events])
    scores = (vectorizer.transform([words(s) for s in steps]) @ matrix.T).toarray()
    return [events[int(row.argmax())] if row.max() >= threshold else None for row in scores]


def score(labels: dict[str, str | None], suggested: list[str | None]) -> tuple[float, float, int, int]:
    made = [(step, event) for step, event in zip(labels, suggested, strict=True) if event is not None]
    correct = sum(1 for step, event in made if labels[step] == event)
    positives = sum(1 for v in labels.values() if v is not None)
    precision = correct / len(made) if made else 1.0
    recall = correct / positives if positives else 1.0
    return precision, recall, correct, len(made)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--threshold", type=float, default=NameAligner().min_score)
    parser.add_argument("--show-errors", action="store_true", help="List every wrong or missed phrasing.")
    args = parser.parse_args()
    data = yaml.safe_load(DATA.read_text(encoding="utf-8"))
    events: list[str] = data["events"]
    labels: dict[str, str | None] = data["phrasings"]
    steps = list(labels)
    nulls = sum(v is None for v in labels.values())
    print(f"{len(steps)} phrasings ({nulls} with no fitting event), {len(events)} events")
    started = time.perf_counter()
    suggestions = NameAligner(min_score=0.0).fit(events).suggest(steps)
    elapsed = time.perf_counter() - started
    print(f"aligner: {elapsed * 1000:.0f} ms for all phrasings")
    print(f"{'threshold':>9}  {'precision':>9}  {'recall':>6}  {'made':>4}  | floor precision  recall")
    for threshold in sorted({args.threshold, 0.2, 0.25, 0.3, 0.35, 0.4, 0.5}):
        chosen = [s.candidates[0][0] if s.candidates and s.score >= threshold else None for s in suggestions]
        p, r, _, made = score(labels, chosen)
        fp, fr, _, _ = score(labels, _floor_suggestions(events, steps, threshold))
        mark = " <- default" if threshold == args.threshold else ""
        print(f"{threshold:>9.2f}  {p:>9.3f}  {r:>6.3f}  {made:>4}  | {fp:>15.3f}  {fr:>6.3f}{mark}")
    if args.show_errors:
        for s in suggestions:
            got = s.candidates[0][0] if s.candidates and s.score >= args.threshold else None
            if got != labels[s.step]:
                print(f"  {s.step!r}: labelled {labels[s.step]}, got {got} ({s.candidates})")


if __name__ == "__main__":
    main()
