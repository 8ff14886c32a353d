"""Version alignment and assignment checked against outside references.

Sources, beside each check:
- scipy 1.17.1 ``scipy.optimize.linear_sum_assignment`` (Crouse 2016), compared with trying
  every one-to-one pairing (brute force over permutations).
- worked check of matching (Kuhn 1955; docs/methods_metrics.md) [run]: A1→B2 and A2→B1
  at 0.100, B3 unmatched.
- scipy 1.17.1 ``scipy.spatial.distance.jensenshannon(p, q, base=2)``.
- gensim 4.4.0 ``LdaModel.inference``: the shares ``assign`` infers from a version's saved
  ``.npy`` state equal gensim's own E-step on the original model with the same seed. (That
  the restored model's ``inference`` equals the original's is checked in
  ``test_lda_restore.py``; here the whole path through the files is.)

The topic matrices are invented test data; the references are the libraries' computations.
"""

from __future__ import annotations

import itertools
import json
from pathlib import Path
from types import SimpleNamespace

import gensim
import numpy as np
import pytest
import scipy
import scipy.sparse as sp
from gensim.matutils import Sparse2Corpus
from gensim.models import LdaModel
from scipy.spatial.distance import jensenshannon

from talkthemes.assign import ShareModel
from talkthemes.models.lda import LdaTopics
from talkthemes.versions.align import align_themes, calibrate_threshold

# Worked-check topics over four words.
A1 = [0.7, 0.2, 0.1, 0.0]
A2 = [0.0, 0.1, 0.2, 0.7]
B1 = [0.0, 0.1, 0.3, 0.6]
B2 = [0.6, 0.3, 0.1, 0.0]
B3 = [0.25, 0.25, 0.25, 0.25]


def test_library_versions() -> None:
    assert scipy.__version__.startswith("1.17.")
    assert gensim.__version__ == "4.4.0"


def _best_total(cost: np.ndarray) -> float:
    rows, cols = cost.shape
    if rows <= cols:
        return min(
            sum(cost[r, c] for r, c in enumerate(p))
            for p in itertools.permutations(range(cols), rows)
        )
    return min(
        sum(cost[r, c] for c, r in enumerate(p)) for p in itertools.permutations(range(rows), cols)
    )


@pytest.mark.parametrize(("k_old", "k_new"), [(4, 4), (3, 5), (5, 3), (6, 6)])
def test_alignment_is_the_optimal_assignment(k_old: int, k_new: int) -> None:
    # scipy 1.17.1 linear_sum_assignment vs brute force over every pairing of the themes.
    rng = np.random.default_rng(10 * k_old + k_new)
    vocab = [f"w{i}" for i in range(25)]
    old = rng.dirichlet(np.full(25, 0.3), size=k_old)
    new = rng.dirichlet(np.full(25, 0.3), size=k_new)
    al = align_themes(old, vocab, new, vocab, threshold=1.0)
    cols = np.flatnonzero(al.matched_old >= 0)
    total = al.distance[al.matched_old[cols], cols].sum()
    assert cols.size == min(k_old, k_new)
    assert total == pytest.approx(_best_total(al.distance), abs=1e-12)
    assert al.new.size == max(0, k_new - k_old) and al.retired.size == max(0, k_old - k_new)


def test_calibration_uses_optimal_pairings() -> None:
    # each pair of fits contributes the brute-force optimal assignment's distances
    rng = np.random.default_rng(4)
    fits = [rng.dirichlet(np.full(12, 0.4), size=4) for _ in range(3)]
    cal = calibrate_threshold(fits, 5.0)
    totals = cal.same.reshape(3, 4).sum(axis=1)
    for total, (a, b) in zip(totals, itertools.combinations(fits, 2), strict=True):
        cost = np.array([[jensenshannon(p, q, base=2) for q in b] for p in a])
        assert total == pytest.approx(_best_total(cost), abs=1e-9)


