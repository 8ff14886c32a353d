"""The viewer's data layer: readiness, sweep, themes, calls, highlighting, trends."""

from __future__ import annotations

import datetime as dt
import itertools
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from talkthemes import viewdata as vd
from talkthemes.errors import InputError, NotReadyError
from talkthemes.ingest.model import Transcript, Turn
from talkthemes.store import StoredTurn
from talkthemes.versions import Version, load_version
from talkthemes.workspace import Workspace

# --------------------------------------------------------------------------- helpers


def make_version(
    doc_topics: np.ndarray,
    *,
    topic_terms: np.ndarray | None = None,
    vocabulary: list[str] | None = None,
    labels: list[str] | None = None,
    hidden: list[bool] | None = None,
) -> Version:
    """A version in memory: D transcripts ``t0…``, K themes with ids 11, 12, …"""
    d, k = doc_topics.shape
    vocabulary = vocabulary or ["bill", "pay", "power", "outage", "meter", "read"]
    if topic_terms is None:
        topic_terms = np.full((k, len(vocabulary)), 0.01)
        for i in range(k):
            topic_terms[i, (2 * i) % len(vocabulary)] = 1.0
            topic_terms[i, (2 * i + 1) % len(vocabulary)] = 0.5
        topic_terms /= topic_terms.sum(axis=1, keepdims=True)
    themes = [
        {
            "theme_id": 11 + i,
            "position": i,
            "status": "new",
            "label": (labels or [""] * k)[i],
            "note": "",
            "hidden": (hidden or [False] * k)[i],
        }
        for i in range(k)
    ]
    return Version(
        n=1,
        folder=Path("."),
        info={},
        themes=themes,
        vocabulary=vocabulary,
        doc_ids=[f"t{i}" for i in range(d)],
        topic_terms=np.asarray(topic_terms, dtype=np.float64),
        doc_topics=np.asarray(doc_topics, dtype=np.float64),
    )


# Six transcripts, three themes: t0–t2 led by theme 11, t3–t4 by 12, t5 by 13.
SHARES = np.array(
    [
        [0.9, 0.1, 0.0],
        [0.6, 0.3, 0.1],
        [0.7, 0.2, 0.1],
        [0.2, 0.8, 0.0],
        [0.4, 0.5, 0.1],
        [0.1, 0.2, 0.7],
    ]
)
META = {
    "t0": {"date": "2026-05-04", "queue": "billing", "duration_s": "100", "ref": "a-1"},
    "t1": {"date": "2026-05-05", "queue": "faults", "duration_s": "200", "ref": "b-2"},
    "t2": {"date": "2026-05-12", "queue": "billing", "duration_s": "300", "ref": "=cmd()"},
    "t3": {"date": "2026-06-01", "queue": "faults", "duration_s": "400", "ref": "c-3"},
    "t4": {"date": "2026-06-02", "queue": "billing", "duration_s": "500", "ref": "d-4"},
    "t5": {"queue": "moves", "duration_s": "600", "ref": "e-5"},
}


@pytest.fixture
def version() -> Version:
    return make_version(SHARES, labels=["Bills", "", ""])


@pytest.fixture
def meta() -> vd.MetaTable:
    table = vd.metadata_table([f"t{i}" for i in range(6)], META)
    table.fields["ref"] = vd.FieldInfo("ref", "text")  # few values, but treat as free text
    return table


# --------------------------------------------------------------------------- readiness


def _transcript(tid: str, text: str = "my bill is wrong") -> Transcript:
    return Transcript(tid, [Turn("Customer", "customer", text)], source=f"{tid}.txt", format="txt")


