"""The last corpus step: vocabulary and minimum length, and the prepared corpus they give.

Terms are pruned (:func:`~talkthemes.prepare.vocabulary.prune_vocabulary`), transcripts with
too few tokens in the vocabulary are excluded with the first reason that applies, and the
:class:`~talkthemes.prepare.corpus.PreparedCorpus` is built; too few terms or transcripts stop
the chain with a message naming the setting to relax.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from talkthemes.config import PrepareSettings
from talkthemes.errors import InputError
from talkthemes.prepare.corpus import OOV, PreparedCorpus
from talkthemes.prepare.table import TokenTable
from talkthemes.prepare.vocabulary import VocabularyCut, doc_term_matrix, prune_vocabulary

__all__ = ["vocabulary_step"]


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
        "names": "no tokens left but people's names",
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
