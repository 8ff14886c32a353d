"""PreparedCorpus: save and load without pickle, consistency checks."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import scipy.sparse as sp

from talkthemes.errors import NotReadyError, StoreError
from talkthemes.prepare.corpus import OOV, PreparedCorpus


def small() -> PreparedCorpus:
    tokens = np.array([0, OOV, 1, 1, 2, OOV], dtype=np.int32)
    offsets = np.array([0, 3, 6], dtype=np.int64)
    counts = sp.csr_matrix(np.array([[1, 1, 0], [0, 1, 1]], dtype=np.int32))
    return PreparedCorpus(
        vocabulary=["invoice", "late_fee", "meter"],
        doc_ids=["a", "b"],
        counts=counts,
        tokens=tokens,
        offsets=offsets,
        excluded=[("c", "no words")],
        info={"hash": "abc", "versions": {"gensim": "0.0.1"}},
    )


def test_round_trip(tmp_path: Path, caplog):
    c = small()
    c.validate()
    c.save(tmp_path)
    loaded = PreparedCorpus.load(tmp_path)
    loaded.validate()
    assert loaded.vocabulary == c.vocabulary and loaded.doc_ids == c.doc_ids
    assert loaded.excluded == c.excluded
    assert loaded.info == c.info
    assert (loaded.counts != c.counts).nnz == 0 and loaded.counts.dtype == np.int32
    assert np.array_equal(loaded.tokens, c.tokens) and loaded.tokens.dtype == np.int32
    assert loaded.offsets.dtype == np.int64
    assert "other library versions" in caplog.text  # gensim 0.0.1 differs from the installed
    assert json.loads((tmp_path / "prep.json").read_text())["excluded"] == [["c", "no words"]]
    assert loaded.texts() == [["invoice", "late_fee"], ["late_fee", "meter"]]
    assert loaded.texts(keep_oov=True)[0] == ["invoice", "", "late_fee"]
    assert loaded.summary()["tokens_out_of_vocabulary"] == 2


def test_files_hold_no_pickled_objects(tmp_path: Path):
    small().save(tmp_path)
    with np.load(tmp_path / "counts.npz", allow_pickle=False) as npz:
        assert all(npz[k].dtype != object for k in npz.files)
    for name in ("tokens.npy", "offsets.npy"):
        assert np.load(tmp_path / name, allow_pickle=False).dtype != object


def test_missing_or_broken_files(tmp_path: Path):
    with pytest.raises(NotReadyError, match="missing"):
        PreparedCorpus.load(tmp_path)
    small().save(tmp_path)
    (tmp_path / "tokens.npy").write_bytes(b"not numpy")
    with pytest.raises(StoreError, match="cannot read"):
        PreparedCorpus.load(tmp_path, mmap=False)


def test_validate_finds_disagreements():
    c = small()
    c.counts = sp.csr_matrix(np.array([[1, 0, 0], [0, 1, 1]], dtype=np.int32))
    with pytest.raises(StoreError, match="disagree with the token stream"):
        c.validate()
    c = small()
    c.offsets = np.array([0, 4, 5], dtype=np.int64)
    with pytest.raises(StoreError, match="do not partition"):
        c.validate()