def test_readiness_walks_every_stage_with_the_next_command(tmp_path: Path) -> None:
    ws = Workspace(tmp_path / "w s")
    r = vd.readiness(ws)
    assert r.blocker("version").command == f"talkthemes init '{ws.root}'"
    assert not ws.root.exists()  # looking never creates anything
    ws.init()
    step = vd.readiness(ws).blocker("sweep")
    assert step.stage == "transcripts" and step.command.startswith("talkthemes ingest ")
    assert f"--workspace '{ws.root}'" in step.command
    with ws.store() as store:
        store.add_transcripts([_transcript("a"), _transcript("b", "power is out")], None)
    assert vd.readiness(ws).blocker("version").command.startswith("talkthemes prepare")
    with ws.store() as store:
        store.record_prep("abc", {"counts": {}})
    assert vd.readiness(ws).blocker("sweep").command.startswith("talkthemes sweep")
    assert vd.readiness(ws).blocker("version").command.startswith("talkthemes sweep")
    with ws.store() as store:
        sid = store.start_sweep("abc", {})
    assert vd.readiness(ws).blocker("sweep").stage == "sweep"  # no finished cell yet
    with ws.store() as store:
        store.add_cell(sid, "nmf-k002-s0", "nmf", 2, 0, {"fit_seconds": 1.0})
    r = vd.readiness(ws)
    assert r.blocker("sweep") is None and r.sweep_id == sid and not r.sweep_scored
    assert r.blocker("version").command.startswith("talkthemes publish")
    assert r.next_step is not None and r.next_step.stage == "version"
    with pytest.raises(InputError, match="unknown need"):
        r.blocker("nonsense")  # type: ignore[arg-type]


def test_readiness_of_the_demo_workspace(demo_ws) -> None:
    r = vd.readiness(demo_ws.ws)
    assert r.has_workspace and r.transcripts == 401 and r.prepared
    assert r.sweep_scored and r.version == 1
    assert r.blocker("version") is None and r.blocker("sweep") is None and r.next_step is None


# --------------------------------------------------------------------------- sweep


def test_load_sweep_and_cell_themes(demo_ws) -> None:
    sweep = vd.load_sweep(demo_ws.ws)
    assert sweep.scored and sweep.families == ["nmf"] and sweep.ks("nmf") == [5, 8]
    assert len(sweep.cells) == 4 and {"c_npmi", "stability", "top_terms"} <= set(sweep.cells)
    with demo_ws.ws.store() as store:
        record = store.get_sweep()
    assert sweep.recommended == {"nmf": record["recommendations"]["nmf"]["k"]}
    cell = vd.cell_themes(demo_ws.ws, sweep, "nmf", 8, n_terms=4)
    assert cell.k == 8 and cell.cell.startswith("nmf-k008-s") and len(cell.frame) == 8
    assert list(cell.frame["theme"]) == list(range(1, 9))
    vocab = set(vd.load_prep_vocabulary(demo_ws.ws, sweep.prep_hash))
    for terms in cell.frame["terms"]:
        words = terms.split(", ")
        assert len(words) == 4 and all(w.replace(" ", "_") in vocab for w in words)
    topics = np.load(sweep.folder / "topics" / f"{cell.cell}.npy")
    top = np.argsort(-topics[0])[:4]
    assert cell.frame["terms"][0] == ", ".join(
        vd.load_prep_vocabulary(demo_ws.ws, sweep.prep_hash)[i].replace("_", " ") for i in top
    )
    with pytest.raises(InputError, match="K=7"):
        vd.cell_themes(demo_ws.ws, sweep, "nmf", 7)


def test_load_sweep_without_one(tmp_path: Path) -> None:
    ws = Workspace(tmp_path)
    ws.init()
    with pytest.raises(NotReadyError, match="talkthemes sweep"):
        vd.load_sweep(ws)


def test_scalar_columns_drops_lists() -> None:
    frame = pd.DataFrame({"a": [1, 2], "b": [[1], [2]], "c": ["x", "y"]})
    assert list(vd.scalar_columns(frame)) == ["a", "c"]


# --------------------------------------------------------------------------- themes


def test_theme_layout_places_alike_themes_together() -> None:
    tt = np.array([[0.7, 0.2, 0.1, 0.0], [0.69, 0.21, 0.1, 0.0], [0.0, 0.1, 0.2, 0.7]])
    layout = vd.theme_layout(tt)
    d01 = np.hypot(layout.x[0] - layout.x[1], layout.y[0] - layout.y[1])
    d02 = np.hypot(layout.x[0] - layout.x[2], layout.y[0] - layout.y[2])
    assert d01 < 0.05 * d02
    assert layout.explained == pytest.approx(1.0)  # three points always fit in a plane


