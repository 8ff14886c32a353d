"""All settings of a workspace, and reading and writing ``talkthemes.toml``."""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

from pydantic import Field, ValidationError

from talkthemes.config._section import _Section
from talkthemes.config.faces import ServiceSettings, ViewSettings
from talkthemes.config.ingest import IngestSettings
from talkthemes.config.prepare import PrepareSettings
from talkthemes.config.refresh import RefreshSettings
from talkthemes.config.sweep import SweepSettings
from talkthemes.errors import ConfigError

__all__ = ["SETTINGS_FILE", "Settings", "load_settings", "render_settings", "settings_from_dict"]

SETTINGS_FILE = "talkthemes.toml"


class Settings(_Section):
    """All settings of a workspace."""

    ingest: IngestSettings = Field(default_factory=IngestSettings)
    prepare: PrepareSettings = Field(default_factory=PrepareSettings)
    sweep: SweepSettings = Field(default_factory=SweepSettings)
    refresh: RefreshSettings = Field(default_factory=RefreshSettings)
    view: ViewSettings = Field(default_factory=ViewSettings)
    service: ServiceSettings = Field(default_factory=ServiceSettings)


def _format_validation(err: ValidationError, source: str) -> str:
    first = err.errors()[0]
    loc = [str(p) for p in first["loc"]]
    key = f"[{loc[0]}] {'.'.join(loc[1:])}" if len(loc) > 1 else loc[0] if loc else "?"
    value = first.get("input")
    if first["type"] == "extra_forbidden":
        return f"{source}: unknown setting {key}"
    message = str(first["msg"]).removeprefix("Value error, ")
    if first["type"] == "value_error" and message.startswith("[prepare."):
        return f"{source}: {message}"  # names its own table and key
    return f"{source}: {key} = {value!r}: {first['msg']}"


def load_settings(path: Path | None) -> Settings:
    """Read settings from a TOML file, filling every missing key with its default.

    Parameters
    ----------
    path : Path or None
        The ``talkthemes.toml`` file. ``None`` or a missing file gives the defaults.

    Returns
    -------
    Settings

    Raises
    ------
    ConfigError
        When the file is not valid TOML or a value is not allowed.
    """
    if path is None or not path.exists():
        return Settings()
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise ConfigError(f"{path}: not valid TOML: {exc}") from None
    return settings_from_dict(data, source=str(path))


def settings_from_dict(data: dict[str, Any], source: str = "settings") -> Settings:
    """Validate a nested dict (as read from TOML) into :class:`Settings`."""
    try:
        return Settings.model_validate(data)
    except ValidationError as exc:
        raise ConfigError(_format_validation(exc, source)) from None


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(value)
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        items = ", ".join(f"{_toml_value(str(k))} = {_toml_value(v)}" for k, v in value.items())
        return "{ " + items + " }" if items else "{}"
    raise TypeError(f"cannot write {type(value).__name__} to TOML")


def render_settings(settings: Settings | None = None) -> str:
    """Render settings as a commented TOML document (every key, with its description).

    A key whose value is the default is written commented out (``# key = value``), so it
    keeps following the default of the installed talkthemes when a later release changes
    it; a value that differs from the default is written as a setting.

    Parameters
    ----------
    settings : Settings, optional
        Values to write; the defaults when omitted.

    Returns
    -------
    str
        TOML text that :func:`load_settings` reads back to the same settings.
    """
    defaults = Settings()
    settings = settings or defaults
    lines = [
        "# talkthemes workspace settings.",
        "# Every setting is listed with its current default, commented out: remove the '# '",
        "# in front of 'key = value' and change the value to set it for this workspace.",
        "",
    ]
    for section_name, section_field in Settings.model_fields.items():
        section = getattr(settings, section_name)
        doc = (type(section).__doc__ or "").strip().splitlines()[0]
        lines.append(f"# {doc}")
        lines.append(f"[{section_name}]")
        tables: list[tuple[str, _Section, _Section]] = []
        for name, field in type(section).model_fields.items():
            value = getattr(section, name)
            default = getattr(getattr(defaults, section_name), name)
            if isinstance(value, _Section):  # a sub-table, written after the section's keys
                tables.append((f"{section_name}.{name}", value, default))
                continue
            if field.description:
                lines.append(f"# {field.description}")
            lines.append(f"{'' if value != default else '# '}{name} = {_toml_value(value)}")
        lines.append("")
        for title, table, default in tables:
            lines.extend(_render_table(title, table, default))
        del section_field
    return "\n".join(lines)


def _render_table(title: str, table: _Section, default: _Section) -> list[str]:
    """A sub-table (``[prepare.languages]``), its dict-of-tables field as further tables."""
    doc = (type(table).__doc__ or "").strip().splitlines()[0]
    lines = [f"# {doc}", f"[{title}]"]
    nested: dict[str, dict[str, Any]] = {}
    for name, field in type(table).model_fields.items():
        value = getattr(table, name)
        if name == "chains":
            nested = value
            if field.description:
                lines.append(f"# {field.description}")
            continue
        if field.description:
            lines.append(f"# {field.description}")
        pinned = value != getattr(default, name)
        lines.append(f"{'' if pinned else '# '}{name} = {_toml_value(value)}")
    lines.append("")
    for code, values in nested.items():
        lines.append(f"[{title}.{code}]")
        lines.extend(f"{k} = {_toml_value(v)}" for k, v in values.items())
        lines.append("")
    return lines
