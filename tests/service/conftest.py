"""A small published workspace and the service over it.

200 invented demo calls are ingested with their manifest, prepared, and an NMF model with
K = 4 is published without a sweep, once per session (a few seconds). Each test gets a
private copy with a read and a write token, and a FastAPI TestClient of its service.
"""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

import talkthemes as tt
from talkthemes.config import ServiceSettings
from talkthemes.demo.records import DemoFiles
from talkthemes.demo.writer import write_demo
from talkthemes.service.app import create_app


@pytest.fixture(scope="session")
def demo(tmp_path_factory: pytest.TempPathFactory) -> DemoFiles:
    """The invented corpus, its last month held back in ``inbox``."""
    return write_demo(
        tmp_path_factory.mktemp("svc-demo") / "src", size=200, seed=3, hold_back_last_month=True
    )


@pytest.fixture(scope="session")
def published_root(tmp_path_factory: pytest.TempPathFactory, demo: DemoFiles) -> Path:
    """The workspace with version 1 published (read-only: tests use copies)."""
    ws = tt.Workspace.create(tmp_path_factory.mktemp("svc-published") / "ws")
    ws.ingest(demo.exports, manifests=demo.manifest)
    ws.prepare()
    ws.publish(k=4, family="nmf")
    return ws.root


@dataclass
class Service:
    """A private workspace, its tokens and a client of its service."""

    ws: tt.Workspace
    client: TestClient
    read: str
    write: str

    def headers(self, scope: str = "read") -> dict[str, str]:
        """The Authorization header with the ``scope`` token."""
        return {"Authorization": f"Bearer {self.read if scope == 'read' else self.write}"}

    def get(self, url: str, scope: str = "read", **kwargs: object):
        return self.client.get(url, headers=self.headers(scope), **kwargs)

    def post(self, url: str, scope: str = "read", **kwargs: object):
        return self.client.post(url, headers=self.headers(scope), **kwargs)


def copy_workspace(root: Path, dest: Path) -> tt.Workspace:
    """A private copy of a workspace."""
    shutil.copytree(root, dest, ignore=shutil.ignore_patterns(".lock"))
    return tt.Workspace.open(dest)


def start(ws: tt.Workspace, **settings: object) -> Iterator[Service]:
    """The service of ``ws`` with ``[service]`` ``settings``, a read and a write token."""
    read = ws.add_token("reader", "read").token
    write = ws.add_token("writer", "write").token
    app = create_app(ws.root, settings=ServiceSettings(**settings))
    with TestClient(app, raise_server_exceptions=False) as client:
        yield Service(ws, client, read, write)


@pytest.fixture
def service(published_root: Path, tmp_path: Path) -> Iterator[Service]:
    """The service of a private copy of the published workspace."""
    yield from start(copy_workspace(published_root, tmp_path / "ws"))


@pytest.fixture
def unpublished(tmp_path: Path, demo: DemoFiles) -> Iterator[Service]:
    """The service of a workspace with calls ingested but nothing published."""
    ws = tt.Workspace.create(tmp_path / "empty")
    yield from start(ws)


def error_of(response: object) -> dict[str, object]:
    """The ``error`` object of an error response, checking the one shape."""
    body = response.json()  # type: ignore[attr-defined]
    assert set(body) == {"error"}, body
    assert set(body["error"]) == {"code", "message", "details"}, body
    assert isinstance(body["error"]["message"], str) and body["error"]["message"]
    return body["error"]
