"""Step 4, lemmas, on a spaCy pipeline (``[prepare] pipeline = "<name or folder>"``).

The named pipeline runs over every sentence through ``nlp.pipe(batch_size=)``; its tokens and
lemmas are used, and tokens whose part of speech is not in ``pos_keep`` are dropped (set
``pos_keep = []`` for a pipeline without a tagger). Names and your lemma exceptions apply as
on the fast path; the headword check does not (a pipeline tells parts of speech apart).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from typing import Any

import numpy as np
from numpy.typing import NDArray

from talkthemes.errors import ConfigError
from talkthemes.prepare.boilerplate import split_sentences
from talkthemes.prepare.encoding import Encoded, Encoder, PersonNames, kept_breaks
from talkthemes.prepare.filter import NAME, NON_ALPHA, POS, TokenFilter
from talkthemes.prepare.headwords import name_flags
from talkthemes.prepare.names import NameLexicon, all_caps, rule_positions, title_case
from talkthemes.prepare.names_mark import NameColumns
from talkthemes.prepare.words import GAP, words

__all__ = ["SpacyLemmatizer"]


class SpacyLemmatizer(Encoder):
    """The spaCy pipeline path: a loaded pipeline's tokens, lemmas and parts of speech.

    Parameters
    ----------
    nlp : spacy.language.Language
        The loaded pipeline.
    token_filter : TokenFilter
    pos_keep : sequence of str
        Universal parts of speech kept; empty keeps every part of speech.
    batch_size : int
        Passed to ``nlp.pipe`` (always with ``n_process=1``: the chain's own worker
        processes, :mod:`talkthemes.prepare.workers`, run pipelines in parallel).
    min_words : int
        As for :class:`FastLemmatizer`.
    name : str
        The pipeline's name, for messages.
    source : str
        The name or folder it was loaded from (:meth:`load`); a worker process loads the
        pipeline again from it instead of receiving the pipeline itself.
    names, exceptions
        The lemma checks (see :class:`Encoder`); the headword check is for the lookup
        table only (a pipeline tells parts of speech apart).
    person_names : NameLexicon, optional
        The names step (:mod:`talkthemes.prepare.names`); off when omitted.
    """

    def __init__(
        self,
        nlp: Any,
        token_filter: TokenFilter,
        *,
        pos_keep: Sequence[str] = (),
        batch_size: int = 1000,
        min_words: int = 3,
        name: str = "",
        source: str = "",
        names: bool = False,
        exceptions: Mapping[str, str] | None = None,
        person_names: NameLexicon | None = None,
    ) -> None:
        super().__init__(
            token_filter,
            str(nlp.lang),
            min_words,
            names=names,
            exceptions=exceptions,
            person_names=person_names,
        )
        self.nlp = nlp
        self.pos_keep = frozenset(pos_keep)
        self.batch_size = batch_size
        self.name = name or str(nlp.meta.get("name", "pipeline"))
        self.source = source
        self._pos_checked = not self.pos_keep

    def __reduce__(self) -> tuple[Any, tuple[Any, ...]]:
        """Pickle by name: the receiving process loads the pipeline again (:meth:`load`)."""
        if not self.source:
            raise TypeError("a spaCy pipeline not loaded by name cannot be sent to a process")
        return _load_again, (
            self.source,
            self.filter,
            self.lang,
            tuple(self.pos_keep),
            self.batch_size,
            self.min_words,
            self.names,
            self.exceptions,
            self.person_names,
        )

    @classmethod
    def load(
        cls,
        name: str,
        token_filter: TokenFilter,
        *,
        lang: str,
        pos_keep: Sequence[str] = (),
        batch_size: int = 1000,
        min_words: int = 3,
        names: bool = False,
        exceptions: Mapping[str, str] | None = None,
        person_names: NameLexicon | None = None,
    ) -> SpacyLemmatizer:
        """Load an installed spaCy pipeline (a package name or a folder) for the chain.

        Raises
        ------
        ConfigError
            When no such pipeline is installed, or it is for another language.
        """
        # spaCy is heavy to import: deferred to first use on purpose
        import spacy
        import spacy.util

        try:
            nlp = spacy.load(name, exclude=["parser", "ner"])
        except OSError:
            installed = sorted(spacy.util.get_installed_models())
            listed = ", ".join(installed) if installed else "none"
            raise ConfigError(
                f"[prepare] pipeline = {name!r}: no installed spaCy pipeline or pipeline folder "
                f"of that name (installed pipelines: {listed}). Install it with pip "
                '(no download happens here), or set pipeline = "" for the fast path'
            ) from None
        if nlp.lang != lang:
            raise ConfigError(
                f"[prepare] pipeline = {name!r} is for language {nlp.lang!r}, "
                f"but [prepare] lang = {lang!r}"
            )
        return cls(
            nlp,
            token_filter,
            pos_keep=pos_keep,
            batch_size=batch_size,
            min_words=min_words,
            name=name,
            source=name,
            names=names,
            exceptions=exceptions,
            person_names=person_names,
        )

    def encode(
        self, texts: Sequence[str], labels: Sequence[Iterable[str]] | None = None
    ) -> Encoded:
        """Encode texts (as :meth:`FastLemmatizer.encode`) with the spaCy pipeline.

        Texts are split into sentences by the same rule as the fast path, and each sentence
        goes through ``nlp.pipe``. Lengths count spaCy's tokens (punctuation included,
        counted as not alphabetic); boilerplate keys use the fast path's words, so both
        paths find the same boilerplate sentences. The names step sees the words (not the
        punctuation), each sentence as a line.
        """
        sentences: list[str] = []
        keys: list[int] = []
        n_sentences: list[int] = []
        for text in texts:
            before = len(sentences)
            for sentence in split_sentences(text):
                ws = words(sentence, self.lang)
                if ws:
                    sentences.append(sentence)
                    keys.append(self.key(ws))
            n_sentences.append(len(sentences) - before)
        sent_doc = np.repeat(np.arange(len(texts)), n_sentences)
        codes: list[int] = []
        lengths: list[int] = []
        soft: list[bool] = []  # dropping it does not part its neighbours
        gaps: list[int] = []  # gap marks before the token, running count
        sentence_of: list[int] = []
        spoken_at: list[int] = []  # the tokens that are words (for the names step)
        spoken_lower: list[str] = []
        spoken_title: list[bool] = []
        spoken_upper: list[bool] = []
        docs = self.nlp.pipe(
            [s.replace(GAP, f" {GAP} ") if GAP in s else s for s in sentences],
            batch_size=self.batch_size,
            n_process=1,
        )
        pos_keep = self.pos_keep
        candidates = tagged = 0
        n_gaps = 0
        renamed: dict[tuple[str, str], int] = {}
        for s_index, doc in enumerate(docs):
            n = 0
            spoken = [t for t in doc if not (t.is_space or t.is_punct or t.text == GAP)]
            named = {
                t.i for t, f in zip(spoken, name_flags([t.text for t in spoken]), strict=True) if f
            }
            for tok in doc:
                if tok.text == GAP:
                    n_gaps += 1
                    continue
                n += 1
                gaps.append(n_gaps)
                sentence_of.append(s_index)
                if tok.is_space or tok.is_punct:
                    # punctuation is not a word: it neither joins nor parts words
                    codes.append(-NON_ALPHA)
                    soft.append(True)
                    continue
                lower = tok.lower_
                lemma = (tok.lemma_ or tok.text).lower()
                if lower in self.exceptions:
                    lemma = self.exceptions[lower]
                elif self.names and tok.i in named and lemma != lower:
                    key = (lower, lemma)
                    renamed[key] = renamed.get(key, 0) + 1
                    lemma = lower
                code = self._term(lemma, lower)
                if code >= 0 and pos_keep:
                    candidates += 1
                    tagged += bool(tok.pos_)
                    if tok.pos_ not in pos_keep:
                        code = -POS
                spoken_at.append(len(codes))
                spoken_lower.append(lower)
                spoken_title.append(title_case(tok.text))
                spoken_upper.append(all_caps(tok.text))
                codes.append(code)
                soft.append(code >= 0 or self.filter.is_filler(lemma, lower))
            lengths.append(n)
        if pos_keep and not self._pos_checked and candidates:
            if not tagged:
                raise ConfigError(
                    f"[prepare] pipeline = {self.name!r} assigns no part of speech, so the "
                    "part-of-speech filter would drop every token: use a pipeline with a tagger, "
                    "or set [prepare] pos_keep = [] to keep every part of speech"
                )
            self._pos_checked = True
        code_arr = np.asarray(codes, dtype=np.int64)
        sentence = np.asarray(sentence_of, dtype=np.int64)
        person = None
        if self.person_names is not None and spoken_at:
            at = np.asarray(spoken_at, dtype=np.int64)
            sub = code_arr[at]
            person = self._find_spoken(
                sub,
                spoken_lower,
                spoken_title,
                spoken_upper,
                sentence[at],
                sent_doc,
                len(texts),
                labels,
            )
            code_arr[at] = sub
        # a word breaks adjacency when it is dropped (and not a filler), and so does a gap
        soft_arr = np.asarray(soft, dtype=bool) & (code_arr != -NAME)
        seen = np.cumsum(~soft_arr) + np.asarray(gaps, dtype=np.int64)
        return Encoded(
            code_arr,
            np.asarray(lengths, dtype=np.int64),
            np.asarray(keys, dtype=np.int64),
            np.asarray(n_sentences, dtype=np.int64),
            kept_breaks(seen, code_arr >= 0, sentence),
            {},
            renamed,
            person,
        )

    def _find_spoken(
        self,
        codes: NDArray[np.int64],
        lowers: list[str],
        titles: list[bool],
        uppers: list[bool],
        sentence: NDArray[np.int64],
        sent_doc: NDArray[np.int64],
        n_docs: int,
        labels: Sequence[Iterable[str]] | None,
    ) -> PersonNames:
        """The names step over the words of a batch (codes changed in place)."""
        lex = self.person_names
        assert lex is not None
        title = np.asarray(titles, dtype=bool)
        first = np.ones(sentence.size, dtype=bool)
        first[1:] = sentence[1:] != sentence[:-1]
        starts = np.flatnonzero(first)
        cols = NameColumns(
            title=title,
            upper=np.asarray(uppers, dtype=bool),
            low=np.asarray([self.low_id(w) for w in lowers], dtype=np.int64),
            cls=np.asarray([lex.word_class(w) for w in lowers], dtype=np.int64),
            nameable=np.asarray([lex.nameable(w) for w in lowers], dtype=bool),
            first=np.asarray([w in lex.first for w in lowers], dtype=bool),
            ordinary=np.asarray([w in lex.ordinary for w in lowers], dtype=bool),
        )
        return self.find_names(
            codes,
            np.arange(sentence.size, dtype=np.int64),
            cols,
            labels=labels,
            doc=sent_doc[sentence],
            n_docs=n_docs,
            flagged=rule_positions(title, first, starts, np.diff(np.append(starts, first.size))),
            sent=sentence,
            line=sentence,
        )


def _load_again(
    source: str,
    token_filter: TokenFilter,
    lang: str,
    pos_keep: Sequence[str],
    batch_size: int,
    min_words: int,
    names: bool,
    exceptions: Mapping[str, str],
    person_names: NameLexicon | None = None,
) -> SpacyLemmatizer:
    return SpacyLemmatizer.load(
        source,
        token_filter,
        lang=lang,
        pos_keep=pos_keep,
        batch_size=batch_size,
        min_words=min_words,
        names=names,
        exceptions=exceptions,
        person_names=person_names,
    )
