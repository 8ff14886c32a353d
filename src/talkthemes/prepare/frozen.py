"""New text prepared exactly as a version's training data was (a frozen prep).

A published version keeps what its preprocessing learned from the whole corpus: the
``[prepare]`` settings, the boilerplate sentences, the phrase list and the vocabulary
(``versions/<n>/prep.json`` and ``vocabulary.json``). :class:`PrepApplier` runs the
per-transcript steps of the chain (roles, scrub, sentences, lemmas, filter; the same
:class:`~talkthemes.prepare.chain.TranscriptProcessor`) on new text and then, instead of
learning anything, applies those saved results in the chain's order:

0. people's names: the names step (:mod:`.names`) runs per transcript as in the chain, and
   its provisional tokens are decided by the version's saved decisions
   (:func:`~talkthemes.prepare.names_corpus.resolve_names`); then the version's lemma
   decisions;
1. sentences whose normalised text is one of the version's boilerplate sentences are
   dropped (matched by the same 64-bit sentence key the chain counts);
2. the version's phrases are joined where their words are adjacent, left to right as
   gensim's ``FrozenPhrases`` does (:func:`~talkthemes.prepare.phrases.join_runs`, the
   function the chain uses);
3. terms outside the version's vocabulary are dropped (kept as out-of-vocabulary
   positions in the token stream, so sliding windows keep their width).

On the transcripts a prep was built from, the result equals the prep exactly (counts and
token streams; ``tests/refresh/test_assign.py``). :func:`talkthemes.assign.assign` uses it
for new calls; :func:`build_frozen_prep` prepares the whole store this way for a refresh
with ``[refresh] vocabulary = "frozen"``.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path
from typing import Any

import numpy as np
import scipy.sparse as sp

from talkthemes.config import PrepareSettings
from talkthemes.errors import NotReadyError
from talkthemes.languages.lanes import themed_languages
from talkthemes.prepare.applied import AppliedBatch
from talkthemes.prepare.boilerplate import sentence_key
from talkthemes.prepare.chain import build_processor
from talkthemes.prepare.corpus import FILES, OOV, PreparedCorpus, library_versions
from talkthemes.prepare.headwords import resolve_tokens
from talkthemes.prepare.names_corpus import (
    frozen_keep,
    in_use_terms,
    named_hashes,
    resolve_names,
)
from talkthemes.prepare.phrases import DELIMITER, PhraseModel, join_runs
from talkthemes.prepare.run import CHAIN_VERSION, EXPLAIN_FILE
from talkthemes.prepare.workers import Batch
from talkthemes.workspace import Workspace, atomic_dir

__all__ = [
    "NO_KNOWN_TERMS",
    "AppliedBatch",
    "Batch",
    "PrepApplier",
    "PrepSpec",
    "build_frozen_prep",
    "load_prep_spec",
    "too_few_terms",
]


#: The reason given for a transcript none of whose words is in the vocabulary.
NO_KNOWN_TERMS = "no word in the vocabulary of the version"


def too_few_terms(known: int, min_tokens: int) -> str:
    """Why a transcript with ``known`` (≥ 1) tokens of the vocabulary is left out (and
    unthemed): fewer than the version's ``min_tokens``."""
    return f"{known} tokens in the vocabulary, fewer than min_tokens = {min_tokens}"


