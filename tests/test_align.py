"""Name alignment: resolution order, suggestions (words and character n-grams, opposites never), alias files."""

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
        ("Suche öffnen", "suche_öffnen"),
        ("予約する", "予約する"),
        ("ＦＵＬＬwidth", "fullwidth"),  # NFKC folds full-width letters
        ("ÖffneSuche", "öffne_suche"),
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


def test_suggestions_allow_many_steps_per_event_and_list_candidates() -> None:
    aligner = NameAligner(min_score=0.2).fit(EVENTS)
    out = aligner.suggest(
        ["pay deposit with card", "pay deposit with voucher", "extend my loan", "I extend the loan", "qqq"]
    )
    mapped = {s.step: s.event for s in out}
    assert mapped["pay deposit with card"] == "pay_deposit_card"
    assert mapped["pay deposit with voucher"] == "pay_deposit_voucher"
    assert mapped["extend my loan"] == mapped["I extend the loan"] == "extend_loan"
    assert mapped["qqq"] is None
    assert all(0 <= s.score <= 1 for s in out)
    card = out[0]
    assert len(card.candidates) == 3 and card.candidates[0] == ("pay_deposit_card", card.score)
    assert [v for _, v in card.candidates] == sorted((v for _, v in card.candidates), reverse=True)


@pytest.mark.parametrize(
    ("step", "events", "wrong"),
    [
        ("I sign out", ["sign_up", "login"], {"sign_up", "login"}),
        ("I log out", ["login", "logout"], {"login"}),
        ("I close my notifications", ["open_notifications"], {"open_notifications"}),
        ("Create account", ["delete_account", "sign_up"], {"delete_account"}),
        ("I remove the item", ["add_item"], {"add_item"}),
        ("I leave the waitlist", ["join_waitlist"], {"join_waitlist"}),
        ("I cancel the reservation", ["reserve_tool"], {"reserve_tool"}),
        ("I disable alerts", ["enable_alerts"], {"enable_alerts"}),
    ],
)
def test_opposite_meanings_never_match(step: str, events: list[str], wrong: set[str]) -> None:
    (suggestion,) = NameAligner(min_score=0.0).fit(events).suggest([step])
    assert suggestion.event not in wrong
    assert all(event not in wrong for event, _ in suggestion.candidates)


@pytest.mark.parametrize(
    ("step", "event"),
    [
        ('I sign in as "{}"', "login"),
        ("the member logs in", "login"),
        ("Create account", "sign_up"),
        ("I register", "sign_up"),
        ("I log out", "logout"),
    ],
)
def test_common_ui_phrasings_meet_their_event(step: str, event: str) -> None:
    events = ["login", "logout", "sign_up", "delete_account", "search_catalogue"]
    assert NameAligner().fit(events).suggest([step])[0].event == event


def test_unicode_names_do_not_collapse_into_each_other() -> None:
    (suggestion,) = NameAligner().fit(["予約", "検索"]).suggest(["検索"])
    assert suggestion.event == "検索"
    assert dict(suggestion.candidates).get("予約", 0.0) < 0.3


def test_canonical_words_resolve_without_an_alias() -> None:
    resolved = resolve_step_names(["Log in", "createAccount"], ["login", "sign_up"])
    assert resolved == {"Log in": ("login", "normalized"), "createAccount": ("sign_up", "normalized")}


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
