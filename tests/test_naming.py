"""The name a theme is shown by."""

from __future__ import annotations

import pytest

from talkthemes.errors import InputError
from talkthemes.versions.naming import theme_name


def test_a_label_wins_else_the_top_three_terms() -> None:
    assert theme_name("Payment plans", ["pay", "plan", "month"]) == "Payment plans"
    assert theme_name("  ", ["late_fee", "charge", "waive", "refund"]) == (
        "late fee · charge · waive"
    )
    with pytest.raises(InputError, match="label or at least one top term"):
        theme_name("", [])
