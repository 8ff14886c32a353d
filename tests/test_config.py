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
            if key == "languages":  # a table of its own: [prepare.languages]
                assert f"[{section_name}.languages]" in lines
                continue
            idx = next(i for i, ln in enumerate(lines) if ln.startswith(f"# {key} = "))
            assert lines[idx - 1].startswith("#"), key
    for key in ("detect", "min_confidence", "min_calls"):
        idx = next(i for i, ln in enumerate(lines) if ln.startswith(f"# {key} = "))
        assert lines[idx - 1].startswith("#"), key


def test_defaults_are_commented_out_so_later_defaults_reach_the_workspace() -> None:
    empty = {name: {} for name in Settings.model_fields} | {"prepare": {"languages": {}}}
    assert tomllib.loads(render_settings()) == empty
    changed = settings_from_dict({"sweep": {"seeds": 5}, "prepare": {"roles": "customer"}})
    text = render_settings(changed)
    assert tomllib.loads(text) == {
        **empty,
        "sweep": {"seeds": 5},
        "prepare": {"roles": "customer", "languages": {}},
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


def test_language_tables_read_back_and_make_a_lanes_settings() -> None:
    changed = settings_from_dict(
        {"prepare": {"languages": {"min_calls": 50, "es": {"extra_stop_words": ["vale"]}}}}
    )
    text = render_settings(changed)
    assert "[prepare.languages.es]" in text.splitlines()
    assert settings_from_dict(tomllib.loads(text)) == changed
    lane = changed.prepare.for_language("es")
    assert (lane.lang, lane.extra_stop_words) == ("es", ["vale"])
    assert lane.languages.chains == {} and lane.languages.min_calls == 50
    assert changed.prepare.for_language("fr").extra_stop_words == []


@pytest.mark.parametrize(
    ("table", "expected"),
    [
        ({"en": {"min_tokens": 5}}, "[prepare.languages.en]: en is the main language"),
        ({"es": {"min_tokens": -1}}, "[prepare.languages.es] min_tokens = -1"),
        ({"es": {"bogus": 1}}, "[prepare.languages.es] bogus = 1"),
        ({"es": {"lang": "de"}}, "cannot set lang"),
        ({"es": "x"}, "must be a table [prepare.languages.es]"),
    ],
)
def test_language_tables_refuse_bad_values_naming_the_table(
    table: dict[str, object], expected: str
) -> None:
    with pytest.raises(ConfigError) as err:
        settings_from_dict({"prepare": {"languages": table}}, source="t.toml")
    assert expected in str(err.value)
    assert str(err.value).startswith("t.toml: ")
