"""The preprocessing chain that turns stored transcripts into a prepared corpus.

Steps, one module each: :mod:`.roles` → :mod:`.scrub` → :mod:`.names` (people's names:
per batch in :mod:`.names_mark`, over the corpus in :mod:`.names_corpus`) →
:mod:`.boilerplate` → :mod:`.lemmas` (words in :mod:`.words`, spaCy's resources in
:mod:`.lexicon`, the checks on the lookup table in :mod:`.headwords`, a spaCy pipeline
instead in :mod:`.pipeline`, token codes in :mod:`.encoding`) → :mod:`.filter` →
:mod:`.phrases` → :mod:`.vocabulary`.
:mod:`.chain` composes the per-transcript steps and streams batches through them (on worker
processes when ``n_process`` > 1, :mod:`.workers`; results merged by :mod:`.collect`);
:mod:`.assemble` runs the corpus-wide steps (:mod:`.table`, :mod:`.steps`, :mod:`.build`);
:mod:`.run` caches the result under ``prepared/<hash>/`` as a :class:`PreparedCorpus`;
:mod:`.explain` describes the report of what each step did and masks the names in it;
:mod:`.frozen` prepares new text exactly like a published version (:mod:`.applied`).
"""

from __future__ import annotations

from talkthemes.prepare.chain import STAGES, prepare_corpus
from talkthemes.prepare.corpus import OOV, PreparedCorpus
from talkthemes.prepare.explain import masked_explain
from talkthemes.prepare.run import PrepareResult, compute_prep_hash, load_current, run_prepare

__all__ = [
    "OOV",
    "STAGES",
    "PrepareResult",
    "PreparedCorpus",
    "compute_prep_hash",
    "load_current",
    "masked_explain",
    "prepare_corpus",
    "run_prepare",
]