# -- what a version's prep learned --------------------------------------------------------
@dataclass(frozen=True)
class PrepSpec:
    """What a prep learned from its corpus, to prepare new text the same way.

    Attributes
    ----------
    settings : PrepareSettings
        The ``[prepare]`` settings the prep ran with.
    vocabulary : list of str
        The model's terms, in column order.
    phrases : list of str
        Joined collocations, ``first_second``.
    boilerplate : list of str
        Normalised boilerplate sentences (lowercased words, one space apart).
    prep_hash : str
    excluded : list of (str, str)
        Stored transcripts the prep left out of training, with the reason.
    chain_version : str
        :data:`talkthemes.prepare.run.CHAIN_VERSION` of the chain that made the prep ("1"
        when the record does not say).
    lemma_choices : dict of str to str
        The corpus's decision for each contested word it held (see
        :mod:`talkthemes.prepare.headwords`).
    names_in_use : frozenset of str
        Terms of suspect names the corpus kept as words (see
        :mod:`talkthemes.prepare.names_corpus`).
    names_named : frozenset of str
        Hashes of the words the corpus knew as names.
    raw : dict
        The ``prep.json`` document it was read from.
    """

    settings: PrepareSettings
    vocabulary: list[str]
    phrases: list[str]
    boilerplate: list[str]
    prep_hash: str = ""
    excluded: list[tuple[str, str]] = field(default_factory=list)
    chain_version: str = "1"
    lemma_choices: dict[str, str] = field(default_factory=dict)
    names_in_use: frozenset[str] = frozenset()
    names_named: frozenset[str] = field(default_factory=frozenset, repr=False)
    raw: dict[str, Any] = field(default_factory=dict, repr=False)

    @property
    def adjacent_phrases(self) -> bool:
        """Whether phrases join only adjacent words (chain version 2 on)."""
        return _version_number(self.chain_version) >= 2

    @property
    def drops_names(self) -> bool:
        """Whether the prep kept people's names out (chain version 3 on, when on)."""
        return _version_number(self.chain_version) >= 3 and self.settings.drop_names

    @classmethod
    def from_prep_info(cls, info: dict[str, Any], vocabulary: Sequence[str]) -> PrepSpec:
        """Build from a ``prep.json`` document (kept as :attr:`raw`) and a vocabulary."""
        boiler = [
            str(b["sentence"]) if isinstance(b, dict) else str(b)
            for b in info.get("boilerplate", [])
        ]
        phrases = [
            str(p[0]) if isinstance(p, list | tuple) else str(p) for p in info.get("phrases", [])
        ]
        return cls(
            settings=PrepareSettings.model_validate(info.get("settings") or {}),
            vocabulary=[str(t) for t in vocabulary],
            phrases=phrases,
            boilerplate=boiler,
            prep_hash=str(info.get("hash", "")),
            excluded=[(str(t), str(r)) for t, r in info.get("excluded", [])],
            chain_version=str(info.get("chain_version") or "1"),
            lemma_choices={
                str(w): str(lemma)
                for w, lemma in ((info.get("lemmas") or {}).get("choices") or {}).items()
            },
            names_in_use=in_use_terms(info),
            names_named=named_hashes(info),
            raw=dict(info),
        )


def _version_number(chain_version: str) -> int:
    try:
        return int(chain_version)
    except ValueError:
        return 1


#: Keys of a prep's ``prep.json`` that older version records did not copy.
_FROM_PREP = ("chain_version", "lemmas", "names")


def load_prep_spec(ws: Workspace, version: Any) -> PrepSpec:
    """The prep spec of a loaded version.

    Read from ``versions/<n>/prep.json``; for versions written before that file existed,
    from the prep folder the version was trained on.

    Raises
    ------
    NotReadyError
        When neither file is there.
    """
    own = version.folder / "prep.json"
    prep_hash = str(version.info.get("prep_hash", ""))
    candidates = [own]
    if prep_hash:
        candidates.append(ws.prepared_dir / prep_hash / "prep.json")
    found = [p for p in candidates if p.is_file()]
    if found:
        info = json.loads(found[0].read_text(encoding="utf-8"))
        if len(found) > 1 and any(k not in info for k in _FROM_PREP):
            # a version written before its record kept these: the prep folder has them
            prep = json.loads(found[1].read_text(encoding="utf-8"))
            info.update({k: prep[k] for k in _FROM_PREP if k in prep and k not in info})
        return PrepSpec.from_prep_info(info, version.vocabulary)
    raise NotReadyError(
        f"version {version.n}: its preparation record is missing "
        f"({' and '.join(map(str, candidates))}); publish a new version to assign themes"
    )


