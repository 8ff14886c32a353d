"""The refresh's coherence check: do the current themes still fit the new transcripts?

The current version's themes are scored (C_NPMI, sliding window of 10) on the new
transcripts and on an equally large random sample of its own training transcripts, both
prepared the version's way; when the score on the new ones is lower by more than
``[refresh] resweep_coherence_drop``, K is chosen again. Fewer than
:data:`MIN_NEW_FOR_CHECK` new transcripts are too few to judge, and the check is skipped.
"""

from __future__ import annotations

import logging
from collections.abc import Sequence
from typing import Any

import numpy as np

from talkthemes.metrics.coherence import score
from talkthemes.metrics.cooccurrence import build_reference
from talkthemes.prepare.frozen import PrepApplier, PrepSpec
from talkthemes.versions.load import Version
from talkthemes.workspace import Workspace

__all__ = ["MIN_NEW_FOR_CHECK", "coherence_check"]

#: Fewer new (usable) transcripts than this skip the coherence check.
MIN_NEW_FOR_CHECK = 20
#: Calls read and prepared at a time.
_CHUNK = 2000


def coherence_check(
    ws: Workspace,
    version: Version,
    spec: PrepSpec,
    new_ids: Sequence[str],
    *,
    drop: float,
    seed: int = 0,
) -> dict[str, Any]:
    """C_NPMI of a version's themes on new transcripts versus on its own transcripts.

    Both sets are prepared the version's way; the earlier set is a seeded random sample of
    the version's training transcripts as large as the new set (so both scores rest on as
    much text). ``triggered`` is True when the score on the new transcripts is lower by more
    than ``drop``.

    Returns
    -------
    dict
        ``checked`` (False when too few new transcripts), ``new``, ``earlier`` (mean
        C_NPMI over the themes scored in both sets), ``difference`` (earlier − new),
        ``themes_compared``, ``n``, ``drop``, ``triggered``.
    """
    # Deferred on purpose: talkthemes.models loads gensim and scikit-learn (about a second).
    from talkthemes.models.base import top_terms

    applier = PrepApplier(spec)

    def prepared(ids: Sequence[str]) -> Any:
        # a chunk of calls read and prepared at a time: their texts never all in memory
        chunks = (ids[i : i + _CHUNK] for i in range(0, len(ids), _CHUNK))
        return applier.apply_all(store.turns_for(list(c), speakers=True) for c in chunks)

    with ws.store() as store:
        new = prepared(list(new_ids))
        usable = new.known >= spec.settings.min_tokens
        n = int(usable.sum())
        if n < MIN_NEW_FOR_CHECK or not version.doc_ids:
            return {"checked": False, "n": n, "drop": drop, "triggered": False}
        rng = np.random.default_rng([seed, 20100601])
        pick = rng.choice(len(version.doc_ids), size=min(n, len(version.doc_ids)), replace=False)
        earlier = prepared([version.doc_ids[i] for i in sorted(pick)])
    topn = int(version.info.get("topn", 10))
    tops = top_terms(version.topic_terms, min(topn, version.topic_terms.shape[1]))

    def npmi(applied: Any, rows: np.ndarray) -> np.ndarray:
        ref = build_reference(
            applied.tokens, applied.offsets, applied.counts, np.unique(tops), windows=(10,),
            rows=rows,
        )  # fmt: skip
        return np.asarray(score(ref, tops, "c_npmi").per_topic, dtype=np.float64)

    # a small sample often misses a top word; the check handles that (below), so the
    # coherence module's warning about it is not passed on
    quiet = logging.getLogger("talkthemes.metrics.coherence")
    level = quiet.level
    quiet.setLevel(logging.ERROR)
    try:
        on_new = npmi(new, np.flatnonzero(usable))
        on_earlier = npmi(earlier, np.arange(len(earlier.doc_ids)))
    finally:
        quiet.setLevel(level)
    # a theme whose top word never occurs in one of the sets has no score there: compare
    # the themes scored in both
    both = np.isfinite(on_new) & np.isfinite(on_earlier)
    if not both.any():
        return {"checked": False, "n": n, "drop": drop, "triggered": False}
    mean_new, mean_earlier = float(on_new[both].mean()), float(on_earlier[both].mean())
    diff = mean_earlier - mean_new
    return {
        "checked": True,
        "measure": "c_npmi",
        "new": round(mean_new, 6),
        "earlier": round(mean_earlier, 6),
        "difference": round(diff, 6),
        "themes_compared": int(both.sum()),
        "n": n,
        "drop": drop,
        "triggered": bool(diff > drop),
    }
