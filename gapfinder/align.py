"""Test step names ↔ field event names: exact, normalized, alias file, and learned suggestions.

Suites rarely spell features the way telemetry does (``Search Catalogue`` vs ``search_catalogue``,
``payDepositByCard`` vs ``pay_deposit_card``, ``I sign in as "{}"`` vs ``login``). A step name is
resolved, in order, by an exact match, the alias file, or a match after normalization (Unicode
case folding, camelCase split, common UI phrasings reduced to one word: ``sign in``/``log in`` →
``login``, ``create account``/``register`` → ``signup``). What remains is left unmapped and listed;
``NameAligner`` suggests events for each: it scores every (step, event) pair by the cosine
similarity of TF-IDF vectors over word stems and over character n-grams (scikit-learn), averaged
and scaled by the square root of the share of the step's words that some event uses;
a pair whose words are opposites (in/out, open/close, add/remove, create/delete, join/leave, …) or
where the step cancels or undoes something the event does not, scores 0. Each step gets its best
three candidates with their scores; many steps may map to one event. A person reviews the alias
file it writes.
"""

from __future__ import annotations

import math
import unicodedata
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import regex
import yaml

from gapfinder.errors import ConfigError
from gapfinder.quoting import yaml_string
from gapfinder.safe_io import read_text, write_text

__all__ = [
    "NameAligner",
    "Suggestion",
    "canonical_words",
    "load_aliases",
    "normalize_name",
    "read_yaml_table",
    "resolve_step_names",
    "suggest_for_workspace",
    "write_aliases",
]

_CAMEL = regex.compile(r"(?<=[\p{Ll}\p{Nd}])(?=\p{Lu})")
_NOT_WORD = regex.compile(r"[^\p{L}\p{M}\p{N}]+")
# Common UI phrasings reduced to one word, applied to step texts and event names alike (common practice
# of UI wording in English; the list is ours).
_PHRASES: tuple[tuple[Any, str], ...] = tuple(
    # each pattern matches whole words of a normalized name ("i_sign_in_as"): (?<![^_]) is a word start
    (regex.compile("(?<![^_])" + pattern + "(?![^_])"), word)
    for pattern, word in (
        (r"(?:sign|log|logs|signs|signed|logged|signing|logging)_?(?:in|on)", "login"),
        (r"(?:sign|log|logs|signs|signed|logged|signing|logging)_?(?:out|off)", "logout"),
        (r"(?:sign|signs|signed|signing)_?up", "signup"),
        (r"(?:register|registers|registered|registering|registration)", "signup"),
        (r"(?:create|creates|created|creating|open|opens|opening)_(?:an_|a_new_|a_|my_|new_)?account", "signup"),
        (r"signup_(?:an_|a_new_|a_|my_|new_)?account", "signup"),
        (r"(?:close|closes|closed|closing|remove|removes|removed)_(?:my_|the_|an_|a_)?account", "delete_account"),
        (r"(?:remove|removes|removed|removing)", "delete"),
        (r"(?:look|looks|looking)_up", "search"),
        (r"(?:look|looks|looking)_at", "view"),
        (r"(?:open|opens|opening)_(?:the_|a_|my_)?(\w+)_(?:page|details|screen)", r"view_\1"),
        (r"(?:pick|picks|picked|picking)_up", "collect"),
        (r"(?:bring|brings|brought|bringing)_(?:[^_]+_){0,3}back", "return"),
        (r"(?:book|books|booked|booking)", "reserve"),
        (r"(?:renew|renews|renewed|renewing)", "extend"),
        (r"waiting_list", "waitlist"),
    )
)
# Words that carry no feature: articles, pronouns, auxiliaries, prepositions and the actor of a step.
_STOP_WORDS = frozenset(
    {
        "a",
        "an",
        "the",
        "i",
        "me",
        "my",
        "we",
        "our",
        "you",
        "your",
        "he",
        "she",
        "it",
        "its",
        "they",
        "their",
        "is",
        "am",
        "are",
        "was",
        "were",
        "be",
        "been",
        "being",
        "to",
        "of",
        "for",
        "on",
        "in",
        "at",
        "by",
        "with",
        "from",
        "as",
        "and",
        "or",
        "this",
        "that",
        "these",
        "those",
        "some",
        "any",
        "all",
        "new",
        "user",
        "member",
        "visitor",
        "customer",
    }
)
_OPPOSITES: tuple[tuple[str, str], ...] = (
    ("in", "out"),
    ("up", "down"),
    ("open", "close"),
    ("add", "remove"),
    ("create", "delete"),
    ("enable", "disable"),
    ("login", "logout"),
    ("show", "hide"),
    ("lock", "unlock"),
    ("start", "stop"),
    ("on", "off"),
    ("join", "leave"),
    ("subscribe", "unsubscribe"),
    ("follow", "unfollow"),
    ("connect", "disconnect"),
    ("install", "uninstall"),
    ("accept", "decline"),
    ("approve", "reject"),
    ("increase", "decrease"),
    ("upload", "download"),
    ("expand", "collapse"),
    ("mute", "unmute"),
    ("pin", "unpin"),
    ("like", "unlike"),
    ("import", "export"),
    ("archive", "unarchive"),
    ("signup", "delete"),
)
# A step that undoes or removes something matches only an event that does the same.
_UNDOING = frozenset(
    {"cancel", "undo", "revoke", "unsubscribe", "withdraw", "abort", "disable", "delete", "close", "leave", "decline"}
)


