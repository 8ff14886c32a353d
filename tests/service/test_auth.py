"""Who may ask: missing, malformed, unknown, revoked and read-only tokens, on every
endpoint; the token never comes back in an answer or the log."""

from __future__ import annotations

import logging

import pytest
from tests.service.conftest import Service, error_of

#: Every endpoint behind a token: (method, path, body, scope it needs).
ENDPOINTS = [
    ("GET", "/v1/versions", None, "read"),
    ("GET", "/v1/themes", None, "read"),
    ("GET", "/v1/themes/1/calls", None, "read"),
    ("GET", "/v1/calls/C2026-05-000011", None, "read"),
    ("GET", "/v1/jobs/0123456789abcdef", None, "read"),
    ("POST", "/v1/assign", {"items": [{"text": "Customer: my meter reading"}]}, "read"),
    ("POST", "/v1/transcripts", {"items": [{"id": "a1", "text": "Customer: hello"}]}, "write"),
    ("POST", "/v1/labels", {"theme_id": 1, "label": "Bills"}, "write"),
    ("POST", "/v1/refresh", {}, "write"),
]


def _call(service: Service, method: str, path: str, body: object, headers: dict[str, str]):
    return service.client.request(method, path, json=body, headers=headers)


@pytest.mark.parametrize(("method", "path", "body", "scope"), ENDPOINTS)
def test_without_a_token_every_endpoint_answers_401_with_a_bearer_challenge(
    service: Service, method: str, path: str, body: object, scope: str
) -> None:
    res = _call(service, method, path, body, {})
    assert res.status_code == 401
    assert res.headers["WWW-Authenticate"] == 'Bearer realm="talkthemes"'
    assert error_of(res)["code"] == "unauthorized"


@pytest.mark.parametrize(("method", "path", "body", "scope"), ENDPOINTS)
def test_a_wrong_token_is_refused_as_invalid(
    service: Service, method: str, path: str, body: object, scope: str
) -> None:
    wrong = service.read[:-4] + ("AAAA" if not service.read.endswith("AAAA") else "BBBB")
    res = _call(service, method, path, body, {"Authorization": f"Bearer {wrong}"})
    assert res.status_code == 401
    assert 'error="invalid_token"' in res.headers["WWW-Authenticate"]
    assert error_of(res)["code"] == "invalid_token"


@pytest.mark.parametrize(
    ("method", "path", "body", "scope"), [e for e in ENDPOINTS if e[3] == "write"]
)
def test_a_read_token_cannot_write(
    service: Service, method: str, path: str, body: object, scope: str
) -> None:
    res = _call(service, method, path, body, service.headers("read"))
    assert res.status_code == 403
    challenge = res.headers["WWW-Authenticate"]
    assert 'error="insufficient_scope"' in challenge and 'scope="write"' in challenge
    err = error_of(res)
    assert err["code"] == "insufficient_scope" and "'reader'" in str(err["message"])


def test_a_write_token_may_read(service: Service) -> None:
    assert service.get("/v1/themes", scope="write").status_code == 200
    assert service.get("/v1/versions", scope="write").status_code == 200


def test_health_needs_no_token(service: Service) -> None:
    res = service.client.get("/v1/health")
    assert res.status_code == 200 and res.json()["current_version"] == 1


@pytest.mark.parametrize(
    "header",
    ["Basic dXNlcjpwYXNz", "Token abc", "bearer", "Bearer", "Bearer two tokens", "Bearer a,b"],
)
def test_other_schemes_and_malformed_headers(service: Service, header: str) -> None:
    res = service.client.get("/v1/themes", headers={"Authorization": header})
    scheme = header.split()[0].lower()
    if scheme != "bearer":
        # RFC 6750 3.1: no error code when the client used another method
        assert res.status_code == 401
        assert res.headers["WWW-Authenticate"] == 'Bearer realm="talkthemes"'
    else:
        assert res.status_code == 400
        assert 'error="invalid_request"' in res.headers["WWW-Authenticate"]
        assert error_of(res)["code"] == "invalid_request"


def test_the_scheme_name_is_case_insensitive(service: Service) -> None:
    res = service.client.get("/v1/themes", headers={"Authorization": f"bEaReR {service.read}"})
    assert res.status_code == 200


def test_a_revoked_token_is_refused_from_the_next_request(service: Service) -> None:
    assert service.get("/v1/themes").status_code == 200  # checked once: remembered
    service.ws.revoke_token("reader")
    res = service.get("/v1/themes")
    assert res.status_code == 401 and error_of(res)["code"] == "invalid_token"


def test_a_token_in_the_query_string_is_not_read(service: Service) -> None:
    res = service.client.get(f"/v1/themes?access_token={service.read}")
    assert res.status_code == 401


def test_the_token_is_never_echoed_nor_logged(
    service: Service, caplog: pytest.LogCaptureFixture
) -> None:
    caplog.set_level(logging.DEBUG)
    answers = [
        service.get("/v1/themes"),
        service.post("/v1/transcripts"),  # 403 names the token's name, not the token
        service.client.get("/v1/themes", headers={"Authorization": f"Bearer {service.read}x"}),
    ]
    secret = service.read.rsplit("_", 1)[1]
    for res in answers:
        assert secret not in res.text
        assert all(secret not in v for v in res.headers.values())
    assert secret not in caplog.text


def test_tokens_are_stored_as_salted_hashes(service: Service) -> None:
    """Two tokens never share a salt, and the store holds neither token nor secret."""
    with service.ws.folder.store() as store:
        rows = store.tokens()
    assert len({r.salt for r in rows}) == len(rows) == 2
    assert all(r.kdf.startswith("scrypt:") and len(r.digest) == 32 for r in rows)
    raw = b"".join(p.read_bytes() for p in service.ws.root.glob("talkthemes.db*"))
    for token in (service.read, service.write):
        assert token.encode() not in raw
        assert token.rsplit("_", 1)[1].encode() not in raw
