"""The GET endpoints answer what the API answers: versions, themes (with names and
shares), a theme's calls page by page with filters, one call; unknown ids are 404, an
unpublished workspace 409 naming what to run."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from tests.service.conftest import Service, copy_workspace, error_of, start


def test_versions_lists_the_published_version(service: Service) -> None:
    body = service.get("/v1/versions").json()
    assert body["current"] == 1
    (v,) = body["versions"]
    assert (v["version"], v["family"], v["k"], v["made_by"], v["current"]) == (
        1, "nmf", 4, "publish", True,
    )  # fmt: skip
    assert v["transcripts"] == len(service.ws.version().doc_ids)


def test_themes_are_the_apis_themes(service: Service) -> None:
    body = service.get("/v1/themes").json()
    frame = service.ws.themes()
    assert body["version"] == 1 and body["k"] == 4
    assert [t["theme_id"] for t in body["themes"]] == frame["theme_id"].tolist()
    for theme, (_, row) in zip(body["themes"], frame.iterrows(), strict=True):
        assert theme["coverage"] == pytest.approx(row["coverage"])
        assert theme["mean_share"] == pytest.approx(row["mean_share"])
        assert theme["top_terms"] == list(row["top_terms"])
        assert theme["label"] is None and theme["name"] == theme["suggested_name"]
        assert theme["coherence"]["c_npmi"] == pytest.approx(row["c_npmi"])
    assert sum(t["coverage"] for t in body["themes"]) == pytest.approx(1)


def test_themes_show_the_unthemed_group_with_its_count(service: Service) -> None:
    body = service.get("/v1/themes").json()
    with service.ws.folder.store() as store:
        stored = store.count_transcripts()
    unthemed = body["unthemed"]
    # the demo's hang-ups and wrong numbers: stored, in no theme, counted here
    assert unthemed["count"] > 0 and unthemed["count"] + body["transcripts"] == stored
    assert unthemed["share"] == pytest.approx(unthemed["count"] / stored, abs=1e-6)
    assert sum(unthemed["by_reason"].values()) == unthemed["count"]
    assert unthemed == service.ws.unthemed().to_json()


def test_a_label_becomes_the_name_and_the_suggestion_stays(service: Service) -> None:
    service.ws.label(2, "Leaks and outages")
    theme = next(t for t in service.get("/v1/themes").json()["themes"] if t["theme_id"] == 2)
    assert theme["name"] == theme["label"] == "Leaks and outages"
    assert theme["suggested_name"] != theme["name"] and " · " in theme["suggested_name"]


def test_lambda_and_terms_shape_the_top_terms(service: Service) -> None:
    body = service.get("/v1/themes", params={"lambda": 1, "terms": 3}).json()
    v = service.ws.version()
    for i, theme in enumerate(body["themes"]):
        assert theme["top_terms"] == v.top_terms(i, 3, 1.0)
    assert body["relevance_lambda"] == 1


@pytest.mark.parametrize(
    ("params", "field"),
    [({"lambda": 2}, "lambda"), ({"terms": 0}, "terms"), ({"version": "x"}, "version")],
)
def test_bad_query_values_are_422(service: Service, params: dict, field: str) -> None:
    res = service.get("/v1/themes", params=params)
    assert res.status_code == 422
    assert error_of(res)["details"][0]["field"] == field


def test_an_unknown_version_is_404_listing_the_kept_ones(service: Service) -> None:
    res = service.get("/v1/themes", params={"version": 9})
    assert res.status_code == 404
    err = error_of(res)
    assert err["code"] == "unknown_version" and err["details"] == {"kept": [1]}


def test_a_themes_calls_page_by_page(service: Service) -> None:
    v = service.ws.version()
    lead = v.lead()
    expected_total = int((lead == 0).sum())
    seen: list[str] = []
    offset: int | None = 0
    while offset is not None:
        page = service.get("/v1/themes/1/calls", params={"offset": offset, "limit": 7}).json()
        assert page["total"] == expected_total and len(page["calls"]) <= 7
        seen += [c["call_id"] for c in page["calls"]]
        offset = page["next_offset"]
    assert len(seen) == len(set(seen)) == expected_total
    shares = dict(zip(v.doc_ids, v.doc_topics[:, 0], strict=True))
    values = [shares[c] for c in seen]
    assert values == sorted(values, reverse=True)  # most dominated first


def test_calls_filters_by_metadata_and_date(service: Service) -> None:
    all_calls = service.get("/v1/themes/1/calls", params={"limit": 1000}).json()["calls"]
    queues = {c["metadata"].get("queue") for c in all_calls} - {None}
    queue = sorted(queues)[0]
    billing = service.get(
        "/v1/themes/1/calls", params={"limit": 1000, "where": f"queue:{queue}"}
    ).json()
    assert billing["total"] == sum(c["metadata"].get("queue") == queue for c in all_calls) > 0
    assert {c["metadata"]["queue"] for c in billing["calls"]} == {queue}
    dates = sorted(c["metadata"]["date"] for c in all_calls if "date" in c["metadata"])
    middle = dates[len(dates) // 2][:10]
    later = service.get("/v1/themes/1/calls", params={"limit": 1000, "date_from": middle}).json()
    assert later["total"] == sum(d[:10] >= middle for d in dates)
    assert all(c["metadata"]["date"][:10] >= middle for c in later["calls"])


def test_calls_of_every_share_and_a_minimum(service: Service) -> None:
    v = service.ws.version()
    share = v.doc_topics[:, 1]
    page = service.get(
        "/v1/themes/2/calls", params={"lead_only": "false", "min_share": 0.2, "limit": 1}
    ).json()
    assert page["total"] == int((share >= 0.2).sum())


def test_calls_bad_requests(service: Service) -> None:
    assert service.get("/v1/themes/99/calls").status_code == 404
    assert error_of(service.get("/v1/themes/99/calls"))["code"] == "unknown_theme"
    assert service.get("/v1/themes/1/calls", params={"where": "queue"}).status_code == 422
    assert service.get("/v1/themes/1/calls", params={"limit": 100000}).status_code == 422
    assert service.get("/v1/themes/1/calls", params={"offset": -1}).status_code == 422
    assert service.get("/v1/themes/1/calls", params={"date_from": "May"}).status_code == 422
    assert service.get("/v1/themes/x/calls").status_code == 422


def test_one_call_with_its_shares_and_no_text_by_default(service: Service) -> None:
    v = service.ws.version()
    call_id = v.doc_ids[5]
    body = service.get(f"/v1/calls/{call_id}").json()
    assert body["in_version"] and body["text"] == "none" and body["turns"] is None
    got = {s["theme_id"]: s["share"] for s in body["shares"]}
    assert got == pytest.approx(dict(zip(v.theme_ids, v.doc_topics[5], strict=True)))
    assert body["lead_theme_id"] == v.theme_ids[int(np.argmax(v.doc_topics[5]))]
    assert "queue" in body["metadata"]


def test_an_unknown_call_is_404(service: Service) -> None:
    res = service.get("/v1/calls/no-such-call")
    assert res.status_code == 404 and error_of(res)["code"] == "unknown_call"


def test_a_call_stored_after_the_version_has_no_shares_and_says_why(service: Service) -> None:
    service.ws.ingest_records([{"id": "late-1", "text": "Customer: my bill doubled"}])
    body = service.get("/v1/calls/late-1").json()
    assert body["shares"] is None and not body["in_version"]
    assert "assign" in body["reason"]


@pytest.fixture
def with_text(published_root: Path, tmp_path: Path, request: pytest.FixtureRequest):
    ws = copy_workspace(published_root, tmp_path / "ws")
    yield from start(ws, call_text=request.param)


@pytest.mark.parametrize("with_text", ["masked"], indirect=True)
def test_masked_text_hides_personal_data(with_text: Service) -> None:
    with_text.ws.ingest_records(
        [
            {
                "id": "pii-1",
                "turns": [
                    {"speaker": "Priya", "text": "Hi, this is Priya, my email is p.k@example.org"},
                    {"speaker": "Agent", "text": "Your card 4111 1111 1111 1111 is on file."},
                ],
            }
        ]
    )
    body = with_text.get("/v1/calls/pii-1").json()
    text = " ".join(t["speaker"] + " " + t["text"] for t in body["turns"])
    assert body["text"] == "masked"
    for secret in ("Priya", "p.k@example.org", "4111"):
        assert secret not in text
    assert [t["role"] for t in body["turns"]] == ["unknown", "agent"]


@pytest.mark.parametrize("with_text", ["original"], indirect=True)
def test_original_text_when_the_workspace_allows_it(with_text: Service) -> None:
    with_text.ws.ingest_records([{"id": "pii-2", "text": "Customer: I'm Priya, p.k@example.org"}])
    body = with_text.get("/v1/calls/pii-2").json()
    assert body["turns"][0]["text"] == "I'm Priya, p.k@example.org"


def test_an_unpublished_workspace_answers_409_with_what_to_run(unpublished: Service) -> None:
    for path in ("/v1/themes", "/v1/themes/1/calls", "/v1/calls/x"):
        res = unpublished.get(path)
        assert res.status_code == 409, path
        err = error_of(res)
        assert err["code"] == "not_ready" and "talkthemes publish" in str(err["message"])
    res = unpublished.post("/v1/assign", json={"items": [{"text": "hello"}]})
    assert res.status_code == 409
    assert unpublished.client.get("/v1/health").json()["current_version"] is None
    assert unpublished.get("/v1/versions").json() == {"current": None, "versions": []}
