"""Step 2b, names, over the corpus: decide the suspect and capitalised tokens.

The per-transcript phase (:func:`talkthemes.prepare.names.mark_names`) removes the names it is
sure of and gives the others a provisional term (:func:`~talkthemes.prepare.names.name_type`).
Here the corpus decides (rule 5 of :mod:`talkthemes.prepare.names`):

* a *suspect* token keeps its term when the corpus uses that term as a word — the term
  occurs, outside names, in at least ``vocab_min_docs`` transcripts; otherwise it is removed;
* a *capitalised* token is removed when its word was given as a name (by a speaker label or a
  cue) in at least :data:`~talkthemes.prepare.names.MIN_NAMED_TRANSCRIPTS` transcripts, and
  keeps its term otherwise.

:func:`resolve_names` applies a decision to the token stream (the chain and a frozen prep
both call it); :func:`names_step` is the corpus step with its ``--explain`` section. The
decisions are saved with the prep (``prep.json``: ``names.in_use``, the terms kept, and
``names.named``, the names given, as hashes) so a published version prepares new text the
same way.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Iterable, Mapping
from typing import Any

import numpy as np
from numpy.typing import NDArray

from talkthemes.config import PrepareSettings
from talkthemes.prepare.filter import NAME
from talkthemes.prepare.names import MIN_NAMED_TRANSCRIPTS, NameLexicon, parse_name_type
from talkthemes.prepare.table import TokenTable

__all__ = [
    "frozen_keep",
    "in_use_terms",
    "name_hash",
    "named_hashes",
    "names_step",
    "resolve_names",
]

#: Names and words listed by ``--explain``.
_MAX_LISTED = 30


def name_hash(word: str) -> str:
    """A short, stable hash of a name (lower-cased), as saved with a prep: the prep records
    which words were names without writing the names down."""
    return hashlib.blake2b(word.lower().encode("utf-8"), digest_size=8).hexdigest()


def resolve_names(
    types: list[str],
    tokens: NDArray[np.integer],
    breaks: NDArray[np.bool_],
    sent_kept: NDArray[np.integer],
    keep: Callable[[str, str, str], bool],
    sent_stats: NDArray[np.integer] | None = None,
) -> tuple[
    list[str], NDArray[np.int32], NDArray[np.bool_], NDArray[np.int64], dict[tuple[str, str], int]
]:
    """Give each suspect or capitalised token its term, or remove it.

    Parameters
    ----------
    types : list of str
        Term strings by id, provisional name terms among them.
    tokens, breaks : ndarray, shape (n,)
        Term ids and run starts (a removed token parts its neighbours).
    sent_kept : ndarray of int, shape (S,)
        Tokens per sentence; sums to n.
    keep : callable
        ``keep(kind, word, term)`` → whether the token keeps ``term`` (kind ``"s"`` or
        ``"c"``).
    sent_stats : ndarray, shape (S, len(STAT_COLUMNS)), optional
        Removed tokens are added to the name column, in place.

    Returns
    -------
    types, tokens, breaks, sent_kept
        With no provisional name term left (their terms appended where new).
    removed : dict of (str, str) to int
        Tokens removed per ``(kind, word)``.
    """
    tokens = np.asarray(tokens)
    sent_kept = np.asarray(sent_kept, dtype=np.int64)
    parsed = [parse_name_type(t) for t in types]
    if not any(parsed):
        return types, tokens.astype(np.int32), breaks, sent_kept, {}
    out_types = [t for t, p in zip(types, parsed, strict=True) if p is None]
    index = {t: i for i, t in enumerate(out_types)}
    remap = np.full(len(types), -1, dtype=np.int64)
    provisional = np.zeros(len(types), dtype=bool)
    gone = np.zeros(len(types), dtype=bool)
    words: dict[int, tuple[str, str]] = {}
    for i, (t, p) in enumerate(zip(types, parsed, strict=True)):
        if p is None:
            remap[i] = index[t]
            continue
        provisional[i] = True
        kind, word, term = p
        if keep(kind, word, term):
            j = index.get(term)
            if j is None:
                j = index[term] = len(out_types)
                out_types.append(term)
            remap[i] = j
        else:
            gone[i] = True
            words[i] = (kind, word)
    # only the provisional tokens need work (a small share of the stream)
    at = np.flatnonzero(provisional[tokens])
    drop = at[gone[tokens[at]]]
    removed: dict[tuple[str, str], int] = {}
    breaks = np.asarray(breaks, dtype=bool)
    if drop.size:
        counts = np.bincount(tokens[drop], minlength=len(types))
        for i in np.flatnonzero(counts).tolist():
            removed[words[i]] = removed.get(words[i], 0) + int(counts[i])
        sentence = np.searchsorted(np.cumsum(sent_kept), drop, side="right")
        lost = np.bincount(sentence, minlength=sent_kept.size)
        if sent_stats is not None and sent_stats.shape[1] > NAME:
            sent_stats[:, NAME] += lost.astype(sent_stats.dtype)
        keep_mask = np.ones(tokens.size, dtype=bool)
        keep_mask[drop] = False
        # a removed name parts its neighbours: the token after a run of removed ones starts
        # a run (its place in the new stream: its old place less the tokens removed before)
        last = np.ones(drop.size, dtype=bool)
        last[:-1] = drop[1:] != drop[:-1] + 1
        last &= drop + 1 < tokens.size
        breaks = breaks[keep_mask]
        breaks[(drop - np.arange(drop.size))[last]] = True
        sent_kept = sent_kept - lost
        tokens = tokens[keep_mask]
    return out_types, remap.astype(np.int32)[tokens], breaks, sent_kept, removed


def _doc_freq(table: TokenTable, ids: NDArray[np.int64]) -> NDArray[np.int64]:
    """Transcripts in which each of the term ids ``ids`` occurs."""
    if ids.size == 0 or table.tokens.size == 0:
        return np.zeros(ids.size, dtype=np.int64)
    want = np.full(len(table.types), -1, dtype=np.int32)  # int32: one per corpus token
    want[ids] = np.arange(ids.size)
    slot = want[table.tokens]
    hit = np.flatnonzero(slot >= 0)
    doc = np.searchsorted(np.cumsum(table.per_doc(table.sent_kept)), hit, side="right")
    pairs = np.unique(doc * ids.size + slot[hit].astype(np.int64))
    return np.bincount(pairs % ids.size, minlength=ids.size).astype(np.int64)


def names_step(
    table: TokenTable,
    settings: PrepareSettings,
    *,
    lexicon: NameLexicon | None,
    found: Mapping[tuple[str, str], int],
    named: Mapping[str, int],
) -> TokenTable:
    """Decide the provisional name tokens (rule 5) and report what the names step did.

    Parameters
    ----------
    table : TokenTable
    settings : PrepareSettings
    lexicon : NameLexicon or None
        None when the step is off.
    found : mapping
        ``(source, word)`` → tokens removed in the per-transcript phase (source ``cue`` or
        ``known``).
    named : mapping of str to int
        Word → transcripts in which a label or a cue gave it as a name.
    """
    report: dict[str, Any] = {"enabled": lexicon is not None}
    table.report["names"] = report
    table.saved["names"] = {"in_use": [], "named": []}
    if lexicon is None:
        report.update(tokens_removed=0, removed={}, top=[], kept_as_words=[], emptied=0)
        return table
    min_docs = settings.vocab_min_docs
    given = sorted(w for w, n in named.items() if n >= MIN_NAMED_TRANSCRIPTS)
    given_set = frozenset(given)
    parsed = {i: p for i, t in enumerate(table.types) if (p := parse_name_type(t)) is not None}
    terms = sorted({p[2] for p in parsed.values() if p[0] == "s"})
    index = {t: i for i, t in enumerate(table.types)}
    ids = np.asarray([index.get(t, -1) for t in terms], dtype=np.int64)
    df = np.zeros(len(terms), dtype=np.int64)
    present = ids >= 0
    df[present] = _doc_freq(table, ids[present])
    in_use = {t: int(d) for t, d in zip(terms, df.tolist(), strict=True) if d >= min_docs}

    def keep(kind: str, word: str, term: str) -> bool:
        return term in in_use if kind == "s" else word not in given_set

    before = table.per_doc(table.sent_kept)
    table.types, table.tokens, table.breaks, table.sent_kept, removed = resolve_names(
        table.types, table.tokens, table.breaks, table.sent_kept, keep, table.sent_stats
    )
    after = table.per_doc(table.sent_kept)
    direct = table.per_doc(table.sent_stats[:, NAME]) if table.sent_stats.size else after * 0
    table.emptied["names"] = (
        (after == 0) & ((before > after) | (direct > 0)) & (table.per_doc(table.sent_words) > 0)
    )
    by_word: dict[str, int] = {}
    per_source = {"cue": 0, "known": 0, "suspect": 0, "capitalised": 0}
    kinds = {"s": "suspect", "c": "capitalised"}
    resolved = {(kinds[k], w): n for (k, w), n in removed.items()}
    for (source, word), n in [*found.items(), *resolved.items()]:
        by_word[word] = by_word.get(word, 0) + n
        per_source[source] = per_source.get(source, 0) + n
    top = sorted(by_word.items(), key=lambda x: (-x[1], x[0]))[:_MAX_LISTED]
    table.removed_names = frozenset(by_word)
    kept_words = sorted(in_use.items(), key=lambda x: (-x[1], x[0]))
    report.update(
        min_docs=min_docs,
        removed=per_source,
        tokens_removed=int(sum(per_source.values())),
        distinct=len(by_word),
        named=len(given),
        top=[{"name": w, "count": n} for w, n in top],
        kept_as_words=[{"word": w, "transcripts": d} for w, d in kept_words[:_MAX_LISTED]],
        ordinary=_ordinary_first_names(table, lexicon),
        emptied=int(table.emptied["names"].sum()),
    )
    table.saved["names"] = {
        "in_use": sorted(in_use),
        "named": sorted(name_hash(w) for w in given),
    }
    return table


def _ordinary_first_names(table: TokenTable, lexicon: NameLexicon) -> list[dict[str, Any]]:
    """First names kept as ordinary words (``bill``, ``grace``), the most frequent first."""
    wanted = [
        (i, t) for i, t in enumerate(table.types) if t in lexicon.first and t in lexicon.ordinary
    ]
    if not wanted or table.tokens.size == 0:
        return []
    counts = np.bincount(table.tokens, minlength=len(table.types))
    rows = [(t, int(counts[i])) for i, t in wanted if counts[i] > 0]
    rows.sort(key=lambda x: (-x[1], x[0]))
    return [{"word": t, "count": n} for t, n in rows[:10]]


def named_hashes(info: Mapping[str, Any]) -> frozenset[str]:
    """The hashed names saved with a prep (empty for older preps)."""
    names = info.get("names") or {}
    return frozenset(str(h) for h in names.get("named", ()))


def in_use_terms(info: Mapping[str, Any]) -> frozenset[str]:
    """The suspect terms a prep kept as words (empty for older preps)."""
    names = info.get("names") or {}
    return frozenset(str(t) for t in names.get("in_use", ()))


def frozen_keep(in_use: Iterable[str], named: Iterable[str]) -> Callable[[str, str, str], bool]:
    """The decision of a saved prep, for :func:`resolve_names` (see the module notes)."""
    use = frozenset(in_use)
    hashes = frozenset(named)

    def keep(kind: str, word: str, term: str) -> bool:
        return term in use if kind == "s" else name_hash(word) not in hashes

    return keep
