"""The preprocessing chain: the steps composed, streamed over batches of transcripts.

The chain runs in two phases.

**Per transcript** (streamed, in worker processes when ``n_process`` > 1, see
:mod:`.workers`). Every step here is a function of one transcript's text: roles
(:mod:`.roles`) → scrub (:mod:`.scrub`) → sentences (:mod:`.boilerplate`) → words, lemmas
and the filter rule (:mod:`.lemmas`, :mod:`.filter`), with the names step (:mod:`.names`)
reading the speaker labels and marking the tokens that are people's names. A batch of
transcripts becomes a :class:`BatchResult`: integer arrays only (kept term ids per
sentence, a boilerplate key and step counts per sentence; see :mod:`.collect`), so the main
process never holds transcripts as objects beyond the batch being read.

**Over the corpus** (numpy, in the main process; :mod:`.assemble`). Each step takes the
token table and returns a smaller one: name decisions (:mod:`.names_corpus`) → lemma
decisions (:mod:`.headwords`) → boilerplate (drop sentences whose key is frequent; the keys
were counted in the first phase, so no second read is needed) → phrases (:mod:`.phrases`)
→ vocabulary and minimum length (:mod:`.vocabulary`).

:func:`prepare_corpus` runs both phases over any source of batches — the store, or the demo
generator in ``bench/prepare.py`` — and returns the :class:`PreparedCorpus` with the data
``prepare --explain`` shows.
"""

from __future__ import annotations

import logging
import unicodedata
from collections.abc import Callable, Iterable, Sequence
from typing import Any

import numpy as np
from numpy.typing import NDArray

from talkthemes.config import PrepareSettings
from talkthemes.prepare.assemble import finish
from talkthemes.prepare.boilerplate import find_boilerplate, split_sentences
from talkthemes.prepare.collect import BatchResult, Collected, compact_counts
from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.prepare.filter import LEMMATISED, STAT_COLUMNS, TokenFilter, load_fillers
from talkthemes.prepare.headwords import headwords_for
from talkthemes.prepare.lemmas import FastLemmatizer
from talkthemes.prepare.lexicon import check_language, load_lemma_table, spacy_stop_words
from talkthemes.prepare.names import NameLexicon, label_names
from talkthemes.prepare.pipeline import SpacyLemmatizer
from talkthemes.prepare.roles import select_turns
from talkthemes.prepare.scrub import scrub
from talkthemes.prepare.words import GAP, words
from talkthemes.prepare.workers import Batch, map_batches, resolve_processes
from talkthemes.progress import Progress, report

__all__ = [
    "MIN_TERMS",
    "MIN_TRANSCRIPTS",
    "STAGES",
    "TranscriptProcessor",
    "build_processor",
    "normalised_sentence",
    "prepare_corpus",
    "worker_count",
]

logger = logging.getLogger(__name__)

#: Stages reported to the progress callback (as its ``what``), in order. ``read`` counts
#: transcripts (total = the number stored); the others report (0, 1) when they start and
#: (1, 1) when they end.
STAGES: tuple[str, ...] = ("read", "lemmas", "boilerplate", "phrases", "vocabulary")

#: Worker processes are used only when each gets at least this many batches.
_MIN_BATCHES_PER_WORKER = 2

#: What the scrub step leaves in place of what it removes: the words on either side are
#: not adjacent (see :data:`talkthemes.prepare.words.GAP`).
_SCRUB_MARK = f" {GAP} "

_NO_NAMES: frozenset[str] = frozenset()

#: Fewer terms than this left after the vocabulary step stops the chain.
MIN_TERMS = 50
#: Fewer usable transcripts than this stops the chain.
MIN_TRANSCRIPTS = 20


def _nfc(text: str) -> str:
    if text.isascii() or unicodedata.is_normalized("NFC", text):
        return text
    return unicodedata.normalize("NFC", text)


