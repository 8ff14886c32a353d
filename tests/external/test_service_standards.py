"""The HTTP service against the standards it follows, each named beside its check:

- the OpenAPI Specification 3.1.0 (OpenAPI Initiative), checked by the registry package
  ``openapi-spec-validator`` (its OpenAPI 3.1 validator);
- RFC 6750, "The OAuth 2.0 Authorization Framework: Bearer Token Usage" (Jones & Hardt,
  2012), section 3 (the ``WWW-Authenticate`` response header) and 3.1 (error codes);
- RFC 9110, "HTTP Semantics" (Fielding, Nottingham & Reschke, 2022): the status codes of
  section 15 and the ``Allow`` and ``Retry-After`` fields (sections 10.2.1 and 10.2.3).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from openapi_spec_validator import OpenAPIV31SpecValidator
from tests.service import conftest as fixtures
from tests.service.conftest import Service, copy_workspace, start

# the service's fixtures (a published demo workspace and its service), shared with
# tests/service
demo, published_root, service = fixtures.demo, fixtures.published_root, fixtures.service

# RFC 9110 section 5.6.2 (token) and 5.6.4 (quoted-string), section 11.2 (auth-param).
TOKEN = r"[!#$%&'*+\-.^_`|~0-9A-Za-z]+"
QUOTED = r'"(?:[^"\\]|\\.)*"'
AUTH_PARAM = rf"({TOKEN})\s*=\s*({TOKEN}|{QUOTED})"


def challenge_params(header: str) -> dict[str, str]:
    """The auth-params of a ``Bearer`` challenge (RFC 6750 section 3, RFC 9110 11.6.1)."""
    scheme, _, rest = header.partition(" ")
    assert scheme == "Bearer"
    params = {}
    for part in re.split(r"\s*,\s*", rest.strip()):
        m = re.fullmatch(AUTH_PARAM, part)
        assert m, f"not an auth-param: {part!r}"
        params[m.group(1)] = m.group(2).strip('"')
    return params


@pytest.fixture(scope="module")
def spec(published_root: Path, tmp_path_factory: pytest.TempPathFactory) -> dict:
    ws = copy_workspace(published_root, tmp_path_factory.mktemp("spec") / "ws")
    for running in start(ws):
        return running.client.get("/openapi.json").json()
    raise AssertionError


def test_the_schema_is_valid_openapi_3_1(spec: dict) -> None:
    # OpenAPI Specification 3.1.0, validated with openapi-spec-validator
    assert spec["openapi"].startswith("3.1.")
    errors = list(OpenAPIV31SpecValidator(spec).iter_errors())
    assert errors == []


def test_the_schema_declares_bearer_security_on_protected_operations(spec: dict) -> None:
    # OpenAPI 3.1.0, "Security Scheme Object": type http, scheme bearer (RFC 6750)
    schemes = spec["components"]["securitySchemes"]
    assert schemes["bearer"] == {**schemes["bearer"], "type": "http", "scheme": "bearer"}
    for path, item in spec["paths"].items():
        for method, op in item.items():
            protected = bool(op.get("security"))
            assert protected == (path != "/v1/health"), (method, path)
            if protected:
                assert "401" in op["responses"], (method, path)


def test_every_operation_has_an_example_or_a_schema_for_its_body(spec: dict) -> None:
    # OpenAPI 3.1.0 "Media Type Object": the request bodies are described
    for item in spec["paths"].values():
        for op in item.values():
            body = op.get("requestBody")
            if body:
                assert "application/json" in body["content"]


def test_401_without_credentials_has_a_challenge_and_no_error_code(service: Service) -> None:
    # RFC 9110 15.5.2: a 401 MUST send WWW-Authenticate; RFC 6750 3.1: with no
    # authentication information the server SHOULD NOT include an error code
    res = service.client.get("/v1/themes")
    assert res.status_code == 401
    params = challenge_params(res.headers["WWW-Authenticate"])
    assert params == {"realm": "talkthemes"}


@pytest.mark.parametrize(
    ("header", "status", "error"),
    [
        ("Bearer tt_000000000000_" + "A" * 43, 401, "invalid_token"),  # RFC 6750 3.1
        ("Bearer two tokens", 400, "invalid_request"),  # RFC 6750 3.1
    ],
)
def test_error_codes_and_their_status(
    service: Service, header: str, status: int, error: str
) -> None:
    # RFC 6750 section 3.1: invalid_request → 400, invalid_token → 401
    res = service.client.get("/v1/themes", headers={"Authorization": header})
    assert res.status_code == status
    params = challenge_params(res.headers["WWW-Authenticate"])
    assert params["error"] == error and params["realm"] == "talkthemes"
    # RFC 6750 section 3: error_description is US-ASCII %x20-21 / %x23-5B / %x5D-7E
    assert re.fullmatch(r"[\x20\x21\x23-\x5b\x5d-\x7e]*", params["error_description"])


def test_insufficient_scope_is_403_naming_the_scope(service: Service) -> None:
    # RFC 6750 section 3.1: insufficient_scope → 403, and the scope attribute (section 3)
    res = service.post("/v1/refresh", json={})
    assert res.status_code == 403
    params = challenge_params(res.headers["WWW-Authenticate"])
    assert params["error"] == "insufficient_scope" and params["scope"] == "write"


def test_405_sends_allow(service: Service) -> None:
    # RFC 9110 15.5.6: a 405 MUST generate an Allow header field (section 10.2.1)
    res = service.client.put("/v1/assign", headers=service.headers())
    assert res.status_code == 405
    methods = {m.strip() for m in res.headers["Allow"].split(",")}
    assert "POST" in methods


def test_content_too_large_is_413(published_root: Path, tmp_path: Path) -> None:
    # RFC 9110 15.5.14: 413 Content Too Large
    for small in start(copy_workspace(published_root, tmp_path / "ws"), max_body_mb=0.001):
        res = small.post("/v1/assign", json={"items": [{"text": "x" * 2000}]})
        assert res.status_code == 413


def test_unsupported_media_type_is_415(service: Service) -> None:
    # RFC 9110 15.5.16: 415 Unsupported Media Type for content in another format
    res = service.client.post(
        "/v1/assign",
        content=b"<items/>",
        headers={**service.headers(), "Content-Type": "application/xml"},
    )
    assert res.status_code == 415


def test_valid_json_with_wrong_content_is_422(service: Service) -> None:
    # RFC 9110 15.5.21: 422 Unprocessable Content: the syntax is right, the content not
    res = service.post("/v1/assign", json={"items": [{"text": 5}]})
    assert res.status_code == 422


def test_busy_gives_a_retry_after_in_delay_seconds(service: Service) -> None:
    # RFC 9110 10.2.3: Retry-After = HTTP-date / delay-seconds (1*DIGIT)
    with service.ws.folder.lock("another program"):
        res = service.post(
            "/v1/transcripts", scope="write", json={"items": [{"id": "a", "text": "b"}]}
        )
    assert res.status_code == 409
    assert re.fullmatch(r"\d+", res.headers["Retry-After"])


def test_an_accepted_job_is_202(service: Service, monkeypatch: pytest.MonkeyPatch) -> None:
    # RFC 9110 15.3.3: 202 Accepted when processing has not completed
    from talkthemes.service.jobs import Job, Jobs

    monkeypatch.setattr(Jobs, "start_refresh", lambda self, options: Job("j1", "refresh", options))
    res = service.post("/v1/refresh", scope="write", json={})
    assert res.status_code == 202 and res.headers["Location"] == "/v1/jobs/j1"
