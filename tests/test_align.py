"""Name alignment: resolution order, TF-IDF suggestions with one-to-one assignment, alias files."""

from __future__ import annotations

from pathlib import Path

import pytest

from gapfinder.align import NameAligner, Suggestion, load_aliases, normalize_name, resolve_step_names, write_aliases
from gapfinder.errors import ConfigError

EVENTS = ["search_catalogue", "view_tool", "reserve_tool", "extend_loan", "pay_deposit_card", "pay_deposit_voucher"]


@pytest.mark.parametrize(
    ("name", "normal"),
    [
        ("Search Catalogue", "search_catalogue"),
        ("payDepositByCard", "pay_deposit_by_card"),
        ("  view-tool! ", "view_tool"),
    ],
)
def test_normalize(name: str, normal: str) -> None:
    assert normalize_name(name) == normal


def test_resolution_order_exact_alias_normalized_unmapped() -> None:
    resolved = resolve_step_names(
        ["view_tool", "Reserve Tool", "look at tool", "teleport"],
        EVENTS,
        {"look at tool": "view_tool", "teleport": "nope"},
    )
    assert resolved == {
        "view_tool": ("view_tool", "exact"),
        "Reserve Tool": ("reserve_tool", "normalized"),
        "look at tool": ("view_tool", "alias"),
        "teleport": (None, "unmapped"),  # an alias to an unknown event does not count
    }


def test_suggestions_are_one_to_one_and_scored() -> None:
    aligner = NameAligner(min_score=0.2).fit(EVENTS)
    out = aligner.suggest(["pay deposit with card", "pay deposit with voucher", "extend my loan", "qqq"])
    mapped = {s.step: s.event for s in out}
    assert mapped["pay deposit with card"] == "pay_deposit_card"
    assert mapped["pay deposit with voucher"] == "pay_deposit_voucher"
    assert mapped["extend my loan"] == "extend_loan"
    assert mapped["qqq"] is None
    chosen = [s.event for s in out if s.event]
    assert len(chosen) == len(set(chosen))
    assert all(0 <= s.score <= 1 for s in out)


def test_estimator_checks() -> None:
    with pytest.raises(ValueError, match="fit"):
        NameAligner().suggest(["a"])
    with pytest.raises(ValueError, match="ngram_range"):
        NameAligner(ngram_range=(3, 2)).fit(EVENTS)
    with pytest.raises(ValueError, match="min_score"):
        NameAligner(min_score=2).fit(EVENTS)


def test_alias_file_round_trip(tmp_path: Path) -> None:
    path = tmp_path / "aliases.yaml"
    write_aliases(
        path,
        [Suggestion("pay: by card", "pay_deposit_card", 0.8), Suggestion("zzz", None, 0.1)],
        existing={"look at tool": "view_tool"},
    )
    assert load_aliases(path) == {"pay: by card": "pay_deposit_card", "look at tool": "view_tool"}
    assert "similarity 0.80" in path.read_text()


def test_alias_file_errors(tmp_path: Path) -> None:
    path = tmp_path / "a.yaml"
    path.write_text("aliases: [1, 2]")
    with pytest.raises(ConfigError, match="top-level `aliases:`"):
        load_aliases(path)
    with pytest.raises(ConfigError, match="no such file"):
        load_aliases(tmp_path / "missing.yaml")
