"""Evidence sentences on screen: the theme's terms marked in the wording as said, the text
escaped, the call and the share beside each."""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import numpy as np
from tests.view.data import SHARES, make_version

from talkthemes.versions.evidence import EVIDENCE_FILE, EvidenceSentence, evidence_document
from talkthemes.view.theme_evidence import evidence_html, evidence_note, evidence_views


def _with_evidence(tmp_path: Path):
    version = dataclasses.replace(make_version(SHARES), folder=tmp_path)
    sentences = [
        [
            EvidenceSentence(
                "t1", "customer", "I paid the <b>bill</b> & it bounced", ("pay", "bill"), 0.5, 0.7
            ),
            EvidenceSentence("t2", "agent", "Your bills are paid.", ("bill",), 0.3, 0.6),
        ],
        [],
        [],
    ]
    doc = evidence_document(version.theme_ids, sentences)
    (tmp_path / EVIDENCE_FILE).write_text(json.dumps(doc), encoding="utf-8")
    return version


def test_terms_are_marked_and_the_text_escaped(tmp_path: Path) -> None:
    version = _with_evidence(tmp_path)
    views = evidence_views(version, 0, {"paid": "pay"})
    assert [v.call_id for v in views] == ["t1", "t2"] and views[0].role == "Customer"
    marked = [s for s, hit in views[0].segments if hit]
    assert marked == ["paid", "bill"]  # "paid" found through its lemma
    assert [s for s, hit in views[1].segments if hit] == ["bills"]  # its own terms only
    html = evidence_html(views)
    assert "&lt;b&gt;" in html and "<b>" not in html and "&amp; it bounced" in html
    assert '<mark class="tt-hit">paid</mark>' in html
    assert "call t1 · 70% this theme" in html and "Agent" in html
    assert evidence_views(version, 0, limit=1)[0].text == "I paid the <b>bill</b> & it bounced"


def test_why_a_theme_has_no_sentence(tmp_path: Path) -> None:
    version = _with_evidence(tmp_path)
    assert evidence_note(version, 0) is None
    bare = dataclasses.replace(make_version(SHARES), folder=tmp_path / "none")
    assert "before evidence sentences were kept" in (evidence_note(bare, 0) or "")
    no_lead = np.array([[0.9, 0.1, 0.0]] * 6)
    empty = dataclasses.replace(make_version(no_lead), folder=tmp_path)
    assert evidence_note(empty, 2) == "This theme leads no call, so it has no evidence sentence."
    assert evidence_note(version, 1) == (
        "No sentence of the calls this theme leads holds its top words."
    )