def test_theme_table_and_names(version: Version) -> None:
    layout = vd.theme_layout(version.topic_terms)
    table = vd.theme_table(version, layout, lam=1.0)
    assert list(table["theme_id"]) == [11, 12, 13]
    assert table["coverage"].tolist() == pytest.approx([3 / 6, 2 / 6, 1 / 6])
    assert table["mean_share"].tolist() == pytest.approx(SHARES.mean(axis=0).tolist())
    assert table["name"][0] == "Bills"
    assert table["name"][1] == "power · outage · bill"  # three top terms until labelled
    assert table["top_terms"][1].startswith("power, outage")
    assert vd.theme_names(version) == list(table["name"])
    version.themes[1]["label"] = "Power cuts"
    assert vd.theme_names(version)[1] == "Power cuts"  # labels are read each time


def test_with_names_refreshes_labels_and_hidden(version: Version) -> None:
    frame = pd.DataFrame({"theme_id": [13, 11], "name": ["old", "old"], "share": [0.1, 0.2]})
    version.themes[2]["hidden"] = True
    out = vd.with_names(frame, version)
    assert list(out["name"]) == [vd.theme_names(version)[2], "Bills"]
    assert list(out["hidden"]) == [True, False]


# --------------------------------------------------------------------------- metadata, calls


def test_metadata_kinds(meta: vd.MetaTable) -> None:
    assert meta.fields["date"].kind == "date" and meta.date_field == "date"
    assert meta.fields["date"].lo == dt.date(2026, 5, 4) and meta.fields["date"].missing == 1
    assert meta.fields["duration_s"].kind == "number"
    assert (meta.fields["duration_s"].lo, meta.fields["duration_s"].hi) == (100.0, 600.0)
    assert meta.fields["queue"].kind == "category"
    assert meta.fields["queue"].values == ("billing", "faults", "moves")  # most frequent first
    assert pd.isna(meta.dates[5]) and meta.frame["queue"][5] == "moves"


def test_many_distinct_values_make_a_text_field() -> None:
    ids = [f"t{i}" for i in range(40)]
    table = vd.metadata_table(ids, {t: {"agent": f"agent {t}"} for t in ids})
    assert table.fields["agent"].kind == "text" and table.date_field is None


def test_calls_lists_the_theme_s_transcripts_by_share(version, meta) -> None:
    calls = vd.calls_table(version, meta, 0)
    assert list(calls["transcript_id"]) == ["t0", "t2", "t1"]
    assert calls["share"].tolist() == pytest.approx([0.9, 0.7, 0.6])
    assert set(calls["lead_theme"]) == {"Bills"}
    assert {"date", "queue", "duration_s", "ref"} <= set(calls.columns)
    wider = vd.calls_table(version, meta, 0, vd.CallFilter(lead_only=False, min_share=0.2))
    assert list(wider["transcript_id"]) == ["t0", "t2", "t1", "t4", "t3"]
    assert wider.set_index("transcript_id")["lead_share"]["t4"] == pytest.approx(0.5)
    assert vd.calls_table(version, meta, 0, vd.CallFilter(min_share=0.65))["share"].min() >= 0.65


def test_calls_filters(version, meta) -> None:
    def ids(**kw) -> list[str]:
        flt = vd.CallFilter(lead_only=False, **kw)
        return sorted(vd.calls_table(version, meta, 0, flt)["transcript_id"])

    assert ids(categories={"queue": ["faults"]}) == ["t1", "t3"]
    assert ids(categories={"queue": []}) == [f"t{i}" for i in range(6)]
    assert ids(ranges={"duration_s": (150, 450)}) == ["t1", "t2", "t3"]
    assert ids(contains={"ref": "B-"}) == ["t1"]
    assert ids(date_from=dt.date(2026, 5, 5), date_to=dt.date(2026, 6, 1)) == ["t1", "t2", "t3"]
    assert ids(date_from=dt.date(2026, 6, 1)) == ["t3", "t4"]  # undated t5 left out
    with pytest.raises(InputError, match="'nope' is not a category or text field"):
        ids(categories={"nope": ["x"]})
    with pytest.raises(InputError, match="not a number field"):
        ids(ranges={"queue": (0, 1)})
    with pytest.raises(InputError, match="outside"):
        vd.calls_table(version, meta, 3)


