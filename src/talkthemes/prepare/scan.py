"""The fast path's word split, compiled: pieces of text found and looked up in one pass.

:data:`~talkthemes.prepare.words.PIECES` splits a text into words (``\\w+``) and single
marks (sentence ends, separators). Done with the regular expression, every piece becomes a
Python string that is then looked up in a dictionary; for a transcript of 500 words that is
most of the cost of the lemma step. :class:`PieceScanner` does the same split over the
text's code points with numba and looks each piece up by a 64-bit hash of its code points
in an open-addressing table of the pieces seen before. Only a piece whose hash is not in
the table (a word this process has not met yet) is cut out as a string, once.

The split is the regular expression's exactly: a code point is a word character when
``\\w`` matches it (the table :func:`word_chars` is built by running the pattern itself
over every code point). ``tests/prepare/test_scan.py`` compares both on random text.

Two different pieces with the same 64-bit hash would be taken for one another: with
a million distinct pieces the chance is about 3 in 10^8 (the sentence keys of the
boilerplate step rest on the same kind of hash).
"""

from __future__ import annotations

import re
from collections.abc import Callable
from functools import cache

import numpy as np
from numba import njit
from numpy.typing import NDArray

__all__ = ["PieceScanner", "code_points", "digit_regions", "text_hints", "warm_up", "word_chars"]

_N_CODE_POINTS = 0x110000
_EMPTY = np.int64(-1)
#: Multiplier and offset of the piece hash (64-bit FNV-1a constants, one code point a step).
_PRIME = np.uint64(0x100000001B3)
_OFFSET = np.uint64(0xCBF29CE484222325)
_MIX = np.uint64(0x9E3779B97F4A7C15)


@cache
def _every() -> str:
    every = np.arange(_N_CODE_POINTS, dtype=np.uint32).tobytes()
    return every.decode("utf-32-le", "surrogatepass")


@cache
def char_class(pattern: str) -> NDArray[np.bool_]:
    """Which code points a one-character class of Python's ``re`` (str patterns) matches,
    as a lookup table, built by running the pattern over every code point."""
    table = np.zeros(_N_CODE_POINTS, dtype=np.bool_)
    for m in re.finditer(pattern + "+", _every()):
        table[m.start() : m.end()] = True
    return table


def word_chars() -> NDArray[np.bool_]:
    """Which code points ``\\w`` matches (Python's ``re``, str patterns), as a lookup table."""
    return char_class(r"\w")


def code_points(text: str) -> NDArray[np.uint32]:
    """The code points of a text, one per character (``text[i]`` is ``points[i]``)."""
    return np.frombuffer(text.encode("utf-32-le", "surrogatepass"), dtype=np.uint32)


