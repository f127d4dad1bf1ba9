"""The one quoting path: every string from data that reaches generated code or markup goes through here.

Event names, step phrases, test ids and scenario names come from telemetry and test repositories,
so they can hold anything: quotes, backslashes, NUL, line breaks, ``<script>``, ``|``, rich markup
such as ``[/]``. Each target has one function, and no other module writes such a string into
generated text by itself:

- Python source: :func:`python_string` (a literal), :func:`python_text` (the inside of a
  docstring or a comment), :func:`python_identifier` (a name from a slug with a collision-free
  suffix).
- Gherkin: :func:`gherkin_text`, one line that no parser can take for a keyword, tag, table,
  comment or doc string.
- Markdown: :func:`markdown_code` (a code span) and :func:`markdown_text` (plain text); both are
  single-line and safe inside a table cell.
- YAML: :func:`yaml_string`.
- HTML: :func:`html_text`.
- The terminal (rich): :func:`terminal_text` and :func:`terminal_safe` for a whole result.
- File names: :func:`slug`.
"""

from __future__ import annotations

import hashlib
import html
import keyword
import re
import unicodedata
from typing import Any

__all__ = [
    "gherkin_text",
    "html_text",
    "markdown_code",
    "markdown_text",
    "printable",
    "python_identifier",
    "python_string",
    "python_text",
    "slug",
    "terminal_safe",
    "terminal_text",
    "yaml_string",
]

# Characters that str.splitlines() breaks on: none of them may reach a one-line target raw.
_LINE_BREAKS = "\n\r\v\f\x1c\x1d\x1e\x85\u2028\u2029"


def _escape_char(ch: str) -> str:
    code = ord(ch)
    if code < 0x100:
        return f"\\x{code:02x}"
    if code < 0x10000:
        return f"\\u{code:04x}"
    return f"\\U{code:08x}"


def printable(text: str) -> str:
    """``text`` with every non-printable character (controls, line breaks, surrogates, format
    characters) shown as a Python-style escape, so the result is one visible line.

    >>> printable("a\\nb\\x00c")
    'a\\\\nb\\\\x00c'
    """
    named = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}
    return "".join(ch if ch.isprintable() else named.get(ch) or _escape_char(ch) for ch in text)


def slug(text: str, *, limit: int = 60) -> str:
    """A file- and identifier-safe name: lower case ASCII letters, digits and single underscores.

    Accents are folded first (``café`` → ``cafe``); a name with no such character gives ``step``.

    >>> slug("Pay deposit (voucher) › ../etc")
    'pay_deposit_voucher_etc'
    """
    folded = unicodedata.normalize("NFKD", text).encode("ascii", "ignore").decode("ascii")
    out = re.sub(r"[^a-z0-9]+", "_", folded.lower()).strip("_")[:limit].strip("_")
    return out or "step"


