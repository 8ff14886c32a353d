"""POST /v1/transcripts (an outcome per item, idempotent by id), POST /v1/labels, and
the 409s of a busy workspace."""

from __future__ import annotations

import pytest
from tests.service.conftest import Service, error_of

CALLS = [
    {
        "id": "svc-1",
        "text": "Agent: Thanks for calling.\nCustomer: My meter reading on the bill is wrong.",
        "metadata": {"date": "2026-11-03", "queue": "billing", "duration_s": 312},
    },
    {
        "id": "svc-2",
        "turns": [
            {"speaker": "Agent", "text": "How can I help?", "start": 0},
            {"speaker": "Customer", "text": "There is a leak in the street.", "start": 2.5},
        ],
        "metadata": {"date": "3 November 2026"},
    },
]


def test_items_are_stored_with_an_outcome_each(service: Service) -> None:
    res = service.post("/v1/transcripts", scope="write", json={"items": CALLS})
    assert res.status_code == 200, res.text
    body = res.json()
    assert body["totals"] == {"added": 2, "unchanged": 0, "duplicate": 0, "rejected": 0}
    assert [(r["index"], r["id"], r["outcome"]) for r in body["records"]] == [
        (0, "svc-1", "added"),
        (1, "svc-2", "added"),
    ]
    call = service.get("/v1/calls/svc-2").json()
    assert call["metadata"] == {"date": "2026-11-03"}  # the date read as ISO 8601
    assert service.get("/v1/calls/svc-1").json()["metadata"]["duration_s"] == "312"


def test_sending_the_same_batch_again_changes_nothing(service: Service) -> None:
    service.post("/v1/transcripts", scope="write", json={"items": CALLS})
    before = service.ws.status()
    again = service.post("/v1/transcripts", scope="write", json={"items": CALLS}).json()
    assert [r["outcome"] for r in again["records"]] == ["unchanged", "unchanged"]
    assert service.ws.status().transcripts == before.transcripts


def test_bad_items_are_rejected_one_by_one_and_the_rest_kept(service: Service) -> None:
    service.post("/v1/transcripts", scope="write", json={"items": CALLS[:1]})
    items = [
        {"id": "svc-1", "text": "Customer: a different call under the same id"},
        {"id": "svc-3", "text": "   "},
        {"id": "svc-4", "text": "Customer: my direct debit went up"},
        {"id": "svc-4", "text": "Customer: another call, same id"},
        {"id": "svc-5", "text": "Customer: hi", "metadata": {"date": "someday"}},
    ]
    body = service.post("/v1/transcripts", scope="write", json={"items": items}).json()
    outcomes = [(r["id"], r["outcome"]) for r in body["records"]]
    assert outcomes == [
        ("svc-1", "rejected"),
        ("svc-3", "rejected"),
        ("svc-4", "added"),
        ("svc-4", "rejected"),
        ("svc-5", "added"),
    ]
    reasons = [r["reason"] for r in body["records"]]
    assert "never overwritten" in reasons[0]
    assert "empty text" in reasons[1]
    assert "never merged" in reasons[3]
    assert any("someday" in w["message"] for w in body["warnings"])
    assert "date" not in service.get("/v1/calls/svc-5").json()["metadata"]
    assert service.ws.status().rejected_inputs >= 3


def test_a_likely_re_export_is_a_duplicate(service: Service) -> None:
    text = "Customer: " + " ".join(f"word{i}" for i in range(40))
    service.post("/v1/transcripts", scope="write", json={"items": [{"id": "o-1", "text": text}]})
    body = service.post(
        "/v1/transcripts", scope="write", json={"items": [{"id": "o-2", "text": text}]}
    ).json()
    (record,) = body["records"]
    assert record["outcome"] == "duplicate" and record["duplicate_of"] == "o-1"


def test_ids_are_required_to_store(service: Service) -> None:
    res = service.post("/v1/transcripts", scope="write", json={"items": [{"text": "hello"}]})
    assert res.status_code == 422
    assert error_of(res)["details"][0]["field"] == "items[0].id"


def test_labels_set_and_carry_fields(service: Service) -> None:
    res = service.post("/v1/labels", scope="write", json={"theme_id": 1, "label": "Bills"})
    assert res.json() == {"theme_id": 1, "label": "Bills", "note": "", "hidden": False}
    res = service.post("/v1/labels", scope="write", json={"theme_id": 1, "hidden": True})
    assert res.json() == {"theme_id": 1, "label": "Bills", "note": "", "hidden": True}
    theme = service.get("/v1/themes").json()["themes"][0]
    assert theme["name"] == "Bills" and theme["hidden"]


@pytest.mark.parametrize(
    ("body", "status", "code"),
    [
        ({"theme_id": 99, "label": "x"}, 404, "unknown_theme"),
        ({"theme_id": 1}, 422, "invalid_request"),
        ({"theme_id": "1", "label": "x"}, 422, "invalid_request"),
        ({"theme_id": 1, "label": 5}, 422, "invalid_request"),
        ({"theme_id": 1, "hidden": "yes"}, 422, "invalid_request"),
        ({"theme_id": 1, "label": "x" * 201}, 422, "invalid_request"),
    ],
)
def test_bad_labels(service: Service, body: dict, status: int, code: str) -> None:
    res = service.post("/v1/labels", scope="write", json=body)
    assert res.status_code == status, res.text
    assert error_of(res)["code"] == code


def test_a_busy_workspace_answers_409_with_retry_after(service: Service) -> None:
    with service.ws.folder.lock("another program"):
        for path, body in (
            ("/v1/transcripts", {"items": CALLS}),
            ("/v1/refresh", {}),
        ):
            res = service.post(path, scope="write", json=body)
            assert res.status_code == 409, path
            assert error_of(res)["code"] == "workspace_busy"
            assert int(res.headers["Retry-After"]) > 0
        # reads go on
        assert service.get("/v1/themes").status_code == 200
        assert service.post("/v1/assign", json={"items": [{"text": "meter"}]}).status_code == 200
    assert service.post("/v1/transcripts", scope="write", json={"items": CALLS}).is_success


def test_refresh_needs_a_published_version(unpublished: Service) -> None:
    res = unpublished.post("/v1/refresh", scope="write", json={})
    assert res.status_code == 409 and "publish" in str(error_of(res)["message"])