# -- applying it to new text --------------------------------------------------------------
class PrepApplier:
    """Prepare new transcripts with a version's settings, boilerplate, phrases and vocabulary.

    Parameters
    ----------
    spec : PrepSpec
    processor : TranscriptProcessor, optional
        The per-transcript steps; built from ``spec.settings`` on first use.
    """

    def __init__(self, spec: PrepSpec, processor: Any = None) -> None:
        self.spec = spec
        self._processor = processor

    @property
    def processor(self) -> Any:
        """The per-transcript steps of the chain (language resources load on first use)."""
        if self._processor is None:
            # boilerplate_min_share only decides which sentence texts a batch reports for
            # prepare --explain; nothing is learned here, so none is needed
            update: dict[str, Any] = {"boilerplate_min_share": 0.0}
            if not self.spec.adjacent_phrases:
                # chain version 1 had no lemma checks
                update.update(names=False, lemma_keep_ratio=0.0, lemma_exceptions={})
            if not self.spec.drops_names:
                # chain versions 1 and 2 had no names step
                update["drop_names"] = False
            settings = self.spec.settings.model_copy(update=update)
            self._processor = build_processor(settings)
        return self._processor

    def choose(self, word: str) -> str:
        """The lemma of a contested word: the version's decision, else the encoder's
        default (the same rule with no counts)."""
        lemma = self.spec.lemma_choices.get(word)
        return lemma if lemma is not None else self.processor.encoder.choose(word)

    @cached_property
    def _tables(self) -> dict[str, Any]:
        spec = self.spec
        min_words = spec.settings.boilerplate_min_words
        keys = sorted(
            {sentence_key(words) for s in spec.boilerplate if len(words := s.split()) >= min_words}
        )
        # unigram types: the vocabulary's single words and every phrase's two words
        types: dict[str, int] = {}
        pairs: list[tuple[str, str]] = []
        for name in spec.phrases:
            first, _, second = name.partition(DELIMITER)
            if first and second and DELIMITER not in second:
                pairs.append((first, second))
        for term in spec.vocabulary:
            if DELIMITER not in term:
                types.setdefault(term, len(types))
        for first, second in pairs:
            types.setdefault(first, len(types))
            types.setdefault(second, len(types))
        other = len(types)  # every word the version never saw
        n_types = other + 1
        vocab_index = {t: i for i, t in enumerate(spec.vocabulary)}
        to_vocab = np.full(n_types + len(pairs), OOV, dtype=np.int32)
        for term, i in types.items():
            to_vocab[i] = vocab_index.get(term, OOV)
        for p, (first, second) in enumerate(pairs):
            to_vocab[n_types + p] = vocab_index.get(f"{first}{DELIMITER}{second}", OOV)
        return {
            "keys": np.asarray(keys, dtype=np.int64),
            "types": types,
            "other": other,
            "n_types": n_types,
            "pairs": np.asarray([(types[a], types[b]) for a, b in pairs], dtype=np.int64).reshape(
                -1, 2
            ),
            "names": [f"{a}{DELIMITER}{b}" for a, b in pairs],
            "to_vocab": to_vocab,
        }

    def apply(self, batch: Batch) -> AppliedBatch:
        """Prepare one batch of ``(transcript id, [(role, text), ...])``."""
        tables = self._tables
        res = self.processor.process(batch)
        n_docs = len(res.tids)
        doc_sentences = res.doc_sentences.astype(np.int64)
        sent_doc = np.repeat(np.arange(n_docs), doc_sentences)
        sent_words = res.sent_words.astype(np.int64)
        # 0. the version's name and lemma decisions
        res_types, ids, breaks, sent_kept, _ = resolve_names(
            res.types,
            res.ids,
            res.breaks,
            res.sent_kept,
            frozen_keep(self.spec.names_in_use, self.spec.names_named),
        )
        res_types, ids, breaks, sent_kept = resolve_tokens(
            res_types,
            ids,
            breaks,
            sent_kept,
            self.choose,
            self.processor.encoder.filter,
        )
        kept_before = np.bincount(sent_doc, weights=sent_kept, minlength=n_docs)
        # 1. boilerplate sentences
        masked = (
            np.isin(res.sent_keys, tables["keys"])
            if tables["keys"].size
            else np.zeros(sent_kept.size, dtype=bool)
        )
        kept_tokens = np.repeat(~masked, sent_kept)
        local, breaks = ids[kept_tokens], breaks[kept_tokens]
        sent_kept = np.where(masked, 0, sent_kept)
        # 2. phrases, over the version's type table (unknown words share one id)
        types, other = tables["types"], tables["other"]
        local_to_type = np.fromiter(
            (types.get(t, other) for t in res_types), dtype=np.int64, count=len(res_types)
        )
        stream = local_to_type[local] if local.size else np.zeros(0, dtype=np.int64)
        if len(tables["names"]) and stream.size:
            model = PhraseModel(
                pairs=tables["pairs"],
                scores=np.zeros(len(tables["names"])),
                names=tables["names"],
                bigram_counts=np.zeros(len(tables["names"]), dtype=np.int64),
            )
            if not self.spec.adjacent_phrases:
                # chain version 1 joined pairs anywhere in a sentence
                breaks = np.zeros(stream.size, dtype=bool)
                breaks[(np.cumsum(sent_kept) - sent_kept)[sent_kept > 0]] = True
            stream, _, sent_kept, _ = join_runs(stream, breaks, sent_kept, model, tables["n_types"])
        # 3. vocabulary
        mapped = tables["to_vocab"][np.asarray(stream, dtype=np.int64)].astype(np.int32)
        doc_len = np.bincount(sent_doc, weights=sent_kept, minlength=n_docs).astype(np.int64)
        offsets = np.zeros(n_docs + 1, dtype=np.int64)
        np.cumsum(doc_len, out=offsets[1:])
        rows = np.repeat(np.arange(n_docs), doc_len)
        keep = mapped != OOV
        counts = sp.csr_matrix(
            (np.ones(int(keep.sum()), dtype=np.int32), (rows[keep], mapped[keep])),
            shape=(n_docs, len(self.spec.vocabulary)),
            dtype=np.int32,
        )
        counts.sum_duplicates()
        counts.sort_indices()
        known = np.bincount(rows[keep], minlength=n_docs).astype(np.int64)
        words = np.bincount(sent_doc, weights=sent_words, minlength=n_docs)
        unmasked_words = np.bincount(
            sent_doc, weights=np.where(masked, 0, sent_words), minlength=n_docs
        )
        roles = self.spec.settings.roles
        reasons: list[str | None] = []
        for d in range(n_docs):
            if known[d] > 0:
                reasons.append(None)
            elif words[d] == 0:
                reasons.append(
                    "no words"
                    if roles == "all"
                    else f"no words in the turns kept (roles = {roles!r})"
                )
            elif unmasked_words[d] == 0:
                reasons.append("only boilerplate sentences")
            elif kept_before[d] == 0:
                reasons.append("no tokens left after the filter")
            else:
                reasons.append(NO_KNOWN_TERMS)
        return AppliedBatch(list(res.tids), counts, mapped, offsets, known, reasons)

    def apply_all(self, batches: Iterable[Batch]) -> AppliedBatch:
        """Prepare every batch and join the results."""
        return AppliedBatch.concat([self.apply(b) for b in batches], len(self.spec.vocabulary))


