"""Bad input is a clear 4xx in the one error shape: malformed JSON, another media type,
bodies over the limit (declared or streamed), unknown paths and methods; a fault of the
service itself is a 500 that gives nothing away."""

from __future__ import annotations

import logging
from pathlib import Path

import pytest
from tests.service.conftest import Service, copy_workspace, error_of, start

from talkthemes.api.calls import CallsMixin


@pytest.mark.parametrize(
    "content", [b"{not json", b'{"items": [', b"\xff\xfe\x00", b'{"items": [{"text": NaN}]}']
)
def test_malformed_bodies_are_400_or_422(service: Service, content: bytes) -> None:
    headers = {**service.headers(), "Content-Type": "application/json"}
    res = service.client.post("/v1/assign", content=content, headers=headers)
    assert res.status_code in (400, 422), res.text
    err = error_of(res)
    if res.status_code == 400:
        assert err["code"] in ("malformed_json", "bad_request")


def test_malformed_json_says_so(service: Service) -> None:
    headers = {**service.headers(), "Content-Type": "application/json"}
    res = service.client.post("/v1/assign", content=b"{not json", headers=headers)
    assert res.status_code == 400
    assert error_of(res)["code"] == "malformed_json"


def test_a_body_that_is_not_json_is_415(service: Service) -> None:
    res = service.client.post(
        "/v1/assign",
        content=b"text=my meter",
        headers={**service.headers(), "Content-Type": "application/x-www-form-urlencoded"},
    )
    assert res.status_code == 415
    assert "application/json" in str(error_of(res)["message"])


@pytest.fixture
def small(published_root: Path, tmp_path: Path):
    """A service that takes bodies of at most 2 kB."""
    yield from start(copy_workspace(published_root, tmp_path / "ws"), max_body_mb=0.002)


def test_a_declared_body_over_the_limit_is_413_before_it_is_read(small: Service) -> None:
    big = {"items": [{"text": "Customer: " + "meter " * 600}]}
    res = small.post("/v1/assign", json=big)
    assert res.status_code == 413
    err = error_of(res)
    assert err["code"] == "body_too_large" and "max_body_mb" in str(err["message"])


def test_a_streamed_body_over_the_limit_is_413(small: Service) -> None:
    def chunks():
        yield b'{"items": [{"text": "'
        for _ in range(100):
            yield b"meter " * 10
        yield b'"}]}'

    headers = {**small.headers(), "Content-Type": "application/json"}
    res = small.client.post("/v1/assign", content=chunks(), headers=headers)
    assert res.status_code == 413


def test_a_body_under_the_limit_passes(small: Service) -> None:
    res = small.post("/v1/assign", json={"items": [{"text": "Customer: my meter"}]})
    assert res.status_code == 200


def test_a_content_length_that_is_not_a_number_is_400(service: Service) -> None:
    headers = {**service.headers(), "Content-Type": "application/json", "Content-Length": "x"}
    res = service.client.post("/v1/assign", content=b"{}", headers=headers)
    assert res.status_code == 400


def test_unknown_paths_and_methods(service: Service) -> None:
    res = service.get("/v1/nothing-here")
    assert res.status_code == 404 and error_of(res)["code"] == "not_found"
    res = service.client.delete("/v1/themes", headers=service.headers())
    assert res.status_code == 405 and error_of(res)["code"] == "method_not_allowed"
    assert "GET" in res.headers["Allow"]


def test_a_fault_of_the_service_is_500_without_details(
    service: Service, monkeypatch: pytest.MonkeyPatch, caplog: pytest.LogCaptureFixture
) -> None:
    def broken(*args: object, **kwargs: object) -> None:
        raise RuntimeError("secret internal state /srv/x")

    monkeypatch.setattr(CallsMixin, "theme_calls", broken)
    caplog.set_level(logging.ERROR)
    res = service.get("/v1/themes/1/calls")
    assert res.status_code == 500
    err = error_of(res)
    assert err["code"] == "internal_error" and "secret" not in res.text
    assert "Traceback" not in res.text
    assert "secret internal state" in caplog.text  # the log has it


def test_an_unreadable_store_is_503(service: Service) -> None:
    db = service.ws.root / "talkthemes.db"
    for extra in service.ws.root.glob("talkthemes.db-*"):
        extra.unlink()
    db.write_bytes(b"this is not a database" * 100)
    res = service.client.get("/v1/health")
    assert res.status_code == 503 and error_of(res)["code"] == "store_unavailable"


@pytest.mark.parametrize(
    ("path", "body"),
    [
        ("/v1/transcripts", b'{"items": [{"id": "s1", "text": "hi \\ud800"}]}'),
        ("/v1/transcripts", b'{"items": [{"id": "s\\udc00", "text": "hi"}]}'),
        ("/v1/labels", b'{"theme_id": 1, "label": "\\udc00"}'),
        ("/v1/assign", b'{"items": [{"text": "a", "metadata": {"q\\ud83d": "b"}}]}'),
    ],
)
def test_a_lone_surrogate_is_422_not_a_crash(service: Service, path: str, body: bytes) -> None:
    """JSON's \\u escapes can carry half a character, which no store can keep."""
    headers = {**service.headers("write"), "Content-Type": "application/json"}
    res = service.client.post(path, content=body, headers=headers)
    assert res.status_code == 422, res.text
    assert "unicode" in str(error_of(res)["message"]).lower()
