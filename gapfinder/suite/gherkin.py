"""Gherkin ``.feature`` files, parsed with the ``gherkin-official`` package.

Each scenario becomes a test (Scenario Outlines are expanded, one test per Examples row, by the
package's pickle compiler); its id is the file's path relative to the folder given, ``::`` and the
scenario's name, so same-named scenarios of two files never clash. A ``# encoding: latin-1``
header before the first keyword is honoured; otherwise the file must be UTF-8.

Step texts are turned into events in this order:

1. a steps map: a YAML file whose key ``steps`` maps regular expressions (matched against the whole
   step text, case-insensitive, and then against its template) to an event name, or to null for
   steps that exercise no feature::

       steps:
         "I search the catalogue( for .+)?": search_catalogue
         'I follow "\\{\\}"': open_link          # the template of every `I follow "..."` step
         "the app is open": null

2. assertion steps (``Then`` and the ``And``/``But`` after it) exercise no feature and are left
   out, unless a phrase maps them (or ``keep_assertions`` is set);
3. any other step keeps its *template* as the step name: quoted values, numbers and
   ``<placeholders>`` become ``{}`` (``I follow "Terms"`` → ``I follow "{}"``), so one alias maps
   every variant; it is listed as unmatched for ``gapfinder align`` to suggest an event.
"""

from __future__ import annotations

import codecs
import functools
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import regex

from gapfinder.align import read_yaml_table
from gapfinder.errors import ConfigError, InputError
from gapfinder.suite.model import ReaderReport, TestTrace

__all__ = ["StepPhrases", "name_steps", "read_feature_file", "step_template"]


MATCH_SECONDS = 0.5
_STEP_TYPES = {"Context": "context", "Action": "action", "Outcome": "assertion"}
_ENCODING_HEADER = re.compile(rb"^\s*#\s*encoding\s*:\s*([A-Za-z0-9_.:-]+)\s*$", re.I)
_TEMPLATE_PARTS = re.compile(
    r'"[^"]*"'  # "double quoted"
    r"|(?<![\w])'[^']*'(?![\w])"  # 'single quoted' (not the apostrophe of I'm)
    r"|<[^<>\s][^<>]*>"  # <placeholder>
    r"|(?<![\w.])[-+]?\d+(?:[.,:]\d+)*(?![\w])"  # 12, 3.50, 10:30, -4
)


@functools.lru_cache(maxsize=65536)
def step_template(text: str) -> str:
    """The step text with its values abstracted, so that one rule covers every variant.

    Examples
    --------
    >>> step_template('I follow "Terms and conditions"')
    'I follow "{}"'
    >>> step_template("I add 3 tools to <basket>")
    'I add {} tools to <{}>'
    >>> step_template("I'm on the 'home' page")
    "I'm on the '{}' page"
    """

    def replace(match: re.Match[str]) -> str:
        value = match.group(0)
        if value[0] in "\"'":
            return f"{value[0]}{{}}{value[0]}"
        if value[0] == "<":
            return "<{}>"
        return "{}"

    return " ".join(_TEMPLATE_PARTS.sub(replace, text).split())


@dataclass(frozen=True)
class StepPhrases:
    """Compiled phrase → event rules, first match wins."""

    rules: tuple[tuple[Any, str | None], ...] = ()
    source: str = ""

    @classmethod
    def load(cls, path: str | Path) -> StepPhrases:
        where = str(path)
        table = read_yaml_table(path, key="steps", option="--steps-map", what="phrase patterns to events")
        rules = []
        for phrase, event in table.items():
            try:
                pattern = regex.compile(str(phrase), regex.IGNORECASE | regex.V0)
            except regex.error as exc:
                raise ConfigError(
                    f"--steps-map {where}: phrase {phrase!r} is not a valid regular expression ({exc})"
                ) from None
            if event is not None and not (isinstance(event, str) and event.strip()):
                raise ConfigError(f"--steps-map {where}: phrase {phrase!r} must map to an event name or null")
            rules.append((pattern, event if isinstance(event, str) else None))  # YAML trims plain scalars
        return cls(tuple(rules), where)

    def event_for(self, text: str) -> tuple[bool, str | None]:
        """(matched, event): event None with matched True means the step is ignored on purpose."""
        if not self.rules:
            return False, None
        for candidate in dict.fromkeys((text.strip(), step_template(text))):
            for pattern, event in self.rules:
                try:
                    # The `regex` engine with a time bound: a phrase that backtracks catastrophically
                    # (such as "(a|aa)+$") stops with an error naming it instead of hanging the run.
                    if pattern.fullmatch(candidate, timeout=MATCH_SECONDS):
                        return True, event
                except TimeoutError:
                    raise ConfigError(
                        f"--steps-map {self.source}: phrase {pattern.pattern!r} took over {MATCH_SECONDS} s on one "
                        "step (it backtracks catastrophically); rewrite it without nested repetition"
                    ) from None
        return False, None


