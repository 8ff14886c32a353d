"""Build a workspace whose current prep is a given token corpus (no chain involved)."""

from __future__ import annotations

import hashlib
from collections.abc import Sequence

import numpy as np
import scipy.sparse as sp

from talkthemes.prepare.corpus import PreparedCorpus
from talkthemes.workspace import Workspace, atomic_dir


def install_prep(
    ws: Workspace,
    vocabulary: Sequence[str],
    token_lists: Sequence[Sequence[str]],
    doc_ids: Sequence[str] | None = None,
) -> PreparedCorpus:
    """Save ``token_lists`` as the workspace's current prep and return it."""
    index = {t: i for i, t in enumerate(vocabulary)}
    doc_ids = list(doc_ids or [f"d{i:05d}" for i in range(len(token_lists))])
    ids = [np.array([index.get(t, -1) for t in toks], dtype=np.int32) for toks in token_lists]
    offsets = np.zeros(len(ids) + 1, dtype=np.int64)
    offsets[1:] = np.cumsum([len(a) for a in ids])
    tokens = np.concatenate(ids) if ids else np.zeros(0, dtype=np.int32)
    rows = np.repeat(np.arange(len(ids)), [len(a) for a in ids])
    keep = tokens >= 0
    counts = sp.csr_matrix(
        (np.ones(int(keep.sum()), dtype=np.int32), (rows[keep], tokens[keep])),
        shape=(len(ids), len(vocabulary)),
        dtype=np.int32,
    )
    counts.sum_duplicates()
    h = hashlib.sha256(repr((list(vocabulary), doc_ids, tokens.tobytes())).encode()).hexdigest()
    corpus = PreparedCorpus(
        vocabulary=list(vocabulary),
        doc_ids=doc_ids,
        counts=counts,
        tokens=tokens,
        offsets=offsets,
        excluded=[],
        info={"hash": h, "settings": {}},
    )
    with atomic_dir(ws.prepared_dir / h) as tmp:
        corpus.save(tmp)
    with ws.store() as store:
        store.record_prep(h, {"n_docs": len(doc_ids), "n_terms": len(vocabulary)})
    return corpus
