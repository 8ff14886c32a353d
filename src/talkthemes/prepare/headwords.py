"""Step 4, lemmas, the checks on the lookup table: headwords and names.

spaCy's lookup lemma table maps each word form to one lemma, without knowing the part of
speech. For a word that is a dictionary word in its own right it then often picks the wrong
one: ``number`` → ``numb`` (the comparative of *numb*), ``data`` → ``datum``, ``left`` →
``leave``, ``found`` → ``find``, ``saw`` → ``see``, ``feed`` → ``fee``, ``crew`` → ``crow``,
``bit`` → ``bite``, ``first`` → ``1``. Such words often carry a whole theme. Two checks:

**Headwords, decided by the corpus.** A word *w* whose table lemma *L* differs from it is
*contested* when *w* is itself a headword:

- (a) other forms map to *w* in the same table (``numbers`` → ``number``,
  ``founded`` → ``found``), or
- (b) *w* is a base form in spaCy's lemma index (``lemma_index``, English and a few other
  languages) and is not a regular inflection of *L* (``data``/``datum``, ``lost``/``lose``;
  but not ``minutes``/``minute`` or ``used``/``use``), or
- (c) *L* is not a word at all (``first`` → ``1``).

For a contested word the corpus decides: with *said(x)* the number of times *x* and the forms
the table maps to *x* are said (the contested word itself left out of *L*'s count), *w* keeps
its own form when ``said(w) >= ratio * said(L)`` and ``said(w) > said(L)`` (``[prepare]
lemma_keep_ratio``, 2 by default: clearly more frequent); otherwise the table's lemma is used.
The check never merges two words the table keeps apart; it only keeps apart what the table
would merge, when the corpus shows that the merged form is hardly in use. Case (c) keeps *w*
whatever the counts. ``[prepare] lemma_exceptions`` fixes the lemma of any word by hand and
wins over both.

The per-transcript phase cannot know the counts, so it gives every contested word a
*provisional* term (:data:`PROVISIONAL` + the word) and counts the words the decisions need;
the corpus phase decides once and resolves the provisional terms (:func:`resolve_tokens`).
The decisions are saved with the prep, so a published version prepares new text the same
way.

**Names.** A capitalised word that does not start a sentence, and a capitalised word that
starts one but is followed by another capitalised word (``New South Wales``), is a name: it
is kept as written, lower-cased, not lemmatised (``Laden`` stays ``laden``, not ``lade``).
Text that is all lower case (as many speech recognisers write it) has no capitals, so the
rule changes nothing there; in a sentence whose words are all capitalised (title case or
all capitals, at least :data:`ALL_CAPS_MIN_WORDS` words) the capitals carry no information
and the rule is off. Languages that capitalise every noun (German, Luxembourgish) do not use
it.

``docs/prepare.md`` (section "4. lemmas") gives the measured effect: the decisions on the
demo and the Lee corpus, and the agreement with an outside lemmatiser before and after.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cache
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import NDArray

from talkthemes.prepare.filter import KEEP, LEMMATISED, TokenFilter
from talkthemes.prepare.lexicon import load_lemma_table, load_lookup_data, lookup_tables
from talkthemes.prepare.lexicon_cache import cached

__all__ = [
    "ALL_CAPS_MIN_WORDS",
    "NOUNS_CAPITALISED",
    "PROVISIONAL",
    "Decision",
    "Headwords",
    "capitalised",
    "headwords_for",
    "lemma_index_by_pos",
    "load_lemma_index",
    "load_lemma_rules",
    "name_flags",
    "regular_inflection",
    "resolve_tokens",
]

#: Prefix of a provisional term: a contested word waiting for the corpus's decision.
PROVISIONAL = "\x1f"
#: Languages that capitalise every noun: the name rule is off for them.
NOUNS_CAPITALISED = frozenset({"de", "lb"})
#: A sentence of at least this many words, all capitalised, gets no names.
ALL_CAPS_MIN_WORDS = 4

# English inflections spaCy's rules leave out (y → ied, doubled consonants).
_EN_SUFFIXES = ("s", "es", "ed", "d", "ing", "er", "est", "r", "st")


@cache
def load_lemma_index(lang: str) -> frozenset[str]:
    """The base forms of spaCy's ``lemma_index`` table, every part of speech (empty when
    spacy-lookups-data ships none for the language)."""
    return frozenset().union(*lemma_index_by_pos(lang).values())


@cache
def lemma_index_by_pos(lang: str) -> dict[str, frozenset[str]]:
    """The base forms of spaCy's ``lemma_index`` table by part of speech (``noun``,
    ``verb``, ``adj``, ``adv``), lower-cased; empty when none is shipped."""
    tables = lookup_tables().get(lang)
    if not isinstance(tables, dict) or "lemma_index" not in tables:
        return {}
    data = load_lookup_data(tables["lemma_index"])
    return {str(pos): frozenset(w.lower() for w in words) for pos, words in data.items()}


@cache
def load_lemma_rules(lang: str) -> tuple[tuple[str, str], ...]:
    """spaCy's suffix rules (``lemma_rules``: old ending → new ending), every part of speech."""
    tables = lookup_tables().get(lang)
    if not isinstance(tables, dict) or "lemma_rules" not in tables:
        return ()
    data = load_lookup_data(tables["lemma_rules"])
    rules = {(str(o), str(n)) for pairs in data.values() for o, n in pairs if o}
    return tuple(sorted(rules))