def name_steps(
    raw: list[tuple[str, str, str, str]],
    phrases: StepPhrases,
    report: ReaderReport,
    *,
    names_by_definition: dict[str, str] | None = None,
    keep_assertions: bool = False,
) -> tuple[list[str], list[str]]:
    """(step names, step types) of the steps that ran, from (text, step definition, type, status).

    A phrase of the steps map names the event (or null: the step is ignored on purpose); an
    assertion step exercises nothing; any other step is named by its step definition where one is
    known, else by its template, and listed as unmatched."""
    steps: list[str] = []
    types: list[str] = []
    for text, definition, step_type, status in raw:
        if status != "passed":
            continue
        matched, event = phrases.event_for(text)
        if matched and event is None:
            report.ignored_phrases[text] = report.ignored_phrases.get(text, 0) + 1
        elif matched and event is not None:
            steps.append(event)
            types.append(step_type)
        elif step_type == "assertion" and not keep_assertions:
            report.skip("assertion steps (Then …), which exercise no feature")
        else:
            name = (names_by_definition or {}).get(definition) or step_template(text)
            report.unmatched_phrases[name] = report.unmatched_phrases.get(name, 0) + 1
            steps.append(name)
            types.append(step_type)
    return steps, types


def _decode(path: Path) -> str:
    """The file's text: the encoding a ``# encoding:`` header names, else UTF-8 (a BOM dropped)."""
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise InputError(f"{path}: the Gherkin file cannot be read ({exc.strerror or type(exc).__name__})") from None
    encoding = "utf-8-sig"
    for line in data.splitlines()[:20]:
        if not line.strip():
            continue
        header = _ENCODING_HEADER.match(line)
        if header:
            name = header.group(1).decode("ascii")
            try:
                encoding = codecs.lookup(name).name
            except LookupError:
                raise InputError(f"{path}:1:1: unknown encoding {name!r} in the `# encoding:` header") from None
            break
        if not line.lstrip().startswith(b"#"):
            break
    try:
        return data.decode(encoding)
    except UnicodeDecodeError as exc:
        line_no = data[: exc.start].count(b"\n") + 1
        column = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
        raise InputError(
            f"{path}:{line_no}:{column}: not {encoding.replace('-sig', '').upper()} text; save it as UTF-8 "
            "or name its encoding in a first line `# encoding: NAME`"
        ) from None


def _parse_error(where: str, exc: Exception) -> InputError:
    """One line naming the parser's first error with its line and column (and how many more there are)."""
    errors = list(getattr(exc, "errors", None) or [exc])
    first = errors[0]
    location = getattr(first, "location", None) or {}
    message = str(first)
    message = re.sub(r"^\(\d+:\d+\):\s*", "", message).strip() or type(first).__name__
    more = f" (and {len(errors) - 1} more)" if len(errors) > 1 else ""
    return InputError(
        f"{where}:{location.get('line', 1)}:{location.get('column') or 1}: not valid Gherkin: {message}{more}"
    )


def read_feature_file(
    path: str | Path,
    phrases: StepPhrases | None = None,
    *,
    label: str | None = None,
    keep_assertions: bool = False,
) -> ReaderReport:
    """Read one .feature file into one test per scenario (outline rows expanded).

    A file with no scenario (a feature being written, a background alone) is an error the caller
    may skip; ``label`` is the name the tests' ids start with (default: the path)."""
    from gherkin.errors import CompositeParserException, ParserError
    from gherkin.parser import Parser
    from gherkin.pickles.compiler import Compiler

    where = str(path)
    label = label or Path(path).as_posix()
    text = _decode(Path(path))
    try:
        document = Parser().parse(text)
    except (CompositeParserException, ParserError) as exc:
        raise _parse_error(where, exc) from None
    document = {**document, "uri": label}  # type: ignore[typeddict-unknown-key]
    feature = (document.get("feature") or {}).get("name", "") or Path(path).stem
    phrases = phrases or StepPhrases()
    report = ReaderReport()
    counts: dict[str, int] = {}
    for pickle in Compiler().compile(document):  # type: ignore[arg-type]
        raw = [
            (step["text"].strip(), "", _STEP_TYPES.get(str(step.get("type")), "action"), "passed")
            for step in pickle["steps"]
        ]
        steps, step_types = name_steps(raw, phrases, report, keep_assertions=keep_assertions)
        name = str(pickle["name"]).strip() or "(unnamed scenario)"
        counts[name] = counts.get(name, 0) + 1
        local = name if counts[name] == 1 else f"{name} #{counts[name]}"
        tags = tuple(str(t["name"]) for t in pickle.get("tags", []))
        report.traces.append(
            TestTrace(
                f"{label}::{local}",
                steps,
                where,
                "gherkin",
                tags=tags,
                feature=feature,
                name=name,
                step_types=step_types,
            )
        )
    if not report.traces:
        raise InputError(f"{where}:1:1: the feature file holds no scenario")
    return report