def test_calls_csv_defuses_formulas(version, meta) -> None:
    frame = vd.calls_table(version, meta, 0, vd.CallFilter(lead_only=False))
    text = vd.calls_csv(frame).decode("utf-8")
    assert "'=cmd()" in text and "\n=cmd()" not in text and ",=cmd()" not in text
    back = pd.read_csv(__import__("io").StringIO(text))
    assert back["share"].tolist() == pytest.approx(frame["share"].tolist())
    assert list(back.columns) == list(frame.columns)


# --------------------------------------------------------------------------- highlighting


def _marked(h: vd.TermHighlighter, text: str) -> list[str]:
    return [s for s, hit in h.segments(text) if hit]


def test_highlight_words_case_lemma_and_inflection() -> None:
    h = vd.TermHighlighter(["bill", "pay", "outage", "reply", "stop"], lemmas={"paid": "pay"})
    assert _marked(h, "Bills, BILL and billing; we paid.") == ["Bills", "BILL", "billing", "paid"]
    assert _marked(h, "Outages replies stopped") == ["Outages", "replies", "stopped"]
    assert _marked(h, "payment billboard") == []  # only whole words and simple endings


def test_highlight_has_no_short_d_rule() -> None:
    h = vd.TermHighlighter(["fee", "move"])
    assert _marked(h, "feed the fees; moved") == ["fees", "moved"]


def test_highlight_phrases_as_runs_with_gaps() -> None:
    h = vd.TermHighlighter(["direct_debit", "pay_bill", "late"])
    assert _marked(h, "My Direct-Debit failed") == ["Direct-Debit"]
    assert _marked(h, "I want to pay the bill") == ["pay the bill"]
    assert _marked(h, "pay it off, then the bill") == []  # too far apart
    assert _marked(h, "a direct line, a debit card") == []  # not across punctuation
    assert _marked(h, "direct to the bank by debit") == []  # more than two words apart
    assert _marked(h, "a direct line") == []  # parts alone are not marked
    assert _marked(h, "late late") == ["late", "late"]


def test_highlight_overlaps_merge() -> None:
    h = vd.TermHighlighter(["late_fee", "fee"])
    assert h.segments("a late fee") == [("a ", False), ("late fee", True)]
    assert h.count("a late fee and a fee") == 2


@given(st.text(alphabet=st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=80))
def test_segments_join_back_to_the_text(text: str) -> None:
    h = vd.TermHighlighter(["bill", "pay_bill", "a"])
    segments = h.segments(text)
    assert "".join(s for s, _ in segments) == text
    assert all(s for s, _ in segments) or text == ""
    for (_, a), (_, b) in itertools.pairwise(segments):
        assert not (a and b)  # highlighted runs are merged


def test_segments_html_escapes_every_piece() -> None:
    out = vd.segments_html([("<b>x</b> & ", False), ("<i>bill</i>", True)])
    assert out == '&lt;b&gt;x&lt;/b&gt; &amp; <mark class="tt-hit">&lt;i&gt;bill&lt;/i&gt;</mark>'


def test_transcript_html_escapes_speakers_and_text() -> None:
    turns = [
        StoredTurn(0, "<Agent>", "agent", 65.0, None, "Your bill <script>x</script>"),
        StoredTurn(1, "", "customer", None, None, "ok"),
    ]
    views = vd.turn_views(turns, vd.TermHighlighter(["bill"]))
    out = vd.transcript_html(views)
    assert "&lt;Agent&gt;" in out and "<script>" not in out and "&lt;script&gt;" in out
    assert '<mark class="tt-hit">bill</mark>' in out and "1:05" in out
    assert ">customer</span>" in out  # a turn without a speaker label shows its role


def test_excerpt_picks_the_turn_with_most_terms_and_trims() -> None:
    h = vd.TermHighlighter(["bill"])
    long = "word " * 100 + "my bill here " + "tail " * 100
    turns = vd.turn_views(
        [
            StoredTurn(0, "Agent", "agent", None, None, "hello there"),
            StoredTurn(1, "Customer", "customer", None, None, long),
        ],
        h,
    )
    speaker, segments = vd.excerpt(turns, max_chars=120)
    text = "".join(s for s, _ in segments)
    assert speaker == "Customer" and "bill" in [s for s, hit in segments if hit]
    assert text.startswith("… ") and text.endswith(" …") and len(text) <= 126
    short = vd.turn_views([StoredTurn(0, "A", "agent", None, None, "a bill")], h)
    assert vd.excerpt(short) == ("A", [("a ", False), ("bill", True)])
    assert vd.excerpt([]) == ("", [])


