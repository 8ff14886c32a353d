"""The name a theme is shown by: its label, or its suggested name until labelled."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.errors import InputError
from talkthemes.metrics.relevance import relevance, top_relevant_terms
from talkthemes.versions.naming import display_name, name_key, stem, suggest_names, theme_name


def test_a_label_wins_else_the_top_three_terms() -> None:
    assert theme_name("Payment plans", ["pay", "plan", "month"]) == "Payment plans"
    assert theme_name("  ", ["late_fee", "charge", "waive", "refund"]) == (
        "late fee · charge · waive"
    )
    with pytest.raises(InputError, match="label or at least one top term"):
        theme_name("", [])


# -- suggested names ------------------------------------------------------------------------
VOCAB = [
    "late_fee", "fee", "late", "charge", "refund",        # theme 0: late fees
    "direct_debit", "debit", "bank", "date", "payment",   # theme 1: direct debits
    "leak", "water", "pipe", "pressure", "tap",           # theme 2: leaks
    "call", "account", "thanks",                          # shared
]  # fmt: skip


def _phi() -> np.ndarray:
    """Three block themes over VOCAB plus shared words every theme uses."""
    phi = np.full((3, len(VOCAB)), 1e-4)
    for k in range(3):
        phi[k, 5 * k : 5 * k + 5] = [0.2, 0.15, 0.1, 0.08, 0.06]
    phi[:, 15:] = 0.05
    return phi / phi.sum(axis=1, keepdims=True)


def _names(phi: np.ndarray, **kw: object) -> list[str]:
    marginal = np.full(phi.shape[0], 1 / phi.shape[0]) @ phi
    return suggest_names(phi, marginal, VOCAB, **kw)


def test_suggested_names_lead_with_a_phrase_and_never_repeat_a_stem() -> None:
    names = _names(_phi())
    assert names[0] == "Late fee · charge"  # not "· fee" nor "· late": same stems
    assert names[1] == "Direct debit · bank"
    assert names[2] == "Leak · water"  # no phrase among its candidates: its top term leads
    for name in names:
        words = [w for part in name.lower().split(" · ") for w in part.split()]
        assert len({stem(w) for w in words}) == len(words)


def test_suggested_names_are_unique_and_hold_a_top_relevance_term() -> None:
    rng = np.random.default_rng(3)
    # twelve themes, several nearly alike (their first choices collide)
    base = _phi()
    phi = np.vstack([base[k % 3] * rng.uniform(0.9, 1.1, len(VOCAB)) for k in range(12)])
    phi /= phi.sum(axis=1, keepdims=True)
    names = _names(phi)
    assert len({name_key(n) for n in names}) == 12 and len(set(names)) == 12
    marginal = np.full(12, 1 / 12) @ phi
    top = top_relevant_terms(phi, marginal, 0.6, 5)
    for k, name in enumerate(names):
        shown = name.lower()
        assert any(VOCAB[j].replace("_", " ") in shown for j in top[k]), (name, top[k])


def test_suggested_names_differ_from_taken_names_and_skip_terms() -> None:
    phi = _phi()[:1]
    marginal = phi[0]
    assert suggest_names(phi, marginal, VOCAB)[0] == "Late fee · charge"
    other = suggest_names(phi, marginal, VOCAB, taken=["charge · late fee"])[0]
    assert name_key(other) != name_key("Late fee · charge")
    assert "late" in other.lower()
    skipped = suggest_names(phi, marginal, VOCAB, skip=lambda t: "fee" in t)[0]
    assert "fee" not in skipped.lower()


def test_the_largest_theme_chooses_first() -> None:
    phi = np.vstack([_phi()[0], _phi()[0]])
    first, second = _names(phi, order=[1, 0])
    assert second == "Late fee · charge" and first != second


def test_display_name_is_the_label_else_the_suggested_name() -> None:
    assert display_name("  Billing  ", "Late fee · charge") == "Billing"
    assert display_name("", "Late fee · charge") == "Late fee · charge"
    assert stem("charges") == stem("charging") == stem("charge")
    # the relevance the names are ranked by is the documented one
    phi = _phi()
    rel = relevance(phi, phi.mean(axis=0), 0.6)
    assert np.isfinite(rel).all()
