"""The corpus phase of the chain: the corpus steps in order, and the report they make.

These steps need the whole corpus, so they run in the main process over the integer arrays
that the per-transcript phase (:mod:`talkthemes.prepare.chain`) collected
(:mod:`.collect`): name decisions (:mod:`.names_corpus`), lemma decisions, boilerplate and
the filter report, phrases (:mod:`.steps`), then vocabulary and minimum length
(:mod:`.build`), each on the :class:`~talkthemes.prepare.table.TokenTable`.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import partial
from typing import Any

from talkthemes.config import PrepareSettings
from talkthemes.memory import release_free_memory
from talkthemes.prepare.build import vocabulary_step
from talkthemes.prepare.collect import Collected
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.prepare.names_corpus import names_step
from talkthemes.prepare.steps import boilerplate_step, filter_step, lemma_step, phrases_step
from talkthemes.prepare.table import CorpusStep, start_table
from talkthemes.progress import Progress, report

__all__ = [
    "ProgressFn",
    "finish",
]

#: The progress callback (``talkthemes.progress.Progress``).
ProgressFn = Progress


def finish(
    col: Collected,
    settings: PrepareSettings,
    *,
    encoder: Any,
    texts_for: Callable[[set[int]], dict[int, str]],
    progress: Progress | None,
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
    progress : Progress or None
        ``progress(done, total, what)``: each stage reports (0, 1) when it starts and (1, 1)
        when it ends, with its name as ``what``.
    min_terms, min_transcripts : int
        Below either, :class:`InputError` is raised.

    Returns
    -------
    corpus : PreparedCorpus
    explain : dict
    """
    release_free_memory()  # the read phase's garbage, before the corpus-sized arrays
    table = start_table(col, settings)
    stages: list[tuple[str, list[CorpusStep]]] = [
        (
            "lemmas",
            [
                partial(
                    names_step,
                    lexicon=encoder.person_names,
                    found=col.person_found,
                    named=col.person_named,
                ),
                partial(lemma_step, encoder=encoder, counts=col.word_counts, names=col.names),
            ],
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
        report(progress, 0, 1, stage)
        for step in steps:
            release_free_memory()  # each step's arrays replace the last one's
            table = step(table, settings)
        report(progress, 1, 1, stage)
    report(progress, 0, 1, "vocabulary")
    release_free_memory()
    corpus = vocabulary_step(table, settings, min_terms=min_terms, min_transcripts=min_transcripts)
    report(progress, 1, 1, "vocabulary")

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
        "names": table.saved.get("names", {"in_use": [], "named": []}),
    }
    return corpus, explain


_SECTIONS = (
    "roles",
    "scrub",
    "names",
    "boilerplate",
    "lemmas",
    "filter",
    "phrases",
    "vocabulary",
    "min_tokens",
)
