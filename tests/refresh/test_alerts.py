"""Alert judgements on a small case whose answer is known: a genuinely new theme, a split,
small talk, a tiny theme, a riser and a faller; and how the alerts read in drift.md."""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
from markdown_it import MarkdownIt

from talkthemes.config import RefreshSettings
from talkthemes.errors import InputError
from talkthemes.refresh.run import RefreshResult
from talkthemes.versions.alert_rules import AlertRules, Periods
from talkthemes.versions.alerts import (
    judge_alerts,
    judge_changes,
    judge_new_themes,
    with_alerts,
)
from talkthemes.versions.align import Alignment
from talkthemes.versions.drift import ThemeSide, drift_report
from talkthemes.versions.drift_markdown import render_markdown

VOCAB = ["bill", "charge", "fee", "late", "leak", "pipe", "water", "meter", "read", "smart",
         "strike", "union", "walkout", "hello", "weather", "thanks"]  # fmt: skip
RULES = AlertRules.from_settings(RefreshSettings())
SMALL = AlertRules(**{**RULES.to_json(), "n_terms": 4})


def _phi(weights: dict[str, float]) -> np.ndarray:
    row = np.full(len(VOCAB), 1e-3)
    for w, x in weights.items():
        row[VOCAB.index(w)] = x
    return row / row.sum()


OLD = ThemeSide(
    [1, 2, 3],
    ["", "", ""],
    np.vstack([_phi({"bill": 5, "charge": 4, "fee": 3, "late": 2}),
               _phi({"leak": 5, "pipe": 4, "water": 3, "hello": 1}),
               _phi({"meter": 5, "read": 4, "smart": 2, "thanks": 1})]),
    VOCAB,
    np.array([0.4, 0.35, 0.25]),
)  # fmt: skip
# new version: 1 and 2 carried; 7 strike (new words), 8 a split of 3 (meter), 9 small talk,
# 10 a tiny theme
NEW = ThemeSide(
    [1, 2, 7, 8, 9, 10],
    ["", "", "", "", "", ""],
    np.vstack([OLD.topic_terms[0], OLD.topic_terms[1],
               _phi({"strike": 6, "union": 4, "walkout": 3, "late": 1}),
               _phi({"meter": 5, "smart": 4, "read": 3, "fee": 1}),
               _phi({"hello": 5, "weather": 4, "thanks": 3, "bill": 1}),
               _phi({"water": 5, "charge": 4, "bill": 3, "leak": 2})]),
    VOCAB,
    np.full(6, 1 / 6),
)  # fmt: skip
ALIGN = Alignment(
    distance=np.full((3, 6), 0.5),
    threshold=0.3,
    margin=0.05,
    matched_old=np.array([0, 1, -1, -1, -1, -1]),
    matched_distance=np.array([0.05, 0.05, np.nan, np.nan, np.nan, np.nan]),
    retired=np.array([2]),
    splits=[],
    merges=[],
)


def _periods() -> Periods:
    # earlier: 300 transcripts; new: 200
    earlier_lead = [0] * 120 + [1] * 100 + [3] * 60 + [4] * 20
    earlier_prev = [0] * 120 + [1] * 100 + [2] * 60 + [0, 1, 2] * 6 + [0, 1]
    new_lead = [0] * 110 + [1] * 10 + [2] * 40 + [3] * 20 + [4] * 15 + [5] * 5
    new_prev = ([0] * 110 + [1] * 10 + [0] * 15 + [1] * 13 + [2] * 12 + [2] * 20
                + [0, 1, 2] * 5 + [0, 1, 2, 0, 2])  # fmt: skip
    lead = np.array(earlier_lead + new_lead)
    is_new = np.array([False] * 300 + [True] * 200)
    prev = np.array(earlier_prev + new_prev)
    earlier_terms = np.full(len(VOCAB), 200)
    new_terms = np.full(len(VOCAB), 130)
    for w in ("strike", "union", "walkout"):
        earlier_terms[VOCAB.index(w)] = 2
        new_terms[VOCAB.index(w)] = 150
    return Periods(lead, is_new, prev, new_terms, earlier_terms)


