"""The prepared corpus: what every model, metric and view reads.

Saved under ``prepared/<hash>/`` as plain files, no pickle:

``vocabulary.json``
    The V terms (a JSON list); phrases are written ``first_second``.
``doc_ids.json``
    The D transcript ids used for training, in store order.
``counts.npz``
    D×V term counts, a canonical ``scipy.sparse`` CSR matrix of **int32** counts
    (``scipy.sparse.save_npz``; read back with ``allow_pickle=False``).
``tokens.npy``
    **int32**, the transcripts' kept tokens one transcript after another, in spoken order,
    for sliding-window coherence. Tokens that survived filtering and phrases but are not in
    the vocabulary keep their position as :data:`OOV` (-1).
``offsets.npy``
    **int64**, length D+1: transcript ``d`` is ``tokens[offsets[d]:offsets[d + 1]]``.
``prep.json``
    Settings, hash, library versions, counts, and the excluded transcripts with reasons.
``explain.json``
    What each step removed or joined (``prepare --explain``).
"""

from __future__ import annotations

import json
import logging
import zipfile
from dataclasses import dataclass, field
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path
from typing import Any

import numpy as np
import scipy.sparse as sp
from numpy.typing import NDArray

from talkthemes.errors import NotReadyError, StoreError

__all__ = ["FILES", "OOV", "PreparedCorpus", "library_versions"]

logger = logging.getLogger(__name__)

#: Placeholder id of an out-of-vocabulary position in :attr:`PreparedCorpus.tokens`.
OOV = -1

FILES = (
    "vocabulary.json",
    "doc_ids.json",
    "counts.npz",
    "tokens.npy",
    "offsets.npy",
    "prep.json",
)


def library_versions() -> dict[str, str]:
    """Versions of the libraries whose data or behaviour shape a prep (faker: the
    first-name list of the names step)."""
    out = {}
    for name in ("spacy", "spacy-lookups-data", "gensim", "faker"):
        try:
            out[name] = version(name)
        except PackageNotFoundError:  # pragma: no cover - all are dependencies
            out[name] = "missing"
    return out


