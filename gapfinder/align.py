"""Test step names ↔ field event names: exact, normalized, alias file, and learned suggestions.

Suites rarely spell features the way telemetry does (``Search Catalogue`` vs ``search_catalogue``,
``payDepositByCard`` vs ``pay_deposit_card``). A step name is resolved, in order, by an exact
match, a match after normalization (lower case, camelCase split, punctuation as ``_``), or the
alias file. What remains is left unmapped and listed; ``NameAligner`` suggests an event for each,
from TF-IDF vectors over character n-grams (scikit-learn) compared by cosine similarity, with a
one-to-one assignment of steps to events (SciPy's ``linear_sum_assignment``, the Hungarian
method), and writes an alias file for a person to review.

References
----------
Kuhn, H. W. (1955). "The Hungarian method for the assignment problem". Naval Research Logistics
Quarterly 2, 83–97.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml

from gapfinder.errors import ConfigError
from gapfinder.quoting import yaml_string
from gapfinder.safe_io import read_text, write_text

__all__ = [
    "NameAligner",
    "Suggestion",
    "load_aliases",
    "normalize_name",
    "read_yaml_table",
    "resolve_step_names",
    "suggest_for_workspace",
    "write_aliases",
]


def normalize_name(name: str) -> str:
    """Lower case, camelCase split, runs of anything but letters and digits as one ``_``.

    Examples
    --------
    >>> normalize_name("Search Catalogue")
    'search_catalogue'
    >>> normalize_name("payDepositByCard")
    'pay_deposit_by_card'
    """
    spaced = re.sub(r"(?<=[a-z0-9])(?=[A-Z])", "_", name.strip())
    return re.sub(r"[^0-9a-z]+", "_", spaced.lower()).strip("_")


def read_yaml_table(path: str | Path, *, key: str, option: str, what: str) -> dict[Any, Any]:
    """The mapping under top-level ``key`` of a small YAML file; errors name ``option`` and the file."""
    where = str(path)
    try:
        data = yaml.safe_load(read_text(path, what="YAML file", option=option))
    except yaml.YAMLError:
        raise ConfigError(f"{option} {where}: not valid YAML") from None
    table = data.get(key) if isinstance(data, dict) else None
    if not isinstance(table, dict):
        raise ConfigError(f"{option} {where}: needs a top-level `{key}:` mapping {what}")
    return table


def load_aliases(path: str | Path) -> dict[str, str]:
    """An alias file: YAML with a top-level ``aliases`` mapping step name → event name."""
    where = str(path)
    table = read_yaml_table(path, key="aliases", option="--aliases", what="step names to event names")
    aliases: dict[str, str] = {}
    for step, event in table.items():
        if event is None:
            continue  # left for a person to fill in
        if not isinstance(event, str) or not event.strip():
            raise ConfigError(f"--aliases {where}: step {step!r} must map to an event name")
        aliases[str(step).strip()] = event.strip()
    return aliases


def resolve_step_names(
    steps: Iterable[str], events: Sequence[str], aliases: dict[str, str] | None = None
) -> dict[str, tuple[str | None, str]]:
    """{step: (event or None, how)} with how one of exact, normalized, alias, unmapped."""
    known = set(events)
    by_normal: dict[str, str] = {}
    for event in sorted(events):
        by_normal.setdefault(normalize_name(event), event)
    aliases = aliases or {}
    resolved: dict[str, tuple[str | None, str]] = {}
    for step in steps:
        if step in resolved:
            continue
        if step in known:
            resolved[step] = (step, "exact")
        elif step in aliases and aliases[step] in known:
            resolved[step] = (aliases[step], "alias")
        elif normalize_name(step) in by_normal:
            resolved[step] = (by_normal[normalize_name(step)], "normalized")
        else:
            resolved[step] = (None, "unmapped")
    return resolved


@dataclass(frozen=True)
class Suggestion:
    """A proposed alias: the suite's step name, the field event and the cosine similarity."""

    step: str
    event: str | None
    score: float


