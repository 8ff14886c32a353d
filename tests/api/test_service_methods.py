"""The API methods the service stands on: records stored and assigned, versions, a theme's
calls and one call, and the access tokens."""

from __future__ import annotations

import numpy as np
import pytest

import talkthemes as tt


def test_ingest_records_answers_record_by_record(published: tt.Workspace) -> None:
    records = [
        {"id": "r1", "text": "Customer: my meter reading is wrong", "metadata": {"queue": "q"}},
        {"id": "r2", "text": ""},
    ]
    report = published.ingest_records(records, source="test")
    assert [(r.id, r.outcome) for r in report.records] == [("r1", "added"), ("r2", "rejected")]
    assert report.totals() == {"added": 1, "unchanged": 0, "duplicate": 0, "rejected": 1}
    assert report.exit_code == 3
    again = published.ingest_records(records[:1])
    assert again.records[0].outcome == "unchanged" and again.exit_code == 0
    changed = published.ingest_records([{"id": "r1", "text": "Customer: something else"}])
    assert changed.records[0].outcome == "rejected"
    assert "never overwritten" in changed.records[0].reason
    status = published.status()
    assert status.by_format.get("records") == 1


def test_ingest_records_takes_the_writer_lock(published: tt.Workspace) -> None:
    with published.folder.lock("another"), pytest.raises(tt.WorkspaceBusyError):
        published.ingest_records([{"id": "x", "text": "hello"}])


def test_assign_records_matches_assign_and_names_the_version(published: tt.Workspace) -> None:
    texts = ["Customer: the meter shows no reading", "Customer: a leak in the street"]
    got = published.assign_records([{"text": t} for t in texts] + [{"text": " "}])
    assert got.version == 1
    assert [r.row for r in got.rejects] == [2]
    expected = published.assign(texts)
    share_cols = [c for c in expected.columns if c.startswith("share_")]
    np.testing.assert_allclose(got.shares[share_cols], expected[share_cols])


def test_assign_accepts_records_too(published: tt.Workspace) -> None:
    frame = published.assign([{"id": "a", "text": "Customer: my bill doubled"}])
    assert frame["transcript_id"].tolist() == ["a"]


def test_versions_lists_what_is_kept(published: tt.Workspace) -> None:
    (v,) = published.versions()
    assert (v.version, v.current, v.family, v.k, v.made_by) == (1, True, "nmf", 4, "publish")
    assert v.transcripts == len(published.version().doc_ids)


def test_theme_calls_pages_and_filters(published: tt.Workspace) -> None:
    v = published.version()
    first = published.theme_calls(v.theme_ids[0], limit=5)
    assert first.total == int((v.lead() == 0).sum()) and len(first.calls) == 5
    assert first.next_offset == 5
    rest = published.theme_calls(v.theme_ids[0], offset=5, limit=1000)
    assert rest.next_offset is None
    assert len(first.calls) + len(rest.calls) == first.total
    queue = first.calls[0].metadata["queue"]
    only = published.theme_calls(v.theme_ids[0], where={"queue": queue}, limit=1000)
    assert only.total > 0 and {c.metadata["queue"] for c in only.calls} == {queue}
    none = published.theme_calls(v.theme_ids[0], where={"queue": "no-such-queue"})
    assert none.total == 0 and none.calls == []
    with pytest.raises(tt.InputError):
        published.theme_calls(999)
    with pytest.raises(tt.InputError):
        published.theme_calls(v.theme_ids[0], min_share=2)


def test_call_gives_shares_and_text_on_request(published: tt.Workspace) -> None:
    v = published.version()
    detail = published.call(v.doc_ids[0])
    assert detail.turns is None and detail.in_version
    assert sum(detail.shares.values()) == pytest.approx(1)
    masked = published.call(v.doc_ids[0], text="masked")
    original = published.call(v.doc_ids[0], text="original")
    assert len(masked.turns) == len(original.turns) > 0
    with pytest.raises(tt.InputError, match="no call"):
        published.call("nope")
    with pytest.raises(tt.ConfigError):
        published.call(v.doc_ids[0], text="all")  # type: ignore[arg-type]


def test_tokens_issue_check_and_revoke(published: tt.Workspace) -> None:
    made = published.add_token("crm", "write")
    assert made.token not in repr(made) and "token=" not in repr(made)
    info = published.check_token(made.token)
    assert info is not None and info.scope == "write"
    assert published.check_token(made.token + "x") is None
    assert published.check_token("tt_000000000000_" + "A" * 43) is None
    other = tt.Workspace.open(published.root)  # another process's view: no memory of it
    assert other.check_token(made.token) == info
    assert [t.name for t in published.tokens()] == ["crm"]
    published.revoke_token("crm")
    assert published.check_token(made.token) is None
    assert published.tokens() == [] and len(published.tokens(revoked=True)) == 1
    with pytest.raises(tt.InputError, match="no active token"):
        published.revoke_token("crm")
