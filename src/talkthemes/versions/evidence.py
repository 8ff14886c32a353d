"""Evidence sentences: the few sentences of the calls that carry a theme most.

A labeller reads a theme's evidence sentences instead of whole calls (docs/methods.md,
"Evidence sentences"). They are chosen once, when a version is written (publish or
refresh), and stored with it as ``evidence.json``; screens and exports read them.

For each theme *k*:

1. **Candidate calls** are the :data:`CANDIDATE_CALLS` calls it leads with the largest
   share θ_dk.
2. **Sentences.** Each turn is scrubbed of personal data as the chain scrubs it
   (:func:`talkthemes.prepare.scrub.scrub`; always, since the sentences are shown) and cut
   into sentences at the chain's sentence ends (``. ! ? …`` and line breaks,
   :func:`talkthemes.prepare.boilerplate.split_sentences`). Sentences of fewer than
   :data:`MIN_WORDS` words are dropped, and so is every sentence the version's prep found
   to be *boilerplate* (its normalised text is on the prep's list); a sentence longer than
   :data:`MAX_WORDS` words is read as pieces of at most that many words.
3. **Prepared terms.** Each sentence is prepared exactly as the version's training data
   was (:class:`talkthemes.prepare.frozen.PrepApplier`: roles, lemmas, filter, phrases,
   vocabulary), giving the set T(s) of vocabulary terms it holds.
4. **Score.** A sentence qualifies when T(s) holds one of the theme's :data:`TOP_TERMS`
   most relevant terms (relevance at λ, Sievert & Shirley 2014); its score is the sum of
   the theme's term weights over its distinct terms, score(s) = Σ_{w ∈ T(s)} φ_kw (a word
   said twice counts once: spoken disfluencies repeat words). Sentences scoring below
   :data:`MIN_RELATIVE_SCORE` of the theme's best sentence are left out.
5. **Choice.** Up to :data:`MAX_SENTENCES` sentences are picked by maximal marginal
   relevance (Carbonell & Goldstein 1998): each next sentence maximises
   λ_MMR · score(s) / max score − (1 − λ_MMR) · max_{t chosen} cos(s, t), with the cosine
   between the sentences' term sets and λ_MMR = :data:`MMR_LAMBDA`, so near-repeats of a
   chosen sentence give way to sentences that say something else. No two sentences come
   from the same call, and a sentence said word for word in several calls is a candidate
   once (the first time). Customer sentences are chosen first; sentences of unknown
   speakers, then of agents, only fill the places customer sentences cannot.

They are chosen by :func:`talkthemes.versions.evidence_build.build_evidence`. Each stored
sentence keeps its call id, the speaker's role, the theme's share in the call, its score
and the theme terms it holds (screens highlight those in the text).

References
----------
Carbonell, J., Goldstein, J. (1998). The use of MMR, diversity-based reranking for
reordering documents and producing summaries. Proc. SIGIR '98, pp. 335–336.
Sievert, C., Shirley, K. E. (2014). Proc. ACL 2014 Workshop on Interactive Language
Learning, Visualization, and Interfaces, pp. 63–70.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

__all__ = [
    "CANDIDATE_CALLS",
    "EVIDENCE_FILE",
    "MAX_SENTENCES",
    "MIN_RELATIVE_SCORE",
    "MIN_WORDS",
    "MMR_LAMBDA",
    "ROLE_TIERS",
    "TOP_TERMS",
    "EvidenceSentence",
    "evidence_document",
    "load_evidence",
]

#: The file of a version folder holding its evidence sentences.
EVIDENCE_FILE = "evidence.json"
#: Sentences kept per theme.
MAX_SENTENCES = 10
#: Calls read per theme (those it leads most strongly).
CANDIDATE_CALLS = 40
#: A sentence must hold one of the theme's this many most relevant terms.
TOP_TERMS = 30
#: λ of maximal marginal relevance: the weight of the score against novelty.
MMR_LAMBDA = 0.5
#: Shorter sentences are never evidence ("Yes, that's right.").
MIN_WORDS = 4
#: Longer sentences (unpunctuated speech) are read as pieces of this many words.
MAX_WORDS = 40
#: Order in which speakers' sentences are chosen.
ROLE_TIERS = {"customer": 0, "unknown": 1, "agent": 2}
#: What stands where personal data was removed.
REMOVED = "[…]"

#: Sentences scoring below this share of the theme's best one are not considered.
MIN_RELATIVE_SCORE = 0.25


@dataclass(frozen=True)
class EvidenceSentence:
    """One evidence sentence of a theme.

    Attributes
    ----------
    call_id : str
        The call (transcript id) it comes from.
    role : str
        ``customer``, ``agent`` or ``unknown``.
    text : str
        The sentence as said, personal data removed (shown as "[…]").
    terms : tuple of str
        The theme's top terms it holds, heaviest first (screens highlight them).
    score : float
        Σ of the theme's term weights over its distinct terms.
    share : float
        The theme's share in the call.
    """

    call_id: str
    role: str
    text: str
    terms: tuple[str, ...]
    score: float
    share: float

    def to_json(self) -> dict[str, Any]:
        return {
            "call_id": self.call_id,
            "role": self.role,
            "text": self.text,
            "terms": list(self.terms),
            "score": round(float(self.score), 6),
            "share": round(float(self.share), 6),
        }

    @classmethod
    def from_json(cls, doc: dict[str, Any]) -> EvidenceSentence:
        return cls(
            call_id=str(doc["call_id"]),
            role=str(doc.get("role", "unknown")),
            text=str(doc["text"]),
            terms=tuple(str(t) for t in doc.get("terms", [])),
            score=float(doc.get("score", 0.0)),
            share=float(doc.get("share", 0.0)),
        )


# -- the file -----------------------------------------------------------------------------
def evidence_document(
    theme_ids: Sequence[int], sentences: Sequence[Sequence[EvidenceSentence]]
) -> dict[str, Any]:
    """The JSON document of ``evidence.json``: the rule and each theme's sentences."""
    return {
        "rule": {
            "candidate_calls": CANDIDATE_CALLS,
            "top_terms": TOP_TERMS,
            "max_sentences": MAX_SENTENCES,
            "mmr_lambda": MMR_LAMBDA,
            "min_words": MIN_WORDS,
            "max_words": MAX_WORDS,
            "roles": list(ROLE_TIERS),
        },
        "themes": [
            {"theme_id": int(t), "sentences": [s.to_json() for s in ss]}
            for t, ss in zip(theme_ids, sentences, strict=True)
        ],
    }


def load_evidence(folder: Path) -> dict[int, list[EvidenceSentence]] | None:
    """A version folder's evidence sentences by theme id; None when it has none stored
    (versions written before evidence sentences were kept)."""
    path = folder / EVIDENCE_FILE
    if not path.is_file():
        return None
    doc = json.loads(path.read_text(encoding="utf-8"))
    return {
        int(t["theme_id"]): [EvidenceSentence.from_json(s) for s in t.get("sentences", [])]
        for t in doc.get("themes", [])
    }