class NameAligner:
    """Suggest field event names for unmapped test step names (estimator style: fit, then suggest).

    Parameters
    ----------
    ngram_range:
        Character n-gram lengths of the TF-IDF vectors (``char_wb``: n-grams inside words).
    min_score:
        Suggestions under this cosine similarity are returned with ``event=None``.

    Examples
    --------
    >>> aligner = NameAligner().fit(["search_catalogue", "view_tool", "extend_loan"])
    >>> [(s.step, s.event) for s in aligner.suggest(["Search the catalog", "extend my loan"])]
    [('Search the catalog', 'search_catalogue'), ('extend my loan', 'extend_loan')]
    """

    def __init__(self, *, ngram_range: tuple[int, int] = (2, 4), min_score: float = 0.25) -> None:
        self.ngram_range = ngram_range
        self.min_score = min_score

    def fit(self, events: Sequence[str]) -> NameAligner:
        from sklearn.feature_extraction.text import TfidfVectorizer

        low, high = self.ngram_range
        if not 1 <= low <= high:
            raise ValueError(f"ngram_range {self.ngram_range}: give (low, high) with 1 <= low <= high")
        if not 0.0 <= self.min_score <= 1.0:
            raise ValueError(f"min_score {self.min_score}: give a value in [0, 1]")
        if not events:
            raise ValueError("fit needs at least one event name")
        self.events_ = list(events)
        self.vectorizer_ = TfidfVectorizer(analyzer="char_wb", ngram_range=self.ngram_range, lowercase=True)
        self.matrix_ = self.vectorizer_.fit_transform([_words(e) for e in self.events_])
        return self

    def similarity(self, steps: Sequence[str]) -> Any:
        """Cosine similarity of each step (rows) to each fitted event (columns)."""
        if not hasattr(self, "matrix_"):
            raise ValueError("call fit(events) before suggest or similarity")
        vectors = self.vectorizer_.transform([_words(s) for s in steps])
        return (vectors @ self.matrix_.T).toarray()  # rows are L2-normalized: the product is the cosine

    def suggest(self, steps: Sequence[str]) -> list[Suggestion]:
        """One suggestion per step, in the given order; each event is suggested at most once."""
        from scipy.optimize import linear_sum_assignment

        steps = list(steps)
        if not steps:
            return []
        scores = self.similarity(steps)
        rows, cols = linear_sum_assignment(-scores)
        chosen = {int(r): int(c) for r, c in zip(rows, cols, strict=True)}
        out = []
        for i, step in enumerate(steps):
            j = chosen.get(i)
            score = float(scores[i, j]) if j is not None else 0.0
            event = self.events_[j] if j is not None and score >= self.min_score else None
            out.append(Suggestion(step, event, round(score, 4)))
        return out


def _words(name: str) -> str:
    return normalize_name(name).replace("_", " ")


def write_aliases(
    path: str | Path, suggestions: Sequence[Suggestion], *, existing: dict[str, str] | None = None
) -> None:
    """Write an alias file for review: existing aliases kept, suggestions with their scores as comments."""
    lines = [
        "# gapfinder aliases: test step name -> field event name.",
        "# Suggested by `gapfinder align`; review every line, fix or delete it, then pass --aliases.",
        "aliases:",
    ]
    for step, event in sorted((existing or {}).items()):
        lines.append(f"  {yaml_string(step)}: {yaml_string(event)}")
    for s in suggestions:
        if existing and s.step in existing:
            continue
        target = yaml_string(s.event) if s.event else "null"
        note = f"similarity {s.score:.2f}" if s.event else f"no event above the threshold (best {s.score:.2f})"
        lines.append(f"  {yaml_string(s.step)}: {target}  # {note}")
    text = "\n".join(lines) + "\n"
    write_text(path, text, option="--write")


def suggest_for_workspace(ws: Any, *, min_score: float = 0.25, min_users: int = 5) -> dict[str, Any]:
    """Suggestions for the stored suite's unmapped step names against the workspace's events.

    Only events taken by at least ``min_users`` distinct users are suggested: a rarer event's name
    may itself identify someone."""
    from gapfinder.sql import fetch_dicts

    ws.require("suite_steps", "features", hint="run `gapfinder suite TRACES... -w ...` first")
    unmapped = fetch_dicts(ws.con, "list_unmapped_steps")
    events = [r["event"] for r in fetch_dicts(ws.con, "list_field_events", min_users=min_users)]
    suggestions = (
        NameAligner(min_score=min_score).fit(events).suggest([r["step"] for r in unmapped]) if unmapped else []
    )
    uses = {r["step"]: r for r in unmapped}
    return {
        "workspace": str(ws.path),
        "unmapped": len(unmapped),
        "suggestions": [
            {
                "step": s.step,
                "event": s.event,
                "score": s.score,
                "steps": uses[s.step]["step_count"],
                "tests": uses[s.step]["test_count"],
            }
            for s in suggestions
        ],
    }
