"""Personal data with a published structure: IBANs, national ids and national phone formats.

Every id here carries a check digit or letter, and a string is taken for one only when the
check holds: a string of the right shape with a wrong check is probably an order or
reference number, not the id. The preparation chain's scrub step
(:mod:`talkthemes.prepare.scrub`) removes what these functions accept, and the screens mask
it (:mod:`talkthemes.privacy`, which reuses the scrub step's verdict).

IBAN (any country)
    ISO 13616-1: two letters (the country), two check digits, then the domestic account
    number (BBAN, up to 30 letters and digits); written on paper in groups of four. The
    check is ISO 7064 MOD 97-10: move the first four characters to the end, write each
    letter as two digits (A = 10 … Z = 35); the number is valid when it leaves 1 mod 97.
    For the countries in :data:`IBAN_LENGTHS` the length is checked too.
Spain: DNI and NIE
    Eight digits and a letter; the letter is ``TRWAGMYFPDXBNJZSQVHLCKE``[n mod 23]. A NIE
    starts with X, Y or Z (read as 0, 1, 2) followed by seven digits and the letter.
Italy: codice fiscale
    Sixteen characters (six letters, two digits, a month letter, two digits, a letter,
    three digits, the check letter); digits may be replaced by the letters L–V (omocodia).
    The check letter is the sum of the values of the first fifteen characters (one table
    for the odd positions, another for the even ones) mod 26.
Netherlands: BSN (burgerservicenummer)
    Nine digits passing the "11-proof": 9·d1 + 8·d2 + … + 2·d8 − d9 ≡ 0 (mod 11).
Portugal: NIF (número de identificação fiscal)
    Nine digits, the first not 0 or 4 (``45`` aside); the ninth is 11 − (9·d1 + … + 2·d8
    mod 11), or 0 when that is 10 or 11.
France: NIR (numéro de sécurité sociale)
    Thirteen characters (sex, year, month, département — ``2A``/``2B`` for Corsica —,
    commune, order) and a two-digit key: 97 − (the thirteen digits mod 97), with ``2A``
    read as 19 and ``2B`` as 18.
Germany: steuerliche Identifikationsnummer
    Eleven digits, the first not 0; among the first ten, one digit appears twice or three
    times and the others at most once; the last is the ISO 7064 MOD 11,10 check digit.

Phone numbers: :func:`national_phone` says whether a run of digits written without any
separator has the shape of a phone number of a language's country (E.164: a number is a
country code and at most 15 digits in all).
"""

from __future__ import annotations

import re
from collections.abc import Callable

__all__ = [
    "ALNUM_ID",
    "DIGIT_IDS",
    "IBAN_CANDIDATE",
    "IBAN_LENGTHS",
    "ID_LANGUAGES",
    "bsn_valid",
    "codice_fiscale_valid",
    "digit_id",
    "dni_nie_valid",
    "iban_in",
    "iban_valid",
    "national_phone",
    "nif_pt_valid",
    "nir_valid",
    "steuer_id_valid",
]

#: IBAN lengths (characters, check digits included) by country, from the ISO 13616 IBAN
#: registry (recalled from memory for the countries most often met; other countries are
#: checked by structure and check digits only).
IBAN_LENGTHS: dict[str, int] = {
    "AT": 20,
    "BE": 16,
    "CH": 21,
    "CZ": 24,
    "DE": 22,
    "DK": 18,
    "ES": 24,
    "FI": 18,
    "FR": 27,
    "GB": 22,
    "IE": 22,
    "IT": 27,
    "LU": 20,
    "NL": 18,
    "NO": 15,
    "PL": 28,
    "PT": 25,
    "SE": 24,
}

#: A possible IBAN: country, check digits, then groups of letters and digits (groups of
#: four with single spaces, or none). :func:`iban_in` finds the valid IBAN inside a match.
IBAN_CANDIDATE = re.compile(
    r"\b[A-Za-z]{2}\d{2}(?:(?: ?[A-Za-z0-9]{4}){2,7}(?: ?[A-Za-z0-9]{1,3})?"
    r"|[A-Za-z0-9]{11,30})\b"
)
_IBAN_PLAIN = re.compile(r"[A-Z]{2}\d{2}[A-Z0-9]{11,30}")

