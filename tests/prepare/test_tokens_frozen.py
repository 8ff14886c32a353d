"""The prepared corpus of a few thousand demo calls, frozen as a digest.

Speed work on the chain (docs/performance.md, "Prepare") must not change what it prepares:
the vocabulary, the transcripts kept, every token, the counts and the ``--explain`` data of
2,000 invented demo calls in English and in Spanish hash to the values recorded here, which
were taken with the chain before that work (commit ea5f1f3). A change that is meant to
change the output bumps ``CHAIN_VERSION`` and records the new digests in the same commit.

The digests depend on the spaCy lookup tables and stop-word lists of the installed
versions (pinned in the project's lock), like every prep hash does.
"""

from __future__ import annotations

import hashlib
import json

import numpy as np
import pytest

from talkthemes.config import PrepareSettings
from talkthemes.demo.calls import iter_demo_calls
from talkthemes.prepare.chain import prepare_corpus
from talkthemes.prepare.corpus import library_versions

#: language → (digest, tokens) of 2,000 demo calls, seed 11.
FROZEN = {
    "en": ("a25cab19318d8a0f", 224_666),
    "es": ("abd611fd2c45c609", 217_391),
}
#: The library versions the digests were taken with.
VERSIONS = {"spacy": "3.8.18", "spacy-lookups-data": "1.0.5"}


def prepared_digest(lang: str, *, n: int = 2000, n_process: int = 1, batch: int = 500):
    calls = [
        (c.call_id, [(t.role, t.text, t.speaker) for t in c.turns])
        for c in iter_demo_calls(n, 11, languages=(lang,))
    ]
    settings = PrepareSettings(lang=lang, n_process=n_process, batch_size=batch)

    def source():
        return (calls[i : i + batch] for i in range(0, len(calls), batch))

    corpus, explain = prepare_corpus(source, settings, total=len(calls))
    h = hashlib.sha256()
    h.update(json.dumps([corpus.vocabulary, corpus.doc_ids], ensure_ascii=True).encode())
    counts = corpus.counts
    for a in (corpus.tokens, corpus.offsets, counts.indptr, counts.indices, counts.data):
        h.update(np.ascontiguousarray(a, dtype=np.int64).tobytes())
    h.update(json.dumps(explain, sort_keys=True, ensure_ascii=True, default=str).encode())
    return h.hexdigest()[:16], int(corpus.tokens.size)


def _versions_match() -> bool:
    have = library_versions()
    return all(have.get(k) == v for k, v in VERSIONS.items())


@pytest.mark.parametrize("lang", sorted(FROZEN))
def test_prepared_tokens_are_unchanged(lang):
    if not _versions_match():
        pytest.skip(f"digests were taken with {VERSIONS}, installed: {library_versions()}")
    assert prepared_digest(lang) == FROZEN[lang]


def test_two_processes_and_other_batches_prepare_the_same_tokens():
    if not _versions_match():
        pytest.skip(f"digests were taken with {VERSIONS}")
    assert prepared_digest("en", n_process=2, batch=300) == FROZEN["en"]
