"""Settings: defaults in one place, a commented file that reads back, clear errors."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

from talkthemes.config import Settings, load_settings, render_settings, settings_from_dict
from talkthemes.errors import ConfigError


def test_rendered_defaults_read_back_equal() -> None:
    text = render_settings()
    assert settings_from_dict(tomllib.loads(text)) == Settings()


def test_rendered_file_lists_every_key_with_a_comment() -> None:
    text = render_settings()
    lines = text.splitlines()
    for section_name, section_field in Settings.model_fields.items():
        assert f"[{section_name}]" in lines
        for key in section_field.annotation.model_fields:  # type: ignore[union-attr]
            idx = next(i for i, ln in enumerate(lines) if ln.startswith(f"# {key} = "))
            assert lines[idx - 1].startswith("#"), key


def test_defaults_are_commented_out_so_later_defaults_reach_the_workspace() -> None:
    assert tomllib.loads(render_settings()) == {name: {} for name in Settings.model_fields}
    changed = settings_from_dict({"sweep": {"seeds": 5}, "prepare": {"roles": "customer"}})
    text = render_settings(changed)
    assert tomllib.loads(text) == {
        **{name: {} for name in Settings.model_fields},
        "sweep": {"seeds": 5},
        "prepare": {"roles": "customer"},
    }
    assert settings_from_dict(tomllib.loads(text)) == changed


def test_missing_file_gives_defaults(tmp_path: Path) -> None:
    assert load_settings(tmp_path / "none.toml") == Settings()


def test_partial_file_keeps_other_defaults(tmp_path: Path) -> None:
    p = tmp_path / "t.toml"
    p.write_text("[prepare]\nroles = 'customer'\n", encoding="utf-8")
    s = load_settings(p)
    assert s.prepare.roles == "customer"
    assert s.prepare.min_tokens == Settings().prepare.min_tokens


@pytest.mark.parametrize(
    ("doc", "expected"),
    [
        ("[prepare]\nroles = 'everyone'\n", "[prepare] roles = 'everyone'"),
        ("[prepare]\nrolez = 'all'\n", "unknown setting [prepare] rolez"),
        ("[ingest]\nmax_file_mb = -1\n", "[ingest] max_file_mb = -1"),
        ("[nosuch]\nx = 1\n", "unknown setting nosuch"),
    ],
)
def test_invalid_settings_name_key_and_value(tmp_path: Path, doc: str, expected: str) -> None:
    p = tmp_path / "t.toml"
    p.write_text(doc, encoding="utf-8")
    with pytest.raises(ConfigError) as info:
        load_settings(p)
    assert str(p) in str(info.value)
    assert expected in str(info.value)


def test_broken_toml_is_a_config_error(tmp_path: Path) -> None:
    p = tmp_path / "t.toml"
    p.write_text("[prepare\n", encoding="utf-8")
    with pytest.raises(ConfigError, match="not valid TOML"):
        load_settings(p)
