"""Curation in the store (merges, the log) and merged themes shown as one by a version."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from tests.labelling.conftest import Planted, copy_planted

from talkthemes.errors import StoreError
from talkthemes.store import SCHEMA_VERSION, Store
from talkthemes.versions.curation import (
    carry_report,
    curation_markdown,
    fold_columns,
    fold_rows,
    merge_groups,
)
from talkthemes.versions.load import load_version


@pytest.fixture
def store(tmp_path: Path) -> Store:
    s = Store.open(tmp_path / "t.db")
    ids = s.reserve_theme_ids(4)
    s.add_version(
        1, {}, [{"theme_id": t, "position": i, "status": "new"} for i, t in enumerate(ids)]
    )
    return s


def test_every_curation_action_is_logged_with_when_and_what(store: Store) -> None:
    store.set_label(2, label="Payment plans", note="arrears too")
    store.set_label(2, label="Payment plans")  # no change: nothing logged
    store.set_label(3, hidden=True)
    store.set_label(3, hidden=False)
    assert store.merge_theme(4, 1) == 1
    assert store.unmerge_theme(4) == [4]
    log = store.curation_log()
    assert [(e.action, e.theme_id) for e in reversed(log)] == [
        ("label", 2), ("note", 2), ("not_a_theme", 3), ("a_theme", 3), ("merge", 4),
        ("unmerge", 4),
    ]  # fmt: skip
    first = log[-1]
    assert (first.detail, first.version) == ({"before": "", "after": "Payment plans"}, 1)
    assert first.at[:4].isdigit() and "T" in first.at
    assert log[1].detail == {"into": 1} and log[0].detail == {"from": 1}
    assert store.curation_log(3, limit=1)[0].action == "a_theme"
    assert store.curation_stamp() == max(e.id for e in log)
    assert log[0].to_json()["from"] == 1


def test_merges_follow_chains_and_refuse_what_makes_no_sense(store: Store) -> None:
    store.merge_theme(2, 1)
    assert store.merge_theme(3, 2) == 1  # into a merged theme: joins the one it is shown as
    assert store.theme_merges() == {2: 1, 3: 1}
    with pytest.raises(StoreError, match="already merged into theme 1"):
        store.merge_theme(2, 4)
    with pytest.raises(StoreError, match="already one theme"):
        store.merge_theme(1, 3)
    with pytest.raises(StoreError, match="no theme 99"):
        store.merge_theme(99, 1)
    assert sorted(store.unmerge_theme(1)) == [2, 3]  # the kept theme: every merge undone
    assert store.theme_merges() == {}
    with pytest.raises(StoreError, match="not merged"):
        store.unmerge_theme(1)


def test_apply_labels_is_all_or_nothing(store: Store) -> None:
    store.set_label(1, label="kept")
    with pytest.raises(StoreError, match="no theme 99"):
        store.apply_labels([(1, "changed", None), (99, "x", None)])
    assert store.labels_for([1])[1].label == "kept"
    done = store.apply_labels([(1, "changed", "n"), (2, None, "only a note")])
    assert [(d.theme_id, d.label, d.note) for d in done] == [
        (1, "changed", "n"),
        (2, "", "only a note"),
    ]


def test_migration_logs_the_labels_set_before_it(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import talkthemes.store as store_mod

    path = tmp_path / "old.db"
    monkeypatch.setattr(store_mod, "_MIGRATIONS", store_mod._MIGRATIONS[:5])
    monkeypatch.setattr(store_mod, "SCHEMA_VERSION", 5)
    with Store.open(path) as old:
        old._conn.execute("INSERT INTO versions(n, created_at, current) VALUES (1, 'x', 1)")
        old._conn.execute(
            "INSERT INTO themes(version, theme_id, position, status) VALUES (1, 7, 0, 'new')"
        )
        old._conn.execute(
            "INSERT INTO labels(theme_id, label, note, hidden, updated_at) "
            "VALUES (7, 'Old label', '', 1, '2026-01-02T03:04:05+00:00')"
        )
    monkeypatch.undo()
    with Store.open(path) as new:
        assert new.schema_version() == SCHEMA_VERSION >= 6
        log = new.curation_log(7)
        assert {(e.action, e.detail.get("after")) for e in log} == {
            ("label", "Old label"),
            ("not_a_theme", None),
        }
        assert all(e.at == "2026-01-02T03:04:05+00:00" for e in log)
        assert new.theme_merges() == {}


# -- folding ---------------------------------------------------------------------------------
def test_fold_sums_shares_and_mixes_words_by_weight() -> None:
    groups = merge_groups([5, 6, 7], {7: 5})
    assert groups == [(5, [0, 2]), (6, [1])]
    assert merge_groups([5, 6], {}) is None and merge_groups([5, 6], {9: 5}) is None
    assert merge_groups([8, 6], {8: 5}) == [(5, [0]), (6, [1])]  # shown as the kept id
    phi = np.array([[0.5, 0.5, 0.0], [0.0, 0.0, 1.0], [1.0, 0.0, 0.0]])
    folded, weights = fold_rows(phi, np.array([0.3, 0.5, 0.1]), groups)
    assert weights == pytest.approx([0.4, 0.5])
    assert folded[0] == pytest.approx([(0.3 * 0.5 + 0.1) / 0.4, 0.3 * 0.5 / 0.4, 0.0])
    theta = np.array([[0.2, 0.5, 0.3], [0.6, 0.1, 0.3]])
    assert fold_columns(theta, groups) == pytest.approx(np.array([[0.5, 0.5], [0.9, 0.1]]))
    assert fold_columns(theta, None) is theta


def test_a_merged_version_shows_one_theme_with_summed_shares(
    planted_root: Planted, tmp_path: Path
) -> None:
    ws = copy_planted(planted_root, tmp_path / "ws")
    raw = load_version(ws)
    a, b = raw.theme_ids
    with ws.store() as store:
        store.set_label(a, label="Readings and refunds")
        store.set_label(b, label="lost while merged")
        store.merge_theme(b, a)
    v = load_version(ws)
    assert v.k == 1 and v.theme_ids == [a]
    assert v.themes[0].label == "Readings and refunds" and v.themes[0].merged == (b,)
    summed = np.asarray(raw.doc_topics).sum(axis=1)
    assert np.asarray(v.doc_topics)[:, 0] == pytest.approx(summed, abs=1e-5)
    assert v.coverage() == pytest.approx([1.0])
    assert len(v.suggested_names()) == 1 and v.summary()[0]["coherence"]["c_npmi"] is None
    pooled = v.evidence(0)
    assert {s.call_id for s in pooled} <= {s.call_id for i in range(2) for s in raw.evidence(i)}
    assert len({s.call_id for s in pooled}) == len(pooled)
    assert v.fold(np.asarray(raw.doc_topics)) == pytest.approx(np.asarray(v.doc_topics))
    unfolded = load_version(ws, fold=False)
    assert unfolded.k == 2 and unfolded.theme_ids == raw.theme_ids
    with ws.store() as store:
        store.unmerge_theme(a)
    back = load_version(ws)
    assert back.k == 2 and [t.label for t in back.themes] == [
        "Readings and refunds",
        "lost while merged",
    ]  # nothing was lost


def test_carry_report_names_what_a_refresh_could_not_carry() -> None:
    labels = {
        1: {"label": "Bills", "note": "", "hidden": False},
        2: {"label": "", "note": "", "hidden": True},
        3: {"label": "", "note": "", "hidden": False},
        4: {"label": "Leaks", "note": "pipes | taps", "hidden": False},
    }
    retired = [{"theme_id": 4, "nearest_new": {"theme_id": 9, "distance": 0.61}}]
    rep = carry_report([1, 2, 3, 4, 5], [1, 5, 3, 9], labels, {5: 2}, retired)
    assert [e["theme_id"] for e in rep["carried"]] == [1, 2]
    merged = rep["carried"][1]
    assert merged["curation"] == ["not_a_theme", "merge"] and merged["continued_by"] == [5]
    assert rep["not_carried"] == [
        {
            "theme_id": 4,
            "label": "Leaks",
            "curation": ["label", "note"],
            "merged": [],
            "continued_by": [],
            "nearest_new": {"theme_id": 9, "distance": 0.61},
        }
    ]
    md = curation_markdown({"curation": rep})
    assert "**Could not be carried (1):**" in md
    assert "- Theme 4 “Leaks”: label, note; the closest new theme is theme 9" in md
    assert curation_markdown({"curation": carry_report([3], [3], labels, {})}) == ""