def build_frozen_prep(ws: Workspace, version: Any, spec: Any) -> tuple[str, Path]:
    """Prepare every stored transcript with a version's frozen prep; make it current.

    The vocabulary, phrases and boilerplate sentences are the version's; transcripts with
    fewer than ``min_tokens`` (of the version's settings) tokens in the vocabulary are
    excluded with the reason. Cached under ``prepared/<hash>`` like any prep; the hash
    covers the version's prep, its vocabulary, the stored transcripts and the library
    versions. The caller holds the lock.

    Returns
    -------
    prep_hash, folder
    """
    versions = library_versions()
    languages = themed_languages(ws.settings().prepare)
    with ws.store() as store:
        fingerprint = store.corpus_fingerprint(languages)
        doc = {
            "frozen_from": spec.prep_hash,
            "vocabulary": hashlib.sha256("\n".join(spec.vocabulary).encode()).hexdigest(),
            "phrases": spec.phrases,
            "boilerplate": spec.boilerplate,
            "settings": spec.settings.model_dump(exclude={"batch_size", "n_process"}),
            "lemmas": spec.lemma_choices,
            "names": [sorted(spec.names_in_use), sorted(spec.names_named)],
            "made_by": spec.chain_version,
            "corpus": fingerprint,
            "chain": CHAIN_VERSION,
            "versions": versions,
        }
        prep_hash = hashlib.sha256(
            json.dumps(doc, sort_keys=True, ensure_ascii=True).encode()
        ).hexdigest()[:16]
        folder = ws.prepared_dir / prep_hash
        if not all((folder / n).is_file() for n in FILES):
            applier = PrepApplier(spec)
            applied = AppliedBatch.concat(
                [
                    applier.apply(b)
                    for b in store.iter_turn_batches(
                        spec.settings.batch_size, speakers=True, languages=languages
                    )
                ],
                len(spec.vocabulary),
            )
            min_tokens = spec.settings.min_tokens
            keep = applied.known >= min_tokens
            excluded = [
                (
                    applied.doc_ids[d],
                    applied.reasons[d] or too_few_terms(int(applied.known[d]), min_tokens),
                )
                for d in np.flatnonzero(~keep).tolist()
            ]
            lengths = np.diff(applied.offsets)
            offsets = np.zeros(int(keep.sum()) + 1, dtype=np.int64)
            np.cumsum(lengths[keep], out=offsets[1:])
            corpus = PreparedCorpus(
                vocabulary=list(spec.vocabulary),
                doc_ids=[applied.doc_ids[d] for d in np.flatnonzero(keep).tolist()],
                counts=applied.counts[np.flatnonzero(keep)].tocsr(),
                tokens=applied.tokens[np.repeat(keep, lengths)].astype(np.int32),
                offsets=offsets,
                excluded=excluded,
            )
            corpus.info = {
                "hash": prep_hash,
                "created_at": dt.datetime.now().astimezone().isoformat(timespec="seconds"),
                "settings": spec.settings.model_dump(),
                "versions": versions,
                # the rules applied are those of the version's chain, so a version
                # published from this prep prepares new text the same way
                "chain_version": spec.chain_version,
                "corpus_fingerprint": fingerprint,
                "counts_dtype": "int32",
                "frozen_from": {"version": version.n, "prep_hash": spec.prep_hash},
                "counts": corpus.summary(),
                "phrases": spec.raw.get("phrases", [[p, None] for p in spec.phrases]),
                "lemmas": {"choices": dict(spec.lemma_choices)},
                "names": {
                    "in_use": sorted(spec.names_in_use),
                    "named": sorted(spec.names_named),
                },
                "boilerplate": spec.raw.get(
                    "boilerplate", [{"sentence": s} for s in spec.boilerplate]
                ),
            }
            explain = {
                "transcripts": {
                    "read": len(applied.doc_ids),
                    "usable": corpus.n_docs,
                    "excluded": len(excluded),
                },
                "frozen_from": corpus.info["frozen_from"],
                "excluded": [{"id": t, "reason": r} for t, r in excluded],
            }
            with atomic_dir(folder) as tmp:
                corpus.save(tmp)
                (tmp / EXPLAIN_FILE).write_text(
                    json.dumps(explain, ensure_ascii=False, indent=1) + "\n", encoding="utf-8"
                )
            info = corpus.info
        else:
            info = json.loads((folder / "prep.json").read_text(encoding="utf-8"))
        keep_keys = ("hash", "settings", "versions", "counts", "created_at", "chain_version")
        record = {k: info[k] for k in keep_keys if k in info}
        record["path"] = str(folder.relative_to(ws.root))
        record["frozen_from"] = info.get("frozen_from")
        store.record_prep(prep_hash, record)
    return prep_hash, folder
