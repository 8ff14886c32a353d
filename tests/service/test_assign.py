"""POST /v1/assign: the shares the API gives for the same texts, in either input shape,
from one named version; bad items are a 422 naming them; storing needs the write scope."""

from __future__ import annotations

import pytest
from tests.service.conftest import Service, copy_workspace, error_of, start

#: Whole calls: each caller says it several times over, so every text has the version's
#: ``[prepare] min_tokens`` (20) words it knows (a shorter one is unthemed, tested below).
TEXTS = [
    "Customer: "
    + " ".join(["my smart meter display has gone blank and shows no meter reading."] * 7),
    "Customer: "
    + " ".join(["you took the direct debit payment twice this month, I want a refund."] * 5),
    "Customer: " + " ".join(["water is leaking from a pipe in the street outside my house."] * 5),
]


def test_shares_are_the_apis_shares(service: Service) -> None:
    res = service.post("/v1/assign", json={"items": [{"text": t} for t in TEXTS]})
    assert res.status_code == 200, res.text
    body = res.json()
    frame = service.ws.assign(TEXTS)
    assert body["version"] == 1 and body["stored"] is None
    assert [r["id"] for r in body["results"]] == ["0", "1", "2"]
    for result, (_, row) in zip(body["results"], frame.iterrows(), strict=True):
        assert result["lead_theme_id"] == row["lead_theme_id"]
        assert result["lead_share"] == pytest.approx(row["lead_share"])
        shares = {s["theme_id"]: s["share"] for s in result["shares"]}
        assert shares == pytest.approx({t: row[f"share_{t}"] for t in shares})
        assert sum(shares.values()) == pytest.approx(1, abs=1e-5)
        assert max(shares, key=shares.get) == result["lead_theme_id"]
    leads = {r["lead_theme_id"] for r in body["results"]}
    assert len(leads) >= 2  # meters, payments and leaks are not one theme


def test_turns_give_the_same_shares_as_the_same_text(service: Service) -> None:
    items = [
        {"id": "as-text", "text": "Agent: How can I help?\nCustomer: " + TEXTS[2][10:]},
        {
            "id": "as-turns",
            "turns": [
                {"speaker": "Agent", "text": "How can I help?", "start": 0},
                {"speaker": "Customer", "text": TEXTS[2][10:], "start": 2.5},
            ],
        },
    ]
    results = service.post("/v1/assign", json={"items": items}).json()["results"]
    assert results[0]["shares"] == results[1]["shares"]
    assert [r["id"] for r in results] == ["as-text", "as-turns"]


def test_the_lead_theme_is_named_by_its_label_or_suggestion(service: Service) -> None:
    first = service.post("/v1/assign", json={"items": [{"text": TEXTS[0]}]}).json()
    lead = first["results"][0]["lead_theme_id"]
    themes = {t["theme_id"]: t for t in service.get("/v1/themes").json()["themes"]}
    assert first["results"][0]["lead_theme_name"] == themes[lead]["suggested_name"]
    service.ws.label(lead, "Meter trouble")
    again = service.post("/v1/assign", json={"items": [{"text": TEXTS[0]}]}).json()
    assert again["results"][0]["lead_theme_name"] == "Meter trouble"


def test_a_text_without_known_words_has_no_lead_theme(service: Service) -> None:
    body = service.post("/v1/assign", json={"items": [{"text": "zzyzx qwv"}]}).json()
    (result,) = body["results"]
    assert result["lead_theme_id"] is None and result["shares"] is None
    assert result["known_terms"] == 0 and result["reason"]
    assert result["lead_theme_name"] == "unthemed"


def test_a_short_text_is_in_the_unthemed_group_not_dropped(service: Service) -> None:
    items = [{"id": "short", "text": "my smart meter shows no reading"}, {"text": TEXTS[0]}]
    body = service.post("/v1/assign", json={"items": items}).json()
    short, long = body["results"]
    assert short["id"] == "short" and 0 < short["known_terms"] < 20
    assert short["lead_theme_id"] is None and short["lead_theme_name"] == "unthemed"
    assert short["lead_share"] is None and short["shares"] is None
    assert short["reason"].endswith("fewer than min_tokens = 20")
    assert long["lead_theme_id"] is not None and long["reason"] == ""