#: A possible DNI/NIE or codice fiscale (letters and digits in one word; the DNI letter
#: may follow a hyphen or, written in capitals, a space).
ALNUM_ID = re.compile(
    r"\b(?:[XYZxyz]?\d{7,8}(?:-?[A-Za-z]|[ ][A-Z])"
    r"|[A-Za-z]{6}[\dLMNPQRSTUVlmnpqrstuv]{2}[A-Za-z][\dLMNPQRSTUVlmnpqrstuv]{2}[A-Za-z]"
    r"[\dLMNPQRSTUVlmnpqrstuv]{3}[A-Za-z])\b"
)

_DNI_LETTERS = "TRWAGMYFPDXBNJZSQVHLCKE"


def _mod97(digits: str) -> int:
    return int(digits) % 97


def iban_valid(text: str) -> bool:
    """Whether ``text`` is an IBAN (ISO 13616-1 structure, ISO 7064 MOD 97-10 check).

    Parameters
    ----------
    text : str
        Spaces are ignored; letters may be in either case.

    Returns
    -------
    bool
    """
    s = text.replace(" ", "").upper()
    if not _IBAN_PLAIN.fullmatch(s) or not s.isascii():
        return False
    expected = IBAN_LENGTHS.get(s[:2])
    if expected is not None and len(s) != expected:
        return False
    moved = s[4:] + s[:4]
    digits = "".join(str(int(c, 36)) for c in moved)
    return _mod97(digits) == 1


def iban_in(candidate: str) -> int:
    """The length of the longest valid IBAN at the start of a :data:`IBAN_CANDIDATE`
    match (0 when none): the match may have taken a following word as a group."""
    if iban_valid(candidate):
        return len(candidate)
    cut = len(candidate)
    while True:
        cut = candidate.rfind(" ", 0, cut)
        if cut < 15:
            return 0
        if iban_valid(candidate[:cut]):
            return cut


def dni_nie_valid(text: str) -> bool:
    """Whether ``text`` is a Spanish DNI (``12345678Z``) or NIE (``X1234567L``); a hyphen or
    space before the letter is allowed. The letter is checked (mod 23)."""
    s = text.replace("-", "").replace(" ", "").upper()
    if len(s) != 9 or not s[-1].isalpha():
        return False
    body = s[:-1]
    if body[0] in "XYZ":
        body = str("XYZ".index(body[0])) + body[1:]
    if not (body.isascii() and body.isdigit()):
        return False
    return _DNI_LETTERS[int(body) % 23] == s[-1]


# The values of the odd positions (1st, 3rd, …): a digit counts as the letter of its rank.
_CF_ODD_DIGITS = (1, 0, 5, 7, 9, 13, 15, 17, 19, 21)
_CF_ODD_REST = (2, 4, 18, 20, 11, 3, 6, 8, 12, 14, 16, 10, 22, 25, 24, 23)  # K … Z
_CF_ODD = dict(
    zip(
        "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ",
        (*_CF_ODD_DIGITS, *_CF_ODD_DIGITS, *_CF_ODD_REST),
        strict=True,
    )
)
_CF_SHAPE = re.compile(
    r"[A-Z]{6}[\dLMNPQRSTUV]{2}[ABCDEHLMPRST][\dLMNPQRSTUV]{2}[A-Z][\dLMNPQRSTUV]{3}[A-Z]"
)


def codice_fiscale_valid(text: str) -> bool:
    """Whether ``text`` is an Italian codice fiscale with a correct check letter (either
    case; a code holding no digit at all is not taken, so that no word is)."""
    s = text.upper()
    if not _CF_SHAPE.fullmatch(s) or not any(c.isdigit() for c in s):
        return False
    total = 0
    for i, c in enumerate(s[:15]):
        if i % 2 == 0:  # odd positions, counting from 1
            total += _CF_ODD[c]
        else:
            total += int(c) if c.isdigit() else ord(c) - 65
    return chr(65 + total % 26) == s[15]


def bsn_valid(digits: str) -> bool:
    """Whether nine digits pass the Dutch BSN 11-proof (not all zeros)."""
    if len(digits) != 9 or not digits.isdigit() or not digits.isascii() or digits == "0" * 9:
        return False
    d = [int(c) for c in digits]
    return (sum(w * x for w, x in zip(range(9, 1, -1), d[:8], strict=True)) - d[8]) % 11 == 0


def nif_pt_valid(digits: str) -> bool:
    """Whether nine digits are a Portuguese NIF with a correct check digit (mod 11)."""
    if len(digits) != 9 or not digits.isdigit() or not digits.isascii():
        return False
    if digits[0] in "04" and not digits.startswith("45"):
        return False
    d = [int(c) for c in digits]
    r = sum(w * x for w, x in zip(range(9, 1, -1), d[:8], strict=True)) % 11
    return d[8] == (0 if r < 2 else 11 - r)