@dataclass
class PreparedCorpus:
    """Vocabulary, transcript ids, term counts and token streams of a prep.

    Attributes
    ----------
    vocabulary : list of str
        The V terms; term ``j`` is column ``j`` of :attr:`counts`.
    doc_ids : list of str
        Ids of the D transcripts used for training, in store order.
    counts : scipy.sparse.csr_matrix of int32, shape (D, V)
    tokens : ndarray of int32
        Flat in-order token stream of the D transcripts; :data:`OOV` (-1) marks a position
        whose term is not in the vocabulary.
    offsets : ndarray of int64, shape (D + 1,)
    excluded : list of (str, str)
        ``(transcript id, reason)`` for each stored transcript not used for training.
    info : dict
        Settings, hash, library versions and counts (``prep.json``).
    """

    vocabulary: list[str]
    doc_ids: list[str]
    counts: sp.csr_matrix
    tokens: NDArray[np.int32]
    offsets: NDArray[np.int64]
    excluded: list[tuple[str, str]] = field(default_factory=list)
    info: dict[str, Any] = field(default_factory=dict)

    @property
    def n_docs(self) -> int:
        """Number of transcripts used for training (D)."""
        return len(self.doc_ids)

    @property
    def n_terms(self) -> int:
        """Vocabulary size (V)."""
        return len(self.vocabulary)

    def doc_tokens(self, d: int) -> NDArray[np.int32]:
        """Token stream of transcript ``d`` (with :data:`OOV` placeholders)."""
        return self.tokens[self.offsets[d] : self.offsets[d + 1]]

    def texts(self, *, keep_oov: bool = False) -> list[list[str]]:
        """Transcripts as lists of term strings (for gensim); OOV dropped unless asked.

        OOV positions become ``""`` when ``keep_oov`` is true, so windows keep their width.
        """
        vocab = np.asarray([*self.vocabulary, ""], dtype=object)
        out = []
        for d in range(self.n_docs):
            ids = self.doc_tokens(d)
            if not keep_oov:
                ids = ids[ids != OOV]
            out.append(vocab[ids].tolist())
        return out

    def summary(self) -> dict[str, Any]:
        """Plain counts, for status lines and JSON output."""
        n_tokens = int(self.tokens.size)
        oov = int(np.count_nonzero(self.tokens == OOV))
        return {
            "transcripts": self.n_docs,
            "excluded": len(self.excluded),
            "terms": self.n_terms,
            "tokens": n_tokens,
            "tokens_in_vocabulary": n_tokens - oov,
            "tokens_out_of_vocabulary": oov,
            "counts_nonzero": int(self.counts.nnz),
        }

    def validate(self) -> None:
        """Check that the parts fit together.

        Raises
        ------
        StoreError
            When shapes, offsets, ids or counts disagree.
        """
        d, v = self.n_docs, self.n_terms
        problems = []
        if self.counts.shape != (d, v):
            problems.append(f"counts has shape {self.counts.shape}, expected {(d, v)}")
        if self.offsets.shape != (d + 1,):
            problems.append(f"offsets has length {self.offsets.size}, expected {d + 1}")
        elif (
            self.offsets[0] != 0
            or self.offsets[-1] != self.tokens.size
            or np.any(np.diff(self.offsets) < 0)
        ):
            problems.append("offsets do not partition the token stream")
        if self.tokens.size and (self.tokens.min() < OOV or self.tokens.max() >= v):
            problems.append("token ids outside the vocabulary")
        if not problems:
            rows = np.repeat(np.arange(d), np.diff(self.offsets))
            keep = self.tokens != OOV
            stream = sp.coo_matrix(
                (np.ones(int(keep.sum()), dtype=np.int32), (rows[keep], self.tokens[keep])),
                shape=(d, v),
            ).tocsr()
            if (stream != self.counts).nnz:
                problems.append("counts disagree with the token stream")
        if problems:
            raise StoreError("prepared corpus is inconsistent: " + "; ".join(problems))

    # -- persistence -----------------------------------------------------------------
    def save(self, folder: Path) -> None:
        """Write the corpus files into ``folder`` (which must exist; see module docs)."""
        folder = Path(folder)
        _write_json(folder / "vocabulary.json", self.vocabulary)
        _write_json(folder / "doc_ids.json", self.doc_ids)
        counts = sp.csr_matrix(self.counts, dtype=np.int32)
        _save_csr(folder / "counts.npz", counts)
        np.save(folder / "tokens.npy", np.ascontiguousarray(self.tokens, dtype=np.int32))
        np.save(folder / "offsets.npy", np.ascontiguousarray(self.offsets, dtype=np.int64))
        info = dict(self.info)
        info["excluded"] = [[tid, reason] for tid, reason in self.excluded]
        _write_json(folder / "prep.json", info)

    @classmethod
    def load(cls, folder: Path, *, mmap: bool = True) -> PreparedCorpus:
        """Read a corpus written by :meth:`save`.

        Parameters
        ----------
        folder : Path
        mmap : bool
            Memory-map the token stream instead of reading it.

        Raises
        ------
        NotReadyError
            When a file is missing.
        StoreError
            When a file cannot be read or the parts disagree.
        """
        folder = Path(folder)
        missing = [name for name in FILES if not (folder / name).is_file()]
        if missing:
            raise NotReadyError(f"{folder}: not a prepared corpus (missing {', '.join(missing)})")
        try:
            vocabulary = _read_json(folder / "vocabulary.json")
            doc_ids = _read_json(folder / "doc_ids.json")
            info = _read_json(folder / "prep.json")
            with np.load(folder / "counts.npz", allow_pickle=False) as npz:
                fmt = npz["format"].item() if "format" in npz else b"csr"
                fmt = fmt.decode("ascii") if isinstance(fmt, bytes) else str(fmt)
                if fmt != "csr":
                    raise ValueError(f"counts.npz holds a {fmt} matrix, expected csr")
                counts = sp.csr_matrix(
                    (npz["data"], npz["indices"], npz["indptr"]), shape=tuple(npz["shape"])
                )
            tokens = np.load(
                folder / "tokens.npy", allow_pickle=False, mmap_mode="r" if mmap else None
            )
            offsets = np.load(folder / "offsets.npy", allow_pickle=False)
        except (OSError, ValueError, KeyError) as exc:
            raise StoreError(f"{folder}: cannot read prepared corpus: {exc}") from None
        excluded = [(str(t), str(r)) for t, r in info.pop("excluded", [])]
        corpus = cls(
            vocabulary=[str(t) for t in vocabulary],
            doc_ids=[str(t) for t in doc_ids],
            counts=counts,
            tokens=tokens,
            offsets=offsets,
            excluded=excluded,
            info=info,
        )
        saved = info.get("versions", {})
        now = library_versions()
        differ = {k: (saved.get(k), v) for k, v in now.items() if saved.get(k) not in (None, v)}
        if differ:
            logger.warning(
                "%s was prepared with other library versions: %s",
                folder,
                ", ".join(f"{k} {a} (now {b})" for k, (a, b) in differ.items()),
            )
        return corpus


def _save_csr(path: Path, matrix: sp.csr_matrix) -> None:
    """``scipy.sparse.save_npz(path, matrix, compressed=True)`` with the fastest deflate
    level: the same members, read back by ``load_npz``; level 6 took 0.4 s of a
    20,000-call prepare for files a fifth smaller."""
    arrays = {
        "indices": matrix.indices,
        "indptr": matrix.indptr,
        "format": np.array(matrix.format.encode("ascii")),
        "shape": np.array(matrix.shape),
        "data": matrix.data,
    }
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED, compresslevel=1) as zf:
        for name, array in arrays.items():
            with zf.open(f"{name}.npy", "w", force_zip64=True) as member:
                np.lib.format.write_array(member, np.asanyarray(array), allow_pickle=False)


def _write_json(path: Path, value: Any) -> None:
    path.write_text(json.dumps(value, ensure_ascii=False, indent=1) + "\n", encoding="utf-8")


def _read_json(path: Path) -> Any:
    return json.loads(path.read_text(encoding="utf-8"))