def _stem(word: str) -> str:
    """A light suffix strip so that reserve, reserves, reserved, reserving and reservation meet."""
    for suffix in ("ations", "ation", "ings", "ing", "ers", "er", "ed", "es", "s", "e"):
        if len(word) > len(suffix) + 2 and word.endswith(suffix):
            return word[: -len(suffix)]
    return word


def normalize_name(name: str) -> str:
    """Unicode case folding, camelCase split, runs of anything but letters and digits as one ``_``.

    Examples
    --------
    >>> normalize_name("Search Catalogue")
    'search_catalogue'
    >>> normalize_name("payDepositByCard")
    'pay_deposit_by_card'
    >>> normalize_name("Suche öffnen")
    'suche_öffnen'
    """
    text = unicodedata.normalize("NFKC", name.strip())
    spaced = _CAMEL.sub("_", text)
    return _NOT_WORD.sub("_", spaced.casefold()).strip("_")


def canonical_words(name: str) -> list[str]:
    """The name's words after normalization and the UI phrasings, stop words dropped.

    Examples
    --------
    >>> canonical_words('I sign in as "{}"')
    ['login']
    >>> canonical_words("createAccount")
    ['signup']
    """
    text = normalize_name(name)
    for pattern, word in _PHRASES:
        text = pattern.sub(word, text)
    return [w for w in text.split("_") if w and w not in _STOP_WORDS]


def _opposed(step_words: set[str], event_words: set[str]) -> bool:
    for a, b in _OPPOSITES:
        if (a in step_words and b in event_words and a not in event_words) or (
            b in step_words and a in event_words and b not in event_words
        ):
            return True
    return bool((step_words & _UNDOING) - event_words)


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
    by_words: dict[tuple[str, ...], str] = {}
    for event in sorted(events):
        by_words.setdefault(tuple(canonical_words(event)), event)
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
        elif tuple(canonical_words(step)) in by_words and canonical_words(step):
            resolved[step] = (by_words[tuple(canonical_words(step))], "normalized")
        else:
            resolved[step] = (None, "unmapped")
    return resolved


@dataclass(frozen=True)
class Suggestion:
    """A proposed alias: the suite's step name, the best field event (None under the threshold), its
    similarity, and the best candidates with their true scores."""

    step: str
    event: str | None
    score: float
    candidates: tuple[tuple[str, float], ...] = field(default=())


