"""The alerts of a refresh as the Refresh history shows them: one card per alert, with its
size, growth, top terms, evidence and example sentences; the verdicts beside each theme."""

from __future__ import annotations

import json

from talkthemes.store.records import ThemeRecord
from talkthemes.view.history import alert_cards, version_changes

GROWTH = {"calls_new": 120, "new_transcripts": 900, "share_new": 0.133333,
          "calls_earlier": 3, "earlier_transcripts": 2400, "share_earlier": 0.00125,
          "ratio": 106.7, "ratio_lo": 34.0, "ratio_hi": 334.0}  # fmt: skip
REPORT = {
    "themes": [],
    "alerts": {
        "rules": {"change_fdr": 0.01, "change_min_ratio": 1.25},
        "new": [9],
        "rise": [3],
        "fall": [],
        "new_themes": [
            {"theme_id": 9, "top_terms": ["cancel", "replacement_bus", "taxi"], "alert": True,
             "verdict": "new", "growth": GROWTH,
             "evidence": [{"test": "mass", "held": True, "text": "leads 120 of 900"},
                          {"test": "not_split", "held": True, "text": "not a split: spread"}],
             "examples": [{"transcript_id": "B0-00012",
                           "sentence": "My name's Dana and my <b>train</b> was off"}]},
            {"theme_id": 10, "top_terms": ["fine", "hear"], "alert": False, "verdict": "small",
             "growth": GROWTH, "evidence": []},
        ],
        "changes": [
            {"theme_id": 3, "top_terms": ["season_ticket", "renew"], "alert": True,
             "direction": "rise", "includes": [11], "text": "leads 24.6% … q = 1e-06",
             "growth": {**GROWTH, "calls_new": 221, "share_new": 0.245556,
                        "calls_earlier": 393, "share_earlier": 0.16375,
                        "ratio": 1.5, "ratio_lo": 1.3, "ratio_hi": 1.7},
             "examples": []},
        ],
    },
}  # fmt: skip


def test_alert_cards_explain_each_alert_with_current_labels() -> None:
    new, riser = alert_cards(REPORT, {3: "Season tickets"})
    assert (new.kind, new.theme_id, new.name) == ("new", 9, "cancel · replacement bus · taxi")
    assert new.size == "leads 120 of 900 new transcripts (13.3%)"
    # 3 earlier calls are too few for a ratio: none shown
    assert new.growth == "13.3% of new transcripts against 0.1% of earlier ones"
    assert new.evidence == [(True, "leads 120 of 900"), (True, "not a split: spread")]
    # personal data masked by default; the page escapes what is left
    ((tid, sentence),) = new.examples
    assert tid == "B0-00012" and "Dana" not in sentence and "[name]" in sentence
    assert sentence.endswith("was off")
    assert (riser.kind, riser.name) == ("riser", "Season tickets")
    assert riser.growth == (
        "24.6% of new transcripts against 16.4% of earlier ones (×1.50, 95% interval 1.30–1.70)"
    )
    assert riser.evidence[0] == (True, "leads 24.6% … q = 1e-06")
    assert riser.evidence[-1] == (True, "counted with its split themes 11")


def test_alert_examples_are_original_only_when_asked() -> None:
    new, _ = alert_cards(REPORT, masked=False)
    assert new.examples == [("B0-00012", "My name's Dana and my <b>train</b> was off")]


def test_reports_without_alerts_give_no_cards() -> None:
    assert alert_cards(None) == [] and alert_cards({"themes": []}) == []


def test_theme_changes_carry_the_alert_verdicts() -> None:
    # as the store returns them: the refresh recorded the verdicts in each theme's document
    rows = [
        (3, "carried", {"distance": 0.1, "change": "rise", "alert": True}),
        (4, "carried", {"distance": 0.1, "change": "none", "alert": False}),
        (9, "new", {"verdict": "new", "alert": True}),
        (10, "new", {"verdict": "split", "split_of": 4}),
        (12, "new", {"verdict": "not_a_theme"}),
    ]
    themes = [
        ThemeRecord.from_row(tid, i, status, json.dumps(info), None, None, None)
        for i, (tid, status, info) in enumerate(rows)
    ]
    changes = version_changes(themes, [], {t.theme_id: ["a"] for t in themes})
    notes = {t.theme_id: t.alert for t in [*changes.carried, *changes.new]}
    assert notes == {3: "rose significantly", 4: "", 9: "alerted as new",
                     10: "split of #4, not alerted", 12: "not alerted (not a theme)"}  # fmt: skip
    assert changes.flagged == []  # verdicts are not split/merge flags
