"""What a refresh changed, from the store's records: carried, new, retired, flagged."""

from __future__ import annotations

import pytest

from talkthemes.errors import InputError
from talkthemes.store.records import NearestTheme, RetiredTheme, ThemeRecord, VersionRecord
from talkthemes.view.history import version_changes, versions_timeline


def test_timeline_rejects_a_bad_date() -> None:
    with pytest.raises(InputError, match="version 3: created_at 'soon'"):
        versions_timeline([VersionRecord(n=3, created_at="soon", current=True)])


def test_changes_flag_possible_splits_and_merges() -> None:
    themes = [
        ThemeRecord(theme_id=1, position=0, status="carried", distance=0.1),
        ThemeRecord(
            theme_id=7,
            position=1,
            status="new",
            label="Fresh",
            nearest_previous=NearestTheme(theme_id=1, name="a", distance=0.4),
            possible_split_of=(1,),
        ),
        ThemeRecord(theme_id=8, position=2, status="carried", possible_merge_of=(2, 3)),
    ]
    retired = [RetiredTheme(theme_id=2, top_terms=("meter", "reading"))]
    changes = version_changes(themes, retired, {1: ["bill", "late_fee", "pay"], 8: ["x"]})
    assert changes.ids("carried") == {1, 8} and changes.ids("new") == {7}
    assert changes.ids("retired") == {2}
    assert changes.carried[0].name == "bill · late fee · pay"
    assert changes.retired[0].name == "meter · reading"
    assert [t.theme_id for t in changes.flagged] == [8, 7]
    assert changes.new[0].flags == ["possibly split from previous theme #1"]
    assert changes.carried[1].flags == ["possibly a merge of previous themes #2, #3"]
    assert changes.carried[0].detail == (
        "kept its id; its words moved by 0.100 (Jensen–Shannon distance)"
    )
    assert changes.carried[1].detail == "kept its id"
    assert changes.new[0].detail == "closest previous theme #1 (a) at distance 0.400"
    assert changes.retired[0].detail == "no close theme in this version"
    with pytest.raises(InputError, match="theme 9: status 'odd'"):
        version_changes([ThemeRecord(theme_id=9, position=0, status="odd")], [], {})
