"""Alignment of two versions' themes and the calibrated same-theme cut-off, on topics whose
answer is known (block topics over invented words)."""

from __future__ import annotations

import numpy as np
import pytest

from talkthemes.errors import InputError
from talkthemes.versions.align import align_themes, calibrate_threshold


def blocks(k: int, width: int, *, noise: float = 0.0, seed: int = 0) -> np.ndarray:
    """K topics, topic i uniform over words [i*width, (i+1)*width), plus noise."""
    rng = np.random.default_rng(seed)
    phi = np.zeros((k, k * width))
    for i in range(k):
        phi[i, i * width : (i + 1) * width] = 1.0
    phi = phi + noise * rng.random(phi.shape)
    return phi / phi.sum(axis=1, keepdims=True)


def words(n: int, prefix: str = "w") -> list[str]:
    return [f"{prefix}{i:03d}" for i in range(n)]


def test_calibration_separates_same_and_different_themes() -> None:
    fits = [
        blocks(5, 6, noise=0.02, seed=s)[np.random.default_rng(s).permutation(5)] for s in range(3)
    ]
    cal = calibrate_threshold(fits, 5.0)
    assert cal.n_models == 3 and cal.same.size == 3 * 5 and cal.different.size == 3 * 20
    # matched pairs are the same block (small distance), the others share no block
    assert cal.same.max() < 0.2 and cal.different.min() > 0.9
    assert cal.same_upper == pytest.approx(np.percentile(cal.same, 95))
    assert cal.different_lower == pytest.approx(np.percentile(cal.different, 5))
    assert cal.threshold == pytest.approx((cal.same_upper + cal.different_lower) / 2)
    assert not cal.overlap
    doc = cal.to_json()
    assert doc["threshold"] == pytest.approx(cal.threshold, abs=1e-6)
    assert "95th percentile" in doc["rule"] and doc["n_same"] == 15 and doc["overlap"] is False
    # a larger match_percentile is a less extreme pair of percentiles
    wide = calibrate_threshold(fits, 25.0)
    assert wide.same_upper <= cal.same_upper and wide.different_lower >= cal.different_lower


def test_calibration_reports_overlap_when_seeds_disagree() -> None:
    rng = np.random.default_rng(3)
    fits = [rng.dirichlet(np.full(40, 0.3), size=6) for _ in range(3)]  # unrelated fits
    cal = calibrate_threshold(fits, 10.0)
    assert cal.overlap and cal.to_json()["overlap"] is True


@pytest.mark.parametrize(
    ("fits", "p", "message"),
    [
        ([blocks(3, 4)], 5.0, "at least two fits"),
        ([blocks(3, 4), blocks(3, 5)], 5.0, "shape"),
        ([blocks(3, 4), blocks(3, 4)], 50.0, "match_percentile"),
        ([blocks(1, 4), blocks(1, 4)], 5.0, "two themes"),
    ],
)
def test_calibration_rejects_bad_input(fits: list, p: float, message: str) -> None:
    with pytest.raises(InputError, match=message):
        calibrate_threshold(fits, p)


def test_alignment_carries_permuted_themes_flags_new_and_retired() -> None:
    old = blocks(4, 5, noise=0.01, seed=1)
    old_vocab = words(20)
    # new version: old themes 2, 0, 3 (theme 1 gone) and a theme over five new words; the
    # new vocabulary lists the words in another order and adds the new ones
    new_vocab = words(20)[::-1] + words(5, "n")
    new = np.zeros((4, 25))
    for col, row in enumerate([2, 0, 3]):
        new[col, :20] = old[row][::-1]
    new[3, 20:] = 1.0
    new[3, :20] = 0.001
    new /= new.sum(axis=1, keepdims=True)
    al = align_themes(old, old_vocab, new, new_vocab, threshold=0.5, margin=0.05)
    assert al.matched_old.tolist() == [2, 0, 3, -1]
    np.testing.assert_allclose(al.matched_distance[:3], 0.0, atol=1e-6)
    assert np.isnan(al.matched_distance[3])
    assert al.new.tolist() == [3] and al.retired.tolist() == [1]
    assert al.distance.shape == (4, 4) and al.splits == [] and al.merges == []
    assert al.nearest_old(3)[1] > 0.9 and al.nearest_new(1)[1] > 0.9


def test_alignment_threshold_decides_new_versus_moved() -> None:
    old = blocks(3, 10)
    moved = old.copy()
    moved[0] = 0.7 * old[0] + 0.3 * old[1]  # theme 0 drifted toward theme 1's words
    vocab = words(30)
    d = align_themes(old, vocab, moved, vocab, threshold=1.0).matched_distance[0]
    assert 0.1 < d < 0.9
    assert align_themes(old, vocab, moved, vocab, threshold=d + 0.01).matched_old.tolist() == [
        0,
        1,
        2,
    ]
    strict = align_themes(old, vocab, moved, vocab, threshold=d - 0.01)
    assert strict.matched_old.tolist() == [-1, 1, 2] and strict.retired.tolist() == [0]


def test_near_ties_flag_splits_and_merges() -> None:
    vocab = words(20)
    whole = np.zeros((2, 20))
    whole[0, :10] = 1  # theme A over words 0–9
    whole[1, 10:] = 1  # theme B over words 10–19
    halves = np.zeros((3, 20))
    halves[0, :5] = 1  # A's first half
    halves[1, 5:10] = 1  # A's second half
    halves[2, 10:] = 1  # B unchanged
    whole /= whole.sum(1, keepdims=True)
    halves /= halves.sum(1, keepdims=True)
    split = align_themes(whole, vocab, halves, vocab, threshold=0.6, margin=0.05)
    assert split.splits == [(0, [0, 1])]  # old A is equally close to both halves
    assert split.matched_old[2] == 1 and sorted(split.matched_old[:2].tolist()) == [-1, 0]
    merge = align_themes(halves, vocab, whole, vocab, threshold=0.6, margin=0.05)
    assert merge.merges == [(0, [0, 1])]  # new A is close to both old halves
    none = align_themes(whole, vocab, halves, vocab, threshold=0.5, margin=0.05)
    assert none.splits == []  # above the cut-off, closeness is not a tie


def test_alignment_rejects_bad_input() -> None:
    with pytest.raises(InputError, match="cut-off"):
        align_themes(blocks(2, 3), words(6), blocks(2, 3), words(6), threshold=1.5)
    with pytest.raises(InputError, match="columns"):
        align_themes(blocks(2, 3), words(5), blocks(2, 3), words(6), threshold=0.5)
