"""The Luhn check against published test card numbers.

Source: the Luhn algorithm as specified for payment card numbers in ISO/IEC 7812-1 (check
digit, Annex B) and in Luhn's patent (US 2,950,048, 1960). The card numbers below are the
test numbers that card networks and payment processors publish for sandbox use; they are
common practice, with no single authoritative source, and are recalled from memory here.
"""

from __future__ import annotations

import pytest

from talkthemes.prepare.scrub import luhn_valid, scrub

# Widely published test numbers (common practice; recalled from memory).
PUBLISHED_TEST_NUMBERS = [
    "4111111111111111",  # Visa test number
    "4012888888881881",  # Visa test number
    "5555555555554444",  # Mastercard test number
    "5105105105105100",  # Mastercard test number
    "378282246310005",  # American Express test number
    "371449635398431",  # American Express test number
    "6011111111111117",  # Discover test number
    "3530111333300000",  # JCB test number
    "30569309025904",  # Diners Club test number
]


@pytest.mark.parametrize("number", PUBLISHED_TEST_NUMBERS)
def test_published_test_numbers_pass(number: str):
    assert luhn_valid(number)


@pytest.mark.parametrize("number", PUBLISHED_TEST_NUMBERS)
def test_near_misses_fail(number: str):
    # changing any single digit breaks the Luhn sum (it detects every single-digit error)
    for i in range(len(number)):
        d = int(number[i])
        changed = number[:i] + str((d + 1) % 10) + number[i + 1 :]
        assert not luhn_valid(changed), changed


def test_transposition_of_adjacent_digits_is_caught():
    # Luhn detects swaps of adjacent digits except 09 <-> 90 (ISO/IEC 7812-1 property)
    assert luhn_valid("4111111111111111")
    assert not luhn_valid("4111111111111111"[1::-1] + "4111111111111111"[2:])  # "14..."
    assert luhn_valid("79927398713")  # the worked example in Luhn-check descriptions (memory)
    assert not luhn_valid("79927398710")


def test_non_digits_and_empty_fail():
    assert not luhn_valid("")
    assert not luhn_valid("4111 1111 1111 1111")
    assert not luhn_valid("41111111111111١١")  # Arabic-Indic digits are not ASCII digits


@pytest.mark.parametrize(
    "written", ["4111 1111 1111 1111", "3782 822463 10005", "5555-5555-5555-4444"]
)
def test_scrub_removes_written_card_numbers_as_cards(written: str):
    counts: dict[str, int] = {}
    clean, _ = scrub(f"my card is {written} thanks", counts)
    assert counts == {"card": 1}
    assert not any(ch.isdigit() for ch in clean)