def test_load_transcript(demo_ws) -> None:
    turns = vd.load_transcript(demo_ws.ws, demo_ws.xss_id, vd.TermHighlighter(["power"]))
    assert len(turns) == 7 and turns[0].speaker == "Customer" and turns[0].hits >= 2
    with pytest.raises(InputError, match="no transcript 'missing'"):
        vd.load_transcript(demo_ws.ws, "missing", vd.TermHighlighter([]))


# --------------------------------------------------------------------------- over time


def test_trend_frame_counts_per_period(version, meta) -> None:
    weekly = vd.trend_frame(version, meta, "week", n_boot=50)
    weeks = sorted(weekly["period"].unique())
    assert len(weeks) == 5  # 4 May … 1 June, the empty weeks included
    first = weekly[weekly["period"] == weeks[0]].set_index("theme_id")
    assert first["n"].iloc[0] == 2 and first.loc[11, "share"] == pytest.approx(1.0)
    assert weekly[weekly["period"] == weeks[2]]["n"].iloc[0] == 0
    assert set(weekly["name"]) == set(vd.theme_names(version)) and "hidden" in weekly
    monthly = vd.trend_frame(version, meta, "month", n_boot=50)
    may = monthly[monthly["period"] == pd.Timestamp("2026-05-01")].set_index("theme_id")
    assert may["n"].iloc[0] == 3 and may.loc[11, "share"] == pytest.approx(1.0)


def test_trends_need_dates(version) -> None:
    no_dates = vd.metadata_table([f"t{i}" for i in range(6)], {"t0": {"queue": "x"}})
    with pytest.raises(NotReadyError, match="--manifest"):
        vd.trend_frame(version, no_dates, "week")


def test_segment_frame(version, meta) -> None:
    seg = vd.segment_frame(version, meta, "queue", n_boot=50)
    billing = seg[seg["segment"] == "billing"].set_index("theme_id")
    assert billing["n"].iloc[0] == 3 and billing.loc[11, "share"] == pytest.approx(2 / 3)
    quart = vd.segment_frame(version, meta, "duration_s", n_boot=50)
    labels = sorted(quart["segment"].unique())
    assert labels[0].startswith("Q1: 100") and labels[-1].startswith("Q4:")
    assert quart.groupby("segment")["n"].first().sum() == 6
    assert vd.segment_fields(meta) == ["duration_s", "queue"]
    with pytest.raises(InputError, match="not a field to compare by"):
        vd.segment_frame(version, meta, "ref")


def test_movers_frame(version, meta) -> None:
    months = vd.period_choices(meta, "month")
    assert months == [pd.Timestamp("2026-05-01"), pd.Timestamp("2026-06-01")]
    mv = vd.movers_frame(version, meta, "month", months[0], months[1], n_boot=50)
    row = mv.set_index("theme_id")
    assert row.loc[11, "change"] == pytest.approx(-100.0)  # leads 3 of 3 in May, 0 of 2 in June
    assert row.loc[12, "change"] == pytest.approx(100.0)
    assert list(mv["theme_id"][:2]) == [11, 12] and "hidden" in mv
    with pytest.raises(InputError, match="two different periods"):
        vd.movers_frame(version, meta, "month", months[0], months[0])


def test_demo_version_round_trip(demo_ws) -> None:
    version = load_version(demo_ws.ws)
    meta = vd.load_metadata(demo_ws.ws, version.doc_ids)
    assert len(meta.frame) == len(version.doc_ids) and meta.date_field == "date"
    assert set(meta.fields) == {"channel", "date", "duration_s", "queue", "site"}
    i = version.doc_ids.index(demo_ws.xss_id)
    assert meta.frame["site"][i].startswith("Site <img")
    total = sum(len(vd.calls_table(version, meta, p)) for p in range(version.k))
    assert total == len(version.doc_ids)  # every transcript has exactly one lead theme