class TranscriptProcessor:
    """The per-transcript steps, composed.

    Parameters
    ----------
    encoder : FastLemmatizer or SpacyLemmatizer
        Words, lemmas and the filter rule.
    roles : str
        ``[prepare] roles``.
    scrub : bool
        ``[prepare] scrub``.
    boilerplate_min_share : float
        Used only to decide which sentence texts a batch reports with their keys.

    The names step (:mod:`.names`) is on when the encoder has a name lexicon; it reads the
    speaker labels of turns given as ``(role, text, speaker)``.
    """

    def __init__(
        self,
        encoder: FastLemmatizer | SpacyLemmatizer,
        *,
        roles: str = "all",
        scrub: bool = True,
        boilerplate_min_share: float = 0.05,
    ) -> None:
        self.encoder = encoder
        self.roles = roles
        self.scrub = scrub
        self.boilerplate_min_share = boilerplate_min_share
        self._reported: set[int] = set()  # keys whose text this process already reported
        self._labels: dict[str, frozenset[str]] = {}  # speaker label -> names in it

    @property
    def lang(self) -> str:
        return self.encoder.lang

    def labels(self, turns: Sequence[tuple[str, ...]]) -> frozenset[str]:
        """The names in a transcript's speaker labels (empty when the names step is off or
        the turns carry no labels)."""
        lexicon = self.encoder.person_names
        if lexicon is None or not turns or len(turns[0]) < 3:
            return _NO_NAMES
        cache = self._labels
        found = [cache.get(label) for label in {turn[2] for turn in turns}]
        if None in found:
            found = []
            for label in {turn[2] for turn in turns}:
                names = cache.get(label)
                if names is None:
                    names = label_names(label or "", lexicon)
                    if len(cache) < 100_000:
                        cache[label] = names
                found.append(names)
        if len(found) == 1:
            return found[0]  # type: ignore[return-value]
        return frozenset().union(*found)  # type: ignore[arg-type]

    def text(
        self, turns: Sequence[tuple[str, ...]], counts: dict[str, int] | None = None
    ) -> tuple[str, int, int, int]:
        """Roles and scrub for one transcript.

        Returns
        -------
        text : str
            The kept turns, scrubbed, one per line.
        turns_dropped : int
        roles_removed : int
            Words in the dropped turns.
        scrub_removed : int
            Words removed by scrub.
        """
        lang = self.lang
        kept, dropped = select_turns(turns, self.roles)
        roles_removed = sum(len(words(t, lang)) for t in dropped)
        text = _nfc("\n".join(kept))
        scrub_removed = 0
        if self.scrub:
            text, scrub_removed = scrub(text, counts, mark=_SCRUB_MARK, lang=lang)
        return text, len(dropped), roles_removed, scrub_removed

    def process(self, batch: Batch) -> BatchResult:
        """Run the per-transcript steps over one batch."""
        tids: list[str] = []
        roles_removed: list[int] = []
        scrub_removed: list[int] = []
        texts: list[str] = []
        labels: list[frozenset[str]] = []
        counts: dict[str, int] = {}
        turns = dropped = 0
        for tid, tturns in batch:
            text, n_dropped, r_removed, s_removed = self.text(tturns, counts)
            tids.append(tid)
            texts.append(text)
            labels.append(self.labels(tturns))
            roles_removed.append(r_removed)
            scrub_removed.append(s_removed)
            turns += len(tturns)
            dropped += n_dropped
        enc = self.encoder.encode(texts, labels)
        codes = enc.codes
        lengths = np.asarray(enc.lengths, dtype=np.int64)
        keys = np.asarray(enc.keys, dtype=np.int64)
        doc_sentences = np.asarray(enc.n_sentences, dtype=np.int64)
        sent_doc = np.repeat(np.arange(len(tids)), doc_sentences)
        n_sentences = int(lengths.size)

        tok_sent = np.repeat(np.arange(n_sentences), lengths)
        kept = codes >= 0
        column = np.where(kept, np.where(codes & 1, LEMMATISED, -1), -codes)
        counted = column >= 0
        width = len(STAT_COLUMNS)
        stats = np.bincount(
            tok_sent[counted] * width + column[counted], minlength=n_sentences * width
        ).reshape(n_sentences, width)
        stats[:, 0] = lengths
        sent_kept = np.bincount(tok_sent[kept], minlength=n_sentences)
        local = codes[kept] >> 1
        # the batch's terms in id order, and each token's place among them (np.unique's
        # answer, without sorting the tokens)
        present = np.zeros(len(self.encoder.types), dtype=bool)
        present[local] = True
        uniq = np.flatnonzero(present)
        inverse = (np.cumsum(present) - 1)[local]
        types = [self.encoder.types[i] for i in uniq.tolist()]

        return BatchResult(
            tids=tids,
            doc_sentences=doc_sentences.astype(np.int32),
            doc_roles_removed=np.asarray(roles_removed, dtype=np.int32),
            doc_scrub_removed=np.asarray(scrub_removed, dtype=np.int32),
            turns=turns,
            turns_dropped=dropped,
            sent_words=lengths.astype(np.int32),
            sent_keys=keys,
            sent_stats=compact_counts(stats),
            sent_kept=sent_kept.astype(np.int32),
            ids=inverse.astype(np.int32).ravel(),
            breaks=enc.breaks[kept],
            types=types,
            scrub_counts=counts,
            key_texts=self._repeated_texts(texts, sent_doc, keys),
            word_counts=enc.counts,
            names=enc.names,
            person_found=enc.person.found if enc.person else {},
            person_named=enc.person.named if enc.person else {},
        )

    def find_texts(self, keys: set[int], source: Callable[[], Iterable[Batch]]) -> dict[int, str]:
        """Normalised texts of boilerplate keys, by reading the source again.

        Needed only for keys that no batch reported (see :meth:`process`); stops as soon as
        every key is found.
        """
        missing = set(keys)
        found: dict[int, str] = {}
        if not missing:
            return found
        logger.info("reading the transcripts again for %d boilerplate sentence(s)", len(missing))
        for batch in source():
            for _, turns in batch:
                for sentence in split_sentences(self.text(turns)[0]):
                    ws = words(sentence, self.lang)
                    key = self.encoder.key(ws)
                    if key in missing:
                        found[key] = " ".join(ws).lower()
                        missing.discard(key)
                if not missing:
                    return found
        return found

    def _repeated_texts(
        self, texts: list[str], sent_doc: NDArray[np.int64], keys: NDArray[np.int64]
    ) -> dict[int, str]:
        """Normalised text of the keys frequent enough in this batch to be boilerplate.

        A key whose share over the whole corpus reaches ``boilerplate_min_share`` reaches
        it in at least one batch, so the main process rarely needs to read again.
        """
        if self.boilerplate_min_share <= 0 or keys.size == 0:
            return {}
        n_docs = int(np.count_nonzero(np.bincount(sent_doc, minlength=len(texts))))
        need = max(2, int(np.ceil(self.boilerplate_min_share * n_docs - 1e-9)))
        keys_df, df = find_boilerplate(sent_doc, keys, n_docs, 1e-12)
        wanted = {
            k
            for k, d in zip(keys_df.tolist(), df.tolist(), strict=True)
            if d >= need and k not in self._reported
        }
        if not wanted:
            return {}
        # the first transcript each wanted key is in, in the order the keys first appear
        at = np.flatnonzero(np.isin(keys, np.fromiter(wanted, dtype=np.int64)))
        _, first = np.unique(keys[at], return_index=True)
        at = at[np.sort(first)]
        doc_of = dict(zip(keys[at].tolist(), sent_doc[at].tolist(), strict=True))
        out: dict[int, str] = {}
        for k, d in doc_of.items():
            for sentence in split_sentences(texts[d]):
                if self.encoder.key(words(sentence, self.lang)) == k:
                    out[k] = normalised_sentence(sentence, self.lang)
                    break
        self._reported.update(out)
        return out