@njit(cache=True, nogil=True)
def _digit_regions(points, digit, space, margin):  # pragma: no cover - compiled
    n = points.size
    out = np.empty(2 * (n // margin + 2), dtype=np.int64)
    k = 0
    i = 0
    while i < n:
        if not digit[points[i]]:
            i += 1
            continue
        first = i
        last = i
        i += 1
        while i < n and i - last <= 2 * margin:
            if digit[points[i]]:
                last = i
            i += 1
        left = max(0, first - margin)
        while left > 0 and not space[points[left - 1]]:
            left -= 1
        right = min(n, last + 1 + margin)
        while right < n and not space[points[right]]:
            right += 1
        if k and left <= out[k - 1]:
            out[k - 1] = right
        else:
            out[k] = left
            out[k + 1] = right
            k += 2
        i = max(i, right)
    return out[:k]


@njit(cache=True, nogil=True)
def _busy(points, flat, digit, joiner, letter, fewest):  # pragma: no cover - compiled
    """For each region: a letter right before a digit, or ``fewest`` digits or more in one
    run of digits and joiners."""
    out = np.zeros(flat.size // 2, dtype=np.bool_)
    for r in range(flat.size // 2):
        run = 0
        for i in range(flat[2 * r], flat[2 * r + 1]):
            c = points[i]
            if digit[c]:
                run += 1
                if run >= fewest or (i > 0 and letter[points[i - 1]]):
                    out[r] = True
                    break
            elif not joiner[c]:
                run = 0
    return out


@njit(cache=True, nogil=True)
def _hints(points, tag, x, url):  # pragma: no cover - compiled
    """Bit 1: a tag could start here ("[", "<", "{", "**", two of "Xx"); bit 2: a URL could
    (a point before an ASCII letter, ":/", "www." or "WWW.")."""
    flags = 0
    n = points.size
    for i in range(n):
        c = points[i]
        if tag[c]:
            flags |= 1
        elif i + 1 < n:
            d = points[i + 1]
            if (c == 42 and d == 42) or (x[c] and x[d]):  # "**", "XX" "xx" "Xx" "xX"
                flags |= 1
            elif (c == 46 and url[d]) or (c == 58 and d == 47):  # ".a", ":/"
                flags |= 2
            elif c == 46 and i >= 3:
                a, b, e = points[i - 3], points[i - 2], points[i - 1]
                if (a == b == e == 119) or (a == b == e == 87):  # "www." "WWW."
                    flags |= 2
        if flags == 3:
            break
    return flags


def text_hints(points: NDArray[np.uint32]) -> int:
    """Whether a text (its :func:`code_points`) may hold a redaction tag (bit 1) or a URL
    (bit 2) for the scrub step; a bit is clear only when the text holds none of the
    characters such a match starts with."""
    return int(_hints(points, *_hint_tables()))


@cache
def _hint_tables() -> tuple[NDArray[np.bool_], ...]:
    tag = np.zeros(_N_CODE_POINTS, dtype=np.bool_)
    tag[[ord(c) for c in "[<{"]] = True
    x = np.zeros(_N_CODE_POINTS, dtype=np.bool_)
    x[[ord("X"), ord("x")]] = True
    url = np.zeros(_N_CODE_POINTS, dtype=np.bool_)
    url[[ord(c) for c in "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"]] = True
    return tag, x, url


@cache
def _busy_tables() -> tuple[NDArray[np.bool_], ...]:
    joiner = char_class(r"\s").copy()
    joiner[[ord(c) for c in "+()-./"]] = True
    return char_class(r"\d"), joiner, _hint_tables()[2]


def digit_regions(
    points: NDArray[np.uint32], margin: int, fewest: int
) -> list[tuple[int, int, bool]]:
    """Stretches of a text (its :func:`code_points`) around its digits (``\\d``).

    Each holds every digit of a group whose neighbours are less than ``2 * margin``
    characters apart, at least ``margin`` characters on either side, and ends at white
    space (``\\s``) or the end of the text: a pattern whose matches hold a digit and
    reach at most ``margin`` characters from it, and which looks at most one character
    past a match, finds the same matches in each stretch alone as in the whole text.

    Returns
    -------
    list of (start, end, busy)
        In text order; never overlapping. ``busy`` is False when the stretch holds no
        ASCII letter right before a digit and fewer than ``fewest`` digits in every run of
        digits, white space and ``+()-./``: there no pattern of the scrub step for numbers
        can change anything (see :mod:`talkthemes.prepare.scrub`).
    """
    flat = _digit_regions(points, char_class(r"\d"), char_class(r"\s"), margin)
    if flat.size == 0:
        return []
    busy = _busy(points, flat, *_busy_tables(), fewest).tolist()
    pairs = flat.tolist()
    return list(zip(pairs[::2], pairs[1::2], busy, strict=True))


def mark_table(marks: str) -> NDArray[np.bool_]:
    """A lookup table of the code points that are pieces on their own."""
    table = np.zeros(_N_CODE_POINTS, dtype=np.bool_)
    table[[ord(c) for c in marks]] = True
    return table


@njit(cache=True, nogil=True)
def _count(text, word, mark):  # pragma: no cover - compiled
    n = 0
    inside = False
    for i in range(text.size):
        c = text[i]
        if word[c]:
            if not inside:
                n += 1
                inside = True
        else:
            inside = False
            if mark[c]:
                n += 1
    return n


@njit(cache=True, nogil=True)
def _probe(keys, vals, h):  # pragma: no cover - compiled
    mask = keys.size - 1
    j = np.int64(h & np.uint64(mask))
    while True:
        v = vals[j]
        if v == -1 or keys[j] == h:
            return j
        j = (j + 1) & mask


@njit(cache=True, nogil=True)
def _scan(text, word, mark, keys, vals, n):  # pragma: no cover - compiled
    """Pieces of ``text``: start, end, hash and id (-1 when the hash is not in the table)."""
    starts = np.empty(n, dtype=np.int64)
    ends = np.empty(n, dtype=np.int64)
    hashes = np.empty(n, dtype=np.uint64)
    ids = np.empty(n, dtype=np.int64)
    k = 0
    i = 0
    size = text.size
    while i < size:
        c = text[i]
        if word[c]:
            start = i
            h = _OFFSET
            while i < size and word[text[i]]:
                h = (h ^ np.uint64(text[i])) * _PRIME
                i += 1
            h = (h ^ np.uint64(i - start)) * _MIX
        elif mark[c]:
            start = i
            h = ((_OFFSET ^ np.uint64(c)) * _PRIME ^ np.uint64(1)) * _MIX
            i += 1
        else:
            i += 1
            continue
        starts[k] = start
        ends[k] = i
        hashes[k] = h
        j = _probe(keys, vals, h)
        ids[k] = vals[j] if vals[j] != -1 and keys[j] == h else -1
        k += 1
    return starts, ends, hashes, ids


@njit(cache=True, nogil=True)
def _insert(keys, vals, hashes, ids):  # pragma: no cover - compiled
    for i in range(hashes.size):
        j = _probe(keys, vals, hashes[i])
        keys[j] = hashes[i]
        vals[j] = ids[i]


class PieceScanner:
    """Split texts into :data:`~talkthemes.prepare.words.PIECES` and give each piece an id.

    Parameters
    ----------
    marks : str
        The characters that are pieces on their own (the pattern's second branch).

    Ids are handed out by the caller's ``new_id(piece)`` the first time a piece is met and
    are remembered by the piece's hash from then on.
    """

    def __init__(self, marks: str) -> None:
        self.marks = marks
        self._word = word_chars()
        self._mark = mark_table(marks)
        self._keys = np.zeros(1024, dtype=np.uint64)
        self._vals = np.full(1024, _EMPTY, dtype=np.int64)
        self._size = 0

    def __getstate__(self) -> dict[str, object]:
        # the two code-point tables are rebuilt on arrival rather than sent (2 MB)
        state = self.__dict__.copy()
        del state["_word"], state["_mark"]
        return state

    def __setstate__(self, state: dict[str, object]) -> None:
        self.__dict__.update(state)
        self._word = word_chars()
        self._mark = mark_table(self.marks)

    def ids(self, text: str, new_id: Callable[[str], int]) -> NDArray[np.int64]:
        """The id of every piece of ``text``, in order.

        Parameters
        ----------
        text : str
        new_id : callable
            Called with a piece not met before (as a string); returns its id.

        Returns
        -------
        ndarray of int64
        """
        points = code_points(text)
        n = _count(points, self._word, self._mark)
        starts, ends, hashes, ids = _scan(points, self._word, self._mark, self._keys, self._vals, n)
        missing = np.flatnonzero(ids < 0)
        if missing.size:
            # each new piece cut out once, however often the text says it, and met in
            # the order of the text (ids are handed out in that order)
            new, first, inverse = np.unique(hashes[missing], return_index=True, return_inverse=True)
            order = np.argsort(first, kind="stable")
            at = missing[first[order]]
            made = np.empty(new.size, dtype=np.int64)
            cuts = zip(starts[at].tolist(), ends[at].tolist(), strict=True)
            made[order] = np.fromiter(
                (new_id(text[a:b]) for a, b in cuts), dtype=np.int64, count=at.size
            )
            ids[missing] = made[inverse.ravel()]
            self._add(new, made)
        return ids

    def _add(self, hashes: NDArray[np.uint64], ids: NDArray[np.int64]) -> None:
        self._size += hashes.size
        if 2 * self._size > self._keys.size:
            cap = self._keys.size
            while 2 * self._size > cap:
                cap *= 2
            used = self._vals != _EMPTY
            old_keys, old_vals = self._keys[used], self._vals[used]
            self._keys = np.zeros(cap, dtype=np.uint64)
            self._vals = np.full(cap, _EMPTY, dtype=np.int64)
            _insert(self._keys, self._vals, old_keys, old_vals)
        _insert(self._keys, self._vals, hashes, ids)


def warm_up() -> None:
    """Load every compiled scan and build its tables (a tenth of a second or two, once a
    process; see :mod:`talkthemes.prepare.warm`)."""
    points = code_points("Warm up: www.x [y] 12 345 678.")
    text_hints(points)
    digit_regions(points, 64, 5)
    PieceScanner(".\n").ids("warm up. warm", lambda piece: 0)
