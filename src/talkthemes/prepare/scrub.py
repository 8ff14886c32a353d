"""Step 2, scrub: remove personal data and redaction marks before anything is counted.

What is removed, by kind (the names ``prepare --explain`` counts under):

``email``
    ``name@host.tld``.
``url``
    ``http://…``, ``https://…``, ``www.…`` and bare domains ending in a common top-level
    domain (``example.com/help``).
``iban``
    International bank account numbers (ISO 13616) in any country's format, written with or
    without spaces between groups of four, whose ISO 7064 MOD 97-10 check digits hold.
``national_id``
    National ids with a check character, only when the check holds (see
    :mod:`talkthemes.text.pii_national`): the Spanish DNI/NIE and the Italian codice fiscale
    (letters and digits, checked whatever the language), and, for the language given, the
    ids written in digits alone: Dutch BSN, Portuguese NIF, French NIR, German tax id.
    A string of the right shape with a wrong check is left to the rules below (an
    order number: removed as ``number`` when it is a long run of digits).
``card``
    Runs of 13–19 digits (spaces or hyphens allowed between groups) that pass the Luhn check
    (ISO/IEC 7812-1), the checksum every payment card number carries.
``phone``
    Runs of 7–15 digits written the way phone numbers are: with a leading ``+``, brackets, or
    separators between the groups (``(555) 010-4477``, ``+44 20 7946 0000``), the trunk
    ``(0)`` after a country code (``+49 (0)30 1234567``), the international prefix ``00``
    instead of ``+`` (up to 17 digits: E.164 allows 15 after the prefix), French dotted
    pairs (``06.12.34.56.78``), an area code before a slash (``0171/1234567``), and, for the
    language given, a national number written as one run of digits (``612345678`` in
    Spanish).
``number``
    Any other stand-alone run of at least :data:`LONG_NUMBER_DIGITS` digits (account, order
    and reference numbers; card-length runs that fail the Luhn check land here too).
``tag``
    Redaction and annotation marks: ``[REDACTED]``, ``[inaudible]``, ``<name>``, ``{PII}``,
    runs of ``*`` (``***``) and runs of ``X`` (``XXXX``).

Each match is replaced by a space (or by the ``mark`` the caller gives), so the words around
it stay apart; the chain passes a gap mark so that the words on either side are not counted
as adjacent by the phrases step. Digits inside words
(``AB12345``) are left for the filter step, which drops every token that is not alphabetic:
numbers can never reach the vocabulary. Numbers said as words ("four one one one") are
dropped by the filter too, since spaCy's stop words and the shipped fillers list hold the
number words.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterable, MutableMapping

from talkthemes.prepare.scan import code_points, digit_regions, text_hints
from talkthemes.text.pii_national import (
    ALNUM_ID,
    IBAN_CANDIDATE,
    codice_fiscale_valid,
    digit_id,
    dni_nie_valid,
    iban_in,
    national_phone,
)

__all__ = ["LONG_NUMBER_DIGITS", "SCRUB_KINDS", "luhn_valid", "scrub"]

#: Stand-alone digit runs at least this long are removed as ``number``.
LONG_NUMBER_DIGITS = 5

#: The kinds counted by the scrub step, in report order.
SCRUB_KINDS: tuple[str, ...] = (
    "email",
    "url",
    "iban",
    "national_id",
    "phone",
    "card",
    "number",
    "tag",
)

_TLDS = "com|org|net|edu|gov|info|biz|io|co|us|uk|de|fr|es|it|nl|eu|ca|au|ie|be|ch|at"
_URL_TAIL = r"""(?:[^\s<>"']*[^\s<>"'.,;:!?)\]])?"""

# One pattern per kind, applied in this order (an e-mail address holds a domain, a URL may
# hold digits). Patterns that would have to be tried at every position of a text (e-mail,
# URL) are applied only to the white-space-delimited chunks around an anchor ("@", "://",
# "www.", ".com", ...), found by fast scans, so the cost stays proportional to the text.
_EMAIL = re.compile(r"[\w.+-]+@[\w-]+(?:\.[\w-]+)+")
_URL = re.compile(
    rf"(?i:\b(?:https?://|www\.){_URL_TAIL}|\b(?:[a-z0-9-]+\.)+(?:{_TLDS})\b(?:/{_URL_TAIL})?)"
)
_TLD_ANCHOR = re.compile(rf"\.(?:{_TLDS}|{_TLDS.upper()})\b")  # case-sensitive: fast scan
_TAG = re.compile(r"\[[^\[\]\n]{1,40}\]|<[^<>\n]{1,40}>|\{[^{}\n]{1,40}\}|\*{2,}|[Xx]{2,}")
_TAG_HINTS = ("[", "<", "{", "**", "XX", "xx", "Xx")
# Starts with a character class so the scan is fast; that a run stands alone (no letter
# or digit glued to either end) is checked in the replacement function.
_DIGITS = re.compile(r"[+(\d][\d)]*(?:(?:[ -]|\.(?=\d{3}))\(?\d+(?:\)\d*)?)*")
# Phone numbers the pattern above cuts short: French dotted pairs, an area code before a
# slash (the slash taken only there, so dates are not joined).
_PHONE_FORMS = re.compile(
    r"(?<![\w/.])(?:\+\d{1,3}[ .]?(?:\(0\) ?)?)?\(?0?[1-9]\)?(?:\.\d{2}){4}(?![\d.]*\d)"
    r"|(?<![\w/.])(?:\+\d{1,3} ?(?:\(0\) ?)?|0)\d{1,4} ?/ ?\d{3,}(?:[ -]\d{2,})*(?![/\d])"
)
# Phone numbers of _PHONE_FORMS are looked for only near digits joined by a slash or by
# dotted pairs.
_PHONE_HINT = re.compile(r"\d(?:\.\d\d\.|\s?/\s?\d)")
# Where an IBAN or an id holding letters can be: a digit right after a letter ("ES91",
# "RSSMRA85"), or 7-8 digits and a letter ("12345678Z"). Starts with a digit, so the scan
# skips quickly to the digits.
_ID_ANCHOR = re.compile(r"\d(?:(?<=[A-Za-z]\d)|\d{6,7}[- ]?[A-Za-z](?![A-Za-z]))")
# Both anchors in one scan (group "phone": a _PHONE_HINT), so a text is read once for them.
_ANCHORS = re.compile(
    r"\d(?:(?<=[A-Za-z]\d)|\d{6,7}[- ]?[A-Za-z](?![A-Za-z])|(?P<phone>\.\d\d\.|\s?/\s?\d))"
)
#: IBANs and ids with letters are looked for only in this much text from each
#: :data:`_ID_ANCHOR` on (an IBAN in groups of four: 42 characters).
_ID_WIDTH = 44
#: Every match of the patterns for numbers, ids and phone numbers holds a digit, reaches
#: less than this many characters from it (an IBAN: 42), and is looked for at most 44
#: characters after an anchor: texts are read only around their digits
#: (:func:`~talkthemes.prepare.scan.digit_regions`).
_MARGIN = 64
#: The fewest digits any kind of :func:`_digit_kind` takes (a number: 5; a national phone
#: number: 6; a phone: 7; an id: 9).
_FEWEST_DIGITS = min(LONG_NUMBER_DIGITS, 6)
_NON_DIGIT = re.compile(r"\D")
_WORD = re.compile(r"\w+")
_SPACE = re.compile(r"\s")


def _glued(m: re.Match[str]) -> bool:
    """Whether a match has a letter or digit right before or after it."""
    whole, start, end = m.string, m.start(), m.end()
    return (start > 0 and whole[start - 1].isalnum()) or (end < len(whole) and whole[end].isalnum())


def _url_anchors(text: str) -> list[int]:
    """Positions of "://", "www." and ".com"-like endings, sorted."""
    anchors = [m.start() for m in _TLD_ANCHOR.finditer(text)]
    for literal in ("://", "www.", "WWW."):
        i = text.find(literal)
        while i != -1:
            anchors.append(i)
            i = text.find(literal, i + 1)
    anchors.sort()
    return anchors


def _sub_chunks(
    text: str, anchors: list[int], pattern: re.Pattern[str], repl: Callable[[re.Match[str]], str]
) -> str:
    """Apply ``pattern.sub`` only to the white-space-delimited chunks holding an anchor."""
    out: list[str] = []
    last = 0
    for a in anchors:
        if a < last:
            continue
        left = a
        while left > 0 and not text[left - 1].isspace():
            left -= 1
        m = _SPACE.search(text, a)
        right = m.start() if m else len(text)
        out.append(text[last:left])
        out.append(pattern.sub(repl, text[left:right]))
        last = right
    out.append(text[last:])
    return "".join(out)


def _sub_near(
    text: str,
    anchors: Iterable[re.Match[str]],
    subs: list[tuple[re.Pattern[str], Callable[[re.Match[str]], str]]],
    *,
    before: int,
    after: int,
) -> str:
    """Apply each ``pattern.sub`` only near ``anchors`` (matches in ``text``): from the start of
    the white-space-delimited word ``before`` characters before each, to the end of the
    word ``after`` characters after its start. Patterns that cannot skip quickly to a
    digit would otherwise be tried at every position of the text."""
    out: list[str] = []
    last = 0
    for m in anchors:
        if m.start() < last:
            continue
        left = max(last, m.start() - before)
        while left > last and not text[left - 1].isspace():
            left -= 1
        space = _SPACE.search(text, min(len(text), max(m.end(), m.start() + after)))
        right = space.start() if space else len(text)
        region = text[left:right]
        for pattern, repl in subs:
            region = pattern.sub(repl, region)
        out.append(text[last:left])
        out.append(region)
        last = right
    out.append(text[last:])
    return "".join(out)


def luhn_valid(digits: str) -> bool:
    """Whether a digit string passes the Luhn check (ISO/IEC 7812-1, Annex B).

    From the rightmost digit leftwards, every second digit is doubled (subtracting 9 when
    the result exceeds 9); the number is valid when the sum of all digits is a multiple
    of 10.

    Parameters
    ----------
    digits : str
        Digits only (``"4111111111111111"``); anything else makes the check fail.

    Returns
    -------
    bool
        True for a non-empty digit string whose Luhn sum is divisible by 10.

    References
    ----------
    Luhn, H. P. (1960). Computer for verifying numbers. US Patent 2,950,048.
    ISO/IEC 7812-1, Identification cards — Identification of issuers — Part 1: Numbering
    system (the check digit of a card number).
    """
    if not digits or not digits.isascii() or not digits.isdigit():
        return False
    total = 0
    for i, ch in enumerate(reversed(digits)):
        d = ord(ch) - 48
        if i % 2 == 1:
            d *= 2
            if d > 9:
                d -= 9
        total += d
    return total % 10 == 0


def _digit_kind(run: str, lang: str | None = None) -> str | None:
    digits = _NON_DIGIT.sub("", run)
    n = len(digits)
    dialled = run[0] == "+" or (digits.startswith("00") and digits[2:3] != "0")
    international = dialled or run[0] == "("
    if not international and n in (9, 11, 15) and digit_id(run, lang):
        return "national_id"
    if 13 <= n <= 19 and not dialled and luhn_valid(digits):
        return "card"  # no card number is written with "+" or starts with 00
    if 7 <= n <= 15 and (international or len(digits) != len(run)):
        return "phone"
    if run.startswith("00") and 9 <= n <= 17 and international:
        return "phone"  # "00" + country code + at most 15 digits (E.164)
    if len(digits) == len(run) and national_phone(digits, lang):
        return "phone"
    if n >= LONG_NUMBER_DIGITS:
        return "number"
    return None


def scrub(
    text: str,
    counts: MutableMapping[str, int] | None = None,
    *,
    mark: str = " ",
    lang: str | None = None,
) -> tuple[str, int]:
    """Remove personal data and redaction marks from one text.

    Parameters
    ----------
    text : str
        A transcript's (or a turn's) text.
    counts : mutable mapping of str to int, optional
        Incremented by one per removal under its kind (see :data:`SCRUB_KINDS`).
    mark : str
        What replaces each match (a space by default).
    lang : str, optional
        The language of the text: which national ids written in digits alone are checked,
        and which national phone format a run of digits alone may have. None checks the
        ids of every language and no national phone format.

    Returns
    -------
    text : str
        The text with every match replaced by ``mark``.
    words_removed : int
        Words (runs of letters, digits and underscores) inside the removed matches.
    """
    removed = 0

    def count(kind: str, span: str) -> str:
        nonlocal removed
        if counts is not None:
            counts[kind] = counts.get(kind, 0) + 1
        removed += len(_WORD.findall(span))
        return mark

    def digits(m: re.Match[str]) -> str:
        run = m.group(0)
        if len(run) < _FEWEST_DIGITS:
            return run  # too few digits for any kind (most runs: "2", "10")
        kind = None if _glued(m) else _digit_kind(run, lang)
        return run if kind is None else count(kind, run)

    def iban(m: re.Match[str]) -> str:
        run = m.group(0)
        n = iban_in(run)
        return run if n == 0 else count("iban", run[:n]) + run[n:]

    def alnum_id(m: re.Match[str]) -> str:
        run = m.group(0)
        if dni_nie_valid(run) or codice_fiscale_valid(run):
            return count("national_id", run)
        return run

    def phone_form(m: re.Match[str]) -> str:
        run = m.group(0)
        return run if _glued(m) else count("phone", run)

    def tag(m: re.Match[str]) -> str:
        run = m.group(0)
        if run[0] in "Xx" and _glued(m):
            return run
        return count("tag", run)

    def numbers(text: str) -> str:
        found = list(_ANCHORS.finditer(text))
        if found:
            at_ids = [m for m in found if m.group("phone") is None]
            if at_ids:
                ids = [(IBAN_CANDIDATE, iban), (ALNUM_ID, alnum_id)]
                text = _sub_near(text, at_ids, ids, before=0, after=_ID_WIDTH)
            if len(at_ids) < len(found):  # the text changed: find the phone hints again
                phones = [(_PHONE_FORMS, phone_form)]
                text = _sub_near(text, _PHONE_HINT.finditer(text), phones, before=16, after=24)
        return _DIGITS.sub(digits, text)

    if "@" in text:
        anchors = [m.start() for m in re.finditer("@", text)]
        text = _sub_chunks(text, anchors, _EMAIL, lambda m: count("email", m.group(0)))
    # one compiled pass over the text says which of the steps below can find anything
    points = code_points(text)
    hints = text_hints(points)
    changed = False
    if hints & 2:
        anchors = _url_anchors(text)
        if anchors:
            text = _sub_chunks(text, anchors, _URL, lambda m: count("url", m.group(0)))
            changed = True
    if hints & 1 and any(h in text for h in _TAG_HINTS):
        text = _TAG.sub(tag, text)
        changed = True
    if changed:
        points = code_points(text)
    # the patterns for numbers run only on the stretches around digits that can hold a
    # match (the same matches as over the whole text)
    out: list[str] = []
    last = 0
    for start, end, busy in digit_regions(points, _MARGIN, _FEWEST_DIGITS):
        if busy:
            out.append(text[last:start])
            out.append(numbers(text[start:end]))
            last = end
    if last:
        out.append(text[last:])
        text = "".join(out)
    return text, removed