def normalised_sentence(sentence: str, lang: str) -> str:
    """A sentence as the boilerplate step compares it: its words, lowercased, one space apart."""
    return " ".join(words(sentence, lang)).lower()


def build_processor(settings: PrepareSettings) -> TranscriptProcessor:
    """Load the language resources and compose the per-transcript steps for ``settings``.

    Raises
    ------
    ConfigError
        When the language is not supported (:func:`~talkthemes.prepare.lexicon.check_language`:
        a language outside ``CHAIN_LANGUAGES`` runs with a warning when spaCy has its stop
        words and a lemma table), or the configured pipeline is not installed.
    """
    lang = settings.lang
    check_language(lang, settings.pipeline)
    fillers = load_fillers(lang) if settings.fillers else frozenset()
    token_filter = TokenFilter.build(
        min_length=settings.min_token_length,
        stop_words=spacy_stop_words(lang),
        fillers=fillers,
        user_stop_words=settings.extra_stop_words,
    )
    person_names = (
        NameLexicon.build(
            lang,
            fillers=[*load_fillers(lang), *settings.extra_stop_words],
            not_names=settings.not_names,
        )
        if settings.drop_names
        else None
    )
    encoder: FastLemmatizer | SpacyLemmatizer
    if settings.pipeline:
        encoder = SpacyLemmatizer.load(
            settings.pipeline,
            token_filter,
            lang=lang,
            pos_keep=settings.pos_keep,
            batch_size=settings.batch_size,
            min_words=settings.boilerplate_min_words,
            names=settings.names,
            exceptions=settings.lemma_exceptions,
            person_names=person_names,
        )
    else:
        table = load_lemma_table(lang)
        encoder = FastLemmatizer(
            table,
            token_filter,
            lang,
            settings.boilerplate_min_words,
            names=settings.names,
            exceptions=settings.lemma_exceptions,
            headwords=headwords_for(lang, settings.lemma_keep_ratio),
            person_names=person_names,
        )
    return TranscriptProcessor(
        encoder,
        roles=settings.roles,
        scrub=settings.scrub,
        boilerplate_min_share=settings.boilerplate_min_share,
    )


