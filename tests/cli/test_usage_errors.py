"""Option-parsing errors exit 2 with click's own message, for every command of the app.

The cases are built from the app itself (each command's parameters), so a new command is
tested as soon as it is registered: an unknown option, an option missing its value, a value
of the wrong type or out of range for every number option and argument, a value given to
every flag, and the command without its required arguments and options.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import typer
from typer.testing import CliRunner

from talkthemes.cli._common import app

runner = CliRunner()
GROUP = typer.main.get_command(app)
FRAME = str.maketrans("", "", "│╭╮╰╯─")


def _message(stderr: str) -> str:
    """stderr without the error panel's frame, whitespace runs as one space."""
    return " ".join(stderr.translate(FRAME).split())


def _filler(param: typer.core.TyperArgument | typer.core.TyperOption) -> str:
    return "1" if param.type_descriptor.annotation in (int, float) else "x.csv"


def _commands() -> dict[str, typer.core.TyperCommand]:
    """Every command by the words that call it (``token add`` for a group's command)."""
    found = {}
    for name, cmd in GROUP.commands.items():
        if isinstance(cmd, typer.core.TyperGroup):
            found.update({f"{name} {sub}": c for sub, c in cmd.commands.items()})
        else:
            found[name] = cmd
    return found


COMMANDS = _commands()


def _required(name: str, but: object = None) -> list[str]:
    """Values for the command's required parameters (except ``but``)."""
    args: list[str] = []
    for p in COMMANDS[name].params:
        if not p.required or p is but:
            continue
        if isinstance(p, typer.core.TyperOption):
            args += [p.opts[0], _filler(p)]
        else:
            args.append(_filler(p))
    return args


def _cases() -> list[tuple[str, list[str], str]]:
    """(command, arguments, the start of click's message) for every command."""
    cases = []
    for name, cmd in COMMANDS.items():
        words = name.split()
        cases.append((name, [*words, "--no-such-option"], "No such option: --no-such-option"))
        cases.append((name, [*words, *_required(name), "-w"], "Option '-w' requires an argument"))
        for p in cmd.params:
            kind = p.type_descriptor.annotation
            if isinstance(p, typer.core.TyperOption) and p.is_flag:
                opt = p.opts[0]
                cases.append(
                    (name, [*words, *_required(name), f"{opt}=1"], f"Option '{opt}' does not take")
                )
            elif kind in (int, float):
                where = p.opts[0] if isinstance(p, typer.core.TyperOption) else None
                head = [*words, *_required(name, but=p)]
                label = f"'{where or p.name}'"
                bad = ["not-a-number"]
                bad += [] if p.min is None else [str(p.min - 1)]
                bad += [] if p.max is None else [str(p.max + 1)]
                for value in bad:
                    given = [where, value] if where else ["--", value]
                    cases.append((name, head + given, f"Invalid value for {label}"))
        if any(p.required for p in cmd.params):
            cases.append((name, words, "Missing"))
    return cases


CASES = _cases()


def test_every_command_has_a_bad_value_and_a_missing_value_case() -> None:
    for name in COMMANDS:
        messages = [m for n, _, m in CASES if n == name]
        assert any(m.startswith(("Invalid value", "Option '--", "Missing")) for m in messages), name
        assert any("requires an argument" in m for m in messages), name


@pytest.mark.parametrize(
    ("args", "message"),
    [pytest.param(a, m, id=" ".join(a)) for _, a, m in CASES],
)
def test_parse_errors_exit_2_with_clicks_message(
    args: list[str], message: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)  # nothing may be written, wherever it would go
    res = runner.invoke(app, args, env={"COLUMNS": "200"})
    text = _message(res.stderr)
    assert res.exit_code == 2, text
    assert message in text
    assert "unexpected error" not in text and "Traceback" not in text
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["sweep", "--seeds", "-1"], "Invalid value for '--seeds'"),
        (["export"], "Missing option '--out'"),
        (["label", "-5", "x"], "No such option: -5"),
        (["assign", "calls"], "Missing option '--out'"),
        (["ingest"], "Missing argument 'paths'"),
        (["themes", "--lambda", "2"], "Invalid value for '--lambda'"),
        (["no-such-command"], "No such command 'no-such-command'"),
    ],
)
def test_the_reported_cases(args: list[str], message: str) -> None:
    res = runner.invoke(app, args, env={"COLUMNS": "200"})
    assert res.exit_code == 2
    assert message in _message(res.stderr)
