"""The compiled scans agree with the regular expressions they stand for."""

from __future__ import annotations

import pickle
import random

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import talkthemes.prepare.scrub as scrub_module
from talkthemes.prepare.scan import (
    PieceScanner,
    char_class,
    code_points,
    digit_regions,
    text_hints,
)
from talkthemes.prepare.scrub import scrub
from talkthemes.prepare.words import PIECES

MARKS = ".!?…\n\x00\x01\x02"
# letters with and without accents, combining marks, digits in other scripts, CJK, letters
# outside the first plane (𝐀, 𝟙 are \w), emoji (not \w), punctuation, the marks
ALPHABET = (
    "abcXYZ_019 \t-'’,;:()+/" + MARKS + "éÉßøñ\u0301\u0663\u4e00\u00a0\u2028"
    "\U0001d400\U0001d7d9\U0001f600\ud800"
)


class Ids:
    """A ``new_id`` that numbers pieces in the order it is called."""

    def __init__(self) -> None:
        self.pieces: list[str] = []
        self.seen: dict[str, int] = {}

    def __call__(self, piece: str) -> int:
        assert piece not in self.seen, "a piece met before was cut out again"
        self.seen[piece] = len(self.pieces)
        self.pieces.append(piece)
        return self.seen[piece]


def check(scanner: PieceScanner, ids: Ids, text: str) -> None:
    got = scanner.ids(text, ids)
    assert [ids.pieces[i] for i in got.tolist()] == PIECES.findall(text)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.text(alphabet=ALPHABET, max_size=60), min_size=1, max_size=5))
def test_pieces_are_the_patterns(texts):
    scanner, ids = PieceScanner(MARKS), Ids()
    for text in texts:  # the later texts meet pieces the table already holds
        check(scanner, ids, text)


def test_ids_in_order_of_first_occurrence_and_table_growth():
    rng = random.Random(5)
    scanner, ids = PieceScanner(MARKS), Ids()
    words = [f"w{i}" for i in range(5000)]  # grows the table several times
    for _ in range(4):
        text = " ".join(rng.choice(words) for _ in range(3000)) + ". End!"
        before = len(ids.pieces)
        check(scanner, ids, text)
        new = ids.pieces[before:]
        firsts = [p for i, p in enumerate(PIECES.findall(text)) if p in new]
        assert new == list(dict.fromkeys(firsts))


def test_a_scanner_sent_to_another_process_keeps_its_table():
    scanner, ids = PieceScanner(MARKS), Ids()
    check(scanner, ids, "one two. three")
    copy = pickle.loads(pickle.dumps(scanner))
    assert copy.ids("three two one", ids).tolist() == [3, 1, 0]  # "." is 2


def test_char_classes_are_the_patterns():
    word, digit, space = char_class(r"\w"), char_class(r"\d"), char_class(r"\s")
    for cp in (*range(0, 0x3000), 0x4E00, 0x1D400, 0x1D7D9, 0x1F600, 0x10FFFF):
        ch = chr(cp)
        assert word[cp] == (ch.isalnum() or ch == "_"), hex(cp)
        assert digit[cp] == ch.isdecimal(), hex(cp)
        assert space[cp] == ch.isspace(), hex(cp)


def test_digit_regions_hold_every_digit_with_margins_at_white_space():
    text = "a" * 50 + " call 555 010 4477 now " + "b " * 200 + "at 3 or 4 " + "c " * 80 + "AB12"
    regions = digit_regions(code_points(text), 20, 5)
    assert len(regions) == 3
    for start, end, _ in regions:
        assert start == 0 or text[start - 1].isspace()
        assert end == len(text) or text[end].isspace()
    digits = [i for i, ch in enumerate(text) if ch.isdigit()]
    assert all(any(a <= i < b for a, b, _ in regions) for i in digits)
    # ten digits joined by spaces; short numbers only; a letter glued to a digit
    assert [busy for _, _, busy in regions] == [True, False, True]
    assert digit_regions(code_points("no digits here"), 20, 5) == []


PII = [
    "4111 1111 1111 1111",
    "(555) 010-4477",
    "+44 20 7946 0000",
    "06.12.34.56.78",
    "0171/1234567",
    "GB82 WEST 1234 5698 7654 32",
    "ES9121000418450200051332",
    "12345678Z",
    "RSSMRA85T10A562S",
    "88812345",
    "612345678",
    "2026-05-01",
    "3.5",
    "AB12345",
    "[REDACTED]",
    "jane@mail.example.com",
    "www.example.com/x1",
    "00 44 20 7946 0000",
    "+49 (0)30 1234567",
    "-",
    "(",
    "+",
    "12",
    "1 2 3 4",
    "(12) 34",
    "x" * 90 + "GB82WEST12345698765432",
    "a.b",
    "e.g.Www.x",
    "**",
    "xX",
    "<b>",
    "see:/x",
    "http://localhost/x1",
]


@pytest.mark.parametrize("lang", ["en", "es", "de", "fr", "nl", "pt", None])
def test_scrub_reads_only_around_digits_with_the_same_result(lang, monkeypatch):
    rng = random.Random(11)
    texts = []
    for _ in range(60):
        parts = []
        for _ in range(rng.randint(80, 240)):
            parts.append(rng.choice(PII) if rng.random() < 0.15 else rng.choice(["word", "ok."]))
            parts.append(rng.choice([" ", " ", "\n", "", "-", "/", ". "]))
        texts.append("".join(parts))
    fast_counts: dict[str, int] = {}
    fast = [scrub(t, fast_counts, mark=" \x02 ", lang=lang) for t in texts]
    # the reference: every step tried, the patterns for numbers over the whole text
    monkeypatch.setattr(scrub_module, "text_hints", lambda points: 3)
    monkeypatch.setattr(
        scrub_module, "digit_regions", lambda points, margin, fewest: [(0, points.size, True)]
    )
    counts: dict[str, int] = {}
    for text, got in zip(texts, fast, strict=True):
        assert got == scrub(text, counts, mark=" \x02 ", lang=lang)
    assert fast_counts == counts
    assert sum(len(t) >= 512 for t in texts) > 40
    assert {"card", "phone", "iban", "number"} <= set(counts)


@pytest.mark.parametrize(
    ("text", "bits"),
    [
        ("nothing here, 12 items. Ok", 0),
        ("a [tag]", 1),
        ("a <b>", 1),
        ("a {c}", 1),
        ("a ** b", 1),
        ("a xX b", 1),
        ("see http://localhost/x1 now", 2),
        ("see example.org now", 2),
        ("see www.1 now", 2),
        ("SEE WWW.2", 2),
        ("[a] at b.com", 3),
    ],
)
def test_text_hints_say_which_steps_can_find_something(text, bits):
    assert text_hints(code_points(text)) == bits
    if bits & 2:
        assert scrub(text, {}, mark=" ")[0] != text