def regular_inflection(
    word: str, lemma: str, rules: Sequence[tuple[str, str]], lang: str = "en"
) -> bool:
    """Whether ``word`` is ``lemma`` with a regular ending (``minutes``/``minute``).

    spaCy's suffix rules for the language, read backwards; for English also the endings
    they leave out (``verified``/``verify``, ``stopped``/``stop``, ``bigger``/``big``).
    """
    for old, new in rules:
        if word.endswith(old) and word[: len(word) - len(old)] + new == lemma:
            return True
    if lang != "en" or not lemma:
        return False
    for suffix in _EN_SUFFIXES:
        if word in (lemma + suffix, lemma + lemma[-1] + suffix):
            return True
    if lemma.endswith("e") and word == lemma[:-1] + "ing":
        return True
    stem = lemma[:-1]
    return lemma.endswith("y") and word in (stem + "ies", stem + "ied", stem + "ier", stem + "iest")


class Decision(NamedTuple):
    """What the corpus decided for one contested word.

    Attributes
    ----------
    word : str
        The word as said (lower-cased).
    table : str
        The lookup table's lemma.
    lemma : str
        The lemma used.
    said : int
        Times the word and the forms the table maps to it were said.
    table_said : int
        Times the table's lemma and the forms mapped to it (the word left out) were said.
    """

    word: str
    table: str
    lemma: str
    said: int
    table_said: int


@dataclass(frozen=True)
class Headwords:
    """The contested words of a lemma table (see the module notes).

    Attributes
    ----------
    contested : dict of str to str
        Contested word → the table's lemma.
    forms : dict of str to tuple of str
        For each contested word and each of their table lemmas, the forms whose count is its
        evidence (itself and the forms the table maps to it).
    always : frozenset of str
        Contested words kept whatever the counts (the table's lemma is not a word).
    ratio : float
        ``[prepare] lemma_keep_ratio``.
    """

    contested: dict[str, str] = field(default_factory=dict)
    forms: dict[str, tuple[str, ...]] = field(default_factory=dict)
    always: frozenset[str] = frozenset()
    ratio: float = 2.0

    @classmethod
    def build(
        cls,
        table: Mapping[str, str],
        *,
        index: Iterable[str] = (),
        rules: Sequence[tuple[str, str]] = (),
        lang: str = "en",
        ratio: float = 2.0,
    ) -> Headwords:
        """Find the contested words of a table.

        Parameters
        ----------
        table : mapping of str to str
            The lookup table (word → lemma).
        index : iterable of str
            Base forms of the language (:func:`load_lemma_index`).
        rules : sequence of (str, str)
            Suffix rules (:func:`load_lemma_rules`).
        lang : str
        ratio : float
            ``[prepare] lemma_keep_ratio``; 0 or less finds nothing (follow the table).
        """
        if ratio <= 0:
            return cls(ratio=ratio)
        lower: dict[str, str] = {}
        for key, value in table.items():
            k, v = key.lower(), value.lower()
            if lower.setdefault(k, v) != v:
                lower[k] = ""  # keys that differ only by case disagree: leave them alone
        inverse: dict[str, list[str]] = {}
        for k, v in lower.items():
            if v and k != v:
                inverse.setdefault(v, []).append(k)
        base = frozenset(index)
        contested: dict[str, str] = {}
        always: set[str] = set()
        for word, lemma in lower.items():
            if not lemma or lemma == word or not word.isalpha():
                continue
            if not lemma.isalpha():
                contested[word] = lemma
                always.add(word)
            elif word in inverse or (
                word in base and not regular_inflection(word, lemma, rules, lang)
            ):
                contested[word] = lemma
        forms: dict[str, tuple[str, ...]] = {}
        for word, lemma in contested.items():
            forms[word] = (word, *sorted(inverse.get(word, ())))
            forms.setdefault(lemma, (lemma, *sorted(inverse.get(lemma, ()))))
        return cls(contested, forms, frozenset(always), ratio)

    @property
    def relevant(self) -> frozenset[str]:
        """The words whose counts the decisions need."""
        return frozenset(w for forms in self.forms.values() for w in forms)

    def said(self, word: str, counts: Mapping[str, int], leave_out: str = "") -> int:
        """Times ``word`` and the forms the table maps to it were said."""
        return sum(counts.get(f, 0) for f in self.forms.get(word, (word,)) if f != leave_out)

    def decide(self, word: str, counts: Mapping[str, int]) -> Decision:
        """Decide the lemma of a contested word from the corpus's counts.

        Parameters
        ----------
        word : str
            A contested word (lower-cased).
        counts : mapping of str to int
            Times each word was said (lower-cased; names not counted). With no counts the
            table's lemma is used (except for the words kept whatever the counts).
        """
        table = self.contested.get(word, word)
        said = self.said(word, counts)
        table_said = self.said(table, counts, leave_out=word)
        keep = word in self.always or (said > table_said and said >= self.ratio * table_said)
        return Decision(word, table, word if keep else table, said, table_said)