class NameAligner:
    """Suggest field event names for unmapped test step names (estimator style: fit, then suggest).

    Parameters
    ----------
    ngram_range:
        Character n-gram lengths of the TF-IDF vectors (``char_wb``: n-grams inside words).
    min_score:
        Suggestions under this similarity are returned with ``event=None`` (their candidates stay).
    word_weight:
        Weight of the word-stem similarity in the score; the character similarity gets the rest.
    candidates:
        How many candidates each suggestion lists.

    Examples
    --------
    >>> aligner = NameAligner().fit(["search_catalogue", "view_tool", "extend_loan", "login", "sign_up"])
    >>> [(s.step, s.event) for s in aligner.suggest(["Search the catalog", "extend my loan", "I sign in as {}"])]
    [('Search the catalog', 'search_catalogue'), ('extend my loan', 'extend_loan'), ('I sign in as {}', 'login')]
    >>> aligner.suggest(["I sign out"])[0].event is None
    True
    """

    def __init__(
        self,
        *,
        ngram_range: tuple[int, int] = (2, 4),
        min_score: float = 0.3,
        word_weight: float = 0.6,
        candidates: int = 3,
    ) -> None:
        self.ngram_range = ngram_range
        self.min_score = min_score
        self.word_weight = word_weight
        self.candidates = candidates

    def fit(self, events: Sequence[str]) -> NameAligner:
        from sklearn.feature_extraction.text import TfidfVectorizer

        low, high = self.ngram_range
        if not 1 <= low <= high:
            raise ValueError(f"ngram_range {self.ngram_range}: give (low, high) with 1 <= low <= high")
        if not 0.0 <= self.min_score <= 1.0:
            raise ValueError(f"min_score {self.min_score}: give a value in [0, 1]")
        if not 0.0 <= self.word_weight <= 1.0:
            raise ValueError(f"word_weight {self.word_weight}: give a value in [0, 1]")
        if self.candidates < 1:
            raise ValueError(f"candidates {self.candidates}: give at least 1")
        if not events:
            raise ValueError("fit needs at least one event name")
        self.events_ = list(events)
        self.event_words_ = [set(canonical_words(e)) for e in self.events_]
        self.char_vectorizer_ = TfidfVectorizer(analyzer="char_wb", ngram_range=self.ngram_range, lowercase=False)
        self.char_matrix_ = self.char_vectorizer_.fit_transform([_spaced(e) for e in self.events_])
        self.word_vectorizer_ = TfidfVectorizer(analyzer=_stems, lowercase=False)
        self.word_matrix_ = self.word_vectorizer_.fit_transform(self.events_)
        return self

    def similarity(self, steps: Sequence[str]) -> Any:
        """Score of each step (rows) against each fitted event (columns), 0 for opposite meanings."""
        import numpy as np

        if not hasattr(self, "char_matrix_"):
            raise ValueError("call fit(events) before suggest or similarity")
        chars = (self.char_vectorizer_.transform([_spaced(s) for s in steps]) @ self.char_matrix_.T).toarray()
        words = (self.word_vectorizer_.transform(list(steps)) @ self.word_matrix_.T).toarray()
        scores = self.word_weight * words + (1 - self.word_weight) * chars
        vocabulary = self.word_vectorizer_.vocabulary_
        for i, step in enumerate(steps):
            step_words = set(canonical_words(step))
            # a step word no event has ("cash", "profile") is meaning the events cannot account for
            stems = {_stem(w) for w in step_words if w != "{}"}
            if stems:
                scores[i] *= math.sqrt(sum(1 for w in stems if w in vocabulary) / len(stems))
            for j, event_words in enumerate(self.event_words_):
                if _opposed(step_words, event_words):
                    scores[i, j] = 0.0
        return np.clip(scores, 0.0, 1.0)

    def suggest(self, steps: Sequence[str]) -> list[Suggestion]:
        """One suggestion per step, in the given order, each with its best candidates."""
        import numpy as np

        steps = list(steps)
        if not steps:
            return []
        scores = self.similarity(steps)
        out = []
        for i, step in enumerate(steps):
            order = sorted(range(len(self.events_)), key=lambda j: (-scores[i, j], self.events_[j]))
            best = [(self.events_[j], round(float(scores[i, j]), 4)) for j in order[: self.candidates]]
            best = [(e, v) for e, v in best if v > 0]
            top = best[0] if best else (None, 0.0)
            chosen = top[0] if top[1] >= self.min_score else None
            out.append(Suggestion(step, chosen, float(np.round(top[1], 4)), tuple(best)))
        return out


def _spaced(name: str) -> str:
    return " ".join(canonical_words(name))


def _stems(name: str) -> list[str]:
    return [_stem(w) for w in canonical_words(name)]


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


def suggest_for_workspace(ws: Any, *, min_score: float = 0.3, min_users: int = 5) -> dict[str, Any]:
    """Suggestions for the stored suite's unmapped step names against the workspace's events.

    Only events taken by at least ``min_users`` distinct users are suggested: a rarer event's name
    may itself identify someone."""
    from gapfinder.sql import fetch_dicts

    ws.require("suite_steps", "features", hint="run `gapfinder suite TRACES... -w ...` first")
    unmapped = fetch_dicts(ws.con, "list_unmapped_steps")
    events = [r["event"] for r in fetch_dicts(ws.con, "list_field_events", min_users=min_users)]
    suggestions = (
        NameAligner(min_score=min_score).fit(events).suggest([r["step"] for r in unmapped])
        if unmapped and events
        else []
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
                "candidates": [{"event": e, "score": v} for e, v in s.candidates],
                "steps": uses[s.step]["step_count"],
                "tests": uses[s.step]["test_count"],
            }
            for s in suggestions
        ],
    }