def worker_count(settings: PrepareSettings, total: int | None) -> int:
    """Worker processes :func:`prepare_corpus` uses for ``total`` transcripts (1: none)."""
    n_process = resolve_processes(settings.n_process)
    if total and total <= _MIN_BATCHES_PER_WORKER * n_process * settings.batch_size:
        return 1  # starting workers would cost more than it saves
    return n_process


def prepare_corpus(
    source: Callable[[], Iterable[Batch]],
    settings: PrepareSettings,
    *,
    total: int | None = None,
    progress: Progress | None = None,
    processor: TranscriptProcessor | None = None,
    min_terms: int = MIN_TERMS,
    min_transcripts: int = MIN_TRANSCRIPTS,
) -> tuple[PreparedCorpus, dict[str, Any]]:
    """Run the whole chain over a source of transcript batches.

    Parameters
    ----------
    source : callable returning an iterable of Batch
        Called once for the pass over the corpus (batches of ``(tid, [(role, text), ...])``
        in a stable order); called again only in the rare case that the text of a
        boilerplate sentence was not reported by any batch.
    settings : PrepareSettings
    total : int, optional
        Number of transcripts the source yields (for progress).
    progress : Progress, optional
        ``progress(done, total, what)`` with the stage as ``what``; see :data:`STAGES`.
    processor : TranscriptProcessor, optional
        The per-transcript steps; built from ``settings`` when omitted.
    min_terms, min_transcripts : int
        The chain stops with :class:`InputError` when fewer terms or usable transcripts
        are left.

    Returns
    -------
    corpus : PreparedCorpus
        ``info`` holds the counts; the caller adds settings, hash and versions.
    explain : dict
        What each step removed or joined (see :mod:`talkthemes.prepare.explain`).

    Raises
    ------
    InputError
        When too few terms or transcripts are left, naming the setting to relax.
    ConfigError
        When the language or pipeline cannot be loaded.
    """
    processor = processor or build_processor(settings)
    n_process = worker_count(settings, total)
    total = total or 0
    report(progress, 0, total, "read")
    col = Collected()
    for res in map_batches(processor, source(), n_process):
        col.add(res)
        report(progress, len(col.tids), max(total, len(col.tids)), "read")
    return finish(
        col,
        settings,
        encoder=processor.encoder,
        texts_for=lambda keys: processor.find_texts(keys, source),
        progress=progress,
        min_terms=min_terms,
        min_transcripts=min_transcripts,
    )
