"""Each call's best sentence: the customer's sentence holding most of the theme's words."""

from __future__ import annotations

from talkthemes.privacy import Masker
from talkthemes.view.evidence import best_sentence, sentences
from talkthemes.view.transcript import TermHighlighter

WEIGHTS = {"bill": 0.3, "pay": 0.2, "direct_debit": 0.25, "account": 0.01}


def _pick(turns: list[tuple[str, str]]) -> str:
    return best_sentence(turns, WEIGHTS, TermHighlighter(WEIGHTS))


def test_the_customer_sentence_with_most_theme_weight_wins() -> None:
    turns = [
        ("agent", "Thanks for calling about your bill and how to pay it today."),
        ("customer", "Hi there. I want to pay my bill by direct debit from now on, please."),
        ("customer", "My account was opened last year in the spring."),
    ]
    assert _pick(turns) == "I want to pay my bill by direct debit from now on, please."


def test_an_agent_sentence_only_when_the_customer_says_no_theme_word() -> None:
    turns = [
        ("agent", "Your bill can be paid by direct debit, that is the easy way."),
        ("customer", "Okay, that sounds good to me then, thanks."),
    ]
    assert _pick(turns).startswith("Your bill can be paid")
    assert _pick([("customer", "Nothing here at all today, sorry.")]) == ""


def test_short_sentences_are_skipped_and_long_ones_cut() -> None:
    assert _pick([("customer", "My bill. " + "I need to pay the bill " * 20 + ".")]).endswith(" …")
    assert _pick([("customer", "Pay bill.")]) == ""  # fewer than four words
    assert sentences("One. Two! Three? Four…") == ["One.", "Two!", "Three?", "Four…"]


def test_masked_data_is_never_scored_or_shown() -> None:
    masked = Masker().mask("My account number is 12345678 and my bill is wrong, please help.")
    picked = _pick([("customer", masked)])
    assert "12345678" not in picked and "bill" in picked
