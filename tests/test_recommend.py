"""The K recommendation rule on small hand-made sweeps with a known answer."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from talkthemes.sweep.recommend import recommend, summarise_by_k


def _cells(spec: dict[int, tuple[list[float], float]], family: str = "lda") -> pd.DataFrame:
    rows = []
    for k, (coh, stab) in spec.items():
        for seed, c in enumerate(coh):
            rows.append(
                {
                    "family": family,
                    "k": k,
                    "seed": seed,
                    "c_npmi": c,
                    "stability": stab,
                    "diversity": 0.9,
                    "perplexity": 1000.0 - k,
                }
            )
    return pd.DataFrame(rows)


def test_summary_mean_and_standard_error() -> None:
    s = summarise_by_k(_cells({5: ([0.1, 0.2, 0.3], 0.8)}))
    assert s.loc[0, "coherence"] == pytest.approx(0.2)
    assert s.loc[0, "coherence_se"] == pytest.approx(0.1 / np.sqrt(3))


def test_picks_best_when_nothing_close() -> None:
    cells = _cells(
        {5: ([0.05, 0.05, 0.05], 0.9), 10: ([0.10, 0.10, 0.10], 0.9), 15: ([0.06, 0.06, 0.06], 0.9)}
    )
    rec = recommend(cells)["lda"]
    assert rec.k == 10
    assert not rec.weak
    assert any("best mean C_NPMI" in r for r in rec.reasons)
    assert [r["k"] for r in rec.runners_up] == [15, 5]


def test_one_standard_error_rule_prefers_smaller_k() -> None:
    cells = _cells({8: ([0.095, 0.10, 0.105], 0.9), 12: ([0.09, 0.10, 0.12], 0.9)})
    rec = recommend(cells)["lda"]
    assert rec.k == 8  # 0.100 is within one SE (0.0088) of 12's 0.1033
    assert any("within one standard error" in r for r in rec.reasons)
    assert rec.runners_up[0]["why_not"].startswith("within one standard error but larger")


def test_unstable_k_is_not_recommended_even_if_most_coherent() -> None:
    cells = _cells({6: ([0.08, 0.08], 0.8), 20: ([0.2, 0.2], 0.3)})
    rec = recommend(cells, stability_min=0.6)["lda"]
    assert rec.k == 6
    assert "less stable" in rec.runners_up[0]["why_not"]


def test_weak_when_no_k_is_stable() -> None:
    cells = _cells({6: ([0.08, 0.08], 0.2), 9: ([0.1, 0.1], 0.3)})
    rec = recommend(cells, stability_min=0.6)["lda"]
    assert rec.weak and rec.k == 9
    assert any("weak" in r for r in rec.reasons)


def test_each_family_gets_its_own_recommendation() -> None:
    cells = pd.concat(
        [
            _cells({5: ([0.2, 0.2], 0.9), 10: ([0.1, 0.1], 0.9)}, "lda"),
            _cells({5: ([0.1, 0.1], 0.9), 10: ([0.2, 0.2], 0.9)}, "nmf"),
        ]
    )
    recs = recommend(cells)
    assert (recs["lda"].k, recs["nmf"].k) == (5, 10)
    assert recs["nmf"].to_dict()["family"] == "nmf"


def test_unknown_measure_is_refused() -> None:
    with pytest.raises(ValueError, match="rank_by must be one of"):
        recommend(_cells({5: ([0.1], 0.9)}), rank_by="accuracy")


def test_best_family_prefers_stable_then_more_coherent() -> None:
    from talkthemes.sweep.recommend import best_family

    cells = pd.concat(
        [
            _cells({5: ([0.30, 0.30], 0.3)}, "lda"),  # more coherent but unstable → weak
            _cells({5: ([0.20, 0.20], 0.9)}, "nmf"),
        ]
    )
    recs = recommend(cells, stability_min=0.6)
    assert recs["lda"].weak and not recs["nmf"].weak
    assert best_family(recs, cells) == "nmf"
    cells2 = pd.concat(
        [_cells({5: ([0.30, 0.30], 0.9)}, "lda"), _cells({5: ([0.20, 0.20], 0.9)}, "nmf")]
    )
    assert best_family(recommend(cells2), cells2) == "lda"