def test_each_new_theme_gets_the_verdict_its_evidence_gives() -> None:
    judged = {t["theme_id"]: t for t in judge_new_themes(OLD, NEW, ALIGN, _periods(), SMALL)}
    assert set(judged) == {7, 8, 9, 10}
    strike = judged[7]
    assert strike["verdict"] == "new" and strike["alert"] and strike["split_of"] is None
    assert [e["test"] for e in strike["evidence"]] == ["mass", "not_split", "new_words",
                                                       "curation"]  # fmt: skip
    assert all(e["held"] for e in strike["evidence"])
    mass, split, words, _ = strike["evidence"]
    assert (mass["calls"], mass["share"]) == (40, 0.2)
    assert split["previous_theme_id"] == 1 and split["lead_share"] == pytest.approx(15 / 40)
    assert words["novel_terms"] == ["strike", "union", "walkout"] and words["score"] > 0.8
    g = strike["growth"]
    assert (g["calls_new"], g["new_transcripts"], g["calls_earlier"]) == (40, 200, 0)
    assert g["ratio_lo"] > 1  # from none before to a fifth of the new transcripts
    # the meter split: its calls were theme 3's and it shares theme 3's terms
    meter = judged[8]
    assert meter["verdict"] == "split" and meter["split_of"] == 3 and not meter["alert"]
    assert meter["evidence"][1]["held"] is False
    assert meter["evidence"][1]["shared_terms"] == ["meter", "smart", "read"]
    assert meter["evidence"][1]["text"].startswith("split of theme 3: 100.0% of the 80")
    # small talk: big enough, calls spread over old themes, but its words are not new
    talk = judged[9]
    assert talk["verdict"] == "familiar" and not talk["alert"]
    assert [e["held"] for e in talk["evidence"]] == [True, True, False, True]
    # a tiny theme: 5 calls (2.5%) are under the floor of 10 calls and 3%
    tiny = judged[10]
    assert tiny["verdict"] == "small" and tiny["evidence"][0]["held"] is False
    assert "below the floor of 10 calls and 3.0%" in tiny["evidence"][0]["text"]


def test_not_a_theme_never_alerts_and_is_not_tested_for_change() -> None:
    judged = judge_new_themes(OLD, NEW, ALIGN, _periods(), SMALL, not_a_theme={7})
    strike = next(t for t in judged if t["theme_id"] == 7)
    assert strike["verdict"] == "not_a_theme" and not strike["alert"]
    assert strike["evidence"][3] == {"test": "curation", "held": False,
                                     "text": "marked not a theme"}  # fmt: skip
    changes = judge_changes(NEW, ALIGN, _periods(), SMALL, not_a_theme={1})
    first = next(c for c in changes if c["theme_id"] == 1)
    assert not first["tested"] and not first["alert"] and first["q_value"] is None
    assert first["text"] == "marked not a theme: not tested"


def test_changes_are_tested_with_benjamini_hochberg_and_report_intervals() -> None:
    from scipy.stats import chi2_contingency, false_discovery_control

    changes = {c["theme_id"]: c for c in judge_changes(NEW, ALIGN, _periods(), SMALL)}
    up, down = changes[1], changes[2]
    assert up["direction"] == "rise" and up["alert"]
    assert down["direction"] == "fall" and down["alert"]
    g = up["growth"]
    assert (g["calls_new"], g["calls_earlier"]) == (110, 120)
    assert g["ratio"] == pytest.approx(0.55 / 0.4, abs=1e-6)
    assert g["ratio_lo"] < g["ratio"] < g["ratio_hi"]
    assert g["difference_lo"] < 0.15 < g["difference_hi"]
    # the p-values are Pearson's chi-square (no continuity correction) of each 2 × 2 table;
    # the q-values Benjamini–Hochberg over the two themes tested
    p = [chi2_contingency([[x, 200 - x], [y, 300 - y]], correction=False).pvalue
         for x, y in ((110, 120), (10, 100))]  # fmt: skip
    assert [up["p_value"], down["p_value"]] == pytest.approx(p, rel=1e-6)
    assert [up["q_value"], down["q_value"]] == pytest.approx(false_discovery_control(p), rel=1e-6)
    assert "×1.38" in up["text"] and "over 2 themes" in up["text"]
    # a rise too small to matter is not reported, however significant
    strict = AlertRules(**{**SMALL.to_json(), "change_min_ratio": 1.5})
    assert next(c for c in judge_changes(NEW, ALIGN, _periods(), strict)
                if c["theme_id"] == 1)["direction"] == "none"  # fmt: skip


def test_a_split_counts_with_the_carried_theme_it_split_from() -> None:
    changes = judge_changes(NEW, ALIGN, _periods(), SMALL, split_of={8: 2})
    leak = next(c for c in changes if c["theme_id"] == 2)
    assert leak["includes"] == [8]
    assert (leak["growth"]["calls_new"], leak["growth"]["calls_earlier"]) == (10 + 20, 100 + 60)