_NIR_SHAPE = re.compile(r"[1-478]\d{2}(?:0[1-9]|1[0-2]|20|3\d|4[0-2]|[5-9]\d)(?:\d{2}|2[AB])\d{8}")


def nir_valid(text: str) -> bool:
    """Whether ``text`` (spaces ignored) is a French NIR with a correct key:
    97 − (the first thirteen digits mod 97), ``2A`` read as 19 and ``2B`` as 18."""
    s = text.replace(" ", "").upper()
    if len(s) != 15 or not _NIR_SHAPE.fullmatch(s):
        return False
    body = s[:13]
    if body[5:7] in ("2A", "2B"):
        body = body[:5] + ("19" if body[6] == "A" else "18") + body[7:]
    return 97 - int(body) % 97 == int(s[13:])


def steuer_id_valid(digits: str) -> bool:
    """Whether eleven digits are a German tax id (steuerliche Identifikationsnummer): the
    digit pattern of the first ten and the ISO 7064 MOD 11,10 check digit."""
    if len(digits) != 11 or not digits.isdigit() or not digits.isascii() or digits[0] == "0":
        return False
    head = digits[:10]
    counts = sorted((head.count(c) for c in set(head)), reverse=True)
    if counts[0] not in (2, 3) or (len(counts) > 1 and counts[1] > 1):
        return False
    if counts[0] == 3 and any(head[i] == head[i + 1] == head[i + 2] for i in range(8)):
        return False
    product = 10
    for c in head:
        total = (int(c) + product) % 10 or 10
        product = (total * 2) % 11
    check = 11 - product
    return (0 if check == 10 else check) == int(digits[10])


#: The national ids written as digits alone: (check, how they are grouped when written
#: with separators: the lengths of the digit groups), by the language whose country
#: issues them.
DIGIT_IDS: dict[str, tuple[Callable[[str], bool], frozenset[tuple[int, ...]]]] = {
    "nl": (bsn_valid, frozenset({(9,)})),
    "pt": (nif_pt_valid, frozenset({(9,)})),
    "fr": (nir_valid, frozenset({(15,), (13, 2), (1, 2, 2, 2, 3, 3, 2)})),
    "de": (steuer_id_valid, frozenset({(11,), (2, 3, 3, 3)})),
}
#: Languages with a national id checked by the scrub step (the DNI/NIE and the codice
#: fiscale, written with letters, are checked in every language).
ID_LANGUAGES: tuple[str, ...] = ("de", "es", "fr", "it", "nl", "pt")

_GROUP = re.compile(r"\d+")


def digit_id(run: str, lang: str | None) -> bool:
    """Whether a run of digits (with the separators it was written with) is a valid
    national id of ``lang``'s country, written the way that id is written (every country's
    when ``lang`` is None)."""
    if lang is not None and lang not in DIGIT_IDS:
        return False
    found = _GROUP.findall(run)
    groups = tuple(len(g) for g in found)
    if sum(groups) not in (9, 11, 15):
        return False
    digits = "".join(found)
    langs = DIGIT_IDS if lang is None else ((lang,) if lang in DIGIT_IDS else ())
    for code in langs:
        check, shapes = DIGIT_IDS[code]
        if groups in shapes and check(digits):
            return True
    return False


#: National phone numbers written as one run of digits, by language (trunk prefix
#: included); an E.164 number with its country code is recognised by its "+" or "00".
_NATIONAL_PHONE: dict[str, re.Pattern[str]] = {
    "es": re.compile(r"[6789]\d{8}"),
    "pt": re.compile(r"(?:9[1236]|2\d)\d{7}"),
    "fr": re.compile(r"0[1-9]\d{8}"),
    "nl": re.compile(r"0[1-9]\d{8}"),
    "it": re.compile(r"3\d{8,9}|0\d{5,10}"),
    "de": re.compile(r"0[1-9]\d{6,11}"),
}


def national_phone(digits: str, lang: str | None) -> bool:
    """Whether a run of digits alone has the shape of a national phone number of
    ``lang``'s country (False for languages without one, and for None)."""
    pattern = _NATIONAL_PHONE.get(lang or "")
    return bool(pattern and pattern.fullmatch(digits))
