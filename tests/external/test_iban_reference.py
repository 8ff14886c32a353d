"""IBANs and phone numbers against the standards that define them.

References:
- ISO 13616-1:2020, Financial services — International bank account number (IBAN), and the
  IBAN registry kept under it (SWIFT as registration authority): the structure (country
  code, two check digits, BBAN of up to 30 characters), the length per country, and the
  example IBAN the registry publishes for each country. The examples below are recalled
  from memory (the registry's examples are widely reprinted); each is checked here with an
  independent MOD 97-10 computation, so a wrongly recalled one would fail.
- ISO/IEC 7064:2003, MOD 97-10: the check-digit system the IBAN uses (letters as 10-35,
  the first four characters moved to the end, remainder 1).
- ITU-T Recommendation E.164 (11/2010), section 6: an international number is a country
  code of one to three digits followed by the national significant number, at most 15
  digits in all; written with "+" (or the international prefix "00" dialled before it).
"""

from __future__ import annotations

import pytest

from talkthemes.prepare.scrub import scrub
from talkthemes.text.pii_national import IBAN_LENGTHS, iban_valid

# The registry's example IBAN per country (recalled from memory, see the module notes).
REGISTRY_EXAMPLES = {
    "AT": "AT611904300234573201",
    "BE": "BE68539007547034",
    "CH": "CH9300762011623852957",
    "DE": "DE89370400440532013000",
    "ES": "ES9121000418450200051332",
    "FR": "FR1420041010050500013M02606",
    "GB": "GB29NWBK60161331926819",
    "IT": "IT60X0542811101000000123456",
    "NL": "NL91ABNA0417164300",
    "NO": "NO9386011117947",
    "PT": "PT50000201231234567890154",
}
# The example of ISO 13616-1 itself (recalled from memory), with its worked conversion.
STANDARD_EXAMPLE = "GB82 WEST 1234 5698 7654 32"
STANDARD_DIGITS = "3214282912345698765432161182"  # WEST…32 GB82 with letters as numbers


def _mod97_10(iban: str) -> int:
    """ISO/IEC 7064 MOD 97-10 remainder, computed piecewise (nine digits at a time), as the
    standard describes it for systems without big integers."""
    s = iban.replace(" ", "")
    moved = s[4:] + s[:4]
    digits = "".join(str(ord(c) - 55) if c.isalpha() else c for c in moved)
    rest = 0
    for i in range(0, len(digits), 7):
        rest = int(f"{rest}{digits[i : i + 7]}") % 97
    return rest


def test_standard_example_worked_conversion():
    s = STANDARD_EXAMPLE.replace(" ", "")
    moved = s[4:] + s[:4]
    assert "".join(str(ord(c) - 55) if c.isalpha() else c for c in moved) == STANDARD_DIGITS
    assert int(STANDARD_DIGITS) % 97 == 1
    assert iban_valid(STANDARD_EXAMPLE)


@pytest.mark.parametrize(("country", "iban"), sorted(REGISTRY_EXAMPLES.items()))
def test_registry_examples(country: str, iban: str):
    assert _mod97_10(iban) == 1  # the independent check: the example is recalled right
    assert len(iban) == IBAN_LENGTHS[country]  # our length table matches the registry's
    assert iban_valid(iban)
    grouped = " ".join(iban[i : i + 4] for i in range(0, len(iban), 4))
    counts: dict[str, int] = {}
    assert scrub(f"account {grouped} thanks", counts, mark="_")[0] == "account _ thanks"
    assert counts == {"iban": 1}


@pytest.mark.parametrize("iban", sorted(REGISTRY_EXAMPLES.values()))
def test_any_single_change_breaks_the_check(iban: str):
    # MOD 97-10 detects every single substitution (ISO/IEC 7064, section 5)
    for i in range(2, len(iban)):
        c = iban[i]
        other = "7" if c != "7" else "3"
        assert not iban_valid(iban[:i] + other + iban[i + 1 :]), (iban, i)


# E.164: invented numbers, 555-01xx being reserved for fiction in the North American plan
@pytest.mark.parametrize(
    ("text", "kind"),
    [
        ("+1 202 555 0143", "phone"),  # country code 1 + 10 digits
        ("+44 20 7946 0958", "phone"),
        ("+351 21 555 0143", "phone"),  # three-digit country code
        ("+12345678901234", "phone"),  # 14 digits
        ("+123456789012345", "phone"),  # 15 digits: the most E.164 allows
        ("+1234567890123452", "number"),  # 16 digits: not an E.164 number (nor a card)
        ("00 351 21 555 0143", "phone"),  # the international prefix 00 instead of +
        ("00123456789012345", "phone"),  # 00 + 15 digits
        ("00123456789012345672", "number"),  # 00 + 18 digits
    ],
)
def test_e164_lengths(text: str, kind: str):
    counts: dict[str, int] = {}
    out, _ = scrub(f"call {text} now", counts, mark="_")
    assert out == "call _ now"
    assert counts == {kind: 1}
