"""Curation survives a refresh on the invented demo corpus (its reasons to call are
planted): a merge made on version 1 holds in version 2 (the two themes aligned apart,
shown as one again), a theme marked not a theme stays marked, every curated theme is
either carried or named in the drift report as not carried, and the evidence sentences
and suggested names of the new version are stored with it."""

from __future__ import annotations

import json

import numpy as np
from tests.refresh.conftest import K

from talkthemes.demo.records import DemoFiles
from talkthemes.refresh.run import refresh
from talkthemes.versions.evidence import EVIDENCE_FILE
from talkthemes.versions.load import load_version
from talkthemes.workspace import Workspace


def _theme_with(version, word: str) -> int:
    """The id of the theme whose five most probable terms hold ``word``."""
    hits = [t for i, t in enumerate(version.theme_ids) if word in version.top_terms(i, 5)]
    assert len(hits) == 1, (word, [version.top_terms(i, 5) for i in range(version.k)])
    return hits[0]


def test_merge_and_not_a_theme_survive_a_refresh(
    published: Workspace, demo_files: DemoFiles
) -> None:
    ws = published
    before = load_version(ws)
    leak, meter = _theme_with(before, "leak"), _theme_with(before, "smart_meter")
    outage = _theme_with(before, "medical_equipment")
    with ws.store() as store:
        for tid in before.theme_ids:
            store.set_label(tid, note=f"note {tid}")
        store.set_label(leak, label="Water and meters")
        store.merge_theme(meter, leak)  # a planted pairing: two reasons as one theme
        store.set_label(outage, hidden=True)  # marked not a theme
    merged = load_version(ws)
    assert merged.k == K - 1 and merged.themes[merged.position(leak)].merged == (meter,)

    with ws.lock("refresh"):
        result = refresh(ws, ingest_paths=[demo_files.inbox])
    assert result.status == "published"

    raw = load_version(ws, fold=False)
    assert raw.k == K  # the model keeps its K; the merge is how it is shown
    assert {leak, meter, outage} <= set(raw.theme_ids), "the planted reasons were carried"
    after = load_version(ws)
    assert after.k == K - 1  # both carried, shown as one again
    kept = after.themes[after.position(leak)]
    assert kept.merged == (meter,) and kept.label == "Water and meters"
    rows = [raw.position(leak), raw.position(meter)]
    assert np.allclose(
        np.asarray(after.doc_topics)[:, after.position(leak)],
        np.asarray(raw.doc_topics)[:, rows].sum(axis=1),
        atol=1e-5,
    )
    assert meter not in after.theme_ids
    assert after.themes[after.position(outage)].hidden  # still not a theme

    # every curated theme of version 1 is carried or reported as not carried
    cur = result.curation
    carried = {e["theme_id"] for e in cur["carried"]}
    lost = {e["theme_id"] for e in cur["not_carried"]}
    shown_before = set(merged.theme_ids)
    assert carried | lost == shown_before and not carried & lost
    assert lost == shown_before - set(after.theme_ids)
    assert {leak, outage} <= carried
    entry = next(e for e in cur["carried"] if e["theme_id"] == leak)
    assert entry["curation"] == ["label", "note", "merge"]
    assert sorted(entry["continued_by"]) == sorted([leak, meter])
    folder = ws.versions_dir / str(result.version)
    drift = json.loads((folder / "drift.json").read_text(encoding="utf-8"))
    assert drift["curation"] == cur
    md = (folder / "drift.md").read_text(encoding="utf-8")
    assert f"Theme {leak} is shown as one again" in md
    assert ("**Could not be carried" in md) == bool(lost)
    for t in lost:
        assert f"- Theme {t}" in md
    with ws.store() as store:
        log = store.refreshes()[0]
    assert set(log.info["curation"]["not_carried_theme_ids"]) == lost

    # the new version was written with its labelling aids
    assert (folder / EVIDENCE_FILE).is_file()
    names = after.suggested_names()
    assert len(set(names)) == after.k
    assert after.evidence(after.position(leak))  # a merged theme pools its themes' evidence