def headwords_for(lang: str, ratio: float) -> Headwords:
    """:meth:`Headwords.build` for a language's own tables (table, index, rules), kept on
    disk between runs (:mod:`talkthemes.prepare.lexicon_cache`): the scan of a large table
    takes seconds.

    Parameters
    ----------
    lang : str
    ratio : float
        ``[prepare] lemma_keep_ratio``; 0 or less finds nothing (follow the table).
    """
    if ratio <= 0:
        return Headwords(ratio=ratio)

    def build() -> Headwords:
        return Headwords.build(
            load_lemma_table(lang),
            index=load_lemma_index(lang),
            rules=load_lemma_rules(lang),
            lang=lang,
            ratio=ratio,
        )

    found = cached(
        "headwords", lang, ("lemma_lookup", "lemma_index", "lemma_rules"), build, _dump, _load
    )
    return Headwords(found.contested, found.forms, found.always, ratio)


def _dump(h: Headwords) -> dict[str, Any]:
    return {
        "contested": h.contested,
        "forms": {k: list(v) for k, v in h.forms.items()},
        "always": sorted(h.always),
    }


def _load(value: Any) -> Headwords:
    contested, forms, always = value["contested"], value["forms"], value["always"]
    if not (isinstance(contested, dict) and isinstance(forms, dict) and isinstance(always, list)):
        raise TypeError("not the fields of a Headwords")
    words = [*contested, *contested.values(), *forms, *always]
    words += [w for f in forms.values() for w in (f if isinstance(f, list) else [None])]
    if not all(isinstance(w, str) for w in words):
        raise TypeError("not words")
    return Headwords(contested, {k: tuple(v) for k, v in forms.items()}, frozenset(always))


def capitalised(word: str) -> bool:
    """Whether a word is written with a capital (``Laden``, ``UK``), the pronoun I aside."""
    return word[:1].isupper() and word != "I"


def name_flags(words: Sequence[str]) -> list[bool]:
    """Which words of one sentence are names (see the module notes).

    Parameters
    ----------
    words : sequence of str
        The sentence's words as written.

    Returns
    -------
    list of bool
    """
    caps = [capitalised(w) for w in words]
    if len(words) >= ALL_CAPS_MIN_WORDS and all(caps):
        return [False] * len(words)
    out = [c and i > 0 for i, c in enumerate(caps)]
    if len(caps) > 1 and caps[0] and caps[1]:
        out[0] = True
    return out


