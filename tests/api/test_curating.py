"""Curation through the public API: not a theme, merge and unmerge, labels from the themes
spreadsheet (all or nothing), the curation log, and the masked evidence of a version."""

from __future__ import annotations

import csv
import dataclasses
from pathlib import Path

import numpy as np
import pytest

import talkthemes as tt
from talkthemes.config import render_settings
from talkthemes.workspace import atomic_write_text


def _sheet(path: Path) -> list[list[str]]:
    with path.open(encoding="utf-8-sig", newline="") as fh:
        return list(csv.reader(fh))


def _write(path: Path, rows: list[list[str]]) -> None:
    with path.open("w", encoding="utf-8", newline="") as fh:
        csv.writer(fh).writerows(rows)


def test_mark_not_a_theme_sets_the_hidden_flag_and_logs_it(published: tt.Workspace) -> None:
    tid = int(published.themes()["theme_id"][1])
    got = published.mark_not_a_theme(tid)
    assert got == tt.Label(tid, "", "", True)
    row = published.themes().set_index("theme_id").loc[tid]
    assert bool(row["hidden"]) and bool(row["not_a_theme"])
    assert published.mark_not_a_theme(tid, False).hidden is False
    assert [e.action for e in published.curation_log(tid)] == ["a_theme", "not_a_theme"]
    with pytest.raises(tt.InputError, match="there is no theme 999"):
        published.mark_not_a_theme(999)


def test_merge_shows_one_theme_and_unmerge_sets_them_apart(published: tt.Workspace) -> None:
    before = published.themes()
    shares = published.shares()
    a, b = (int(t) for t in before["theme_id"][:2])
    published.label(a, "Readings")
    done = published.merge(b, a)
    assert done == tt.Merge(theme_id=b, into=a) and done.to_json() == {
        "theme_id": b,
        "merged_into": a,
    }
    after = published.themes().set_index("theme_id")
    assert len(after) == len(before) - 1 and b not in after.index
    assert after.loc[a, "merged"] == [b] and after.loc[a, "name"] == "Readings"
    merged_shares = published.shares()
    assert np.allclose(
        merged_shares[f"share_{a}"],
        shares[f"share_{a}"] + shares[f"share_{b}"],
        atol=1e-5,
        equal_nan=True,  # the unthemed rows have no shares
    )
    assert f"share_{b}" not in merged_shares.columns
    # the merged-away id is refused, with the way back named
    with pytest.raises(tt.InputError, match=rf"theme {b} is merged into theme {a}.*--unmerge"):
        published.label(b, "x")
    with pytest.raises(tt.InputError, match="cannot be merged into itself"):
        published.merge(a, a)
    apart = published.unmerge(a)
    assert apart == tt.Unmerge(theme_id=a, apart=[b])
    assert len(published.themes()) == len(before)
    with pytest.raises(tt.InputError, match=f"theme {a} is not merged"):
        published.unmerge(a)
    log = published.curation_log(limit=2)
    assert [(e.action, e.theme_id) for e in log] == [("unmerge", b), ("merge", b)]
    assert log[1].detail == {"into": a} and log[1].to_json()["into"] == a


def test_the_themes_sheet_round_trip(published: tt.Workspace, tmp_path: Path) -> None:
    out = tmp_path / "themes.csv"
    sheet = published.themes_sheet(out)
    themes = published.themes()
    group = published.unthemed()
    assert group.count > 0  # the demo's hang-ups
    assert sheet == tt.ThemesSheet(out, 1, len(themes) + 1, sheet.columns)
    rows = _sheet(out)
    assert rows[0] == sheet.columns and rows[0][:4] == [
        "theme_id", "suggested_name", "label", "note",
    ]  # fmt: skip
    assert [r[1] for r in rows[1:-1]] == themes["suggested_name"].tolist()
    # the last row is the unthemed group, with its count, and is not read back as a theme
    assert rows[-1][:3] == ["unthemed", "unthemed", ""]
    assert rows[-1][3] == group.sentence() and f"{group.count:,} transcript" in rows[-1][3]
    rows[1][2], rows[2][3] = 'Bills, "late" fees\nand more', "=1+1"
    _write(out, rows)
    result = published.label_from(out)
    assert result.applied and result.exit_code == 0 and result.rows == len(themes)
    assert [(c.theme_id, c.label, c.note) for c in result.changed] == [
        (int(rows[1][0]), 'Bills, "late" fees\nand more', ""),
        (int(rows[2][0]), "", "=1+1"),
    ]
    assert result.unchanged == len(themes) - 2
    again = published.label_from(out)
    assert again.applied and again.changed == [] and again.unchanged == len(themes)
    rows[-1][2] = "Hang-ups"  # a label on the unthemed row is refused, nothing applied
    rows[1][2] = "Changed"
    _write(out, rows)
    refused = published.label_from(out)
    assert not refused.applied and [p.row for p in refused.problems] == [len(rows)]
    assert "unthemed row is not a theme" in refused.problems[0].message
    with pytest.raises(tt.InputError, match=r"expected a \.csv file name"):
        published.themes_sheet(tmp_path / "themes.xlsx")


def test_a_sheet_with_a_problem_applies_nothing(published: tt.Workspace, tmp_path: Path) -> None:
    ids = [int(t) for t in published.themes()["theme_id"]]
    bad = tmp_path / "bad.csv"
    _write(bad, [["theme_id", "label"], [str(ids[0]), "fine"], ["999", "unknown"]])
    result = published.label_from(bad)
    assert not result.applied and result.exit_code == 2 and result.changed == []
    assert [(p.row, p.message) for p in result.problems] == [
        (3, "there is no theme 999 in version 1 (see 'talkthemes themes')")
    ]
    assert result.to_json() == {
        "file": str(bad),
        "applied": False,
        "problems": [{"row": 3, "message": result.problems[0].message}],
    }
    assert published.themes()["label"].eq("").all() and published.curation_log() == []


def test_evidence_on_screens_is_masked_with_the_calls_names(
    published: tt.Workspace, tmp_path: Path
) -> None:
    """A name said in a stored evidence sentence is masked where it is shown (it was stored
    scrubbed only as the chain scrubs), and kept where the workspace allows the original."""
    from talkthemes.versions.evidence_shown import shown_evidence

    v = published.version()
    stored = [s for i in range(v.k) for s in v.evidence(i)]
    assert stored, "the demo version stores evidence sentences"
    first = stored[0]
    planted = dataclasses.replace(first, text="Priya here, the bill went to […] again.")
    (shown,) = shown_evidence(published.folder, [planted])
    assert shown.text == "[name] here, the bill went to […] again."  # the chain's gap kept
    assert shown.call_id == first.call_id
    settings = published.settings()
    settings.view.original_text = True
    atomic_write_text(published.folder.settings_path, render_settings(settings))
    assert shown_evidence(published.folder, [planted])[0].text == planted.text
