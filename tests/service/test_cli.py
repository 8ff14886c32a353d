"""``talkthemes token add/list/revoke`` and the checks ``talkthemes serve`` makes before
it binds."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

import talkthemes as tt
from talkthemes.cli import app
from talkthemes.service.run import check_bind, is_loopback

runner = CliRunner()


@pytest.fixture
def root(tmp_path: Path) -> Path:
    return tt.Workspace.create(tmp_path / "ws").root


def run(*args: str):
    return runner.invoke(app, list(args), env={"COLUMNS": "120"})


def test_a_token_is_printed_once_on_stdout_and_works(root: Path) -> None:
    res = run("token", "add", "crm", "--scope", "read", "-w", str(root))
    assert res.exit_code == 0, res.stderr
    token = res.stdout.strip()
    assert token.startswith("tt_") and "\n" not in token
    assert "shown this once" in res.stderr and token not in res.stderr
    info = tt.Workspace.open(root).check_token(token)
    assert info is not None and (info.name, info.scope) == ("crm", "read")
    listed = run("token", "list", "-w", str(root))
    assert "crm" in listed.stdout and "read" in listed.stdout
    assert token not in listed.stdout and token.rsplit("_", 1)[1] not in listed.stdout


def test_token_json_documents(root: Path) -> None:
    made = json.loads(
        run("token", "add", "bi", "--scope", "write", "-w", str(root), "--json").stdout
    )
    assert made["scope"] == "write" and made["token"].startswith(f"tt_{made['key_id']}_")
    listed = json.loads(run("token", "list", "-w", str(root), "--json").stdout)
    assert [t["name"] for t in listed["tokens"]] == ["bi"] and "token" not in listed["tokens"][0]
    revoked = json.loads(run("token", "revoke", "bi", "-w", str(root), "--json").stdout)
    assert revoked["revoked_at"]
    assert json.loads(run("token", "list", "-w", str(root), "--json").stdout)["tokens"] == []
    every = json.loads(run("token", "list", "--revoked", "-w", str(root), "--json").stdout)
    assert [t["name"] for t in every["tokens"]] == ["bi"]


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["token", "add", "x", "--scope", "admin"], "--scope 'admin': choose read or write"),
        (["token", "add", "[red]x"], "token name '[red]x'"),
        (["token", "revoke", "nobody"], "no active token named 'nobody'"),
    ],
)
def test_token_mistakes_exit_2_with_one_line(root: Path, args: list[str], message: str) -> None:
    res = run(*args, "-w", str(root))
    assert res.exit_code == 2
    assert message in res.stderr and "Traceback" not in res.stderr


def test_a_name_is_unique_among_active_tokens(root: Path) -> None:
    assert run("token", "add", "crm", "-w", str(root)).exit_code == 0
    res = run("token", "add", "crm", "-w", str(root))
    assert res.exit_code == 2 and "revoke it first" in res.stderr
    assert run("token", "revoke", "crm", "-w", str(root)).exit_code == 0
    assert run("token", "add", "crm", "-w", str(root)).exit_code == 0  # rotated


def test_serve_refuses_another_address_without_a_token(root: Path) -> None:
    res = run("serve", "--host", "0.0.0.0", "-w", str(root))
    assert res.exit_code == 2
    assert "there is no token yet" in res.stderr


@pytest.mark.parametrize(
    ("host", "loopback"),
    [("127.0.0.1", True), ("127.3.2.1", True), ("::1", True), ("[::1]", True),
     ("localhost", True), ("0.0.0.0", False), ("::", False), ("192.0.2.7", False),
     ("example.org", False)],
)  # fmt: skip
def test_loopback_addresses(host: str, loopback: bool) -> None:
    assert is_loopback(host) is loopback


def test_binding_elsewhere_warns_about_tls() -> None:
    assert check_bind("127.0.0.1", 0) is None
    warning = check_bind("0.0.0.0", 1)
    assert warning is not None and "TLS" in warning
    with pytest.raises(tt.ConfigError, match="token"):
        check_bind("0.0.0.0", 0)