def test_methods_11_worked_example_through_alignment() -> None:
    # Worked check [run]: A1→B2 and A2→B1 at 0.100 each; B3 unmatched, so it is new. The new
    # version lists its words in another order: the union vocabulary lines them up.
    old_vocab = ["a", "b", "c", "d"]
    new_vocab = ["d", "c", "b", "a"]
    new = np.array([B1, B2, B3])[:, ::-1]
    al = align_themes(np.array([A1, A2]), old_vocab, new, new_vocab, threshold=0.3)
    np.testing.assert_allclose(
        al.distance, [[0.837, 0.100, 0.481], [0.100, 0.837, 0.481]], atol=5e-4
    )
    assert al.matched_old.tolist() == [1, 0, -1]  # B1 continues A2, B2 continues A1
    np.testing.assert_allclose(al.matched_distance[:2], [0.100, 0.100], atol=5e-4)
    assert al.new.tolist() == [2] and al.retired.size == 0


def test_distances_over_the_union_vocabulary_equal_scipy() -> None:
    # scipy 1.17.1 jensenshannon(base=2) on the themes written out over the union vocabulary
    # by hand (a word a version lacks has probability 0 there).
    rng = np.random.default_rng(8)
    old_vocab = [f"w{i}" for i in range(12)]
    new_vocab = [f"w{i}" for i in range(6, 18)][::-1]
    old = rng.dirichlet(np.ones(12), size=3)
    new = rng.dirichlet(np.ones(12), size=4)
    union = sorted(set(old_vocab) | set(new_vocab))

    def spread(phi: np.ndarray, vocab: list[str]) -> np.ndarray:
        out = np.zeros((phi.shape[0], len(union)))
        for j, w in enumerate(vocab):
            out[:, union.index(w)] = phi[:, j]
        return out

    want = np.array(
        [
            [jensenshannon(p, q, base=2) for q in spread(new, new_vocab)]
            for p in spread(old, old_vocab)
        ]
    )
    al = align_themes(old, old_vocab, new, new_vocab, threshold=1.0)
    np.testing.assert_allclose(al.distance, want, rtol=0, atol=1e-12)


def test_assign_shares_from_saved_files_equal_gensim_inference(tmp_path: Path) -> None:
    # gensim 4.4.0 LdaModel.inference, γ normalised: θ_d = γ_d / Σ_k γ_dk, with the model's
    # random state seeded like the version (RandomState(seed) draws the starting γ).
    rng = np.random.default_rng(2)
    topics = rng.dirichlet(np.full(30, 0.1), size=4)
    rows = [rng.multinomial(40, rng.dirichlet(np.full(4, 0.3)) @ topics) for _ in range(150)]
    counts = sp.csr_matrix(np.array(rows, dtype=np.float64))
    fitted = LdaTopics(k=4, seed=9, passes=3, chunksize=50).fit(counts)
    arrays, params = fitted.state()
    folder = tmp_path / "version" / "model"
    folder.mkdir(parents=True)
    for name, arr in arrays.items():
        np.save(folder / f"{name}.npy", arr, allow_pickle=False)
    (folder / "params.json").write_text(json.dumps(params))
    version = SimpleNamespace(n=1, folder=tmp_path / "version", info={"family": "lda", "seed": 9})
    new_docs = counts[:40]
    got = ShareModel.from_version(version).shares(new_docs.astype(np.int32))
    twin = LdaModel.__new__(LdaModel)
    twin.__dict__.update(fitted.model_.__dict__)
    twin.random_state = np.random.RandomState(9)
    gamma, _ = twin.inference(list(Sparse2Corpus(new_docs, documents_columns=False)))
    # the compiled E-step equals gensim's up to floating-point summation order (which can
    # move a document's stopping point by one iteration, a change below gamma_threshold)
    np.testing.assert_allclose(got, gamma / gamma.sum(axis=1, keepdims=True), rtol=1e-6, atol=1e-9)
