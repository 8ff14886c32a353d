"""The corpus phase of the chain: boilerplate, phrases, vocabulary, minimum length.

These steps need the whole corpus, so they run in the main process over the integer arrays
that the per-transcript phase (:mod:`talkthemes.prepare.chain`) collected: each takes the
token table and returns a smaller one, and records what it removed or joined for
``prepare --explain``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from functools import partial
from typing import Any

import numpy as np
from numpy.typing import NDArray

from talkthemes.config import PrepareSettings
from talkthemes.errors import InputError
from talkthemes.prepare.boilerplate import find_boilerplate
from talkthemes.prepare.corpus import OOV, PreparedCorpus
from talkthemes.prepare.filter import LEMMATISED, POS, STAT_COLUMNS
from talkthemes.prepare.headwords import PROVISIONAL, Decision, resolve_tokens
from talkthemes.prepare.phrases import join_runs, learn_phrases, run_lengths
from talkthemes.prepare.scrub import SCRUB_KINDS
from talkthemes.prepare.vocabulary import VocabularyCut, doc_term_matrix, prune_vocabulary

__all__ = [
    "Collected",
    "CorpusStep",
    "ProgressFn",
    "TokenTable",
    "boilerplate_step",
    "filter_step",
    "finish",
    "lemma_step",
    "phrases_step",
    "report_progress",
    "start_table",
    "vocabulary_step",
]

#: ``progress(stage, done, total)``; see :data:`talkthemes.prepare.chain.STAGES`.
ProgressFn = Callable[[str, int, int], None]


class Collected:
    """What the main process keeps from every batch: integer arrays and small tables."""

    def __init__(self) -> None:
        self.tids: list[str] = []
        self.type_ids: dict[str, int] = {}
        self.types: list[str] = []
        self.parts: dict[str, list[NDArray[Any]]] = {
            k: []
            for k in (
                "doc_sentences",
                "doc_roles_removed",
                "doc_scrub_removed",
                "sent_words",
                "sent_keys",
                "sent_stats",
                "sent_kept",
                "tokens",
                "breaks",
            )
        }
        self.turns = 0
        self.turns_dropped = 0
        self.scrub_counts: dict[str, int] = dict.fromkeys(SCRUB_KINDS, 0)
        self.key_texts: dict[int, str] = {}
        self.word_counts: dict[str, int] = {}
        self.names: dict[tuple[str, str], int] = {}

    def add(self, res: Any) -> None:
        """Merge one :class:`~talkthemes.prepare.chain.BatchResult`."""
        ids = self.type_ids
        glob = np.empty(len(res.types), dtype=np.int32)
        for i, t in enumerate(res.types):
            g = ids.get(t)
            if g is None:
                g = ids[t] = len(self.types)
                self.types.append(t)
            glob[i] = g
        self.tids.extend(res.tids)
        p = self.parts
        p["doc_sentences"].append(res.doc_sentences)
        p["doc_roles_removed"].append(res.doc_roles_removed)
        p["doc_scrub_removed"].append(res.doc_scrub_removed)
        p["sent_words"].append(res.sent_words)
        p["sent_keys"].append(res.sent_keys)
        p["sent_stats"].append(res.sent_stats)
        p["sent_kept"].append(res.sent_kept)
        p["tokens"].append(glob[res.ids] if res.ids.size else res.ids)
        p["breaks"].append(res.breaks)
        self.turns += res.turns
        self.turns_dropped += res.turns_dropped
        for k, v in res.scrub_counts.items():
            self.scrub_counts[k] = self.scrub_counts.get(k, 0) + v
        for k, t in res.key_texts.items():
            self.key_texts.setdefault(k, t)
        for w, n in res.word_counts.items():
            self.word_counts[w] = self.word_counts.get(w, 0) + n
        for name, n in res.names.items():
            self.names[name] = self.names.get(name, 0) + n

    def array(self, name: str) -> NDArray[Any]:
        """Concatenate (and release) the collected parts of one array."""
        parts = self.parts.pop(name)
        if not parts:
            width = len(STAT_COLUMNS)
            dtype = np.int64 if name == "sent_keys" else bool if name == "breaks" else np.int32
            return np.zeros((0, width) if name == "sent_stats" else 0, dtype=dtype)
        return np.concatenate(parts)


def report_progress(progress: ProgressFn | None, stage: str, done: int, total: int) -> None:
    """Call ``progress`` when given."""
    if progress is not None:
        progress(stage, done, total)


@dataclass
class TokenTable:
    """The corpus phase's state: every transcript's kept tokens, sentence by sentence.

    Each corpus step takes the table and returns it with fewer or joined tokens, and adds
    its section to :attr:`report`.

    Attributes
    ----------
    tids : list of str
        Transcript ids, in store order.
    types : list of str
        Term strings by id.
    tokens : ndarray of int32
        Kept term ids, transcript by transcript, sentence by sentence.
    breaks : ndarray of bool
        One per token: True where a run of adjacent words starts (see
        :attr:`talkthemes.prepare.lemmas.Encoded.breaks`).
    sent_doc : ndarray of int64
        Transcript number of each sentence.
    sent_words : ndarray of int64
        Words of each sentence before the filter.
    sent_keys : ndarray of int64
        Boilerplate key of each sentence (0: too short).
    sent_stats : ndarray of int32, shape (S, len(STAT_COLUMNS))
        Filter counts of each sentence.
    sent_kept : ndarray of int64
        Tokens of each sentence in :attr:`tokens`.
    emptied : dict of str to ndarray of bool
        Transcripts left without text by each step so far, in step order.
    report : dict
        The ``--explain`` sections written so far.
    """

    tids: list[str]
    types: list[str]
    tokens: NDArray[np.int32]
    breaks: NDArray[np.bool_]
    sent_doc: NDArray[np.int64]
    sent_words: NDArray[np.int64]
    sent_keys: NDArray[np.int64]
    sent_stats: NDArray[np.int32]
    sent_kept: NDArray[np.int64]
    emptied: dict[str, NDArray[np.bool_]] = field(default_factory=dict)
    report: dict[str, Any] = field(default_factory=dict)

    @property
    def n_docs(self) -> int:
        return len(self.tids)

    def per_doc(self, per_sentence: NDArray[np.integer]) -> NDArray[np.int64]:
        """Sum a per-sentence count over each transcript."""
        return np.bincount(self.sent_doc, weights=per_sentence, minlength=self.n_docs).astype(
            np.int64
        )


#: A corpus step: takes the table and the settings, returns the table.
CorpusStep = Callable[[TokenTable, PrepareSettings], TokenTable]


def start_table(col: Collected, settings: PrepareSettings) -> TokenTable:
    """The table after the per-transcript steps, with the roles and scrub report."""
    n_docs = len(col.tids)
    roles_removed = col.array("doc_roles_removed").astype(np.int64)
    scrub_removed = col.array("doc_scrub_removed").astype(np.int64)
    table = TokenTable(
        tids=col.tids,
        types=list(col.types),
        sent_doc=np.repeat(np.arange(n_docs), col.array("doc_sentences").astype(np.int64)),
        sent_words=col.array("sent_words").astype(np.int64),
        sent_keys=col.array("sent_keys"),
        sent_stats=col.array("sent_stats"),
        sent_kept=col.array("sent_kept").astype(np.int64),
        tokens=col.array("tokens"),
        breaks=col.array("breaks"),
    )
    words = table.per_doc(table.sent_words)
    table.emptied["roles"] = (words + scrub_removed) == 0
    table.emptied["scrub"] = ~table.emptied["roles"] & (words == 0)
    table.report["roles"] = {
        "setting": settings.roles,
        "turns": col.turns,
        "turns_dropped": col.turns_dropped,
        "words_removed": int(roles_removed.sum()),
        "emptied": int(table.emptied["roles"].sum()),
    }
    table.report["scrub"] = {
        "enabled": settings.scrub,
        "removed": dict(col.scrub_counts),
        "words_removed": int(scrub_removed.sum()),
        "emptied": int(table.emptied["scrub"].sum()),
    }
    return table


def boilerplate_step(
    table: TokenTable,
    settings: PrepareSettings,
    *,
    known_texts: dict[int, str] | None = None,
    texts_for: Callable[[set[int]], dict[int, str]] | None = None,
) -> TokenTable:
    """Drop the sentences found in at least ``boilerplate_min_share`` of the transcripts.

    ``known_texts`` holds the normalised texts the batches reported; ``texts_for`` finds
    the others (by reading the transcripts again).
    """
    has_text = table.per_doc(table.sent_words) > 0
    n_text = int(has_text.sum())
    keys, df = find_boilerplate(
        table.sent_doc, table.sent_keys, n_text, settings.boilerplate_min_share
    )
    masked = np.isin(table.sent_keys, keys) if keys.size else np.zeros(table.sent_keys.size, bool)
    known = known_texts or {}
    texts = {k: known[k] for k in keys.tolist() if k in known}
    missing = {k for k in keys.tolist() if k not in texts}
    if missing and texts_for is not None:
        texts.update(texts_for(missing))
    table.report["boilerplate"] = {
        "min_share": settings.boilerplate_min_share,
        "sentences": [
            {
                "sentence": texts.get(k, "(text not found)"),
                "transcripts": d,
                "share": round(d / n_text, 4) if n_text else 0.0,
            }
            for k, d in zip(keys.tolist(), df.tolist(), strict=True)
        ],
        "sentences_removed": int(masked.sum()),
        "words_removed": int(table.sent_words[masked].sum()),
    }
    kept_tokens = np.repeat(~masked, table.sent_kept)
    table.tokens = table.tokens[kept_tokens]
    table.breaks = table.breaks[kept_tokens]
    table.sent_kept = np.where(masked, 0, table.sent_kept)
    table.sent_words = np.where(masked, 0, table.sent_words)
    table.sent_stats = np.where(masked[:, None], 0, table.sent_stats)
    table.emptied["boilerplate"] = has_text & (table.per_doc(table.sent_words) == 0)
    table.report["boilerplate"]["emptied"] = int(table.emptied["boilerplate"].sum())
    return table


def lemma_step(
    table: TokenTable,
    settings: PrepareSettings,
    *,
    encoder: Any,
    counts: dict[str, int],
    names: dict[tuple[str, str], int],
) -> TokenTable:
    """Decide the contested words from the corpus's counts and resolve their provisional
    terms (see :mod:`talkthemes.prepare.headwords`); report the decisions, the exceptions
    used and the names kept as written."""
    headwords = encoder.headwords
    contested = [t[len(PROVISIONAL) :] for t in table.types if t.startswith(PROVISIONAL)]
    decisions = {w: headwords.decide(w, counts) for w in contested}
    table.types, table.tokens, table.breaks, table.sent_kept = resolve_tokens(
        table.types,
        table.tokens,
        table.breaks,
        table.sent_kept,
        lambda w: decisions[w].lemma,
        encoder.filter,
        table.sent_stats,
    )
    kept = sorted((d for d in decisions.values() if d.lemma == d.word), key=_by_said)
    followed = sorted((d for d in decisions.values() if d.lemma != d.word), key=_by_said)
    table.report["lemmas"] = {
        "headwords": {
            "ratio": headwords.ratio,
            "checked": len(decisions),
            "kept": len(kept),
            "decisions": [d._asdict() for d in [*kept[:_MAX_LISTED], *followed[:_MAX_FOLLOWED]]],
            "choices": {w: d.lemma for w, d in sorted(decisions.items())},
        },
        "exceptions": [
            {"word": w, "lemma": lemma, "count": counts.get(w, 0)}
            for w, lemma in sorted(encoder.exceptions.items())
        ],
        "names": {
            "enabled": bool(encoder.names),
            "tokens": sum(names.values()),
            "top": [
                {"name": n, "table": t, "count": c}
                for (n, t), c in sorted(names.items(), key=lambda x: (-x[1], x[0]))[:_MAX_LISTED]
            ],
        },
    }
    return table


#: Decisions (words kept as said, and words that follow the table) and names listed by
#: ``--explain``.
_MAX_LISTED = 30
_MAX_FOLLOWED = 10


def _by_said(d: Decision) -> tuple[int, str]:
    return (-d.said, d.word)


def filter_step(table: TokenTable, settings: PrepareSettings) -> TokenTable:
    """Report what the lemma and filter rules (applied per transcript) did."""
    stats = table.sent_stats.sum(axis=0, dtype=np.int64)
    table.emptied["filter"] = (table.per_doc(table.sent_words) > 0) & (
        table.per_doc(table.sent_kept) == 0
    )
    table.report["lemmas"] = {
        "path": f"spaCy pipeline {settings.pipeline}"
        if settings.pipeline
        else "spaCy lookup table",
        "lang": settings.lang,
        "words": int(stats[0]),
        "tokens_lemmatised": int(stats[LEMMATISED]),
        "terms": int(np.unique(table.tokens).size),
        **table.report.get("lemmas", {}),
    }
    table.report["filter"] = {
        "removed": {
            STAT_COLUMNS[i]: int(stats[i])
            for i in range(1, LEMMATISED)
            if i != POS or settings.pipeline
        },
        "tokens_removed": int(stats[1:LEMMATISED].sum()),
        "tokens_kept": int(table.sent_kept.sum()),
        "emptied": int(table.emptied["filter"].sum()),
    }
    return table


def phrases_step(table: TokenTable, settings: PrepareSettings) -> TokenTable:
    """Train gensim's NPMI phrase model on the runs of adjacent words, freeze it and join
    its phrases (see :mod:`talkthemes.prepare.phrases`)."""
    report: dict[str, Any] = {
        "enabled": settings.phrases,
        "phrases": 0,
        "tokens_joined": 0,
        "top": [],
        "model": [],
    }
    table.report["phrases"] = report
    if not settings.phrases or table.tokens.size == 0:
        return table
    model, _ = learn_phrases(
        table.tokens,
        run_lengths(table.breaks),
        table.types,
        threshold=settings.phrase_threshold,
        min_count=settings.phrase_min_count,
    )
    table.tokens, table.breaks, table.sent_kept, joined = join_runs(
        table.tokens, table.breaks, table.sent_kept, model, len(table.types)
    )
    table.types = [*table.types, *model.names]
    top = np.lexsort((np.arange(len(model)), -joined))[:30]
    report.update(
        phrases=int(np.count_nonzero(joined)),
        tokens_joined=int(joined.sum()),
        top=[
            {
                "phrase": model.names[i],
                "count": int(joined[i]),
                "npmi": round(float(model.scores[i]), 4),
            }
            for i in top.tolist()
            if joined[i] > 0
        ],
        model=[[n, round(float(sc), 6)] for n, sc in zip(model.names, model.scores, strict=True)],
    )
    return table


def vocabulary_step(
    table: TokenTable,
    settings: PrepareSettings,
    *,
    min_terms: int = 50,
    min_transcripts: int = 20,
) -> PreparedCorpus:
    """Prune the vocabulary, exclude short transcripts, and build the prepared corpus.

    Raises
    ------
    InputError
        When fewer than ``min_terms`` terms or ``min_transcripts`` transcripts are left.
    """
    s = settings
    doc_len = table.per_doc(table.sent_kept)
    x = doc_term_matrix(table.tokens, doc_len, len(table.types))
    cut = prune_vocabulary(
        x,
        table.types,
        min_docs=s.vocab_min_docs,
        max_doc_share=s.vocab_max_doc_share,
        max_size=s.vocab_max_size,
        min_tokens=s.min_tokens,
    )
    in_vocab = np.asarray(x[:, cut.terms].sum(axis=1)).ravel()
    excluded = _excluded(table.tids, settings, table.emptied, cut.short_docs, in_vocab)
    _check_enough(cut, excluded, table.n_docs, settings, min_terms, min_transcripts)

    keep = cut.docs
    remap = np.full(len(table.types), OOV, dtype=np.int32)
    remap[cut.terms] = np.arange(cut.terms.size, dtype=np.int32)
    stream = remap[table.tokens[np.repeat(keep, doc_len)]]
    offsets = np.zeros(int(keep.sum()) + 1, dtype=np.int64)
    np.cumsum(doc_len[keep], out=offsets[1:])
    counts = x[np.flatnonzero(keep)][:, cut.terms].tocsr().astype(np.int32)
    counts.sort_indices()
    corpus = PreparedCorpus(
        vocabulary=[table.types[i] for i in cut.terms.tolist()],
        doc_ids=[table.tids[i] for i in np.flatnonzero(keep).tolist()],
        counts=counts,
        tokens=stream.astype(np.int32),
        offsets=offsets,
        excluded=excluded,
    )
    table.report["vocabulary"] = {
        "before": cut.before,
        "after": corpus.n_terms,
        "removed": cut.removed,
        "rounds": cut.rounds,
        "tokens_out_of_vocabulary": int(np.count_nonzero(stream == OOV)),
        "emptied": int(np.count_nonzero(cut.short_docs & (in_vocab == 0))),
    }
    table.report["min_tokens"] = {
        "setting": s.min_tokens,
        "excluded": int(np.count_nonzero(cut.short_docs)),
    }
    return corpus


def finish(
    col: Collected,
    settings: PrepareSettings,
    *,
    encoder: Any,
    texts_for: Callable[[set[int]], dict[int, str]],
    progress: ProgressFn | None,
    min_terms: int,
    min_transcripts: int,
) -> tuple[PreparedCorpus, dict[str, Any]]:
    """Run the corpus steps over what the per-transcript phase collected.

    Parameters
    ----------
    col : Collected
        Every batch's arrays.
    settings : PrepareSettings
    encoder : FastLemmatizer or SpacyLemmatizer
        The per-transcript phase's encoder (its lemma checks and filter).
    texts_for : callable
        Given boilerplate keys whose text no batch reported, returns their normalised
        texts (by reading the transcripts again).
    progress : callable or None
        ``progress(stage, done, total)``.
    min_terms, min_transcripts : int
        Below either, :class:`InputError` is raised.

    Returns
    -------
    corpus : PreparedCorpus
    explain : dict
    """
    table = start_table(col, settings)
    stages: list[tuple[str, list[CorpusStep]]] = [
        (
            "lemmas",
            [partial(lemma_step, encoder=encoder, counts=col.word_counts, names=col.names)],
        ),
        (
            "boilerplate",
            [
                partial(boilerplate_step, known_texts=col.key_texts, texts_for=texts_for),
                filter_step,
            ],
        ),
        ("phrases", [phrases_step]),
    ]
    for stage, steps in stages:
        report_progress(progress, stage, 0, 1)
        for step in steps:
            table = step(table, settings)
        report_progress(progress, stage, 1, 1)
    report_progress(progress, "vocabulary", 0, 1)
    corpus = vocabulary_step(table, settings, min_terms=min_terms, min_transcripts=min_transcripts)
    report_progress(progress, "vocabulary", 1, 1)

    r = table.report
    phrase_model = r["phrases"].pop("model")
    choices = r["lemmas"]["headwords"].pop("choices")
    explain = {
        "transcripts": {
            "read": table.n_docs,
            "usable": corpus.n_docs,
            "excluded": len(corpus.excluded),
        },
        **{k: r[k] for k in _SECTIONS},
        "excluded": [{"id": t, "reason": why} for t, why in corpus.excluded],
    }
    corpus.info = {
        "counts": corpus.summary(),
        "phrases": phrase_model,
        "boilerplate": r["boilerplate"]["sentences"],
        "lemmas": {"choices": choices},
    }
    return corpus, explain


_SECTIONS = (
    "roles",
    "scrub",
    "boilerplate",
    "lemmas",
    "filter",
    "phrases",
    "vocabulary",
    "min_tokens",
)


def _excluded(
    tids: list[str],
    settings: PrepareSettings,
    emptied: dict[str, NDArray[np.bool_]],
    short: NDArray[np.bool_],
    in_vocab: NDArray[np.integer],
) -> list[tuple[str, str]]:
    """Excluded transcripts, each with the first reason that applies, in store order."""
    roles = settings.roles
    why = {
        "roles": "no words"
        if roles == "all"
        else f"no words in the turns kept (roles = {roles!r})",
        "scrub": "nothing left after scrub",
        "boilerplate": "only boilerplate sentences",
        "filter": "no tokens left after the filter",
    }
    reasons: dict[int, str] = {}
    for step, mask in emptied.items():
        for i in np.flatnonzero(mask).tolist():
            reasons.setdefault(i, why[step])
    for i in np.flatnonzero(short).tolist():
        reasons.setdefault(
            i,
            f"{int(in_vocab[i])} tokens in the vocabulary, fewer than "
            f"min_tokens = {settings.min_tokens}",
        )
    return [(tids[i], reasons[i]) for i in sorted(reasons)]


def _check_enough(
    cut: VocabularyCut,
    excluded: list[tuple[str, str]],
    n_docs: int,
    s: PrepareSettings,
    min_terms: int,
    min_transcripts: int,
) -> None:
    if n_docs < min_transcripts:
        raise InputError(
            f"only {n_docs} transcripts in the store; preparing needs at least "
            f"{min_transcripts} usable transcripts: ingest more"
        )
    n_terms = int(cut.terms.size)
    if n_terms < min_terms:
        removed = cut.removed
        if s.vocab_max_size < min_terms:
            hint = f"raise [prepare] vocab_max_size (now {s.vocab_max_size})"
        elif removed.get("max_doc_share", 0) > removed.get("min_docs", 0):
            hint = f"raise [prepare] vocab_max_doc_share (now {s.vocab_max_doc_share})"
        elif s.vocab_min_docs > 1:
            hint = f"lower [prepare] vocab_min_docs (now {s.vocab_min_docs})"
        else:
            hint = f"lower [prepare] min_tokens (now {s.min_tokens}) or ingest more transcripts"
        raise InputError(f"only {n_terms} terms left (at least {min_terms} needed): {hint}")
    n_usable = int(np.count_nonzero(cut.docs))
    if n_usable < min_transcripts:
        n_short = int(np.count_nonzero(cut.short_docs))
        reasons = [r for _, r in excluded]
        if n_short >= len(excluded) / 2:
            hint = f"lower [prepare] min_tokens (now {s.min_tokens})"
        elif s.roles != "all" and any(r.startswith("no words in the turns") for r in reasons):
            hint = f'set [prepare] roles = "all" (now "{s.roles}")'
        elif any(r == "only boilerplate sentences" for r in reasons):
            hint = f"raise [prepare] boilerplate_min_share (now {s.boilerplate_min_share})"
        else:
            hint = f"lower [prepare] min_token_length (now {s.min_token_length})"
        raise InputError(
            f"only {n_usable} usable transcripts of {n_docs} (at least {min_transcripts} "
            f"needed): {hint}"
        )
