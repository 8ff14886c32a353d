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


def test_best_family_prefers_usable_then_stable_then_coherent() -> None:
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
    # both usable: the more stable family wins, even against higher coherence
    cells2 = pd.concat(
        [_cells({5: ([0.20, 0.20], 0.92)}, "lda"), _cells({5: ([0.30, 0.30], 0.88)}, "nmf")]
    )
    assert best_family(recommend(cells2), cells2) == "lda"
    # equally stable: the higher coherence wins
    cells3 = pd.concat(
        [_cells({5: ([0.20, 0.20], 0.9)}, "lda"), _cells({5: ([0.30, 0.30], 0.9)}, "nmf")]
    )
    assert best_family(recommend(cells3), cells3) == "nmf"


def test_best_family_sets_a_catch_all_recommendation_below_a_usable_one() -> None:
    from talkthemes.sweep.recommend import best_family

    lda = _cells({4: ([0.2, 0.2], 0.95)}, "lda").assign(largest_lead_share=0.9)
    nmf = _cells({4: ([0.1, 0.1], 0.7)}, "nmf").assign(largest_lead_share=0.3)
    cells = pd.concat([lda, nmf])
    recs = recommend(cells)
    assert recs["lda"].catch_all == [4] and not recs["lda"].usable
    assert best_family(recs, cells) == "nmf"  # usable beats more stable


# -- catch-all K: one theme leading a disproportionate share of the transcripts --------------


def _with_lead(cells: pd.DataFrame, shares: dict[int, float]) -> pd.DataFrame:
    out = cells.copy()
    out["largest_lead_share"] = [shares[int(k)] for k in out["k"]]
    return out


def test_a_catch_all_k_is_set_aside_and_the_reasons_say_so() -> None:
    cells = _cells({4: ([0.10, 0.10], 0.9), 6: ([0.20, 0.20], 0.9), 8: ([0.12, 0.12], 0.9)})
    # K=6 is the most coherent, but one theme leads 53% of the transcripts (> 2.5/6 = 42%)
    cells = _with_lead(cells, {4: 0.40, 6: 0.53, 8: 0.20})
    rec = recommend(cells, catch_all_ratio=2.5)["lda"]
    assert rec.catch_all == [6]
    assert rec.k == 8 and rec.usable
    assert any("set aside as catch-all" in r and "K=6 (53%)" in r for r in rec.reasons)
    assert any("largest theme leads 20% of the transcripts at K=8" in r for r in rec.reasons)
    assert rec.rule.endswith(
        "and no catch-all theme (one theme leading more than 2.5/K of the transcripts and "
        "more than 35%)"
    )
    why = {r["k"]: r["why_not"] for r in rec.runners_up}
    assert why[6] == "catch-all: one theme leads 53% of the transcripts (more than 42% at K=6)"
    assert rec.to_dict()["catch_all"] == [6]
    # 40% at K=4 is within 2.5/4 = 62.5%: not a catch-all; the check off keeps K=6
    off = recommend(cells, catch_all_ratio=0)["lda"]
    assert off.k == 6 and off.catch_all == []


def test_the_threshold_is_relative_to_an_even_share_with_a_floor() -> None:
    cells = _with_lead(_cells({5: ([0.2, 0.2], 0.9), 10: ([0.1, 0.1], 0.9)}), {5: 0.49, 10: 0.3})
    # without the floor: 0.30 > 2.5/10 at K=10, 0.49 < 2.5/5 at K=5
    assert recommend(cells, catch_all_ratio=2.5, catch_all_share=0)["lda"].catch_all == [10]
    assert recommend(cells, catch_all_ratio=3.1, catch_all_share=0)["lda"].catch_all == []
    # the floor: at K=10 one theme must also lead more than 35% (the default)
    assert recommend(cells, catch_all_ratio=2.5)["lda"].catch_all == []
    assert recommend(cells, catch_all_ratio=2.5, catch_all_share=0.29)["lda"].catch_all == [10]
    assert recommend(cells, catch_all_ratio=2.0, catch_all_share=0.35)["lda"].catch_all == [5]


def test_every_k_a_catch_all_keeps_a_recommendation_that_says_so() -> None:
    cells = _with_lead(_cells({4: ([0.1, 0.1], 0.9), 6: ([0.2, 0.2], 0.9)}), {4: 0.9, 6: 0.8})
    rec = recommend(cells, catch_all_ratio=2.5)["lda"]
    assert rec.k == 6 and rec.catch_all == [4, 6]
    assert not rec.usable and not rec.weak
    assert any(r.startswith("every K has a catch-all theme") for r in rec.reasons)


def test_cells_without_the_lead_share_skip_the_check() -> None:
    cells = _cells({4: ([0.1, 0.1], 0.9), 6: ([0.2, 0.2], 0.9)})  # a sweep recorded before
    rec = recommend(cells, catch_all_ratio=2.5)["lda"]
    assert rec.k == 6 and rec.catch_all == []
    assert not any("leads" in r for r in rec.reasons)
    partial = _with_lead(cells, {4: 0.3, 6: float("nan")})  # an old cell mixed in
    assert recommend(partial, catch_all_ratio=2.5)["lda"].catch_all == []


def test_an_old_stored_recommendation_loads_without_the_field() -> None:
    from talkthemes.sweep.recommend import Recommendation

    stored = recommend(_cells({5: ([0.1, 0.1], 0.9)}))["lda"].to_dict()
    del stored["catch_all"]
    assert Recommendation(**stored).catch_all == []
