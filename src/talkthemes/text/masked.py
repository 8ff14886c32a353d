"""How personal data reads once masked: the same on every screen and in every output.

:mod:`talkthemes.privacy` finds personal data in text and masks it; the chain's
``prepare --explain`` (:mod:`talkthemes.prepare.explain`) shows the names it removed masked
the same way. Both read the kinds and their wording from here.
"""

from __future__ import annotations

__all__ = ["KINDS", "masked_as"]

#: The kinds of personal data masked, and how each reads ("[e-mail]", "[name]" …).
KINDS: dict[str, str] = {
    "email": "e-mail",
    "url": "web address",
    "iban": "bank account",
    "national_id": "id number",
    "phone": "phone number",
    "card": "card number",
    "number": "number",
    "tag": "removed",
    "name": "name",
    "address": "address",
}


def masked_as(kind: str) -> str:
    """How personal data of ``kind`` (one of :data:`KINDS`) reads once masked, as plain
    text: "[name]", "[e-mail]"…"""
    return f"[{KINDS[kind]}]"
