"""The corpus steps before the vocabulary: lemma decisions, boilerplate, filter report,
phrases.

These steps need the whole corpus, so they run in the main process over the integer arrays
that the per-transcript phase (:mod:`talkthemes.prepare.chain`) collected: each takes the
:class:`~talkthemes.prepare.table.TokenTable` and returns it with fewer or joined tokens,
and records what it removed or joined for ``prepare --explain``.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from talkthemes.config import PrepareSettings
from talkthemes.prepare.boilerplate import find_boilerplate
from talkthemes.prepare.filter import LEMMATISED, NAME, POS, STAT_COLUMNS
from talkthemes.prepare.headwords import PROVISIONAL, Decision, resolve_tokens
from talkthemes.prepare.phrases import join_runs, learn_phrases, run_lengths
from talkthemes.prepare.table import TokenTable

__all__ = ["boilerplate_step", "filter_step", "lemma_step", "phrases_step"]


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
    if "names" in table.report:
        # names said in a script ("this is … speaking"): --explain masks them in the sentences
        held = {w for text in texts.values() for w in text.split()} & table.removed_names
        table.report["names"]["in_boilerplate"] = sorted(held)
    kept_tokens = np.repeat(~masked, table.sent_kept)
    table.tokens = table.tokens[kept_tokens]
    table.breaks = table.breaks[kept_tokens]
    table.sent_kept[masked] = 0  # in place: these are the corpus's largest arrays
    table.sent_words[masked] = 0
    table.sent_stats[masked] = 0
    table.emptied["boilerplate"] = has_text & (table.per_doc(table.sent_words) == 0)
    table.report["boilerplate"]["emptied"] = int(table.emptied["boilerplate"].sum())
    return table


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
            if (i != POS or settings.pipeline) and i != NAME
        },
        "tokens_removed": int(stats[1:LEMMATISED].sum() - stats[NAME]),
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