def test_judge_alerts_lists_what_alerted_and_the_report_carries_it() -> None:
    periods = _periods()
    block = judge_alerts(OLD, NEW, ALIGN, periods, SMALL, not_a_theme={9})
    assert (block["new"], block["rise"], block["fall"]) == ([7], [1], [2])
    assert block["not_a_theme"] == [9] and block["rules"]["n_terms"] == 4
    theta = np.eye(6)[periods.lead]
    report = drift_report(OLD, NEW, ALIGN, doc_topics=theta,
                          doc_ids=[f"t{i:03d}" for i in range(500)], is_new=periods.is_new,
                          version=2, previous_version=1)  # fmt: skip
    report = with_alerts(report, block)
    by_id = {t["theme_id"]: t for t in report["themes"]}
    assert (by_id[7]["verdict"], by_id[7]["alert"]) == ("new", True)
    assert (by_id[8]["verdict"], by_id[8]["split_of"]) == ("split", 3)
    assert (by_id[1]["change"], by_id[2]["change"]) == ("rise", "fall")
    json.dumps(report, allow_nan=False)  # strict JSON


def test_alerts_explain_themselves_in_markdown_escaped() -> None:
    periods = _periods()
    block = judge_alerts(OLD, NEW, ALIGN, periods, SMALL)
    evil = "I saw <b>it</b> [x](http://e) | twice"
    for t in [*block["new_themes"], *block["changes"]]:
        if t["alert"]:
            t["examples"] = [{"transcript_id": "t<1>", "sentence": evil}] * 3
    theta = np.eye(6)[periods.lead]
    report = drift_report(OLD, NEW, ALIGN, doc_topics=theta,
                          doc_ids=[f"t{i:03d}" for i in range(500)], is_new=periods.is_new,
                          version=2, previous_version=1)  # fmt: skip
    md = render_markdown(with_alerts(report, block))
    alerts = md[md.index("## Alerts") : md.index("## New themes")]
    assert "New themes alerted: 1 (7); risers: 1 (1); fallers: 1 (2)." in alerts
    assert "Theme 8 (meter · smart · read) is new but not alerted: split of theme 3" in alerts
    new7 = alerts[alerts.index("### New theme 7") : alerts.index("### Riser 1")]
    assert "- Size: leads 40 of 200 new transcripts (20.0% [" in new7
    assert (
        "- Growth: 20.0% of new transcripts against 0.0% of 300 earlier ones, +20.0 points ["
        in new7
    )
    assert "(0 earlier calls: too few for a ratio)" in new7
    assert "- Top terms: strike, union, walkout" in new7
    assert new7.count("  - held: ") == 4 and new7.count("  - “") == 3
    riser = alerts[alerts.index("### Riser 1") : alerts.index("### Faller 2")]
    assert "q = " in riser and "Benjamini–Hochberg" in riser
    assert "earlier ones: ×1.38 [" in riser
    assert "- Alert: **not alerted: split of theme 3** (see Alerts)." in md
    assert "(riser)" in md and "(faller)" in md  # flagged in the carried table too
    assert not re.search(r"(?<!\\)[<>]", md) and not re.search(r"(?<!\\)\]\(", md)
    html = MarkdownIt("commonmark").enable("table").render(md)
    assert "<b>" not in html and "<a " not in html
    assert "I saw &lt;b&gt;it&lt;/b&gt; [x](http://e) | twice" in html


def test_exit_code_follows_the_alerts_asked_for() -> None:
    alerted = {"theme_id": 7, "alert": True}
    quiet = {"theme_id": 8, "alert": False}
    riser = {"theme_id": 1, "alert": True, "direction": "rise"}
    r = RefreshResult(status="published", previous_version=1, new_themes=[quiet])
    assert r.exit_code == 0
    r.alert_on_new = True
    assert r.exit_code == 0  # a new theme that did not alert does not page anyone
    r.new_themes = [quiet, alerted]
    assert r.exit_code == 4 and r.to_json()["alerts"]["new"] == [7]
    r = RefreshResult(status="published", previous_version=1, risers=[riser], alert_on_new=True)
    assert r.exit_code == 0
    r.alert_on_rise = True
    assert r.exit_code == 4 and r.to_json()["risers"] == [riser]
    assert r.to_json()["alerts"] == {"new": [], "rise": [1], "fall": []}


def test_periods_reject_arrays_that_do_not_fit() -> None:
    with pytest.raises(InputError, match="lead themes"):
        Periods(np.zeros(3, int), np.zeros(2, bool), np.zeros(3, int), np.ones(4), np.ones(4))
    with pytest.raises(InputError, match="term counts"):
        Periods(np.zeros(3, int), np.zeros(3, bool), np.zeros(3, int), np.ones(4), np.ones(5))