def _short_hash(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8", "surrogatepass")).hexdigest()[:6]


def python_identifier(name: str, taken: dict[str, str], *, prefix: str = "") -> str:
    """A Python identifier for ``name``, unique among the values of ``taken`` (updated in place).

    A name that is already a clean identifier (``search_catalogue``) keeps it; any other name gets
    its slug plus six hex digits of its SHA-256, so two names never share an identifier and a name
    keeps its identifier whatever other names are exported beside it.

    >>> python_identifier("search_catalogue", {})
    'search_catalogue'
    >>> python_identifier("Search Catalogue", {})
    'search_catalogue_6b8b05'
    """
    if name in taken:
        return taken[name]
    base = prefix + slug(name, limit=50)
    if base != prefix + name or keyword.iskeyword(base) or base[0].isdigit():
        base = f"{base}_{_short_hash(name)}"
        if base[0].isdigit():
            base = f"step_{base}"
    used = set(taken.values())
    candidate, n = base, 2
    while candidate in used:
        candidate, n = f"{base}_{n}", n + 1
    taken[name] = candidate
    return candidate


def python_string(text: str) -> str:
    """A Python string literal whose value is ``text``: ``repr`` escapes quotes, backslashes,
    line breaks, NUL and surrogates, so the literal compiles and holds exactly the text."""
    return repr(text)


def python_text(text: str) -> str:
    """``text`` for the inside of a triple-quoted docstring or a ``#`` comment: one line with no
    quote, backslash or non-printable character left raw. In a docstring it reads back as
    ``text``; nothing in it can close the string or start code."""
    out = []
    for ch in text:
        if ch == "\\":
            out.append("\\\\")
        elif ch in "\"'":
            out.append("\\" + ch)
        elif ch.isprintable():
            out.append(ch)
        else:
            out.append(_escape_char(ch))
    return "".join(out)


_GHERKIN_STARTS = (
    "#",
    "@",
    "|",
    '"""',
    "```",
    "Feature:",
    "Business Need:",
    "Ability:",
    "Background:",
    "Scenario:",
    "Example:",
    "Scenario Outline:",
    "Scenario Template:",
    "Examples:",
    "Scenarios:",
    "Rule:",
    "Given ",
    "When ",
    "Then ",
    "And ",
    "But ",
    "* ",
)


def gherkin_text(text: str) -> str:
    """``text`` as one Gherkin line's content: line breaks and other controls become spaces,
    whitespace is collapsed, and text that would start with a keyword, ``#``, ``@``, ``|`` or a
    doc-string fence is prefixed so that it stays plain text wherever it is put.

    >>> gherkin_text("pay\\nScenario: evil")
    'pay Scenario: evil'
    >>> gherkin_text("@tag")
    '· @tag'
    """
    cleaned = "".join(ch if ch.isprintable() else " " for ch in text)
    cleaned = re.sub(r"\s+", " ", cleaned).strip()
    if not cleaned:
        return "(unnamed)"
    if any(cleaned.startswith(start) for start in _GHERKIN_STARTS) or cleaned.casefold().startswith(
        tuple(s.casefold() for s in _GHERKIN_STARTS)
    ):
        cleaned = "· " + cleaned
    return cleaned


_MARKDOWN_SPECIAL = re.compile(r"([\\`*_{}\[\]()#+\-.!|~])")


def markdown_text(text: str) -> str:
    """Plain text for Markdown, safe in a table cell: HTML escaped, Markdown punctuation and ``|``
    backslash-escaped, one line."""
    escaped = _MARKDOWN_SPECIAL.sub(r"\\\1", printable(text))
    return html.escape(escaped, quote=True)


def markdown_code(text: str) -> str:
    """``text`` as a Markdown code span, safe in a table cell: one line, ``|`` escaped (GitHub
    Flavored Markdown reads ``\\|`` as a pipe even inside a code span), fenced with more
    backticks than the longest run inside it. Code spans show ``<`` and ``&`` literally."""
    inner = printable(text).replace("|", "\\|")
    longest = max((len(run) for run in re.findall(r"`+", inner)), default=0)
    fence = "`" * (longest + 1)
    if inner.startswith("`") or inner.endswith("`") or not inner.strip():
        inner = f" {inner} "
    return f"{fence}{inner}{fence}"


def yaml_string(text: str) -> str:
    """A double-quoted YAML scalar on one line whose value is ``text`` (controls escaped)."""
    import yaml

    dumped: str = yaml.safe_dump(text, default_style='"', width=float("inf"), allow_unicode=False)
    return dumped.strip().removesuffix("...").strip()


def html_text(text: object) -> str:
    """Text or an attribute value for HTML (``&``, ``<``, ``>``, both quotes escaped)."""
    return html.escape(str(text), quote=True)


def terminal_text(text: str) -> str:
    """One visible line for rich: non-printables escaped, rich markup escaped."""
    from rich.markup import escape

    return escape(printable(text))


def terminal_safe(value: Any) -> Any:
    """A copy of a result (dicts, lists, tuples) with every string passed through
    :func:`terminal_text`, so renderers can put data into markup without it being read as markup."""
    if isinstance(value, str):
        return terminal_text(value)
    if isinstance(value, dict):
        return {k: terminal_safe(v) for k, v in value.items()}
    if isinstance(value, list):
        return [terminal_safe(v) for v in value]
    if isinstance(value, tuple):
        return tuple(terminal_safe(v) for v in value)
    return value