def resolve_tokens(
    types: list[str],
    tokens: NDArray[np.integer],
    breaks: NDArray[np.bool_],
    sent_kept: NDArray[np.integer],
    choose: Callable[[str], str],
    token_filter: TokenFilter,
    sent_stats: NDArray[np.integer] | None = None,
) -> tuple[list[str], NDArray[np.int32], NDArray[np.bool_], NDArray[np.int64]]:
    """Replace the provisional terms by the decided lemmas; drop those the filter drops.

    The one place where decisions are applied: the chain (:mod:`talkthemes.prepare.assemble`)
    and a frozen prep (:mod:`talkthemes.prepare.frozen`) both call it.

    Parameters
    ----------
    types : list of str
        Term strings by id, provisional ones among them.
    tokens : ndarray of int, shape (n,)
    breaks : ndarray of bool, shape (n,)
        Run starts (see :attr:`talkthemes.prepare.lemmas.Encoded.breaks`).
    sent_kept : ndarray of int, shape (S,)
        Tokens per sentence; sums to n.
    choose : callable
        Word (lower-cased) → its lemma.
    token_filter : TokenFilter
        Applied to the decided lemma: a contested word may turn out to be a stop word.
    sent_stats : ndarray of int, shape (S, len(STAT_COLUMNS)), optional
        Updated in place: dropped tokens under their reason, changed forms under
        "lemmatised".

    Returns
    -------
    types, tokens, breaks, sent_kept
        With no provisional term left; the types keep their order (provisional ones
        removed, new lemmas appended).
    """
    tokens = np.asarray(tokens)  # int32 kept: this runs over the whole token stream
    sent_kept = np.asarray(sent_kept, dtype=np.int64)
    provisional = [i for i, t in enumerate(types) if t.startswith(PROVISIONAL)]
    if not provisional:
        return types, tokens.astype(np.int32), breaks, sent_kept
    out_types = [t for t in types if not t.startswith(PROVISIONAL)]
    index = {t: i for i, t in enumerate(out_types)}
    remap = np.full(len(types), -1, dtype=np.int64)
    reason = np.zeros(len(types), dtype=np.int64)
    soft = np.zeros(len(types), dtype=bool)
    changed = np.zeros(len(types), dtype=bool)
    for i, t in enumerate(types):
        if not t.startswith(PROVISIONAL):
            remap[i] = index[t]
    for i in provisional:
        word = types[i][len(PROVISIONAL) :]
        lemma = choose(word)
        why = token_filter.reason(lemma, word)
        if why == KEEP:
            j = index.get(lemma)
            if j is None:
                j = index[lemma] = len(out_types)
                out_types.append(lemma)
            remap[i] = j
            changed[i] = lemma != word
        else:
            reason[i] = why
            soft[i] = token_filter.is_filler(lemma, word)
    # only the provisional tokens need work (a small share of the stream)
    is_provisional = np.zeros(len(types), dtype=bool)
    is_provisional[provisional] = True
    at = np.flatnonzero(is_provisional[tokens])
    term = tokens[at]
    why = reason[term]
    sentence = np.repeat(np.arange(sent_kept.size), sent_kept)[at]
    if sent_stats is not None:
        width = sent_stats.shape[1]
        columns = [(int(r), why == r) for r in np.unique(why[why > 0])]
        for col, mask in (*columns, (LEMMATISED, (why == 0) & changed[term])):
            if col < width and mask.any():
                sent_stats[:, col] += np.bincount(sentence[mask], minlength=sent_kept.size).astype(
                    sent_stats.dtype
                )
    gone = why > 0
    if gone.any():
        # a dropped word parts its neighbours unless it is a filler; a break before it
        # carries on to the next kept token. Worked out on the dropped positions only
        # (sorted; consecutive ones form a run whose next position is the kept token).
        drop = at[gone]
        parts = ~soft[tokens[drop]] | breaks[drop]
        run_starts = np.ones(drop.size, dtype=bool)
        run_starts[1:] = np.diff(drop) != 1
        run_id = np.cumsum(run_starts) - 1
        after = drop[np.append(run_starts[1:], True)] + 1  # the position after each run
        parted = np.bincount(run_id, weights=parts, minlength=after.size) > 0
        hit = after[parted & (after < tokens.size)]
        breaks = np.array(breaks, dtype=bool, copy=True)
        breaks[hit] = True
        keep = np.ones(tokens.size, dtype=bool)
        keep[drop] = False
        breaks = breaks[keep]
        sent_kept = sent_kept - np.bincount(sentence[gone], minlength=sent_kept.size)
        tokens = tokens[keep]
    return out_types, remap.astype(np.int32)[tokens], breaks, sent_kept