def test_an_older_version_answers_when_asked(service: Service) -> None:
    res = service.post("/v1/assign", params={"version": 1}, json={"items": [{"text": "x y"}]})
    assert res.status_code == 200 and res.json()["version"] == 1
    res = service.post("/v1/assign", params={"version": 5}, json={"items": [{"text": "x"}]})
    assert res.status_code == 404


@pytest.mark.parametrize(
    ("body", "code", "field"),
    [
        ({"items": []}, "invalid_request", "items"),
        ({"items": [{"text": 5}]}, "invalid_request", "items[0].text"),
        ({"items": [{"text": "a", "turns": [{"text": "b"}]}]}, "invalid_request", "items[0]"),
        ({"items": [{}]}, "invalid_request", "items[0]"),
        ({"items": [{"text": "a", "colour": "red"}]}, "invalid_request", "items[0].colour"),
        ({"items": [{"turns": []}]}, "invalid_request", "items[0].turns"),
        ({"items": [{"turns": [{"text": "a", "role": "boss"}]}]}, "invalid_request", None),
        ({"items": [{"turns": [{"text": "a", "start": -1}]}]}, "invalid_request", None),
        ({"items": [{"text": "a", "metadata": {"queue": ["x"]}}]}, "invalid_request", None),
        ({"items": "text"}, "invalid_request", "items"),
        ({"texts": ["a"]}, "invalid_request", None),
        ([], "invalid_request", "body"),
    ],
)
def test_malformed_items_are_422_naming_the_field(
    service: Service, body: object, code: str, field: str | None
) -> None:
    res = service.post("/v1/assign", json=body)
    assert res.status_code == 422, res.text
    err = error_of(res)
    assert err["code"] == code
    if field is not None:
        assert field in [d["field"] for d in err["details"]]


def test_empty_texts_are_422_naming_each(service: Service) -> None:
    items = [{"text": TEXTS[0]}, {"text": "   "}, {"turns": [{"text": " "}]}]
    res = service.post("/v1/assign", json={"items": items})
    assert res.status_code == 422
    err = error_of(res)
    assert err["code"] == "rejected_items"
    assert [d["index"] for d in err["details"]] == [1, 2]
    assert all("empty text" in d["reason"] for d in err["details"])


def test_too_many_items_are_refused(published_root, tmp_path) -> None:
    for service in start(copy_workspace(published_root, tmp_path / "ws"), max_items=3):
        res = service.post("/v1/assign", json={"items": [{"text": "a"}] * 4})
        assert res.status_code == 422
        err = error_of(res)
        assert err["code"] == "too_many_items" and err["details"]["max_items"] == 3
        assert service.post("/v1/assign", json={"items": [{"text": TEXTS[0]}] * 3}).is_success


def test_store_needs_the_write_scope_and_ids(service: Service) -> None:
    before = service.ws.status().transcripts
    items = [{"id": "new-1", "text": TEXTS[0]}]
    res = service.post("/v1/assign", params={"store": "true"}, json={"items": items})
    assert res.status_code == 403
    res = service.post(
        "/v1/assign", scope="write", params={"store": "true"}, json={"items": [{"text": "a b"}]}
    )
    assert res.status_code == 422 and "id" in error_of(res)["message"]
    assert service.ws.status().transcripts == before  # nothing stored
    res = service.post("/v1/assign", scope="write", params={"store": "true"}, json={"items": items})
    assert res.status_code == 200
    assert res.json()["stored"]["totals"]["added"] == 1
    assert service.ws.status().transcripts == before + 1


def test_assign_without_store_stores_nothing(service: Service) -> None:
    before = service.ws.status().transcripts
    service.post("/v1/assign", json={"items": [{"id": "nope", "text": TEXTS[1]}]})
    assert service.ws.status().transcripts == before
    assert service.get("/v1/calls/nope").status_code == 404
