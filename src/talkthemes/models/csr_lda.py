"""gensim's ``LdaModel`` with the compiled E-step, and the CSR corpus it trains on.

:class:`CsrLdaModel` replaces only ``LdaModel.inference`` (the per-document variational E-step
of Hoffman, Blei & Bach 2010) with :func:`talkthemes.models.estep.estep`; the online M-step, the
α and η updates, the bound and the state stay gensim's own. :class:`RowCorpus` hands gensim's
chunking references to CSR rows, so training never builds bag-of-words lists. See
docs/methods_models.md, "The compiled E-step".

References
----------
Hoffman, M. D., Blei, D. M., Bach, F. (2010). Online Learning for Latent Dirichlet
Allocation. Advances in Neural Information Processing Systems 23.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from typing import Any

import numpy as np
import scipy.sparse as sp
from gensim.models import LdaModel

from talkthemes.models.estep import estep

__all__ = ["CsrLdaModel", "RowCorpus"]


class _RowRef:
    """One row of a :class:`RowCorpus`, as gensim's chunking hands it to ``inference``."""

    __slots__ = ("matrix", "row")

    def __init__(self, matrix: sp.csr_matrix, row: int) -> None:
        self.matrix = matrix
        self.row = row


class RowCorpus:
    """A CSR count matrix as a corpus for :meth:`CsrLdaModel.update`.

    gensim's ``update`` only takes ``len`` of the corpus and groups its items into chunks
    for ``inference``; the items here are row references, so :class:`CsrLdaModel` slices the
    matrix instead of building and re-reading bag-of-words lists.
    """

    def __init__(self, matrix: sp.csr_matrix) -> None:
        self.matrix = matrix

    def __len__(self) -> int:
        return int(self.matrix.shape[0])

    def __iter__(self) -> Iterator[_RowRef]:
        matrix = self.matrix
        return (_RowRef(matrix, i) for i in range(matrix.shape[0]))


def _chunk_matrix(chunk: Sequence[Any] | sp.csr_matrix, n_terms: int) -> sp.csr_matrix:
    """The CSR rows of a chunk: a CSR matrix, row references or gensim bag-of-words documents."""
    if sp.issparse(chunk):
        return sp.csr_matrix(chunk)
    if len(chunk) and isinstance(chunk[0], _RowRef):
        matrix = chunk[0].matrix
        rows = np.fromiter((ref.row for ref in chunk), dtype=np.int64, count=len(chunk))
        if all(ref.matrix is matrix for ref in chunk):
            if len(rows) and rows[-1] - rows[0] == len(rows) - 1:
                return matrix[int(rows[0]) : int(rows[-1]) + 1]
            return matrix[rows]
        raise ValueError("a chunk mixes rows of different matrices")
    lengths = np.fromiter((len(doc) for doc in chunk), dtype=np.int64, count=len(chunk))
    indptr = np.zeros(len(chunk) + 1, dtype=np.int64)
    np.cumsum(lengths, out=indptr[1:])
    flat = [pair for doc in chunk for pair in doc]
    ids = np.fromiter((int(i) for i, _ in flat), dtype=np.int64, count=len(flat))
    cts = np.fromiter((c for _, c in flat), dtype=np.float64, count=len(flat))
    return sp.csr_matrix((cts, ids, indptr), shape=(len(chunk), n_terms))


class CsrLdaModel(LdaModel):
    """gensim's ``LdaModel`` with its E-step run by the compiled :func:`estep`.

    Everything else — the online M-step, α and η updates, the bound, saving the state — is
    gensim's own. ``inference`` accepts gensim bag-of-words chunks as before, and chunks of
    :class:`RowCorpus` rows or CSR matrices without going through Python lists. Models with a
    dtype other than float64 use gensim's E-step unchanged.

    Attributes
    ----------
    estep_converged : int or None
        Documents of the last compiled E-step call whose γ met ``gamma_threshold`` within
        ``iterations`` (None before the first call, and for gensim's own E-step).
    """

    estep_converged: int | None = None

    def inference(
        self, chunk: Sequence[Any] | sp.csr_matrix, collect_sstats: bool = False
    ) -> tuple[np.ndarray, np.ndarray | None]:
        """gensim's ``LdaModel.inference``, same arguments and results, compiled."""
        if self.dtype != np.float64:
            self.estep_converged = None
            if sp.issparse(chunk) or (len(chunk) and isinstance(chunk[0], _RowRef)):
                rows = _chunk_matrix(chunk, self.num_terms)
                chunk = [list(zip(r.indices.tolist(), r.data.tolist(), strict=True)) for r in rows]
            return super().inference(chunk, collect_sstats=collect_sstats)
        return self.csr_inference(_chunk_matrix(chunk, self.num_terms), collect_sstats)

    def csr_inference(
        self, counts: sp.csr_matrix, collect_sstats: bool = False
    ) -> tuple[np.ndarray, np.ndarray | None]:
        """The E-step for the rows of a CSR count matrix (float64 models).

        Draws the starting points γ⁰ ~ Gamma(100, 1/100) from the model's random state
        exactly as gensim does, then runs :func:`estep`.

        Returns
        -------
        gamma : ndarray of shape (D, K)
        sstats : ndarray of shape (K, V) or None
            Sufficient statistics multiplied by exp(E[log β]), when ``collect_sstats``.
        """
        counts = sp.csr_matrix(counts)
        gamma = self.random_state.gamma(100.0, 1.0 / 100.0, (counts.shape[0], self.num_topics))
        gamma = gamma.astype(np.float64, copy=False)
        sstats = np.zeros_like(self.expElogbeta, dtype=np.float64)
        converged = estep(
            counts.indptr.astype(np.int64, copy=False),
            counts.indices.astype(np.int64, copy=False),
            counts.data.astype(np.float64, copy=False),
            np.ascontiguousarray(self.expElogbeta, dtype=np.float64),
            np.ascontiguousarray(self.alpha, dtype=np.float64),
            gamma,
            int(self.iterations),
            float(self.gamma_threshold),
            sstats,
            bool(collect_sstats),
        )
        self.estep_converged = int(converged)
        if not collect_sstats:
            return gamma, None
        sstats *= self.expElogbeta
        return gamma, sstats
